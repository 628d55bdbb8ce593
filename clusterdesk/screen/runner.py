"""Screen many files and columns: hand out the jobs, journal what finishes, write the outputs.

Results never depend on the number of workers or on the order in which jobs
finish: each column has its own seed (:func:`.tasks.column_seed`), and the
rows are put in task order (file, sheet, column) at the end. Jobs run in this
process (one worker), in worker processes on this machine
(:class:`.pool.ProcessBackend`) or on a Dask cluster
(:mod:`.dask_backend`, given a scheduler address).

With an output folder, every finished column is appended to the journal
(:mod:`.journal`) before the next job is handed out; ``resume=True`` reuses
the finished columns of an interrupted run whose files and settings are
unchanged, and redoes only the rest. The summary (CSV) and the overview
(HTML) are written at the end of a complete run, never for an interrupted
one.
"""

from __future__ import annotations

import hashlib
import os
import time
from dataclasses import dataclass, field
from pathlib import Path

from ..analysis import ScanSettings
from ..engine.parallel import check_seed
from ..engine.validation import check_widths
from ..errors import Cancelled, InputError
from .discover import column_matcher, expand_inputs
from .journal import JOURNAL_NAME, Journal, JournalContents, read_journal, settings_fingerprint
from .overview import OVERVIEW_NAME, write_overview
from .pool import InlineBackend, ProcessBackend
from .progress import ScreenProgress
from .scheduler import Scheduler
from .summary import SUMMARY_NAME, status_counts, write_summary

__all__ = ["ScreenResult", "UnfinishedRun", "UnfinishedRunError", "screen", "unfinished_run", "check_settings",
           "default_workers"]

_WAIT_SECONDS = 0.5


class UnfinishedRunError(InputError):
    """The output folder holds the journal of an unfinished run, and neither resume nor start over was asked."""


@dataclass(frozen=True)
class ScreenResult:
    """The outcome of a screening run.

    Attributes
    ----------
    rows : tuple of ScreenRow
        In task order; for an interrupted run, only the finished columns.
    counts : dict of str to int
        Rows by status ("ok", "failed", "skipped").
    computed : int
        Columns fitted in this run.
    reused : int
        Columns taken from the journal of an earlier run.
    cancelled : bool
        The run was interrupted; nothing but the journal was written.
    elapsed : float
        Seconds.
    workers : int
        Slots that ran jobs (processes, or Dask worker threads).
    written : dict of str to Path
        ``"summary"``, ``"overview"`` and ``"journal"`` when written.
    """

    rows: tuple
    counts: dict
    computed: int
    reused: int
    cancelled: bool
    elapsed: float
    workers: int
    written: dict = field(default_factory=dict)


@dataclass(frozen=True)
class UnfinishedRun:
    """An interrupted screening run found in an output folder.

    Attributes
    ----------
    folder : Path
        The output folder.
    columns_done : int
        Columns the run finished (all settings).
    with_these_settings : int
        Of those, the columns finished with the settings asked about: the
        ones a resumed run reuses, for files that have not changed since.
    """

    folder: Path
    columns_done: int
    with_these_settings: int


def unfinished_run(out, settings: ScanSettings) -> UnfinishedRun | None:
    """The interrupted run in an output folder, if any (what ``screen`` refuses without resume or start over).

    Parameters
    ----------
    out : str or Path
        An output folder (it need not exist).
    settings : ScanSettings
        The settings of the run about to start.

    Returns
    -------
    UnfinishedRun or None
        None when the folder holds no journal, or the journal of a run that
        finished or finished no column.

    Raises
    ------
    InputError
        The journal file is not a screening journal.
    OSError
        The journal cannot be read.
    """
    out = Path(out)
    contents = read_journal(out / JOURNAL_NAME)
    if not contents.unfinished:
        return None
    fingerprint = settings_fingerprint(settings)
    same = sum(1 for (_key, _sha, fp) in contents.rows if fp == fingerprint)
    return UnfinishedRun(folder=out, columns_done=contents.row_count(), with_these_settings=same)


def default_workers() -> int:
    """The cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def check_settings(settings: ScanSettings) -> ScanSettings:
    """Check the scan settings once, before any column is read.

    Raises
    ------
    InputError
        A setting that no column could be screened with.
    """
    for name in ("kmin", "kmax", "restarts"):
        value = getattr(settings, name)
        if isinstance(value, bool) or not isinstance(value, int) or value < 1:
            raise InputError(f"{name} must be a whole number >= 1, got {value!r}.")
    if settings.kmin > settings.kmax:
        raise InputError(f"kmin ({settings.kmin}) is larger than kmax ({settings.kmax}); swap them.")
    check_widths(settings.widths)
    check_seed(settings.seed)
    return settings


def _file_sha256(path: str) -> str | None:
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    except OSError:
        return None
    return digest.hexdigest()


def _from_journal(contents: JournalContents, refs, fingerprint: str):
    """Listings of unchanged files and finished rows with the same settings."""
    wanted = {r.path for r in refs if not r.problem}
    paths_with_listing = {path for path, _ in contents.listings} & wanted
    current = {path: _file_sha256(path) for path in paths_with_listing}
    listings = {path: contents.listings[(path, sha)] for path, sha in current.items()
                if sha is not None and (path, sha) in contents.listings}
    rows = {(key, sha): row for (key, sha, fp), row in contents.rows.items() if fp == fingerprint}
    return listings, rows


def _open_journal(out: Path | None, settings, fingerprint, *, resume: bool, start_over: bool):
    if out is None:
        if resume:
            raise InputError("Resuming needs the output folder of the interrupted run (out=...).")
        return None, JournalContents()
    path = out / JOURNAL_NAME
    contents = read_journal(path) if path.exists() else JournalContents()
    if contents.unfinished and not resume and not start_over:
        raise UnfinishedRunError(
            f"{out} holds an unfinished screening run ({contents.row_count()} columns done); "
            "resume it (--resume) or discard it (--start-over), or choose another output folder.")
    if not resume:
        contents = JournalContents()
    return Journal(path, fingerprint, settings, fresh=not resume), contents


def _make_backend(workers: int, scheduler_address, cancel):
    if scheduler_address:
        from .dask_backend import DaskBackend

        return DaskBackend(scheduler_address)
    return InlineBackend(cancel) if workers == 1 else ProcessBackend(workers)


def _seconds_left(sched: Scheduler, started: float) -> float | None:
    done, known = sched.column_counts()
    if not sched.computed:
        return None
    listed = max(1, sched.files_listed)
    per_file = known / listed
    left = known - done + sched.files_to_list() * per_file
    return left * (time.monotonic() - started) / sched.computed


def _report(progress, sched: Scheduler, started: float) -> None:
    if progress is None:
        return
    done, known = sched.column_counts()
    listed = max(1, sched.files_listed)
    estimate = known + int(round(sched.files_to_list() * known / listed))
    progress(ScreenProgress(done=done, total=max(estimate, done), computed=sched.computed,
                            failed=sched.failed, files_to_list=sched.files_to_list(),
                            elapsed=time.monotonic() - started, seconds_left=_seconds_left(sched, started),
                            new_rows=tuple(sched.take_new_rows())))


def _journal_events(journal, events) -> None:
    if journal is None:
        return
    for event in events:
        if not event.durable:
            continue
        if event.kind == "listing":
            journal.add_listing(event.listing)
        else:
            journal.add_row(event.task.key, event.task.sha256, event.row)


def _drive(sched: Scheduler, backend, journal, progress, cancel, started: float) -> bool:
    """Run every job; returns True when cancelled."""
    in_flight: dict = {}
    idle = list(backend.slots)
    next_id = 0
    to_journal: list = []
    while True:
        if cancel is not None and cancel.is_set():
            _journal_events(journal, to_journal)  # finished columns are kept for a resumed run
            return True
        for slot in list(idle):
            job = sched.next_job(slot, force=not in_flight)
            if job is None:
                continue
            idle.remove(slot)
            in_flight[next_id] = job
            backend.submit(slot, next_id, job)
            next_id += 1
        # The journal is written (and synced to disk) only once the idle workers have their
        # next jobs: a sync takes milliseconds, a worker waiting for it would stand idle.
        _journal_events(journal, to_journal)
        to_journal = []
        if not in_flight:
            if sched.exhausted:
                return False
            raise RuntimeError("The screening scheduler has work left but handed none out.")
        try:
            finished = backend.wait(_WAIT_SECONDS)
        except Cancelled:
            _journal_events(journal, to_journal)
            return True
        for slot, job_id, outcome in finished:
            job = in_flight.pop(job_id, None)
            if job is None:
                continue
            idle.append(slot)
            to_journal.extend(sched.finish(job, outcome))
        if finished:
            _report(progress, sched, started)


def screen(inputs, *, columns=None, settings: ScanSettings = ScanSettings(), workers: int | None = None,
           out=None, resume: bool = False, start_over: bool = False, scheduler: str | None = None,
           progress=None, cancel=None) -> ScreenResult:
    """Screen every numeric column (or those matching patterns) of files, folders and glob patterns.

    Parameters
    ----------
    inputs : sequence of str or Path
        Files, folders (searched recursively) and glob patterns; see :mod:`.discover`.
    columns : sequence of str, optional
        Column name patterns: shell-style wildcards (fnmatch, ignoring case),
        or ``"re:"`` followed by a regular expression. Default: every
        mostly-numeric column except running row numbers.
    settings : ScanSettings, optional
        kmin, kmax, widths, restarts and the seed (default 1 to 6, both
        widths, 10 restarts, seed 0).
    workers : int, optional
        Worker processes; default the cores available. 1 runs in this process.
    out : str or Path, optional
        Output folder: summary.csv, overview.html and the journal. None keeps
        the results in memory only (no resume possible).
    resume : bool, default False
        Reuse the finished columns in the journal of ``out``.
    start_over : bool, default False
        Discard an unfinished run's journal in ``out`` instead of refusing.
    scheduler : str, optional
        Address of a Dask scheduler (e.g. ``"tcp://10.0.0.5:8786"``); the jobs
        then run on that cluster (needs the ``cluster`` extra), whose workers
        must read the files at the same paths.
    progress : callable(ScreenProgress), optional
        Called after each finished job.
    cancel : object with ``is_set()``, optional
        Stops the run; the journal keeps the finished columns.

    Returns
    -------
    ScreenResult

    Raises
    ------
    InputError
        Settings or patterns no column could be screened with, or an unfinished
        run in ``out`` (:class:`UnfinishedRunError`). A file or column that
        cannot be read is a row with status "failed", never an exception.
    """
    started = time.monotonic()
    check_settings(settings)
    matcher = column_matcher(columns)
    if workers is None:
        workers = default_workers()
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
        raise InputError(f"workers must be a whole number >= 1, got {workers!r}.")
    out = Path(out) if out is not None else None
    refs = expand_inputs(inputs, exclude=[out] if out is not None else [])
    fingerprint = settings_fingerprint(settings)
    journal, contents = _open_journal(out, settings, fingerprint, resume=resume, start_over=start_over)
    try:
        listings, rows = _from_journal(contents, refs, fingerprint)
        sched = Scheduler(refs, matcher, settings, known_listings=listings, known_rows=rows)
        backend = _make_backend(workers, scheduler, cancel)
        cancelled = True
        try:
            cancelled = _drive(sched, backend, journal, progress, cancel, started)
        finally:
            backend.close(abandon=cancelled)
        _report(progress, sched, started)
        result_rows = tuple(sched.rows())
        counts = status_counts(result_rows)
        written = {}
        if out is not None:
            if not cancelled:
                written["summary"] = write_summary(out / SUMMARY_NAME, result_rows)
                written["overview"] = write_overview(out / OVERVIEW_NAME, result_rows, settings)
                journal.finish(counts)
            written["journal"] = journal.path
    finally:
        if journal is not None:
            journal.close()
    return ScreenResult(rows=result_rows, counts=counts, computed=sched.computed, reused=sched.reused,
                        cancelled=cancelled, elapsed=time.monotonic() - started,
                        workers=len(backend.slots), written=written)
