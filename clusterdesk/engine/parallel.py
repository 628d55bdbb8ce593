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
multi-threaded program such as the window is safe).
"""

from __future__ import annotations

import multiprocessing
import os
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, ThreadPoolExecutor, wait

import numpy as np

from ..errors import Cancelled, InputError

__all__ = ["check_workers", "check_seed", "index_batches", "run_batches", "replicate_rng"]

_MAX_DEFAULT_WORKERS = 2


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


def _executor(workers: int, processes: bool, task):
    if not processes:
        return ThreadPoolExecutor(max_workers=workers)
    if "forkserver" not in multiprocessing.get_all_start_methods():
        return ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"))
    context = multiprocessing.get_context("forkserver")
    # The server imports the task's module once; workers forked from it start in
    # milliseconds instead of importing numpy and scipy each (about 2 s a pool).
    context.set_forkserver_preload([getattr(task, "func", task).__module__])
    return ProcessPoolExecutor(max_workers=workers, mp_context=context)


def run_batches(task, batches, *, workers: int, progress=None, cancel=None, what="bootstrap",
                processes: bool = False):
    """Apply ``task`` to every batch and return the results in batch order.

    Parameters
    ----------
    task : callable(batch) -> object
        Works on one batch (an array of replicate indices); should check
        ``cancel`` itself during long work and raise Cancelled.  With
        ``processes`` it must be picklable and is not given the token.
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
        Run batches in worker processes rather than threads; a cancel then
        takes effect when the running batches finish.

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
    with _executor(workers, processes, task) as pool:
        pending = {}
        queue = list(enumerate(batches))
        try:
            while queue or pending:
                while queue and len(pending) < workers:
                    _check_cancel(cancel, what)
                    i, batch = queue.pop(0)
                    pending[pool.submit(task, batch)] = i
                finished, _ = wait(pending, return_when=FIRST_COMPLETED)
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
    return results
