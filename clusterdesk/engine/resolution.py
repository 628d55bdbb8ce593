"""The step of the grid that measured values were recorded on (kept for the engine's callers).

The one implementation is :func:`clusterdesk.grid.grid_step`, shared with
:mod:`clusterdesk.io` (``Measurements.resolution``).  The engine uses the
step for the variance floor (``h**2 / 12``, Sheppard 1898), the rounded
goodness-of-fit check and the grid path of the parametric bootstrap.
"""

from __future__ import annotations

from ..grid import grid_step as detect_grid_step

__all__ = ["detect_grid_step"]
