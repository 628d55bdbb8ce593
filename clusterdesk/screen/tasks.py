"""One column in, one summary row out: the unit of work of a screening run.

:func:`screen_column` never raises for a problem with the data: a column that
cannot be read or fitted gives a row with status ``"failed"`` and the reason,
so that a batch of a thousand columns goes on past the bad ones. Only a
cancel request (:class:`~clusterdesk.errors.Cancelled`) stops it.

Each column's scan has its own seed, derived from the user's seed and the
column's identity by :func:`column_seed`, so a column's result does not depend
on which worker fits it, on how many workers there are, or on the other
columns of the run.
"""

from __future__ import annotations

import hashlib
import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from ..analysis import ScanSettings
from ..api import scan
from ..engine.criteria import evidence_wording
from ..engine.treatment import interval_offsets, with_censored
from ..engine.validation import max_components, prepare_sample
from ..errors import Cancelled, InputError
from . import filecache

__all__ = ["TREATMENT_EXACT", "TREATMENT_INTERVALS", "ColumnTask", "ScreenRow", "ListJob", "ColumnJob", "JobFailure",
           "column_seed", "screen_column", "run_job", "failed_row", "describe_model", "HISTOGRAM_BINS"]

#: How the values enter the likelihood: each value as an exact number.
TREATMENT_EXACT = "exact values"
TREATMENT_INTERVALS = "intervals of the resolution"
#: Bins of the small histogram kept with each row (for the overview's plot).
HISTOGRAM_BINS = 40


@dataclass(frozen=True)
class ColumnTask:
    """One column to screen.

    Attributes
    ----------
    file : str
        The file as shown in the summary (as found from the inputs).
    path : str
        Absolute path.
    sha256 : str
        Digest of the file's bytes when its columns were listed.
    sheet : str or None
        Sheet name (workbooks) or None (text files).
    position : int
        0-based column position.
    column : str
        Column name.
    seed : int
        Seed of this column's scan (see :func:`column_seed`).
    """

    file: str
    path: str
    sha256: str
    sheet: str | None
    position: int
    column: str
    seed: int

    @property
    def key(self) -> str:
        """Identity of the task in the journal (with the file's digest and the settings)."""
        return f"{self.path}\x1f{self.sheet or ''}\x1f{self.position}\x1f{self.column}"


@dataclass(frozen=True)
class ScreenRow:
    """The summary of one column (or of a file, sheet or input that gave no column).

    Attributes
    ----------
    file, sheet, column : str
        Where the row comes from; ``sheet`` is "" for text files, ``column`` is
        "" for a row about a whole file or sheet.
    position : int or None
        0-based column position.
    status : {"ok", "failed", "skipped"}
    reason : str
        Why the column failed or was skipped (one sentence).
    rows_read, rows_kept, rows_excluded : int or None
    excluded_reasons : str
        E.g. ``"3 not a number; 1 empty"``.
    resolution : float or None
        Step of the value grid, None for continuous values.
    treatment : str
        How the values enter the likelihood (``"exact values"`` or
        ``"intervals of the resolution"``, as the automatic treatment chose).
    kmin, kmax : int or None
        Range of component counts scanned (kmax is lowered, with a note, when
        the column has too few distinct values for the one asked).
    best_k : int or None
    best_widths : str
        ``"separate"`` or ``"shared"``.
    bic : float or None
        BIC of the best model.
    runner_up : str
        The runner-up model, e.g. ``"3 components, shared width"``.
    bic_gap : float or None
        Runner-up's BIC minus the best's (>= 0).
    evidence : str
        Kass & Raftery wording of the gap ("weak" ... "very strong").
    weights, means, sds : tuple of float
        Components of the best model, ordered by mean.
    converged : bool or None
    restarts_agreeing, restarts : int or None
        Restarts of the best model that reached its log-likelihood, and restarts run.
    notes : tuple of str
        Warnings and notes (fit, reader, kmax lowered).
    seed : int or None
        Seed of the column's scan: ``clusterdesk.scan(values, seed=seed, ...)``
        gives the same models.
    sha256 : str
        Digest of the file's bytes.
    histogram : tuple
        ``(low, high, count_1, ..., count_B)`` of the kept values, for plots.
    """

    file: str
    sheet: str
    column: str
    position: int | None
    status: str
    reason: str = ""
    rows_read: int | None = None
    rows_kept: int | None = None
    rows_excluded: int | None = None
    excluded_reasons: str = ""
    resolution: float | None = None
    treatment: str = ""
    kmin: int | None = None
    kmax: int | None = None
    best_k: int | None = None
    best_widths: str = ""
    bic: float | None = None
    runner_up: str = ""
    bic_gap: float | None = None
    evidence: str = ""
    weights: tuple = ()
    means: tuple = ()
    sds: tuple = ()
    converged: bool | None = None
    restarts_agreeing: int | None = None
    restarts: int | None = None
    notes: tuple = ()
    seed: int | None = None
    sha256: str = ""
    histogram: tuple = field(default=(), repr=False)


@dataclass(frozen=True)
class ListJob:
    """List the sheets and columns of one file."""

    path: str


@dataclass(frozen=True)
class ColumnJob:
    """Screen one column with the given settings."""

    task: ColumnTask
    settings: ScanSettings


@dataclass(frozen=True)
class JobFailure:
    """A job that ended without a result (its worker stopped or raised); ``reason`` says how."""

    reason: str


def column_seed(seed: int, sha256: str, sheet: str | None, position: int, column: str) -> int:
    """The seed of one column's scan: a stable hash of the user's seed and the column's identity.

    The file enters by its content (SHA-256), not its name, so a copied or
    moved folder gives the same results; the sheet, the position and the name
    tell the columns of one file apart.

    Parameters
    ----------
    seed : int
        The user's seed (>= 0).
    sha256 : str
        Hex digest of the file's bytes.
    sheet : str or None
    position : int
        0-based column position.
    column : str
        Column name.

    Returns
    -------
    int
        A whole number in [0, 2**63).
    """
    text = "\x1f".join(("clusterdesk-screen", str(int(seed)), sha256, sheet or "", str(int(position)), column))
    return int.from_bytes(hashlib.sha256(text.encode("utf-8", "surrogatepass")).digest()[:8], "big") >> 1


def _sentence(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    return text or type(exc).__name__


def failed_row(task: ColumnTask, reason: str) -> ScreenRow:
    """A row with status "failed" for a task."""
    return ScreenRow(file=task.file, sheet=task.sheet or "", column=task.column, position=task.position,
                     status="failed", reason=reason, treatment=TREATMENT_EXACT, seed=task.seed,
                     sha256=task.sha256)


def _histogram(values: np.ndarray) -> tuple:
    low, high = float(values.min()), float(values.max())
    if high <= low:
        return (low, high, int(values.size))
    counts, _ = np.histogram(values, bins=HISTOGRAM_BINS, range=(low, high))
    return (low, high, *(int(c) for c in counts))


def describe_model(k: int, widths: str) -> str:
    """A model in words, e.g. ``"3 components, shared width"``."""
    if k == 1:
        return "1 component"
    return f"{k} components, {widths} width{'s' if widths == 'separate' else ''}"


def _runner_up(result):
    """The best credible model after the first that is a different model (None when there is none).

    With one component, separate widths and a shared width are the same
    model (same likelihood, same parameters, same BIC), so the other variant
    of a one-component best is passed over: its gap of 0 says nothing.
    """
    best = result.ranking[0]
    if best.collapsed:
        return None
    return next((row for row in result.ranking[1:]
                 if not row.collapsed and not (row.k == 1 and best.k == 1)), None)


def _fit(data: filecache.ColumnValues, task: ColumnTask, settings: ScanSettings, cancel) -> ScreenRow:
    notes = list(data.notes)
    limit = max_components(prepare_sample(data.values, None))
    kmax = min(settings.kmax, limit)
    if kmax < settings.kmin:
        raise InputError(f"The column has too few distinct values for {settings.kmin} components "
                         f"(at most {limit} can be fitted); lower --kmin or add values.")
    if kmax < settings.kmax:
        notes.append(f"kmax lowered from {settings.kmax} to {kmax}: the column has too few "
                     "distinct values for more components.")
    given = {"values": data.values}
    limits, sides, limit_counts = data.censored
    if limits.size and data.resolution is not None:
        # As the analysis does: readings at a limit enter as censored intervals (the values as
        # intervals of their resolution), so a screened column gets the fit its analysis gets.
        lo, hi = interval_offsets("middle", data.resolution)
        given = with_censored(data.values, None, (data.values + lo, data.values + hi), limits, sides, limit_counts)
        notes.append(f"{limit_counts.sum():,.0f} readings at a detection or reporting limit are in the fit "
                     "as censored readings.")
    elif limits.size:
        notes.append(f"{limit_counts.sum():,.0f} readings at a detection or reporting limit are left out: "
                     "no recording resolution is known to treat the values as intervals.")
    # One process per column: the screening's workers are the parallel unit.
    result = scan(**given, kmin=settings.kmin, kmax=kmax, widths=settings.widths,
                  restarts=settings.restarts, seed=task.seed, cancel=cancel, workers=1)
    best = result.best
    mix = best.mixture
    second = _runner_up(result)
    notes.extend(result.notes)  # on the scan as a whole, e.g. values far outside the rest
    notes.extend(best.notes)
    if result.ranking[0].collapsed:
        notes.append("Every model collapsed (a component on a single value); the fit is not credible.")
    return ScreenRow(
        file=task.file, sheet=task.sheet or "", column=task.column, position=task.position, status="ok",
        rows_read=data.rows_read, rows_kept=data.rows_kept, rows_excluded=data.rows_read - data.rows_kept,
        excluded_reasons="; ".join(f"{n} {words}" for words, n in data.excluded.items()),
        resolution=data.resolution, kmin=settings.kmin, kmax=kmax, best_k=best.k,
        treatment=TREATMENT_INTERVALS if result.treatment.used == "intervals" else TREATMENT_EXACT, best_widths=best.widths, bic=float(best.bic),
        runner_up=describe_model(second.k, second.widths) if second else "",
        bic_gap=float(second.delta_bic) if second else None,
        evidence=evidence_wording(second.delta_bic) if second else "",
        weights=tuple(float(v) for v in mix.weights), means=tuple(float(v) for v in mix.means),
        sds=tuple(float(v) for v in mix.sds), converged=bool(best.converged),
        restarts_agreeing=int(best.restarts_agreeing), restarts=int(best.restarts),
        notes=tuple(notes), seed=task.seed, sha256=task.sha256, histogram=_histogram(data.values))


def screen_column(task: ColumnTask, settings: ScanSettings, cancel=None) -> ScreenRow:
    """Read, clean and scan one column; a failure becomes a row with the reason.

    Parameters
    ----------
    task : ColumnTask
    settings : ScanSettings
        Component range, width variants, restarts (the seed comes from the task).
    cancel : object with ``is_set()``, optional
        Stops the scan with :class:`~clusterdesk.errors.Cancelled`.

    Returns
    -------
    ScreenRow
        Status "ok" with the best model, or "failed" with the reason.

    Raises
    ------
    Cancelled
        Only when ``cancel`` is set.
    """
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            data = filecache.column_values(task.path, task.sha256, task.sheet, task.position)
            row = _fit(data, task, settings, cancel)
    except Cancelled:
        raise
    except InputError as exc:
        return failed_row(task, _sentence(exc))
    except MemoryError:
        return failed_row(task, "The column is too large to fit in the memory available; "
                                "screen it alone or on a machine with more memory.")
    except Exception as exc:  # an unexpected error in one column must not stop the batch
        return failed_row(task, f"Unexpected error ({type(exc).__name__}: {_sentence(exc)}); "
                                "please report it with the file.")
    extra = tuple(dict.fromkeys(_sentence(w.message) for w in caught))
    return row if not extra else _with_notes(row, extra)


def _with_notes(row: ScreenRow, extra: tuple) -> ScreenRow:
    return replace(row, notes=row.notes + tuple(n for n in extra if n not in row.notes))


def run_job(job, cancel=None):
    """Run one job of a screening run (in whatever process the backend chose).

    Parameters
    ----------
    job : ListJob or ColumnJob
    cancel : object with ``is_set()``, optional

    Returns
    -------
    FileListing or ScreenRow
    """
    if isinstance(job, ListJob):
        return filecache.list_file(job.path)
    if isinstance(job, ColumnJob):
        return screen_column(job.task, job.settings, cancel)
    raise TypeError(f"Unknown screening job {job!r}.")
