"""Progress of a screening run, and a one-line progress bar for a terminal.

The runner calls a progress callback with a :class:`ScreenProgress` after
each finished job. :class:`TerminalProgress` draws it on one line (carriage
return, no scrolling) with an estimate of the time left: the columns left
times the mean time per column computed so far, divided among the workers by
measuring the run's own pace (columns finished per second of wall time).
Columns reused from a journal do not count towards the pace.
"""

from __future__ import annotations

import shutil
import sys
import time
from dataclasses import dataclass

__all__ = ["ScreenProgress", "TerminalProgress", "format_duration"]


@dataclass(frozen=True)
class ScreenProgress:
    """Where a screening run stands.

    Attributes
    ----------
    done : int
        Columns finished (reused from the journal included).
    total : int
        Columns known so far, plus an estimate for the files not listed yet.
    computed : int
        Columns fitted in this run.
    failed : int
        Rows with status "failed" so far.
    files_to_list : int
        Files whose columns are not known yet.
    elapsed : float
        Seconds since the run started.
    seconds_left : float or None
        Estimated seconds to the end (None until a column is fitted).
    new_rows : tuple of ScreenRow, default ()
        Rows that became known since the previous report (finished columns,
        columns reused from the journal, files and columns that failed or were
        skipped), in the order they became known; a front end that shows the
        table filling in appends them.
    """

    done: int
    total: int
    computed: int
    failed: int
    files_to_list: int
    elapsed: float
    seconds_left: float | None
    new_rows: tuple = ()


def format_duration(seconds: float | None) -> str:
    """Seconds as words a person reads at a glance: "45 s", "3 min 20 s", "2 h 05 min"."""
    if seconds is None:
        return "estimating"
    seconds = max(0, int(round(seconds)))
    if seconds < 60:
        return f"{seconds} s"
    minutes, sec = divmod(seconds, 60)
    if minutes < 60:
        return f"{minutes} min {sec:02d} s"
    hours, minutes = divmod(minutes, 60)
    return f"{hours} h {minutes:02d} min"


class TerminalProgress:
    """Draws progress on one line of a terminal.

    Parameters
    ----------
    stream : text file, default sys.stderr
    min_interval : float, default 0.25
        Seconds between redraws (the last state is always drawn by :meth:`close`).
    """

    def __init__(self, stream=None, *, min_interval: float = 0.25):
        self._stream = sys.stderr if stream is None else stream
        self._min_interval = min_interval
        self._last_draw = 0.0
        self._last: ScreenProgress | None = None
        self._width = 0

    def __call__(self, progress: ScreenProgress) -> None:
        self._last = progress
        now = time.monotonic()
        if now - self._last_draw >= self._min_interval:
            self._last_draw = now
            self._draw(progress)

    def line(self, p: ScreenProgress, columns: int = 100) -> str:
        """The text of the progress line, at most ``columns`` characters."""
        share = p.done / p.total if p.total else 0.0
        counts = f" {p.done}/{p.total}{'+' if p.files_to_list else ''} columns"
        if p.failed:
            counts += f", {p.failed} failed"
        rate = f", {p.computed / p.elapsed:.2f}/s" if p.computed and p.elapsed > 0 else ""
        left = f", {format_duration(p.seconds_left)} left"
        tail = f"{counts}{rate}{left}"
        bar_width = max(10, min(30, columns - len(tail) - 14))
        filled = int(round(share * bar_width))
        text = f"screening [{'#' * filled}{'.' * (bar_width - filled)}] {share:4.0%}{tail}"
        return text[:columns]

    def _draw(self, progress: ScreenProgress) -> None:
        columns = shutil.get_terminal_size((100, 20)).columns - 1
        text = self.line(progress, columns)
        pad = " " * max(0, self._width - len(text))
        self._width = len(text)
        self._stream.write("\r" + text + pad)
        self._stream.flush()

    def close(self) -> None:
        """Draw the last state and end the line."""
        if self._last is not None:
            self._draw(self._last)
            self._stream.write("\n")
            self._stream.flush()
