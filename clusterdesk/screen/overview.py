"""The overview of a screening run: one self-contained HTML page, a small plot per column.

Each plot is an inline SVG drawn here from the row alone (the histogram kept
with it and the best model's components), so the page needs no network, no
image files and no plotting library, and a resumed run draws it from the
journal without reading the files again. Colours: the Okabe-Ito palette
(Okabe & Ito 2008), as in the report.
"""

from __future__ import annotations

import datetime as _dt
import html
from pathlib import Path

import numpy as np

from .._version import __version__
from ..atomic import write_text_atomic
from ..report.figures import PALETTE
from ..report.tables import CAUTION
from .summary import status_counts
from .tasks import ScreenRow, describe_model

__all__ = ["OVERVIEW_NAME", "density_svg", "render_overview", "write_overview"]

#: File name of the overview inside the output folder.
OVERVIEW_NAME = "overview.html"

_W, _H, _PAD = 180, 48, 2
_CURVE_POINTS = 90

_STYLE = """
body{font-family:system-ui,-apple-system,"Segoe UI",sans-serif;margin:1.5em;color:#1a1a1a;line-height:1.4}
h1{font-size:1.5em;margin-bottom:.2em}
table{border-collapse:collapse;font-size:.85em}
th,td{border:1px solid #d0d0d0;padding:.2em .5em;vertical-align:middle;text-align:left}
th{background:#f2f2f2;position:sticky;top:0}
td.n{text-align:right}tr.failed td{background:#fff3f0}tr.skipped td{color:#666}
.caution{border-left:4px solid #D55E00;background:#fff6ef;padding:.6em 1em;margin:1em 0;max-width:60em}
.muted{color:#555;font-size:.9em}svg{display:block}
"""


def _points(xs, ys) -> str:
    return " ".join(f"{x:.1f},{y:.1f}" for x, y in zip(xs, ys))


def density_svg(row: ScreenRow) -> str:
    """A small SVG: histogram of the kept values, the best model's density and its components.

    Parameters
    ----------
    row : ScreenRow
        A row with status "ok" (others give "").

    Returns
    -------
    str
        An ``<svg>`` element, or "" when the row has no histogram.
    """
    if row.status != "ok" or len(row.histogram) < 3:
        return ""
    low, high = float(row.histogram[0]), float(row.histogram[1])
    counts = np.asarray(row.histogram[2:], dtype=float)
    n = counts.sum()
    if not high > low or n <= 0:
        return ""
    width = (high - low) / counts.size
    density = counts / (n * width)
    grid = np.linspace(low, high, _CURVE_POINTS)
    w, m, s = (np.asarray(v, dtype=float) for v in (row.weights, row.means, row.sds))
    parts = w[:, None] * np.exp(-0.5 * ((grid[None, :] - m[:, None]) / s[:, None]) ** 2) / (
        s[:, None] * np.sqrt(2 * np.pi))
    total = parts.sum(axis=0)
    top = max(float(density.max()), float(total.max())) or 1.0
    sx = (_W - 2 * _PAD) / (high - low)
    sy = (_H - 2 * _PAD) / top

    def x_of(v):
        return _PAD + (v - low) * sx

    def y_of(v):
        return _H - _PAD - v * sy

    bar_w = width * sx
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{_W}" height="{_H}" viewBox="0 0 {_W} {_H}" '
           f'role="img"><title>{html.escape(_plot_title(row))}</title>']
    out += [f'<rect x="{x_of(low + i * width):.1f}" y="{y_of(d):.1f}" width="{bar_w:.1f}" '
            f'height="{d * sy:.1f}" fill="#D9D9D9"/>' for i, d in enumerate(density) if d > 0]
    out.append(f'<polyline fill="none" stroke="#000" stroke-width="1.4" '
               f'points="{_points(x_of(grid), y_of(total))}"/>')
    if w.size > 1:  # over the mixture line, so that well separated components show their colour
        out += [f'<polyline fill="none" stroke="{PALETTE[j % len(PALETTE)]}" stroke-width="1.2" '
                f'points="{_points(x_of(grid), y_of(parts[j]))}"/>' for j in range(w.size)]
    out.append("</svg>")
    return "".join(out)


def _plot_title(row: ScreenRow) -> str:
    return (f"{row.column}: histogram of {row.rows_kept} kept values and the best model "
            f"({describe_model(row.best_k, row.best_widths)})")


def _g(value, digits=4) -> str:
    return "" if value is None else f"{float(value):.{digits}g}"


def _model_cell(row: ScreenRow) -> str:
    if row.status != "ok":
        return ""
    gap = f"; {html.escape(row.evidence)} over {html.escape(row.runner_up)} (BIC gap {_g(row.bic_gap, 3)})" \
        if row.runner_up else ""
    return f"<b>{html.escape(describe_model(row.best_k, row.best_widths))}</b>{gap}"


def _components_cell(row: ScreenRow) -> str:
    return "<br>".join(f"{_g(w, 3)} &times; N({_g(m)}, {_g(s)})"
                       for w, m, s in zip(row.weights, row.means, row.sds))


def _row_html(index: int, row: ScreenRow) -> str:
    remark = row.reason if row.status != "ok" else " | ".join(row.notes)
    if row.status == "ok" and not row.converged:
        remark = ("Not converged. " + remark).strip()
    cells = [str(index), html.escape(row.file), html.escape(row.sheet), html.escape(row.column),
             html.escape(row.status), "" if row.rows_kept is None else f"{row.rows_kept}",
             _model_cell(row), _components_cell(row), density_svg(row), html.escape(remark)]
    classes = ["n", "", "", "", "", "n", "", "", "", ""]
    tds = "".join(f'<td class="{c}">{v}</td>' if c else f"<td>{v}</td>" for c, v in zip(classes, cells))
    return f'<tr class="{row.status}">{tds}</tr>'


def render_overview(rows, settings, *, title: str = "ClusterDesk screening overview") -> str:
    """The overview page as one HTML string.

    Parameters
    ----------
    rows : sequence of ScreenRow
    settings : ScanSettings
    title : str, optional

    Returns
    -------
    str
    """
    rows = list(rows)
    counts = status_counts(rows)
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    head = ("<tr><th>#</th><th>file</th><th>sheet</th><th>column</th><th>status</th><th>kept</th>"
            "<th>best by BIC</th><th>components (weight &times; N(mean, sd))</th><th>values and fit</th>"
            "<th>reason or notes</th></tr>")
    body = "\n".join(_row_html(i, r) for i, r in enumerate(rows, start=1))
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{html.escape(title)}</title><style>{_STYLE}</style></head><body>"
            f"<h1>{html.escape(title)}</h1>"
            f'<p class="muted">Written by ClusterDesk {__version__} on {stamp}. '
            f"{counts['ok']} columns screened, {counts['failed']} failed, {counts['skipped']} skipped. "
            f"Settings: {settings.kmin} to {settings.kmax} components, {html.escape(settings.widths)} "
            f"widths, {settings.restarts} restarts per model, seed {settings.seed} (each column's own "
            "seed is in summary.csv). Models ranked by BIC (Schwarz 1978), lower is better; evidence "
            "wording of the BIC gap after Kass &amp; Raftery (1995).</p>"
            '<p class="muted">Plots: grey bars, histogram of the kept values (density scale); black '
            "line, the best model's density; coloured lines, its weighted components.</p>"
            f'<div class="caution"><b>Caution.</b> {html.escape(CAUTION)}</div>'
            f"<table><thead>{head}</thead><tbody>\n{body}\n</tbody></table></body></html>\n")


def write_overview(path, rows, settings) -> Path:
    """Write the overview page atomically and return its path."""
    return write_text_atomic(Path(path), render_overview(rows, settings))
