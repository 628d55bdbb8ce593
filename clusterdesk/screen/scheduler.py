"""Which job goes to which worker slot next, and the bookkeeping of a run's results.

The rule keeps each file's columns with the slot that read it, because a
worker keeps the files it read parsed (:mod:`.filecache`):

1. a slot carries on with the columns of the file it is working on;
2. else it takes the next file nobody has started, in input order (listing it
   first, unless the journal already has its listing);
3. else it takes columns from the back of the file with the most columns left
   (so the two slots meet in the middle), when at least two are left.

Which slot fits a column never changes the column's row (its seed comes from
the column itself), so the rule only decides how fast the run goes. The rows
come out in task order (file, sheet, column), whatever the order of finishing.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field

from .discover import FileRef, plan_file
from .filecache import FileListing
from .tasks import ColumnJob, ColumnTask, JobFailure, ListJob, ScreenRow, failed_row

__all__ = ["Scheduler", "Event"]

_MIN_STEAL = 2


@dataclass
class _File:
    ref: FileRef
    listing: FileListing | None = None
    listing_started: bool = False
    entries: list = field(default_factory=list)
    remaining: deque = field(default_factory=deque)
    tasks: int = 0


@dataclass(frozen=True)
class Event:
    """Something to record in the journal: a file's listing, or a finished column.

    Attributes
    ----------
    kind : {"listing", "row"}
    listing : FileListing or None
    task : ColumnTask or None
    row : ScreenRow or None
    durable : bool
        False for a failure of the machinery (a worker that stopped): not
        journaled, so a resumed run tries again.
    """

    kind: str
    listing: FileListing | None = None
    task: ColumnTask | None = None
    row: ScreenRow | None = None
    durable: bool = True


class Scheduler:
    """The jobs of one screening run.

    Parameters
    ----------
    refs : list of FileRef
        The run's files in order (from :func:`.discover.expand_inputs`).
    matcher : callable(str) -> bool, or None
        Column patterns (from :func:`.discover.column_matcher`).
    settings : ScanSettings
    known_listings : dict of str to FileListing, optional
        Listings from the journal, by absolute path (for files whose bytes
        are unchanged).
    known_rows : dict of (key, sha256) to ScreenRow, optional
        Finished columns from the journal (same settings).
    """

    def __init__(self, refs, matcher, settings, *, known_listings=None, known_rows=None):
        self._settings = settings
        self._matcher = matcher
        self._known_rows = known_rows or {}
        self._files = [_File(ref) for ref in refs]
        self._by_path = {f.ref.path: f for f in self._files if not f.ref.problem}
        self._unstarted = deque(f for f in self._files if not f.ref.problem)
        self._active: list[_File] = []
        self._slot_file: dict = {}
        self._from_back: dict = {}
        self.results: dict[str, ScreenRow] = {}
        self.reused = 0
        self.computed = 0
        self.failed = sum(1 for f in self._files if f.ref.problem)
        self.files_listed = self.failed
        self._new_rows: list[ScreenRow] = [_problem_row(f.ref) for f in self._files if f.ref.problem]
        for f in self._files:
            listing = (known_listings or {}).get(f.ref.path)
            if listing is not None and not f.ref.problem:
                self._plan(f, listing)

    # ------------------------------------------------------------------ planning
    def _plan(self, f: _File, listing: FileListing) -> None:
        f.listing = listing
        f.entries = plan_file(f.ref, listing, self._matcher, self._settings.seed)
        self.files_listed += 1
        for entry in f.entries:
            if not isinstance(entry, ColumnTask):
                if entry.status == "failed":
                    self.failed += 1
                self._new_rows.append(entry)
                continue
            f.tasks += 1
            known = self._known_rows.get((entry.key, entry.sha256))
            if known is not None:
                self.results[entry.key] = known
                self._new_rows.append(known)
                self.reused += 1
                self.failed += known.status == "failed"
            else:
                f.remaining.append(entry)
        if f.remaining and f not in self._active:
            self._active.append(f)

    # ------------------------------------------------------------------ handing out
    def _take(self, slot, f: _File, from_back: bool) -> ColumnJob:
        self._slot_file[slot], self._from_back[slot] = f, from_back
        task = f.remaining.pop() if from_back else f.remaining.popleft()
        if not f.remaining:
            self._active.remove(f)
        return ColumnJob(task, self._settings)

    def next_job(self, slot, *, force: bool = False):
        """The next job for an idle slot, or None when there is nothing to hand out now.

        Parameters
        ----------
        slot : hashable
            The slot that is idle.
        force : bool, default False
            Take over a file's last column too (when no job is running, nobody
            else will).

        Returns
        -------
        ListJob, ColumnJob or None
        """
        own = self._slot_file.get(slot)
        if own is not None and own.remaining:
            return self._take(slot, own, self._from_back.get(slot, False))
        while self._unstarted:
            f = self._unstarted.popleft()
            if f.listing is None:
                f.listing_started = True
                self._slot_file[slot], self._from_back[slot] = f, False
                return ListJob(f.ref.path)
            if f.remaining:
                return self._take(slot, f, False)
        if self._active:
            victim = max(self._active, key=lambda a: len(a.remaining))
            if force or len(victim.remaining) >= _MIN_STEAL:
                return self._take(slot, victim, True)
        return None

    # ------------------------------------------------------------------ results
    def finish(self, job, outcome) -> list[Event]:
        """Record a finished job; returns what to journal.

        Parameters
        ----------
        job : ListJob or ColumnJob
        outcome : FileListing, ScreenRow or JobFailure

        Returns
        -------
        list of Event
        """
        if isinstance(job, ListJob):
            f = self._by_path[job.path]
            if f.listing is not None:
                return []
            if isinstance(outcome, JobFailure):
                self._plan(f, FileListing(path=job.path, error=outcome.reason))
                return []
            self._plan(f, outcome)
            return [] if outcome.error else [Event("listing", listing=outcome)]
        task = job.task
        durable = not isinstance(outcome, JobFailure)
        row = outcome if durable else failed_row(task, outcome.reason)
        if task.key in self.results:
            return []
        self.results[task.key] = row
        self._new_rows.append(row)
        self.computed += 1
        self.failed += row.status == "failed"
        return [Event("row", task=task, row=row, durable=durable)]

    # ------------------------------------------------------------------ state
    @property
    def exhausted(self) -> bool:
        """Nothing left to hand out (jobs may still be running)."""
        return not self._unstarted and not self._active

    def column_counts(self) -> tuple[int, int]:
        """(columns finished, columns known so far) among the files listed."""
        return len(self.results), sum(f.tasks for f in self._files)

    def files_to_list(self) -> int:
        """Files whose columns are not known yet."""
        return len(self._files) - self.files_listed

    def take_new_rows(self) -> list[ScreenRow]:
        """The rows that became known since the last call (in the order they became known)."""
        fresh, self._new_rows = self._new_rows, []
        return fresh

    def rows(self) -> list[ScreenRow]:
        """Every row so far, in task order (unfinished columns are left out)."""
        out = []
        for f in self._files:
            if f.ref.problem:
                out.append(_problem_row(f.ref))
                continue
            for entry in f.entries:
                if isinstance(entry, ColumnTask):
                    if entry.key in self.results:
                        out.append(self.results[entry.key])
                else:
                    out.append(entry)
        return out


def _problem_row(ref: FileRef) -> ScreenRow:
    """The row of an input that gave no file (missing, a pattern that matched nothing)."""
    return ScreenRow(file=ref.file, sheet="", column="", position=None, status="failed", reason=ref.problem)
