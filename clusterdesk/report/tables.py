"""The analysis as tables: ranking, components, per-row assignments, and a summary.

Each table is a header plus rows of plain values, so that the same content can
be written as CSV, shown in the window or embedded in the report.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .._version import __version__
from ..atomic import write_text_atomic
from ..io.cleaning import to_original_scale
from .assignments_csv import assignment_header, write_assignments_csv
from .csvfile import write_csv

__all__ = ["Table", "ranking_table", "treatment_words", "treatment_dict", "components_table",
           "classification_of_values", "assignment_table", "summary_dict", "write_tables", "CAUTION"]

#: The caution shown wherever cut points are shown.
CAUTION = ("A fitted cut point is a statistical estimate from one sample, not a validated "
           "diagnostic or acceptance limit; for decisions about people, products or compliance, "
           "defer to validated methods, local regulations and licensed practice.")

@dataclass(frozen=True)
class Table:
    """A header and its rows (a list; the assignment table streams them, one pass only)."""

    header: tuple
    rows: list


def ranking_table(scan) -> Table:
    """Every scanned model, best first.

    ``histogram_bin_width`` is the width of the histogram a model of a large
    sample was first found on before its polish on the values themselves
    (empty when it was fitted on the values directly).
    """
    header = ("rank", "components", "widths", "log_likelihood", "parameters", "bic",
              "delta_bic", "bic_weight", "aic", "icl", "converged", "restarts",
              "restarts_agreeing", "smallest_weight", "iterations", "collapsed", "likelihood",
              "histogram_bin_width")
    rows = [(r.rank, r.k, r.widths, r.loglik, r.n_params, r.bic, r.delta_bic, r.bic_weight,
             r.aic, r.icl, r.converged, r.restarts, r.restarts_agreeing, r.min_weight,
             r.iterations, r.collapsed, r.likelihood, r.bin_width) for r in scan.ranking]
    return Table(header, rows)


def treatment_words(scan) -> str:
    """One line saying which likelihood the scan used and why."""
    if scan.treatment is None:
        return f"likelihood of {scan.ranking[0].likelihood} values"
    return scan.treatment.describe()


def treatment_dict(scan) -> dict:
    """Which likelihood the scan used (exact values or intervals), and why."""
    if scan.treatment is None:
        return {"used": scan.ranking[0].likelihood}
    return {**scan.treatment.as_dict(), "description": treatment_words(scan)}


def components_table(analysis, *, classification=None) -> Table:
    """One row per component of the chosen model.

    Weight, mean, standard deviation and the cut point to the next component
    (on the analysis scale, which the ``scale`` column names), the count
    assigned, the share assigned with posterior >= 0.9 and the model's
    expected misclassification rate; bootstrap intervals and standard errors
    when they have been estimated; under a log scale the geometric mean, the
    multiplicative spread and the cut point on the original scale.
    ``classification``, when given, is :func:`classification_of_values` computed once by the caller.
    """
    model = analysis.chosen
    mix = model.mixture
    scale = analysis.measurements.scale
    summary = classification_of_values(analysis) if classification is None else classification
    cuts = np.append(mix.cut_points(), np.nan)
    boot = analysis.intervals
    # Each row says which likelihood and which intervals it holds, so the file stands on its own.
    header = ["component", "scale", "likelihood", "weight", "mean", "sd", "count_assigned",
              "share_confident", "expected_misclassification", "cut_to_next"]
    if boot is not None:
        header += [f"{q}_{end}" for q in ("weight", "mean", "sd", "cut_to_next")
                   for end in ("lower", "upper", "se")]
        header += ["interval_level", "interval_method"]
    if scale != "linear":
        header += ["geometric_mean", "multiplicative_spread", "cut_to_next_original_scale"]
    rows = []
    for j in range(mix.k):
        assigned = float(summary.assigned_counts[j])
        row = [j + 1, scale, model.likelihood, mix.weights[j], mix.means[j], mix.sds[j],
               int(assigned) if assigned.is_integer() else assigned, summary.confident_share_by_component[j],
               float(summary.misclassification[j]), cuts[j]]
        if boot is not None:
            row += _interval_cells(boot, j) + [boot.level, "bootstrap, " + boot.describe().split(", ")[-1]]
        if scale != "linear":
            row += [float(to_original_scale(v, scale)) for v in (mix.means[j], mix.sds[j], cuts[j])]
        rows.append(row)
    return Table(tuple(header), rows)


def classification_of_values(analysis):
    """The chosen model's classification summary, computed once per distinct kept value.

    The shares, counts and rates are those of the row-by-row summary
    (:meth:`clusterdesk.analysis.Analysis.classification`).
    """
    return analysis.classification(groups=analysis.value_groups())


def _interval_cells(boot, j) -> list:
    cells = []
    for interval, se in ((boot.weight_interval, boot.weight_se), (boot.mean_interval, boot.mean_se),
                         (boot.sd_interval, boot.sd_se)):
        cells += [float(interval[j, 0]), float(interval[j, 1]), float(se[j])]
    if j < boot.k - 1:
        cells += [float(boot.cut_point_interval[j, 0]), float(boot.cut_point_interval[j, 1]),
                  float(boot.cut_point_se[j])]
    else:
        cells += [np.nan, np.nan, np.nan]
    return cells


def assignment_table(analysis) -> Table:
    """Every input row (excluded rows with their reason): value, component, posteriors."""
    a = analysis.assignments()
    return Table(assignment_header(a["posterior"].shape[1]), _assignment_rows(a))


def _assignment_rows(a, block: int = 1 << 16):
    """The assignment rows one at a time (ten million rows never sit in memory as lists)."""
    for start in range(0, a["line"].size, block):
        part = slice(start, start + block)
        for line, value, reason, component, kept, top, posterior in zip(
                a["line"][part].tolist(), a["value"][part].tolist(), a["reason"][part],
                a["component"][part].tolist(), a["kept"][part].tolist(),
                a["max_posterior"][part].tolist(), a["posterior"][part].tolist()):
            yield [line, value, reason, component if kept else None, top, *posterior]


def summary_dict(analysis, *, classification=None) -> dict:
    """Settings, source, cleaning, ranking head and the chosen model, as JSON types.

    ``classification``, when given, is :func:`classification_of_values` computed once by the caller.
    """
    m = analysis.measurements
    scan = analysis.scan
    chosen = analysis.chosen
    mix = chosen.mixture
    fmt = m.format
    return {
        "software": {"name": "ClusterDesk", "version": __version__},
        "source": {"path": analysis.source_path, "label": m.source, "sha256": m.sha256,
                   "reader": fmt.reader, "encoding": fmt.encoding, "delimiter": fmt.delimiter,
                   "decimal_mark": fmt.decimal_mark, "sheet": fmt.sheet,
                   "column": m.column.name,
                   "count_column": m.count_column.name if m.count_column else None},
        "cleaning": {"rows_read": m.summary.rows_read, "rows_kept": m.summary.rows_kept,
                     "excluded": dict(m.summary.excluded), "resolution": m.resolution,
                     "scale": m.scale, "low": m.low, "high": m.high},
        "settings": {"kmin": analysis.settings.kmin, "kmax": analysis.settings.kmax,
                     "widths": analysis.settings.widths, "restarts": analysis.settings.restarts,
                     "seed": analysis.settings.seed, "treatment": analysis.settings.treatment,
                     "resolution": analysis.settings.resolution, "value_at": analysis.settings.value_at},
        "treatment": treatment_dict(scan),
        "best": {"components": scan.best.k, "widths": scan.best.widths,
                 "evidence_over_runner_up": scan.evidence},
        "scan_notes": list(scan.notes),
        "chosen": {"components": chosen.k, "widths": chosen.widths, "log_likelihood": chosen.loglik,
                   "bic": chosen.bic, "aic": chosen.aic, "icl": chosen.icl,
                   "converged": chosen.converged, "restarts_agreeing": chosen.restarts_agreeing,
                   "histogram_bin_width": chosen.bin_width,
                   "restarts": chosen.restarts, "weights": mix.weights.tolist(),
                   "means": mix.means.tolist(), "sds": mix.sds.tolist(),
                   "cut_points": [None if np.isnan(c) else float(c) for c in mix.cut_points()],
                   "notes": list(chosen.notes)},
        "classification": _classification_dict(
            classification_of_values(analysis) if classification is None else classification),
        "intervals": _intervals_dict(analysis.intervals),
        "caution": CAUTION,
    }


def _classification_dict(summary) -> dict:
    return {"share_assigned_with_posterior_at_least": summary.threshold,
            "confident_share": summary.confident_share,
            "assigned_counts": summary.assigned_counts.tolist(),
            "expected_misclassification": summary.misclassification.tolist(),
            "overall_expected_misclassification": summary.overall_misclassification}


def _intervals_dict(boot):
    if boot is None:
        return None
    def plain(a):
        return [[None if not np.isfinite(v) else float(v) for v in row] for row in np.atleast_2d(a)]
    return {"method": boot.method, "path": boot.path, "level": boot.level, "seed": boot.seed,
            "replicates": boot.replicates, "usable": boot.n_ok, "failed": boot.n_failed,
            "collapsed": boot.n_collapsed, "weight": plain(boot.weight_interval),
            "mean": plain(boot.mean_interval), "sd": plain(boot.sd_interval),
            "cut_point": plain(boot.cut_point_interval) if boot.k > 1 else [],
            "notes": list(boot.notes)}


def write_tables(analysis, folder) -> dict:
    """Write ranking.csv, components.csv, assignments.csv and summary.json into a folder.

    The kept values are grouped by value (:meth:`clusterdesk.analysis.Analysis.value_groups`);
    the posterior probabilities of the chosen model are computed once per
    distinct value for all four; the assignment table shares the text of
    each distinct row (:func:`clusterdesk.report.assignments_csv.write_assignments_csv`).

    Returns
    -------
    dict of str to Path
    """
    import json

    folder = Path(folder)
    groups = analysis.value_groups()
    posterior = analysis.posterior(rows=groups.first)
    summary = analysis.classification(posterior=posterior, groups=groups)
    out = {}
    for name, table in (("ranking", ranking_table(analysis.scan)),
                        ("components", components_table(analysis, classification=summary))):
        out[name] = write_csv(folder / f"{name}.csv", table.header, table.rows)
    out["assignments"] = write_assignments_csv(folder / "assignments.csv",
                                               analysis.assignments(posterior=posterior, groups=groups))
    out["summary"] = write_text_atomic(folder / "summary.json",
                                       json.dumps(summary_dict(analysis, classification=summary), indent=2) + "\n")
    return out
