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

from .api import fit, scan
from .engine.mixture import Mixture
from .errors import Cancelled, ClusterDeskWarning, FileFormatError, InputError

__version__ = "0.1.0"

__all__ = [
    "Cancelled",
    "ClusterDeskWarning",
    "FileFormatError",
    "InputError",
    "Mixture",
    "__version__",
    "fit",
    "scan",
]
