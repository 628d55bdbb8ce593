"""The scheduler keeps a file's columns with the slot that read it and orders rows by task."""

from __future__ import annotations

import numpy as np

from clusterdesk.analysis import ScanSettings
from clusterdesk.screen.discover import FileRef
from clusterdesk.screen.filecache import ColumnInfo, FileListing, SheetListing
from clusterdesk.screen.scheduler import Scheduler
from clusterdesk.screen.tasks import ColumnJob, JobFailure, ListJob, ScreenRow


def _listing(path, n_columns):
    cols = tuple(ColumnInfo(j, f"c{j}", 5, 0, 0, True, False, ()) for j in range(n_columns))
    return FileListing(path=path, sha256=path[-1] * 64, sheets=(SheetListing(None, cols),))


def _row(task):
    return ScreenRow(file=task.file, sheet="", column=task.column, position=task.position, status="ok")


def _refs(n_files):
    return [FileRef(file=f"f{i}.csv", path=f"/d/f{i}") for i in range(n_files)]


def test_each_slot_lists_a_file_then_keeps_to_its_columns():
    sched = Scheduler(_refs(2), None, ScanSettings())
    a, b = sched.next_job("A"), sched.next_job("B")
    assert a == ListJob("/d/f0") and b == ListJob("/d/f1")
    sched.finish(a, _listing("/d/f0", 3))
    sched.finish(b, _listing("/d/f1", 3))
    seen = {"A": [], "B": []}
    for _ in range(3):
        for slot in ("A", "B"):
            job = sched.next_job(slot)
            seen[slot].append(job.task.path)
            sched.finish(job, _row(job.task))
    assert seen == {"A": ["/d/f0"] * 3, "B": ["/d/f1"] * 3}
    assert sched.exhausted and sched.next_job("A") is None


def test_an_idle_slot_takes_columns_from_the_back_of_the_fullest_file():
    sched = Scheduler(_refs(1), None, ScanSettings())
    job = sched.next_job("A")
    assert sched.next_job("B") is None  # nothing listed yet
    sched.finish(job, _listing("/d/f0", 4))
    front, back = sched.next_job("A"), sched.next_job("B")
    assert (front.task.position, back.task.position) == (0, 3)
    assert sched.next_job("C").task.position == 2  # two were left: one taken from the back
    assert sched.next_job("D") is None  # one left: its owners will do it
    # the last column goes to a thief only when nobody else is running (force)
    sched2 = Scheduler(_refs(1), None, ScanSettings())
    sched2.finish(sched2.next_job("A"), _listing("/d/f0", 2))
    first = sched2.next_job("A")
    assert sched2.next_job("B") is None and sched2.next_job("B", force=True).task.position == 1
    assert first.task.position == 0


def test_rows_come_in_task_order_whatever_the_finishing_order():
    rng = np.random.default_rng(11)
    sched = Scheduler(_refs(3), None, ScanSettings())
    listings = {f"/d/f{i}": _listing(f"/d/f{i}", 4) for i in range(3)}
    running = []
    slots = ["A", "B", "C"]
    while not sched.exhausted or running:
        for slot in slots:
            if slot not in [s for s, _ in running]:
                job = sched.next_job(slot, force=not running)
                if job is not None:
                    running.append((slot, job))
        slot, job = running.pop(int(rng.integers(len(running))))
        if isinstance(job, ListJob):
            sched.finish(job, listings[job.path])
        else:
            sched.finish(job, _row(job.task))
    order = [(r.file, r.position) for r in sched.rows()]
    assert order == [(f"f{i}.csv", j) for i in range(3) for j in range(4)]


def test_a_lost_job_becomes_a_failed_row_that_is_not_journaled():
    sched = Scheduler(_refs(1), None, ScanSettings())
    sched.finish(sched.next_job("A"), _listing("/d/f0", 1))
    job = sched.next_job("A")
    assert isinstance(job, ColumnJob)
    events = sched.finish(job, JobFailure("The worker process stopped with exit code -9."))
    assert len(events) == 1 and not events[0].durable
    assert sched.rows()[0].status == "failed" and "exit code -9" in sched.rows()[0].reason
    lost = Scheduler(_refs(1), None, ScanSettings())
    assert lost.finish(lost.next_job("A"), JobFailure("stopped")) == []
    assert lost.rows()[0].status == "failed" and lost.exhausted


def test_journaled_listings_and_rows_are_reused():
    listing = _listing("/d/f0", 3)
    fresh = Scheduler(_refs(1), None, ScanSettings())
    fresh.finish(fresh.next_job("A"), listing)
    first = fresh.next_job("A").task
    known = {(first.key, first.sha256): _row(first)}
    sched = Scheduler(_refs(1), None, ScanSettings(), known_listings={"/d/f0": listing}, known_rows=known)
    assert sched.reused == 1 and sched.column_counts() == (1, 3)
    jobs = [sched.next_job("A"), sched.next_job("A")]
    assert [j.task.position for j in jobs] == [1, 2]
