"""Figures for the report, drawn headless with matplotlib's Agg renderer.

The report must be written where there is no display and without Qt (the
command line on a server), so its figures do not come from the window's
pyqtgraph views. Colours follow the Okabe-Ito colour-blind-safe palette
(Okabe & Ito 2008, "Color Universal Design").
"""

from __future__ import annotations

import io

import numpy as np

__all__ = ["PALETTE", "histogram_png", "criteria_png", "qq_png", "freedman_diaconis_bins"]

#: Okabe-Ito palette (without black), in the order components are coloured.
PALETTE = ("#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#F0E442")


def _figure(width=7.0, height=3.6):
    import matplotlib

    matplotlib.use("Agg", force=False)
    from matplotlib.figure import Figure

    return Figure(figsize=(width, height), dpi=110, layout="constrained")


def _png(fig) -> bytes:
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png")
    return buffer.getvalue()


def freedman_diaconis_bins(values, counts=None, *, max_bins=200) -> int:
    """Number of histogram bins by the Freedman-Diaconis rule (1981).

    Bin width ``2 IQR n^(-1/3)``; falls back to Sturges' rule when the IQR is 0.
    """
    x = np.asarray(values, dtype=float)
    w = np.ones_like(x) if counts is None else np.asarray(counts, dtype=float)
    n = w.sum()
    order = np.argsort(x)
    cum = np.cumsum(w[order]) / n
    q1, q3 = np.interp([0.25, 0.75], cum, x[order])
    span = x.max() - x.min()
    if q3 <= q1 or span <= 0:
        return int(np.clip(np.ceil(np.log2(n) + 1), 1, max_bins))
    width = 2.0 * (q3 - q1) * n ** (-1.0 / 3.0)
    return int(np.clip(np.ceil(span / width), 5, max_bins))


def histogram_png(values, counts, mixture, *, xlabel: str, bins=None, share: float = 1.0) -> bytes:
    """Histogram (density scale) with the mixture density, weighted components and cut points.

    ``share`` is the kept values' share of the readings the mixture was
    fitted to (below 1 when readings beyond a detection or reporting limit
    were in the fit as censored): the bars then hold that share of the area,
    as the mixture's density of the whole sample does over them.
    """
    fig = _figure()
    ax = fig.add_subplot()
    x = np.asarray(values, dtype=float)
    bins = bins or freedman_diaconis_bins(x, counts)
    heights, edges = np.histogram(x, bins=bins, weights=counts, density=True)
    ax.stairs(heights * share, edges, fill=True, color="#D9D9D9", label="measurements")
    ax.stairs(heights * share, edges, color="#A6A6A6", linewidth=0.5)
    lo, hi = x.min(), x.max()
    pad = 0.05 * (hi - lo)
    grid = np.linspace(lo - pad, hi + pad, 800)
    parts = mixture.component_densities(grid)
    for j in range(mixture.k):
        ax.plot(grid, parts[:, j], color=PALETTE[j % len(PALETTE)], linewidth=1.4,
                label=f"component {j + 1}")
    ax.plot(grid, mixture.pdf(grid), color="black", linewidth=1.8, label="mixture")
    for j, c in enumerate(c for c in mixture.cut_points() if np.isfinite(c)):
        ax.axvline(c, color="#555555", linestyle="--", linewidth=1.0, label="cut point" if j == 0 else None)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("density")
    ax.legend(frameon=False, fontsize=8)
    return _png(fig)


def criteria_png(scan) -> bytes:
    """BIC and ICL against the number of components, one line per width variant."""
    fig = _figure(7.0, 3.2)
    ax = fig.add_subplot()
    styles = {"separate": ("#0072B2", "o"), "shared": ("#D55E00", "s")}
    for widths, (colour, marker) in styles.items():
        models = sorted((m for m in scan.models if m.widths == widths), key=lambda m: m.k)
        if not models:
            continue
        ks = [m.k for m in models]
        ax.plot(ks, [m.bic for m in models], color=colour, marker=marker, label=f"BIC, {widths} widths")
        ax.plot(ks, [m.icl for m in models], color=colour, marker=marker, linestyle=":",
                fillstyle="none", label=f"ICL, {widths} widths")
    ax.set_xlabel("number of components")
    ax.set_ylabel("criterion (lower is better)")
    ax.xaxis.get_major_locator().set_params(integer=True)
    ax.legend(frameon=False, fontsize=8)
    return _png(fig)


def qq_png(theoretical, observed, *, xlabel: str) -> bytes:
    """Quantile-quantile plot of the data against the fitted mixture."""
    fig = _figure(4.2, 4.0)
    ax = fig.add_subplot()
    ax.plot(theoretical, observed, linestyle="none", marker=".", markersize=3, color="#0072B2")
    lo = float(min(np.min(theoretical), np.min(observed)))
    hi = float(max(np.max(theoretical), np.max(observed)))
    ax.plot([lo, hi], [lo, hi], color="#555555", linewidth=1.0)
    ax.set_xlabel(f"mixture quantile ({xlabel})")
    ax.set_ylabel(f"data quantile ({xlabel})")
    return _png(fig)
