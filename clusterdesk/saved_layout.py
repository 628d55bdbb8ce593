"""Checks on a saved analysis (.cdesk) before it is used: what the file is, and its fields' values.

Each check returns or raises words that name the problem, so that a damaged
or edited file gives one sentence instead of a library error.
"""

from __future__ import annotations

import math

from pathlib import Path

from .errors import FileFormatError

__all__ = ["MAX_ANALYSIS_BYTES", "check_analysis_file", "whole_number", "settings_problem", "data_problem"]

#: A saved analysis is a few kilobytes; a file past this size is not one (and is not read).
MAX_ANALYSIS_BYTES = 1 << 20


def check_analysis_file(path: Path) -> None:
    """Refuse, before reading, what cannot be a saved analysis: a pipe or device, or a huge file.

    Parameters
    ----------
    path : Path

    Raises
    ------
    FileFormatError
        Not a regular file (reading a pipe would wait for ever), or larger
        than :data:`MAX_ANALYSIS_BYTES`.
    """
    if path.exists() and not path.is_dir() and not path.is_file():
        raise FileFormatError(f"{path.name} is not a regular file (a pipe, socket or device), so it cannot be "
                              "a saved analysis; open the analysis file itself.")
    if path.is_file() and path.stat().st_size > MAX_ANALYSIS_BYTES:
        raise FileFormatError(f"{path.name} holds {path.stat().st_size:,} bytes, far more than a saved analysis "
                              "(a few kilobytes), so it is not one; open it as a data file instead.")


def whole_number(value, low: int) -> bool:
    """A whole number (not a bool) of at least ``low``."""
    return isinstance(value, int) and not isinstance(value, bool) and value >= low


def settings_problem(settings: dict, default_kmax: int) -> str:
    """What is wrong with saved scan settings ('' when nothing).

    Parameters
    ----------
    settings : dict
        The saved fields of :class:`~clusterdesk.analysis.ScanSettings` (missing ones take defaults).
    default_kmax : int
        kmax when the file does not give it.
    """
    for name, low in (("kmin", 1), ("kmax", 1), ("restarts", 1), ("seed", 0)):
        if name in settings and not whole_number(settings[name], low):
            return f"{name} is {settings[name]!r}, not a whole number >= {low}"
    if settings.get("kmin", 1) > settings.get("kmax", default_kmax):
        return f"kmin {settings.get('kmin')} is larger than kmax {settings.get('kmax', default_kmax)}"
    if settings.get("widths", "both") not in ("separate", "shared", "both"):
        return f"widths is {settings['widths']!r}"
    if settings.get("treatment", "auto") not in ("auto", "exact", "intervals"):
        return f"treatment is {settings['treatment']!r}"
    if settings.get("value_at", "middle") not in ("middle", "lower", "upper"):
        return f"value_at is {settings['value_at']!r}"
    step = settings.get("resolution")
    if step is not None and (isinstance(step, bool) or not isinstance(step, (int, float))
                             or not math.isfinite(step) or step <= 0):
        return f"resolution is {step!r}, not a positive number"
    return ""


def data_problem(data: dict) -> str:
    """What is wrong with a saved data choice ('' when nothing).

    Parameters
    ----------
    data : dict
        The saved fields of :class:`~clusterdesk.analysis.DataChoice`.
    """
    for name in ("column", "counts", "sheet"):
        value = data.get(name)
        if value is not None and (isinstance(value, bool) or not isinstance(value, (str, int))
                                  or (isinstance(value, int) and value < 0)):
            return f"{name} is {value!r}"
    for name in ("low", "high"):
        value = data.get(name)
        if value is not None and (isinstance(value, bool) or not isinstance(value, (int, float))):
            return f"{name} is {value!r}"
    if data.get("scale", "linear") not in ("linear", "ln", "log10"):
        return f"scale is {data['scale']!r}"
    return ""
