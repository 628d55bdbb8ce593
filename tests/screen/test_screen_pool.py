"""Worker processes: jobs go where they are sent, and a dead worker is reported and replaced."""

from __future__ import annotations

import os
import signal
import time

from clusterdesk.screen.filecache import FileListing, list_file
from clusterdesk.screen.pool import ProcessBackend
from clusterdesk.screen.tasks import ColumnJob, ColumnTask, JobFailure, ListJob, column_seed

from screen_helpers import SETTINGS


def _wait_all(backend, n, limit=120.0):
    got, start = [], time.monotonic()
    while len(got) < n and time.monotonic() - start < limit:
        got += backend.wait(0.5)
    return got


def test_jobs_run_on_the_slot_they_were_sent_to_and_a_killed_worker_is_replaced(inputs):
    _, files = inputs
    big = str(files["nested/big.csv"].resolve())
    sha = list_file(big).sha256
    task = ColumnTask(file=big, path=big, sha256=sha, sheet=None, position=1, column="level_au",
                      seed=column_seed(0, sha, None, 1, "level_au"))
    backend = ProcessBackend(2)
    try:
        backend.submit(0, 1, ListJob(str(files["good.csv"].resolve())))
        backend.submit(1, 2, ColumnJob(task, SETTINGS))
        first = _wait_all(backend, 1)
        assert [(slot, job_id) for slot, job_id, _ in first] == [(0, 1)]
        assert isinstance(first[0][2], FileListing) and not first[0][2].error
        victim = backend._procs[1]
        os.kill(victim.pid, signal.SIGKILL)
        lost = _wait_all(backend, 1)
        assert len(lost) == 1 and lost[0][:2] == (1, 2) and isinstance(lost[0][2], JobFailure)
        assert "exit code -9" in lost[0][2].reason
        assert backend._procs[1].pid != victim.pid
        backend.submit(1, 3, ListJob(str(files["tiny.csv"].resolve())))
        again = _wait_all(backend, 1)
        assert again[0][:2] == (1, 3) and again[0][2].sheets[0].columns[0].name == "value"
    finally:
        backend.close()
