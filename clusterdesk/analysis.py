"""One analysis: where the values came from, how they were cleaned, the settings,
the scan, the chosen model and its intervals.

The command line, the report writer and the window all drive this object; none
of them recomputes what it holds. Long steps are split in two so that a front
end can run the computation on a worker thread and apply the result on its own
thread: ``compute_scan`` is pure (it changes nothing) and ``apply_scan`` swaps
the result in at once, so a cancelled or failed run leaves the previous
results in place.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from .api import bootstrap as run_bootstrap
from .engine.bootstrap import bootstrap_model
from .engine.fitcheck import goodness_of_fit
from .engine.fitting import FittedModel
from .engine.scan import ScanResult, scan_models
from .engine.treatment import interval_offsets, resolve_treatment, with_censored
from .errors import InputError
from .io import Measurements, read_measurements
from .io.cleaning import censored_rows
from .analysis_file import (ANALYSIS_SUFFIX, FORMAT_VERSION, OpenedAnalysis, SourceChangedError,
                            analysis_to_dict, open_analysis, save_analysis)

__all__ = ["DataChoice", "ScanSettings", "Analysis", "ANALYSIS_SUFFIX", "FORMAT_VERSION", "SourceChangedError"]

@dataclass(frozen=True)
class DataChoice:
    """Which values to analyse and how to clean them.

    Parameters
    ----------
    column, counts, sheet : str or int or None
        Value column, optional count column, and sheet (workbooks), by name
        or 0-based position. None: the reader's default.
    low, high : float or None
        Inclusive range limits on the original scale.
    scale : {"linear", "ln", "log10"}, default "linear"
        The scale the mixture is fitted on.
    """

    column: str | int | None = None
    counts: str | int | None = None
    sheet: str | int | None = None
    low: float | None = None
    high: float | None = None
    scale: str = "linear"


@dataclass(frozen=True)
class ScanSettings:
    """Settings of the scan over component counts.

    Parameters
    ----------
    kmin, kmax : int, default 1 and 6
    widths : {"separate", "shared", "both"}, default "both"
    restarts : int, default 10
    seed : int, default 0
    treatment : {"auto", "exact", "intervals"}, default "auto"
        Fit the likelihood of exact values or of intervals (each value known
        only to lie within the resolution); ``"auto"`` decides from the
        resolution (see :mod:`clusterdesk.engine.treatment`).
    resolution : float or None, default None
        Recording step (or class width) on the original scale; None: the one
        detected when the values were read.
    value_at : {"middle", "lower", "upper"}, default "middle"
        Where each recorded value sits in its interval: the middle (rounded
        readings), the lower end (a class named by its lower end, e.g. a
        length class 12 holding 12.0 to 12.99) or the upper end.
    """

    kmin: int = 1
    kmax: int = 6
    widths: str = "both"
    restarts: int = 10
    seed: int = 0
    treatment: str = "auto"
    resolution: float | None = None
    value_at: str = "middle"


@dataclass
class Analysis:
    """Data, settings and results of one analysis.

    Attributes
    ----------
    measurements : Measurements or None
        The cleaned column (None before a source is loaded).
    source_path : str or None
        The file the values came from (None for pasted text or arrays).
    data : DataChoice
    settings : ScanSettings
    scan : ScanResult or None
    choice : tuple (k, widths) or None
        The user's model; None means "the best by BIC".
    interval_results : dict of (k, widths) to BootstrapResult
        Bootstrap intervals estimated for the scan's models; see :attr:`intervals`.
    """

    measurements: Measurements | None = None
    source_path: str | None = None
    data: DataChoice = field(default_factory=DataChoice)
    settings: ScanSettings = field(default_factory=ScanSettings)
    scan: ScanResult | None = None
    choice: tuple | None = None
    interval_results: dict = field(default_factory=dict, repr=False)
    # ((measurements, treatment, resolution), (Sample, Treatment)): the last sample prepared for the engine
    _prepared: tuple | None = field(default=None, init=False, repr=False, compare=False)

    # ----------------------------------------------------------------- data in
    @classmethod
    def from_file(cls, path, data: DataChoice = DataChoice(),
                  settings: ScanSettings = ScanSettings()) -> "Analysis":
        """Read and clean one column of a file; see :func:`clusterdesk.io.read_measurements`."""
        analysis = cls(data=data, settings=settings)
        analysis.load_file(path, data)
        return analysis

    @classmethod
    def from_text(cls, text: str, data: DataChoice = DataChoice(),
                  settings: ScanSettings = ScanSettings()) -> "Analysis":
        """Read and clean pasted text (e.g. a column copied from a spreadsheet)."""
        analysis = cls(data=data, settings=settings)
        analysis.measurements = _read(None, text, data)
        return analysis

    def load_file(self, path, data: DataChoice | None = None) -> None:
        """(Re)read the source with new cleaning choices; results are cleared."""
        data = self.data if data is None else data
        measurements = _read(path, None, data)
        self.measurements, self.source_path, self.data = measurements, str(Path(path).resolve()), data
        self.scan, self.choice = None, None
        self.interval_results = {}

    def recleaned(self, data: DataChoice) -> None:
        """Apply new cleaning choices to the same source (re-reads the file)."""
        if self.source_path is None:
            raise InputError("This analysis has no source file to re-read; paste the values again.")
        self.load_file(self.source_path, data)

    # ------------------------------------------------------------------- scan
    def fit_input(self):
        """The values (on the analysis scale) and counts handed to the engine."""
        m = self._need_measurements()
        return m.fit_values, m.counts

    def interval_input(self, settings: ScanSettings | None = None) -> dict:
        """The resolution or interval ends handed to the engine, on the analysis scale.

        Each kept value ``x`` lies in ``[x - h/2, x + h/2)`` on the original
        scale (``h`` the settings' resolution, else the detected one), or in
        ``[x, x + h)`` or ``[x - h, x)`` when the settings' ``value_at`` is
        "lower" or "upper"; on a log scale the ends are transformed, an end at
        or below zero becoming ``-inf``.

        Returns
        -------
        dict
            ``resolution`` (float or None), ``bounds`` ((lower, upper) or None)
            and ``value_at``, as :func:`clusterdesk.scan` takes them.
        """
        m = self._need_measurements()
        s = self.settings if settings is None else settings
        step = s.resolution if s.resolution is not None else m.resolution
        if step is None or s.treatment == "exact":
            return {"resolution": None, "bounds": None, "value_at": None}
        if m.scale == "linear":
            return {"resolution": step, "bounds": None, "value_at": s.value_at}
        log = np.log if m.scale == "ln" else np.log10
        lo, hi = interval_offsets(s.value_at, step)
        with np.errstate(divide="ignore", invalid="ignore"):
            lower = np.where(m.values + lo > 0, log(np.maximum(m.values + lo, 0.0)), -np.inf)
            upper = np.where(m.values + hi > 0, log(np.maximum(m.values + hi, 0.0)), -np.inf)
        return {"resolution": None, "bounds": (lower, upper), "value_at": s.value_at}

    def likelihood_input(self, settings: ScanSettings | None = None) -> dict:
        """Everything the likelihood is computed from: ``values``, ``counts``, ``resolution``, ``bounds``.

        Kept values with their resolution (:meth:`interval_input`); and when
        they are treated as intervals (any treatment but ``"exact"``, with a
        resolution known), the rows excluded as below a detection limit (or
        above a reporting limit) enter as censored intervals ``(-inf, limit)``
        (``(limit, inf)``) instead of being dropped.
        """
        values, counts = self.fit_input()
        given = self.interval_input(settings)
        limits, ends, limit_counts = self._censored_rows()
        if limits.size == 0 or (given["resolution"] is None and given["bounds"] is None):
            return {"values": values, "counts": counts, **given}
        return {**with_censored(values, counts, _interval_ends(values, given), limits, ends, limit_counts),
                "resolution": None, "value_at": given["value_at"]}

    def _censored_rows(self):
        """Limits (analysis scale), side (-1 below, +1 above) and counts of detection-limit rows."""
        m = self._need_measurements()
        return censored_rows(m.rows, m.scale)

    def compute_scan(self, settings: ScanSettings | None = None, progress=None, cancel=None) -> ScanResult:
        """Run the scan and return it, without changing the analysis."""
        s = self.settings if settings is None else settings
        result = scan_models(self._need_measurements().fit_values, kmin=s.kmin, kmax=s.kmax,
                             widths=s.widths, restarts=s.restarts, seed=s.seed, progress=progress,
                             cancel=cancel, prepared=lambda: self.prepared_sample(s))
        return self._suspects_as_recorded(result)

    def _suspects_as_recorded(self, result: ScanResult) -> ScanResult:
        """The scan with its far-out values named on the original scale, where the range limits are set.

        On a log scale the engine names them on the scale it fitted
        (``log10`` of 1000000 is 6); ``result.suspect_values`` stays on that scale.
        """
        scale = self._need_measurements().scale
        if scale == "linear" or not result.suspect_values:
            return result
        from .engine.outliers import outlier_note
        from .io.cleaning import to_original_scale

        fitted = outlier_note(result.suspect_values)
        recorded = outlier_note([float(v) for v in to_original_scale(np.array(result.suspect_values), scale)],
                                fitted_on=scale)
        return replace(result, notes=tuple(recorded if note == fitted else note for note in result.notes))

    def prepared_sample(self, settings: ScanSettings | None = None):
        """The kept values prepared for the engine under these settings: (Sample, Treatment).

        Validated, sorted, ties gathered and the treatment decided, as
        :func:`clusterdesk.engine.treatment.resolve_treatment` does; kept for
        the next call with the same data and treatment settings (preparing
        10^7 values takes a few tenths of a second), so the scan and the
        intervals of its models share one preparation.
        """
        s = self.settings if settings is None else settings
        m = self._need_measurements()
        key = (s.treatment, s.resolution, s.value_at)
        if self._prepared is None or self._prepared[0][0] is not m or self._prepared[0][1:] != key:
            given = self.likelihood_input(s)
            self._prepared = ((m, *key), resolve_treatment(treatment=s.treatment, **given))
        return self._prepared[1]

    def data_leaving_out_far_values(self) -> tuple[DataChoice, int]:
        """The data choice whose range limits leave out the far-out values the scan named.

        A limit moves only to the nearest value that stays: the high limit
        becomes the largest other value below the lowest named value above
        the median, the low limit likewise; limits already set only narrow.
        Values between a named value and the rest (beyond the fences but not
        named) are left out with it, and counted.

        Returns
        -------
        data : DataChoice
            The current choice with the new limits (original scale, inclusive).
        dropped : int
            Kept values that the new limits leave out (named ones included).

        Raises
        ------
        InputError
            When the scan named no far-out values.
        """
        scan, m = self._need_scan(), self._need_measurements()
        if not scan.suspect_values:
            raise InputError("The scan named no far-out values, so there is nothing to leave out.")
        named = np.isin(m.fit_values, np.asarray(scan.suspect_values))
        middle = float(np.median(m.fit_values))
        low, high = self.data.low, self.data.high
        above = named & (m.fit_values > middle)
        below = named & (m.fit_values <= middle)
        if above.any():
            rest = m.values[~named & (m.fit_values < m.fit_values[above].min())]
            high = float(rest.max()) if high is None else min(high, float(rest.max()))
        if below.any():
            rest = m.values[~named & (m.fit_values > m.fit_values[below].max())]
            low = float(rest.min()) if low is None else max(low, float(rest.min()))
        inside = np.ones(m.values.size, dtype=bool)
        if low is not None:
            inside &= m.values >= low
        if high is not None:
            inside &= m.values <= high
        return replace(self.data, low=low, high=high), int(np.count_nonzero(~inside))

    def apply_scan(self, result: ScanResult, settings: ScanSettings | None = None) -> None:
        """Make a computed scan the analysis's scan; the choice returns to the best model."""
        if settings is not None:
            self.settings = settings
        self.scan, self.choice = result, None
        self.interval_results = {}

    def run_scan(self, settings: ScanSettings | None = None, progress=None, cancel=None) -> ScanResult:
        """Compute and apply a scan in one call (for scripts and the command line)."""
        result = self.compute_scan(settings, progress, cancel)
        self.apply_scan(result, settings)
        return result

    # ----------------------------------------------------------------- choice
    def choose(self, k: int, widths: str = "separate") -> FittedModel:
        """Make the (k, widths) model the chosen one; it drives tables, plots and exports."""
        model = self._need_scan().model(k, widths)
        self.choice = (model.k, model.widths)
        return model

    @property
    def chosen(self) -> FittedModel:
        """The chosen model (the best by BIC unless the user chose another)."""
        scan = self._need_scan()
        return scan.best if self.choice is None else scan.model(*self.choice)

    @property
    def fit_notes(self) -> tuple:
        """Notes on the scan as a whole (e.g. far-out values), then on the chosen model; each once.

        The chosen model's notes end with a sentence for each pair of neighbouring
        components without a cut point (:meth:`.engine.mixture.Mixture.cut_point_notes`),
        so an empty cut point cell is never left unexplained.
        """
        chosen = self.chosen
        return tuple(dict.fromkeys(self._need_scan().notes + chosen.notes + chosen.mixture.cut_point_notes()))

    # -------------------------------------------------------------- intervals
    def compute_intervals(self, *, replicates: int = 200, method: str = "resample", level: float = 0.95,
                          seed: int | None = None, progress=None, cancel=None):
        """Bootstrap the chosen model and return the result, without changing the analysis.

        Parameters
        ----------
        replicates : int, default 200
        method : {"resample", "parametric"}, default "resample"
        level : float, default 0.95
        seed : int, optional
            Default: the scan's seed.
        progress, cancel
            As for :func:`clusterdesk.bootstrap`.

        Returns
        -------
        BootstrapResult
        """
        seed = self.settings.seed if seed is None else seed
        sample, used = self.prepared_sample()
        if self.chosen.likelihood == "exact" and used.used == "exact":
            # The sample the scan fitted: no second preparation of the values.
            return bootstrap_model(sample, self.chosen, replicates=replicates, method=method,
                                   level=level, seed=seed, progress=progress, cancel=cancel)
        given = self.likelihood_input()
        if self.chosen.likelihood == "exact":
            given = {"values": given["values"], "counts": given["counts"]}
        return run_bootstrap(model=self.chosen, replicates=replicates, method=method,
                             level=level, seed=seed, progress=progress, cancel=cancel, **given)

    def apply_intervals(self, result) -> None:
        """Keep computed intervals for the model they belong to (the chosen one when computed)."""
        for model in self._need_scan().models:
            if model.mixture == result.reference and model.widths == result.widths:
                self.interval_results[(model.k, model.widths)] = result
                return
        raise InputError("These intervals belong to a model that is not in this analysis's scan; "
                         "estimate them again.")

    def run_intervals(self, **options):
        """Compute and keep intervals for the chosen model in one call (scripts, command line)."""
        result = self.compute_intervals(**options)
        self.apply_intervals(result)
        return result

    @property
    def intervals(self):
        """Bootstrap intervals of the chosen model, or None when not estimated."""
        if self.scan is None:
            return None
        chosen = self.chosen
        return self.interval_results.get((chosen.k, chosen.widths))

    # -------------------------------------------------------------- fit check
    def fit_check(self, model: FittedModel | None = None):
        """Q-Q points, Kolmogorov-Smirnov distance and verdict for a model (default: the chosen one).

        Returns
        -------
        FitCheck
            See :func:`clusterdesk.engine.fitcheck.goodness_of_fit`; readings the
            fit used as censored count in the data's distribution.
        """
        values, counts = self.fit_input()
        model = self.chosen if model is None else model
        given = self._posterior_intervals(model)
        censored, step = None, None
        if given is not None:  # fitted to intervals: the readings beyond a limit were in the fit
            limits, sides, limit_counts = self._censored_rows()
            censored = (limits, sides, limit_counts) if limits.size else None
            step = given["resolution"]
        return goodness_of_fit(model.mixture, values, counts, censored=censored, step=step,
                               value_at=self.settings.value_at)

    def classification(self, model: FittedModel | None = None, *, posterior: np.ndarray | None = None,
                       groups=None):
        """Rows assigned to components, confident share and misclassification rates.

        ``groups`` (:meth:`value_groups`), when given, makes the summary one of the
        distinct kept values, each counted as often as it occurs (the same
        shares, counts and rates, as sums of whole numbers); ``posterior``,
        when given, is ``self.posterior(model, rows=...)`` already computed for
        the rows summarised: ``groups.first``, else every kept value.

        Returns
        -------
        ClassificationSummary
            See :func:`clusterdesk.engine.classify.classification_summary`.
        """
        from .engine.classify import classification_summary

        values, counts = self.fit_input()
        model = self.chosen if model is None else model
        rows = None
        if groups is not None:
            rows = groups.first
            values, counts = values[rows], groups.totals(counts)
        if posterior is None:
            posterior = self.posterior(model, rows=rows)
        return classification_summary(model.mixture, values, counts, posterior=posterior)

    def posterior(self, model: FittedModel | None = None, *, rows: np.ndarray | None = None) -> np.ndarray:
        """Posterior probabilities of the kept values, shape (n_kept, k), in file order.

        For a model fitted to intervals they are the probabilities given that
        each value lies in its interval (:func:`clusterdesk.engine.grouped.interval_posterior`),
        otherwise given the exact value. ``rows`` (positions among the kept
        values), when given, selects the values: shape (rows.size, k), the
        same numbers as those rows of the whole.
        """
        values, _ = self.fit_input()
        model = self.chosen if model is None else model
        given = self._posterior_intervals(model)
        picked = values if rows is None else values[rows]
        if given is None:
            return model.mixture.posterior(picked)
        from .engine.grouped import interval_posterior

        if given["bounds"] is None:
            return interval_posterior(*_interval_ends(picked, given), model.mixture)
        lower, upper = given["bounds"]
        return interval_posterior(*((lower, upper) if rows is None else (lower[rows], upper[rows])), model.mixture)

    def _posterior_intervals(self, model: FittedModel):
        """:meth:`interval_input` when ``model``'s posteriors are those of intervals, else None."""
        given = self.interval_input()
        if model.likelihood != "intervals" or (given["resolution"] is None and given["bounds"] is None):
            return None
        return given

    def value_groups(self, model: FittedModel | None = None):
        """The kept values grouped by value, bit for bit, for results computed once per distinct value.

        A kept row's posteriors, component and table text follow from its
        value; ten million values recorded to 0.001 hold some 31,000 distinct
        ones. The values on the analysis scale, and the interval ends that
        ``model``'s posteriors use (default: the chosen model's), are checked
        to be the same within each group.

        Returns
        -------
        RowGroups
            Over the kept values (:func:`clusterdesk.engine.distinct.group_rows`).
        """
        from .engine.distinct import group_rows

        m = self._need_measurements()
        follow = [] if m.fit_values is m.values else [m.fit_values]
        given = self._posterior_intervals(self.chosen if model is None else model)
        if given is not None and given["bounds"] is not None:
            follow += list(given["bounds"])
        return group_rows(m.values, step=m.resolution, follow=follow)

    # ------------------------------------------------------------ assignments
    def assignments(self, *, posterior: np.ndarray | None = None, groups=None):
        """Component and posterior probabilities for every input row.

        Without ``groups``, one entry per row; ``posterior`` (n_kept, k), when
        given, is ``self.posterior()`` already computed.

        With ``groups`` (:meth:`value_groups`), one entry per distinct row
        (each distinct kept value; each distinct value and reason among the
        excluded rows) and ``row_group`` (n_rows,), the entry of every row:
        its text is that entry's. ``posterior``, when given, is
        ``self.posterior(rows=groups.first)``.

        Returns
        -------
        dict
            ``line`` (n_rows,), ``value`` on the original scale, ``kept``
            (bool), ``reason`` (words), ``component`` (1-based, 0 when
            excluded), ``max_posterior`` (NaN when excluded) and ``posterior``
            (entries, k), NaN rows for excluded rows; and ``row_group`` when grouped.
        """
        m = self._need_measurements()
        rows = m.rows
        if groups is None:
            post_kept = self.posterior() if posterior is None else posterior
            if not rows.kept.all():  # (when every row is kept, no (n, k) copies of a long column)
                post_kept = post_kept[rows.position[rows.kept]]
            return {"line": rows.line, **_row_entries(rows, None, post_kept)}
        from .engine.distinct import group_rows

        post_kept = self.posterior(rows=groups.first) if posterior is None else posterior
        kept = rows.kept
        if kept.all():
            return {"line": rows.line, "row_group": groups.index,
                    **_row_entries(rows, groups.first, post_kept)}
        excluded = np.flatnonzero(~kept)
        others = group_rows(rows.value[excluded], follow=[rows.reason[excluded]])
        row_group = np.empty(len(rows), dtype=np.int64 if groups.size + others.size > 2**31 - 2 else np.int32)
        row_group[kept] = groups.index
        row_group[excluded] = others.index + groups.size
        source = np.concatenate([np.flatnonzero(kept)[groups.first], excluded[others.first]])
        return {"line": rows.line, "row_group": row_group, **_row_entries(rows, source, post_kept)}

    # ------------------------------------------------------------ save / load
    def to_dict(self) -> dict:
        """Everything needed to reproduce this analysis, as plain JSON types (see :mod:`.analysis_file`)."""
        return analysis_to_dict(self)

    def save(self, path) -> Path:
        """Write the analysis as JSON (atomically); the suffix is added when missing."""
        return save_analysis(self, path)

    @classmethod
    def open(cls, path, *, rescan: bool = True, accept_changed_source: bool = False, progress=None,
             cancel=None) -> "OpenedAnalysis":
        """Reopen a saved analysis; see :func:`clusterdesk.analysis_file.open_analysis`."""
        return open_analysis(path, rescan=rescan, accept_changed_source=accept_changed_source,
                             progress=progress, cancel=cancel)

    # -------------------------------------------------------------- internals
    def _need_measurements(self) -> Measurements:
        if self.measurements is None:
            raise InputError("No measurements are loaded yet; open a file or paste a column first.")
        return self.measurements

    def _need_scan(self) -> ScanResult:
        if self.scan is None:
            raise InputError("No models have been fitted yet; run the scan first.")
        return self.scan


def _read(path, text, data: DataChoice) -> Measurements:
    return read_measurements(path, text=text, column=data.column, counts=data.counts,
                             sheet=data.sheet, low=data.low, high=data.high, scale=data.scale)


def _row_entries(rows, source, kept_post) -> dict:
    """Value, status, component and posteriors of the rows ``source`` (all rows when None).

    ``kept_post`` holds the posteriors of the kept rows among them, in order.
    """
    kept = rows.kept if source is None else rows.kept[source]
    if kept.all():
        posterior = kept_post
    else:
        posterior = np.full((kept.size, kept_post.shape[1]), np.nan)
        posterior[kept] = kept_post
    best = np.argmax(kept_post, axis=1)
    component = np.zeros(kept.size, dtype=np.int64)
    component[kept] = best + 1
    max_post = np.full(kept.size, np.nan)
    max_post[kept] = np.take_along_axis(kept_post, best[:, None], axis=1)[:, 0]
    reason = rows.reason if source is None else rows.reason[source]
    words = np.array([rows.reason_words(code) for code in range(int(reason.max(initial=0)) + 1)], dtype=object)
    return {"value": rows.value if source is None else rows.value[source], "kept": kept,
            "reason": words[reason], "component": component, "max_posterior": max_post,
            "posterior": posterior}


def _interval_ends(values, given: dict):
    """Lower and upper ends of the kept values' intervals, from :meth:`Analysis.interval_input`'s answer."""
    if given["bounds"] is not None:
        return given["bounds"]
    lo, hi = interval_offsets(given["value_at"] or "middle", given["resolution"])
    return values + lo, values + hi
