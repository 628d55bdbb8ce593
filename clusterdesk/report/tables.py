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
from .csvfile import write_csv

__all__ = ["Table", "ranking_table", "components_table", "assignment_table", "summary_dict",
           "write_tables", "CAUTION"]

#: The caution shown wherever cut points are shown.
CAUTION = ("A fitted cut point is a statistical estimate from one sample, not a validated "
           "diagnostic or acceptance limit; for decisions about people, products or compliance, "
           "defer to validated methods, local regulations and licensed practice.")

_BACK = {"ln": np.exp, "log10": lambda v: np.power(10.0, v)}


@dataclass(frozen=True)
class Table:
    """A header and its rows."""

    header: tuple
    rows: list


def ranking_table(scan) -> Table:
    """Every scanned model, best first."""
    header = ("rank", "components", "widths", "log_likelihood", "parameters", "bic",
              "delta_bic", "bic_weight", "aic", "icl", "converged", "restarts",
              "restarts_agreeing", "smallest_weight", "iterations", "collapsed")
    rows = [(r.rank, r.k, r.widths, r.loglik, r.n_params, r.bic, r.delta_bic, r.bic_weight,
             r.aic, r.icl, r.converged, r.restarts, r.restarts_agreeing, r.min_weight,
             r.iterations, r.collapsed) for r in scan.ranking]
    return Table(header, rows)


def components_table(analysis) -> Table:
    """One row per component of the chosen model.

    Means, standard deviations and cut points are on the analysis scale (the
    ``scale`` column says which); under a log scale the geometric mean and the
    multiplicative spread on the original scale are added.
    """
    model = analysis.chosen
    mix = model.mixture
    scale = analysis.measurements.scale
    values, counts = analysis.fit_input()
    assigned = np.bincount(mix.classify(values), weights=counts, minlength=mix.k)
    cuts = np.append(mix.cut_points(), np.nan)
    header = ["component", "scale", "weight", "mean", "sd", "count_assigned", "cut_to_next"]
    if scale in _BACK:
        header += ["geometric_mean", "multiplicative_spread", "cut_to_next_original_scale"]
    rows = []
    for j in range(mix.k):
        row = [j + 1, scale, mix.weights[j], mix.means[j], mix.sds[j], float(assigned[j]), cuts[j]]
        if scale in _BACK:
            back = _BACK[scale]
            row += [float(back(mix.means[j])), float(back(mix.sds[j])), float(back(cuts[j]))]
        rows.append(row)
    return Table(tuple(header), rows)


def assignment_table(analysis) -> Table:
    """Every input row (excluded rows with their reason): value, component, posteriors."""
    a = analysis.assignments()
    k = a["posterior"].shape[1]
    header = ("line", "value", "status", "component", "max_posterior") + tuple(
        f"posterior_{j + 1}" for j in range(k))
    rows = []
    for i in range(a["line"].size):
        kept = bool(a["kept"][i])
        rows.append([int(a["line"][i]), float(a["value"][i]), a["reason"][i],
                     int(a["component"][i]) if kept else None, float(a["max_posterior"][i]),
                     *a["posterior"][i].tolist()])
    return Table(header, rows)


def summary_dict(analysis) -> dict:
    """Settings, source, cleaning, ranking head and the chosen model, as JSON types."""
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
                     "seed": analysis.settings.seed},
        "best": {"components": scan.best.k, "widths": scan.best.widths,
                 "evidence_over_runner_up": scan.evidence},
        "chosen": {"components": chosen.k, "widths": chosen.widths, "log_likelihood": chosen.loglik,
                   "bic": chosen.bic, "aic": chosen.aic, "icl": chosen.icl,
                   "converged": chosen.converged, "restarts_agreeing": chosen.restarts_agreeing,
                   "restarts": chosen.restarts, "weights": mix.weights.tolist(),
                   "means": mix.means.tolist(), "sds": mix.sds.tolist(),
                   "cut_points": [None if np.isnan(c) else float(c) for c in mix.cut_points()],
                   "notes": list(chosen.notes)},
        "caution": CAUTION,
    }


def write_tables(analysis, folder) -> dict:
    """Write ranking.csv, components.csv, assignments.csv and summary.json into a folder.

    Returns
    -------
    dict of str to Path
    """
    import json

    folder = Path(folder)
    out = {}
    for name, table in (("ranking", ranking_table(analysis.scan)),
                        ("components", components_table(analysis)),
                        ("assignments", assignment_table(analysis))):
        out[name] = write_csv(folder / f"{name}.csv", table.header, table.rows)
    out["summary"] = write_text_atomic(folder / "summary.json",
                                       json.dumps(summary_dict(analysis), indent=2) + "\n")
    return out
