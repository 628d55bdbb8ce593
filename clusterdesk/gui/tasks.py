"""Run long engine work on a worker thread, with progress, cancel and errors.

The work is a plain Python callable ``work(progress, cancel)``:

* ``progress(done, total)`` may be called from the worker at any time; the
  numbers reach the window through a queued signal;
* ``cancel`` is a :class:`threading.Event`. The window sets it directly from
  its own thread (a slot of an object busy in another thread would never be
  delivered); the engine checks it every EM cycle and raises
  :class:`~clusterdesk.errors.Cancelled`.

The result is handed to ``on_result`` on the window's thread, which is where
the analysis is changed (compute in the worker, apply in the window), so a
cancelled or failed run changes nothing. The runner keeps a reference to its
thread until the thread has ended, and :meth:`TaskRunner.shutdown` cancels and
joins it before the window closes.
"""

from __future__ import annotations

import threading
import traceback
from dataclasses import dataclass
from typing import Callable

from PySide6.QtCore import QObject, QThread, Signal

from ..errors import Cancelled

__all__ = ["TaskRunner", "TaskOutcome", "DONE", "CANCELLED", "FAILED"]

DONE, CANCELLED, FAILED = "done", "cancelled", "failed"


@dataclass(frozen=True)
class TaskOutcome:
    """How a task ended.

    Attributes
    ----------
    label : str
        The words the task was started with, e.g. ``"Fitting models"``.
    status : {"done", "cancelled", "failed"}
    error : BaseException or None
        The exception of a failed task.
    details : str
        Its traceback text ('' unless failed).
    """

    label: str
    status: str
    error: BaseException | None = None
    details: str = ""


class _WorkerThread(QThread):
    """Calls the work once in its own thread and keeps what happened."""

    progressed = Signal(int, int)

    def __init__(self, work: Callable, cancel: threading.Event, parent=None):
        super().__init__(parent)
        self.work = work
        self.cancel = cancel
        self.result = None
        self.status = FAILED
        self.error = None
        self.details = ""
        self.returned = False  # set by run() just before the thread ends

    def _progress(self, done, total) -> None:
        self.progressed.emit(int(done), int(total))

    def run(self) -> None:  # runs in the worker thread
        try:
            result = self.work(self._progress, self.cancel)
        except Cancelled:
            self.status = CANCELLED
        except BaseException as exc:  # reported to the window, never lost
            self.status, self.error, self.details = FAILED, exc, traceback.format_exc()
        else:
            # Work that cannot stop early (reading a file) is discarded when cancelled.
            self.status = CANCELLED if self.cancel.is_set() else DONE
            self.result = result
        finally:
            self.returned = True


class TaskRunner(QObject):
    """Runs one task at a time on a worker thread.

    Signals
    -------
    started(str)
        A task began; the argument is its label.
    progressed(int, int)
        ``done`` and ``total`` as reported by the work.
    finished(object)
        A :class:`TaskOutcome`, after ``on_result`` (or ``on_error``) ran.
    """

    started = Signal(str)
    progressed = Signal(int, int)
    finished = Signal(object)

    def __init__(self, parent=None):
        super().__init__(parent)
        self._thread: _WorkerThread | None = None
        self._label = ""
        self._on_result = None
        self._on_error = None

    @property
    def busy(self) -> bool:
        """True while a task runs (or its result has not been handed over yet)."""
        return self._thread is not None

    @property
    def label(self) -> str:
        """Label of the running task ('' when idle)."""
        return self._label if self.busy else ""

    def start(self, label: str, work: Callable, on_result: Callable | None = None,
              on_error: Callable | None = None) -> None:
        """Start ``work(progress, cancel)`` on a worker thread.

        Parameters
        ----------
        label : str
            What the task does, in words (shown in the status bar).
        work : callable(progress, cancel) -> object
            Must not touch any widget.
        on_result : callable(result), optional
            Called on this (the window's) thread when the work returned.
        on_error : callable(TaskOutcome), optional
            Called on this thread when the work raised (not when cancelled).

        Raises
        ------
        RuntimeError
            If a task is already running (the window disables its actions
            while one runs, so this is a programming error).
        """
        if self.busy:
            raise RuntimeError(f"{self._label} is still running; wait for it or cancel it first.")
        thread = _WorkerThread(work, threading.Event())
        thread.progressed.connect(self.progressed)
        thread.finished.connect(self._thread_ended)
        self._thread, self._label = thread, label
        self._on_result, self._on_error = on_result, on_error
        self.started.emit(label)
        thread.start()

    def cancel(self) -> None:
        """Ask the running task to stop (sets its event; returns at once)."""
        if self._thread is not None:
            self._thread.cancel.set()

    def shutdown(self, timeout_ms: int | None = None) -> bool:
        """Cancel the running task and wait for its thread to end.

        Parameters
        ----------
        timeout_ms : int, optional
            Give up waiting after this long; default: wait until it ends.

        Returns
        -------
        bool
            True when no thread is left running.
        """
        thread = self._thread
        if thread is None:
            return True
        thread.cancel.set()
        ended = thread.wait() if timeout_ms is None else thread.wait(timeout_ms)
        if ended:
            self._discard(thread)
        return ended

    # ----------------------------------------------------------- internals
    def _discard(self, thread: _WorkerThread) -> None:
        if self._thread is thread:
            self._thread, self._on_result, self._on_error = None, None, None
        thread.deleteLater()  # its connections go with it

    def _thread_ended(self) -> None:
        thread = self._thread
        if thread is None or not thread.returned:
            return  # a late signal of a thread that shutdown() already joined
        thread.wait()  # run() has returned; let the thread finish completely
        label, on_result, on_error = self._label, self._on_result, self._on_error
        outcome = TaskOutcome(label, thread.status, thread.error, thread.details)
        result = thread.result
        self._discard(thread)
        try:
            if outcome.status == DONE and on_result is not None:
                try:
                    on_result(result)
                except Exception as exc:  # applying the result failed: report it like the work
                    outcome = TaskOutcome(label, FAILED, exc, traceback.format_exc())
            if outcome.status == FAILED and on_error is not None:
                on_error(outcome)
        finally:
            self.finished.emit(outcome)


class LatestJobs(QObject):
    """Computations for the views, one at a time beside the main work; the newest request wins.

    Each request has a name (e.g. ``"fit check"``); a request waiting under the
    same name is replaced, so quickly clicking through the ranking computes
    only what is still wanted.

    Signals
    -------
    finished(object)
        A :class:`TaskOutcome` after each job.
    """

    finished = Signal(object)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.runner = TaskRunner(self)
        self.runner.finished.connect(self._job_ended)
        self._waiting: dict = {}

    @property
    def busy(self) -> bool:
        """True while a job runs or waits."""
        return self.runner.busy or bool(self._waiting)

    def request(self, name: str, label: str, work: Callable, on_result: Callable) -> None:
        """Run ``work(progress, cancel)`` off the window's thread, then ``on_result(result)`` on it."""
        self._waiting.pop(name, None)
        self._waiting[name] = (label, work, on_result)
        self._start_next()

    def shutdown(self) -> bool:
        """Drop waiting jobs and join the running one."""
        self._waiting.clear()
        return self.runner.shutdown()

    def _start_next(self) -> None:
        if self.runner.busy or not self._waiting:
            return
        name = next(iter(self._waiting))
        label, work, on_result = self._waiting.pop(name)
        self.runner.start(label, work, on_result)

    def _job_ended(self, outcome) -> None:
        self.finished.emit(outcome)
        self._start_next()
