"""Screening: many files and columns in, one summary row per column out (no Qt).

>>> from clusterdesk.screen import screen                       # doctest: +SKIP
>>> result = screen(["survey/"], columns=["length*"], out="screening/")
>>> [(r.column, r.best_k, r.evidence) for r in result.rows if r.status == "ok"]

Modules, in the order the data flows:

* :mod:`.discover`: files, folders and glob patterns -> files; a file's listing -> column tasks;
* :mod:`.filecache`: each file read once per worker process;
* :mod:`.tasks`: one column -> one :class:`ScreenRow`, never raising;
* :mod:`.scheduler`, :mod:`.pool`, :mod:`.dask_backend`: who does which job;
* :mod:`.journal`: finished work on disk, for resuming;
* :mod:`.runner`: :func:`screen`, the whole run;
* :mod:`.summary`, :mod:`.overview`: summary.csv and overview.html;
* :mod:`.cli`: the ``screen`` subcommand.
"""

from __future__ import annotations

from .discover import column_matcher, expand_inputs
from .runner import (ScreenResult, UnfinishedRun, UnfinishedRunError, check_settings, default_workers, screen,
                     unfinished_run)
from .tasks import ColumnTask, ScreenRow, column_seed, screen_column

__all__ = [
    "ColumnTask",
    "ScreenResult",
    "ScreenRow",
    "UnfinishedRun",
    "UnfinishedRunError",
    "check_settings",
    "column_matcher",
    "column_seed",
    "default_workers",
    "expand_inputs",
    "screen",
    "screen_column",
    "unfinished_run",
]
