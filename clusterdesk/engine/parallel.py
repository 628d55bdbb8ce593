"""Run independent batches of work side by side, with progress and cancelling.

A batch is a fixed list of replicate indices chosen before any work starts,
and every replicate draws from its own random stream, so the results do not
depend on how many workers run the batches or in which order they finish.

Bootstrap batches run on threads: their heavy work is a few large numpy
ufuncs on arrays of shape (replicates, components, values), which release the
GIL, so two threads keep two cores busy without copying data into other
processes (measured in tests/bench/bench_bootstrap.py).  Work made of many
small fits (the likelihood-ratio test) holds the GIL and runs on processes
instead (``processes=True``, started by a fork server so that forking a
multi-threaded program such as the window is safe). A worker process cannot
see the caller's cancel token, so each one is given a shared event at start
(:func:`worker_cancel_token` returns it inside the worker) that is set when the
caller's token is: long work in a worker stops within one of its own checks.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import sys
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, ThreadPoolExecutor, wait

import numpy as np

from ..errors import Cancelled, InputError

__all__ = ["check_workers", "process_workers", "check_seed", "index_batches", "run_batches", "replicate_rng",
           "worker_cancel_token", "limit_blas_threads", "blas_one_thread", "start_fork_server"]

_MAX_DEFAULT_WORKERS = 2
#: Seconds between looks at the caller's cancel token while batches run.
_CANCEL_POLL = 0.05
_worker_token = None
_LIMITER = []


def check_workers(workers) -> int:
    """Number of worker threads: ``None`` means the cores available, at most 2.

    Raises
    ------
    InputError
        If ``workers`` is not a whole number >= 1.
    """
    if workers is None:
        return max(1, min(_MAX_DEFAULT_WORKERS, os.cpu_count() or 1))
    if isinstance(workers, bool) or not isinstance(workers, (int, np.integer)) or workers < 1:
        raise InputError(f"workers must be a whole number >= 1 (or None for automatic); got {workers!r}.")
    return int(workers)


def process_workers(workers) -> int:
    """Number of worker processes: like :func:`check_workers`, but ``None`` is 1 in a user's script.

    A worker process started by a fork server (or spawned) first runs the
    calling program's main script again, as Python's rule for process pools
    requires; a script that calls us outside ``if __name__ == "__main__":``
    would then run itself in every worker. So the automatic choice uses
    processes only where that is known to be safe: an interactive session,
    ``python -c``, ``python -m`` (a package's ``__main__`` is not run again)
    and our own ``clusterdesk`` command. A script asks for processes with an
    explicit ``workers``.
    """
    if workers is not None:
        return check_workers(workers)
    main = sys.modules.get("__main__")
    path = getattr(main, "__file__", None)
    spec_name = getattr(getattr(main, "__spec__", None), "name", "") or ""
    safe = path is None or spec_name.endswith("__main__") or os.path.basename(path) == "clusterdesk"
    return check_workers(None) if safe else 1


def index_batches(total: int, batch_size: int) -> list[np.ndarray]:
    """Split ``range(total)`` into consecutive batches of at most ``batch_size`` indices."""
    return [np.arange(start, min(start + batch_size, total)) for start in range(0, total, batch_size)]


def replicate_rng(seed: int, purpose: int, index: int) -> np.random.Generator:
    """The random stream of one replicate: depends on the seed, the purpose and the index only.

    Parameters
    ----------
    seed : int
        The user's seed (>= 0).
    purpose : int
        A constant per kind of replicate (resampling, simulation, test), so the
        streams of different procedures with the same seed do not coincide.
    index : int
        Replicate number, from 0.
    """
    return np.random.default_rng(np.random.SeedSequence([int(seed), int(purpose), int(index)]))


def check_seed(seed) -> int:
    """A seed must be a whole number >= 0 (numpy's SeedSequence refuses negative ones)."""
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise InputError(f"seed must be a whole number >= 0; got {seed!r}.")
    return int(seed)


def _check_cancel(cancel, what: str) -> None:
    if cancel is not None and cancel.is_set():
        raise Cancelled(f"The {what} was cancelled before it finished; no results were kept.")


def limit_blas_threads() -> None:
    """Limit BLAS to one thread in this process, for good (worker processes).

    Uses threadpoolctl (installed with scikit-learn) when it is there; the
    fits are many small matrix products, which gain nothing from BLAS
    threads, and one thread in every process that fits keeps the results
    bit-identical whatever the number of workers.
    """
    if _LIMITER:
        return
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # without threadpoolctl the libraries keep their own setting
        _LIMITER.append(None)
        return
    _LIMITER.append(threadpool_limits(limits=1))


@contextlib.contextmanager
def blas_one_thread():
    """Limit BLAS to one thread while the block runs (this process); see :func:`limit_blas_threads`."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        yield
        return
    with threadpool_limits(limits=1):
        yield


def worker_cancel_token():
    """Inside a worker process of :func:`run_batches`: the event set when the caller cancels.

    Returns None elsewhere (threads and the calling process use the caller's token).
    """
    return _worker_token


def _start_worker(token) -> None:
    global _worker_token
    _worker_token = token
    limit_blas_threads()


def start_fork_server(task_module: str) -> None:
    """Start the server that :func:`run_batches` forks its worker processes from, without waiting.

    The server imports ``task_module`` (numpy, scipy and our engine: about a
    second) before it can fork a worker. Started while the caller still
    prepares the data, that import runs on the other core instead of
    delaying the first batch. Does nothing where there is no fork server
    (spawned workers), or when it already runs.
    """
    if "forkserver" not in multiprocessing.get_all_start_methods():
        return
    from multiprocessing import forkserver

    multiprocessing.get_context("forkserver").set_forkserver_preload([task_module])
    forkserver.ensure_running()


def _executor(workers: int, processes: bool, task):
    """The pool, and for processes the event that tells their work to stop."""
    if not processes:
        return ThreadPoolExecutor(max_workers=workers), None
    if "forkserver" not in multiprocessing.get_all_start_methods():
        context = multiprocessing.get_context("spawn")
    else:
        context = multiprocessing.get_context("forkserver")
        # The server imports the task's module once; workers forked from it start in
        # milliseconds instead of importing numpy and scipy each (about 2 s a pool).
        context.set_forkserver_preload([getattr(task, "func", task).__module__])
    stop = context.Event()
    return ProcessPoolExecutor(max_workers=workers, mp_context=context, initializer=_start_worker,
                               initargs=(stop,)), stop


def run_batches(task, batches, *, workers: int, progress=None, cancel=None, what="bootstrap",
                processes: bool = False):
    """Apply ``task`` to every batch and return the results in batch order.

    Parameters
    ----------
    task : callable(batch) -> object
        Works on one batch (an array of replicate indices); should check
        ``cancel`` itself during long work and raise Cancelled.  With
        ``processes`` it must be picklable and should check
        :func:`worker_cancel_token` instead.
    batches : list of ndarray of int
    workers : int
        Threads to use; 1 runs the batches one after another in this thread.
    progress : callable(done, total), optional
        Called in the calling thread after each finished batch, with the number
        of replicates done so far and the total.
    cancel : object with ``is_set()``, optional
        Checked before each batch starts and after each one finishes.
    what : str
        Name of the work in the cancel message.
    processes : bool, default False
        Run batches in worker processes rather than threads. Their work
        should check :func:`worker_cancel_token`, which is set as soon as
        ``cancel`` is; otherwise a cancel takes effect when the running
        batches finish.

    Returns
    -------
    list
        ``task(batch)`` for each batch, in the order of ``batches``.

    Raises
    ------
    Cancelled
        When ``cancel`` is set; unfinished batches are dropped.
    """
    total = int(sum(len(b) for b in batches))
    results = [None] * len(batches)
    done = 0
    if workers <= 1 or len(batches) <= 1:
        for i, batch in enumerate(batches):
            _check_cancel(cancel, what)
            results[i] = task(batch)
            done += len(batch)
            if progress is not None:
                progress(done, total)
        return results
    pool, stop = _executor(workers, processes, task)
    with pool:
        pending = {}
        queue = list(enumerate(batches))
        try:
            while queue or pending:
                while queue and len(pending) < workers:
                    _check_cancel(cancel, what)
                    i, batch = queue.pop(0)
                    pending[pool.submit(task, batch)] = i
                finished, _ = wait(pending, timeout=None if cancel is None else _CANCEL_POLL,
                                   return_when=FIRST_COMPLETED)
                if cancel is not None and cancel.is_set() and stop is not None:
                    stop.set()
                for future in finished:
                    i = pending.pop(future)
                    results[i] = future.result()
                    done += len(batches[i])
                    if progress is not None:
                        progress(done, total)
                _check_cancel(cancel, what)
        finally:
            for future in pending:
                future.cancel()
            if stop is not None:
                stop.set()  # workers still running stop at their next check
    return results
