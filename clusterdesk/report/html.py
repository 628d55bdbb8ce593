"""The report: one self-contained HTML file that opens in a browser with no network.

Sections: data source (file, SHA-256, sheet, column, rows read / kept /
excluded by reason), settings and seed, software version, the ranking, the
chosen model with its intervals, the figures (embedded PNG), the fit check and
the caution about decisions.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
from pathlib import Path

import numpy as np

from .._version import __version__
from ..atomic import write_text_atomic
from ..engine.bootstrap import CUT_POINT_CAUTION
from . import figures
from .tables import CAUTION, components_table, ranking_table, treatment_words

__all__ = ["render_report", "write_report"]

_STYLE = """
body{font-family:system-ui,-apple-system,"Segoe UI",sans-serif;margin:2em auto;max-width:60em;
color:#1a1a1a;line-height:1.45;padding:0 1em}
h1{font-size:1.6em;margin-bottom:.2em}h2{font-size:1.2em;margin-top:1.8em;border-bottom:1px solid #ccc}
table{border-collapse:collapse;font-size:.9em;margin:.6em 0}
th,td{border:1px solid #d0d0d0;padding:.25em .6em;text-align:right}
th{background:#f2f2f2}td.t,th.t{text-align:left}
tr.best td{font-weight:600}
.caution{border-left:4px solid #D55E00;background:#fff6ef;padding:.6em 1em;margin:1em 0}
.muted{color:#555;font-size:.9em}img{max-width:100%;height:auto}
"""


def _fmt(value, digits=6) -> str:
    if value is None:
        return ""
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        if not np.isfinite(value):
            return "" if np.isnan(value) else str(value)
        return f"{float(value):.{digits}g}"
    return html.escape(str(value))


def _table(header, rows, *, text_columns=(), highlight=None) -> str:
    out = ["<table><thead><tr>"]
    out += [f'<th class="{"t" if i in text_columns else ""}">{html.escape(str(h))}</th>'
            for i, h in enumerate(header)]
    out.append("</tr></thead><tbody>")
    for r, row in enumerate(rows):
        cls = ' class="best"' if highlight is not None and r == highlight else ""
        cells = "".join(f'<td class="{"t" if i in text_columns else ""}">{_fmt(v)}</td>'
                        for i, v in enumerate(row))
        out.append(f"<tr{cls}>{cells}</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def _img(png: bytes, alt: str) -> str:
    data = base64.b64encode(png).decode("ascii")
    return f'<img alt="{html.escape(alt)}" src="data:image/png;base64,{data}">'


def _axis_label(analysis) -> str:
    m = analysis.measurements
    name = m.column.name
    return {"linear": name, "ln": f"ln({name})", "log10": f"log10({name})"}[m.scale]


def _source_section(analysis) -> str:
    m = analysis.measurements
    fmt = m.format
    rows = [("file", Path(analysis.source_path).name if analysis.source_path else m.source),
            ("SHA-256", m.sha256), ("reader", fmt.reader), ("encoding", fmt.encoding),
            ("sheet", fmt.sheet), ("column", m.column.name),
            ("count column", m.count_column.name if m.count_column else None),
            ("decimal mark", fmt.decimal_mark), ("resolution", m.resolution),
            ("scale of the fit", m.scale), ("range limits", f"{m.low} to {m.high}"
             if (m.low is not None or m.high is not None) else "none"),
            ("rows read", m.summary.rows_read), ("rows kept", m.summary.rows_kept)]
    rows += [(f"excluded: {reason}", n) for reason, n in m.summary.excluded.items()]
    return "<h2>Data</h2>" + _table(("item", "value"), rows, text_columns=(0, 1))


def _settings_section(analysis) -> str:
    s = analysis.settings
    rows = [("component counts", f"{s.kmin} to {s.kmax}"), ("widths", s.widths),
            ("restarts per model", s.restarts), ("seed", s.seed),
            ("values treated as", treatment_words(analysis.scan)),
            ("criterion", "BIC = -2 log L + p ln n (Schwarz 1978), lower is better")]
    return "<h2>Settings</h2>" + _table(("setting", "value"), rows, text_columns=(0, 1))


def _ranking_section(analysis) -> str:
    table = ranking_table(analysis.scan)
    chosen = analysis.chosen
    index = next(i for i, r in enumerate(analysis.scan.ranking)
                 if r.k == chosen.k and r.widths == chosen.widths)
    gap = analysis.scan.evidence
    note = (f'<p class="muted">Evidence for the best model over the runner-up by the BIC gap '
            f'(Kass &amp; Raftery 1995): <b>{html.escape(gap)}</b>. The highlighted row is the '
            f'model reported below.</p>') if gap else ""
    return "<h2>Models ranked by BIC</h2>" + note + _table(table.header, table.rows,
                                                            text_columns=(2,), highlight=index)


def _model_section(analysis) -> str:
    chosen = analysis.chosen
    best = analysis.scan.best
    which = ("the best by BIC" if (chosen.k, chosen.widths) == (best.k, best.widths)
             else f"chosen by the user; the best by BIC has {best.k} components, {best.widths} widths")
    table = components_table(analysis)
    parts = [f"<h2>Chosen model: {chosen.k} components, {chosen.widths} widths</h2>",
             f'<p class="muted">This model is {html.escape(which)}. Converged: '
             f'{_fmt(chosen.converged)}; {chosen.restarts_agreeing} of {chosen.restarts} restarts '
             f'reached its log-likelihood {_fmt(chosen.loglik)}.</p>',
             _table(table.header, table.rows, text_columns=(1,))]
    parts += [f'<p class="muted">Note: {html.escape(n)}</p>' for n in analysis.fit_notes]
    intervals = getattr(analysis, "intervals", None)
    if intervals is not None:
        parts.append(_intervals_html(intervals))
    else:
        parts.append('<p class="muted">No bootstrap intervals were estimated for this model.</p>')
    if chosen.k > 1:
        parts.append(f'<div class="caution"><b>Caution.</b> {html.escape(CAUTION)}</div>')
    return "".join(parts)


def _intervals_html(intervals) -> str:
    rows = intervals.table_rows()
    # How the replicates were drawn, which failed, which cut points have no interval and why
    # (an empty cell is explained here); the caution stands once, below.
    notes = [n for n in intervals.notes if n != CUT_POINT_CAUTION]
    return (f"<h3>Bootstrap intervals ({html.escape(intervals.describe())})</h3>"
            + _table(intervals.table_header(), rows, text_columns=(0,))
            + "".join(f'<p class="muted">Note: {html.escape(n)}</p>' for n in notes))


def _figures_section(analysis) -> str:
    values, counts = analysis.fit_input()
    chosen = analysis.chosen
    label = _axis_label(analysis)
    parts = ["<h2>Figures</h2>",
             _img(figures.histogram_png(values, counts, chosen.mixture, xlabel=label,
                                        share=_kept_share(analysis)),
                  "Histogram of the kept values with the fitted mixture, its components and cut points"),
             _img(figures.criteria_png(analysis.scan), "BIC and ICL by number of components")]
    check = analysis.fit_check()
    parts.append("<h2>Fit check</h2>")
    parts.append(_img(figures.qq_png(check.theoretical, check.observed, xlabel=label),
                      "Quantile-quantile plot of the data against the fitted mixture"))
    parts.append(f"<p>{html.escape(check.verdict)}</p>")
    return "".join(parts)


def _kept_share(analysis) -> float:
    """The kept values' share of the readings the scan fitted (below 1 with censored readings in the fit)."""
    values, counts = analysis.fit_input()
    kept = float(values.size if counts is None else np.sum(counts))
    return min(1.0, kept / analysis.scan.n) if analysis.scan.n > 0 else 1.0


def render_report(analysis, *, title: str | None = None) -> str:
    """The report as one HTML string (figures embedded as PNG)."""
    m = analysis.measurements
    title = title or f"ClusterDesk report: {m.column.name}"
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    body = [f"<h1>{html.escape(title)}</h1>",
            f'<p class="muted">Written by ClusterDesk {__version__} on {stamp}.</p>',
            _source_section(analysis), _settings_section(analysis), _ranking_section(analysis),
            _model_section(analysis), _figures_section(analysis),
            f'<h2>About decisions</h2><div class="caution">{html.escape(CAUTION)}</div>']
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{html.escape(title)}</title><style>{_STYLE}</style></head><body>"
            + "\n".join(body) + "</body></html>\n")


def write_report(analysis, path) -> Path:
    """Write the report to ``path`` atomically and return the path."""
    return write_text_atomic(Path(path), render_report(analysis))
