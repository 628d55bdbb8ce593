"""ClusterDesk: groups in one column of measurements, by Gaussian mixtures.

The public API is Qt-free; ``import clusterdesk`` never loads PySide6.

>>> import numpy as np, clusterdesk
>>> rng = np.random.default_rng(1)
>>> x = np.concatenate([rng.normal(10, 1, 300), rng.normal(16, 1.5, 200)])
>>> result = clusterdesk.scan(x, kmax=4)
>>> result.best.k
2
"""

from __future__ import annotations

from .api import bootstrap, fit, likelihood_ratio_test, scan
from .engine.mixture import Mixture
from .errors import Cancelled, ClusterDeskWarning, FileFormatError, InputError
from .io import read_measurements

from ._version import __version__  # noqa: E402

__all__ = [
    "Cancelled",
    "ClusterDeskWarning",
    "FileFormatError",
    "InputError",
    "Mixture",
    "__version__",
    "bootstrap",
    "fit",
    "likelihood_ratio_test",
    "read_measurements",
    "scan",
]
