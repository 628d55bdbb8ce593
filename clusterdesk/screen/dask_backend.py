"""Screening beyond one machine: the same jobs on a Dask distributed cluster.

Optional: needs ``pip install 'clusterdesk[cluster]'`` (dask and distributed),
and is the only module of ClusterDesk that imports them. Give the address of
a running scheduler (``dask scheduler`` on one machine, ``dask worker ADDRESS``
on the others); every worker must read the input files at the same paths (a
shared folder) and have ClusterDesk installed.

Each worker thread is one slot of the run's scheduler, so the columns of a
file go to the worker that read it, as with local processes; a job sent to a
worker that has left runs on another one. The rows are the same as with the
local workers: each column's seed comes from the column itself.
"""

from __future__ import annotations

import uuid

from ..errors import InputError
from .pool import limit_blas_threads
from .tasks import JobFailure, run_job

__all__ = ["DaskBackend"]

_CONNECT_SECONDS = 30


def _run_on_worker(job):
    """Run one job on a Dask worker (BLAS limited to one thread, as in local workers)."""
    limit_blas_threads()
    return run_job(job)


class DaskBackend:
    """Jobs on a Dask cluster, one slot per worker thread.

    Parameters
    ----------
    address : str
        The scheduler's address, e.g. ``"tcp://10.0.0.5:8786"``.
    timeout : float, default 30
        Seconds to wait for the scheduler and for a first worker.

    Raises
    ------
    InputError
        dask/distributed are not installed, the scheduler cannot be reached,
        or it has no worker.
    """

    def __init__(self, address: str, *, timeout: float = _CONNECT_SECONDS):
        try:
            from distributed import Client
        except ImportError:
            raise InputError("Screening on a Dask cluster needs dask and distributed; install them with "
                             "pip install 'clusterdesk[cluster]', or leave out the scheduler address "
                             "to use this machine's cores.") from None
        try:
            self._client = Client(address, timeout=timeout, set_as_default=False)
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"The Dask scheduler at {address!r} could not be reached ({exc}); check the "
                             "address and that the scheduler is running.") from None
        try:
            self._client.wait_for_workers(1, timeout=timeout)
        except TimeoutError:
            self._client.close()
            raise InputError(f"The Dask scheduler at {address!r} has no worker; start workers with "
                             f"'dask worker {address}'.") from None
        threads = self._client.nthreads()
        self.slots = [(worker, i) for worker in sorted(threads) for i in range(max(1, int(threads[worker])))]
        self._run = uuid.uuid4().hex[:12]
        self._pending: dict = {}

    def submit(self, slot, job_id, job) -> None:
        """Send a job to the worker of ``slot`` (elsewhere if that worker has left)."""
        future = self._client.submit(_run_on_worker, job, key=f"clusterdesk-screen-{self._run}-{job_id}",
                                     workers=[slot[0]], allow_other_workers=True, pure=False)
        self._pending[future] = (slot, job_id)

    def wait(self, timeout: float):
        """Finished jobs as ``[(slot, job_id, result)]``; empty when none finished within ``timeout``."""
        from distributed import wait

        if not self._pending:
            return []
        try:
            with self._client.as_current():
                done, _ = wait(list(self._pending), timeout=timeout, return_when="FIRST_COMPLETED")
        except TimeoutError:
            return []
        out = []
        for future in done:
            slot, job_id = self._pending.pop(future)
            if future.status == "finished":
                out.append((slot, job_id, future.result()))
            else:
                exc = future.exception() if future.status == "error" else None
                reason = (f"The Dask job failed ({type(exc).__name__}: {' '.join(str(exc).split())})."
                          if exc is not None else f"The Dask job ended as {future.status!r}.")
                out.append((slot, job_id, JobFailure(reason)))
        return out

    def close(self, *, abandon: bool = False) -> None:
        """Cancel what is still running (with ``abandon``) and disconnect; the cluster stays up."""
        if abandon and self._pending:
            self._client.cancel(list(self._pending))
        self._pending.clear()
        self._client.close()
