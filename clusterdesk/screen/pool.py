"""Where the jobs of a screening run are done: in this process, or in worker processes.

A backend has *slots* (places where one job runs at a time), takes a job for
a given slot with :meth:`submit`, and hands back finished jobs with
:meth:`wait`. Choosing the slot lets the scheduler send the columns of a file
to the worker that already read it (:mod:`.filecache`). Each worker process
has its own queue of jobs, so a job goes exactly where it was sent.

A worker process that dies (killed for lack of memory, a crash in a library)
gives a :class:`~.tasks.JobFailure` for the job it held and is replaced; the
batch goes on. Worker processes ignore Ctrl-C; the calling process stops them.

BLAS libraries are limited to one thread in every process that fits columns
(threadpoolctl, installed with scikit-learn): one column per core is the
parallelism, and the same thread count everywhere keeps results bit-identical
whatever the number of workers.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import queue
import signal

from ..engine.parallel import blas_one_thread, limit_blas_threads
from .tasks import JobFailure, run_job

__all__ = ["InlineBackend", "ProcessBackend", "limit_blas_threads", "blas_one_thread"]

_POLL_SECONDS = 0.2
class InlineBackend:
    """One slot, in this process: each job runs when :meth:`wait` is called.

    Parameters
    ----------
    cancel : object with ``is_set()``, optional
        Handed to the jobs, so a cancel request stops a scan midway.
    """

    def __init__(self, cancel=None):
        self.slots = [0]
        self._cancel = cancel
        self._pending = None
        self._limit = blas_one_thread()
        self._limit.__enter__()

    def submit(self, slot, job_id, job) -> None:
        """Queue one job (only one at a time)."""
        self._pending = (slot, job_id, job)

    def wait(self, timeout: float):
        """Run the queued job and return ``[(slot, job_id, result)]``."""
        if self._pending is None:
            return []
        slot, job_id, job = self._pending
        self._pending = None
        return [(slot, job_id, run_job(job, self._cancel))]

    def close(self, *, abandon: bool = False) -> None:
        """Nothing to stop; restores the BLAS thread setting."""
        if self._limit is not None:
            self._limit.__exit__(None, None, None)
            self._limit = None


def _worker_main(slot: int, inbox, outbox) -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    limit_blas_threads()
    while True:
        item = inbox.get()
        if item is None:
            return
        job_id, job = item
        try:
            result = run_job(job)
        except BaseException as exc:  # report, never die silently
            result = JobFailure(f"The worker failed ({type(exc).__name__}: {' '.join(str(exc).split())}).")
        outbox.put((slot, job_id, result))


def _context():
    methods = multiprocessing.get_all_start_methods()
    ctx = multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")
    if ctx.get_start_method() == "forkserver":
        ctx.set_forkserver_preload(["clusterdesk.screen.tasks"])
    return ctx


class ProcessBackend:
    """Worker processes on this machine, one slot each.

    Parameters
    ----------
    workers : int
        Number of processes (>= 1).
    """

    def __init__(self, workers: int):
        self._ctx = _context()
        self._outbox = self._ctx.Queue()
        self.slots = list(range(workers))
        self._procs: dict = {}
        self._inboxes: dict = {}
        self._busy: dict = {}
        for slot in self.slots:
            self._start(slot)

    def _start(self, slot: int) -> None:
        inbox = self._ctx.Queue()
        proc = self._ctx.Process(target=_worker_main, args=(slot, inbox, self._outbox), daemon=True,
                                 name=f"clusterdesk-screen-{slot}")
        proc.start()
        self._procs[slot], self._inboxes[slot] = proc, inbox

    def submit(self, slot, job_id, job) -> None:
        """Send a job to the worker of ``slot`` (one job per slot at a time)."""
        self._busy[slot] = job_id
        self._inboxes[slot].put((job_id, job))

    def wait(self, timeout: float):
        """Finished jobs as ``[(slot, job_id, result)]``; empty when none finished within ``timeout``."""
        done = []
        try:
            done.append(self._outbox.get(timeout=min(timeout, _POLL_SECONDS)))
            while True:
                done.append(self._outbox.get_nowait())
        except queue.Empty:
            pass
        for slot, job_id, _ in done:
            if self._busy.get(slot) == job_id:
                del self._busy[slot]
        return done + self._dead_workers()

    def _dead_workers(self):
        lost = []
        for slot, job_id in list(self._busy.items()):
            proc = self._procs[slot]
            if proc.is_alive():
                continue
            code = proc.exitcode
            hint = " (killed: the machine may have run out of memory)" if code in (-9, 137) else ""
            lost.append((slot, job_id, JobFailure(f"The worker process stopped with exit code {code}{hint} "
                                                  "while on this job.")))
            del self._busy[slot]
            self._start(slot)
        return lost

    def close(self, *, abandon: bool = False) -> None:
        """Stop the workers: at once with ``abandon`` (cancel), else after their current job."""
        for slot, proc in self._procs.items():
            if abandon:
                proc.terminate()
            else:
                with contextlib.suppress(Exception):
                    self._inboxes[slot].put(None)
        for proc in self._procs.values():
            proc.join(timeout=10)
            if proc.is_alive():
                proc.kill()
                proc.join(timeout=5)
        for q in (*self._inboxes.values(), self._outbox):
            q.close()
            q.cancel_join_thread()
