"""pyqtgraph views of the analysis: the distribution, the criteria and the Q-Q check.

Each view draws what the analysis holds (the kept values, the chosen model,
the scan) and computes nothing statistical beyond evaluating the chosen
mixture on a grid. Components are coloured with the Okabe-Ito colour-blind
safe palette (Okabe & Ito 2008, "Color Universal Design"), in the same order
as the report's figures.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QComboBox, QHBoxLayout, QLabel, QPushButton, QSpinBox,
                               QVBoxLayout, QWidget)

from ..display import shown as number_text
from ..engine.treatment import interval_offsets
from ..io.cleaning import to_original_scale
from .histogram import BIN_RULES, bin_edges, weighted_histogram
from .models import model_words

__all__ = ["PALETTE", "axis_label", "PlotView", "DistributionView", "CriteriaView", "QQView"]

#: Okabe-Ito colours (without black), the order in which components are coloured.
PALETTE = ("#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#F0E442")
_HIST_FILL = (205, 205, 205)
_HIST_EDGE = (150, 150, 150)
_CUT_COLOUR = "#444444"
_GRID_POINTS = 800
_QQ_MAX_POINTS = 4000
_SCALE_WORDS = {"linear": "{}", "ln": "ln({})", "log10": "log10({})"}


def axis_label(measurements) -> str:
    """The value axis label: the column name, wrapped in the log when one is used."""
    return _SCALE_WORDS[measurements.scale].format(measurements.column.name)


def component_colour(j: int) -> str:
    """Colour of component ``j`` (0-based)."""
    return PALETTE[j % len(PALETTE)]


def _style_axes(plot: pg.PlotItem, bottom: str, left: str) -> None:
    for name, text in (("bottom", bottom), ("left", left)):
        axis = plot.getAxis(name)
        # pyqtgraph 0.14 scales ticks by 10**3 (densities below 1) even with the prefix off,
        # unless no range allows a prefix before the prefix is switched off.
        axis.setSIPrefixEnableRanges(())
        axis.enableAutoSIPrefix(False)
        axis.setLabel(text)
        axis.setTextPen("k")
        axis.setPen(pg.mkPen(90, 90, 90))
    plot.showGrid(x=True, y=True, alpha=0.15)


class PlotView(QWidget):
    """A pyqtgraph plot with a heading line, a readout line and a 'Reset view' button.

    Attributes
    ----------
    graphics : pyqtgraph.PlotWidget
    plot : pyqtgraph.PlotItem
        The item exported as PNG or SVG.
    """

    #: Where the legend sits: (x, y) offset; negative x counts from the right.
    legend_offset = (-10, 10)

    def __init__(self, title: str, parent=None):
        super().__init__(parent)
        self.graphics = pg.PlotWidget()
        self.plot = self.graphics.getPlotItem()
        self.plot.setMenuEnabled(False)
        self.heading = QLabel(title)
        self.heading.setWordWrap(True)
        self.readout = QLabel(" ")
        self.readout.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.reset_button = QPushButton("Reset view")
        self.reset_button.setToolTip("Show everything again after zooming or panning "
                                     "(drag to pan, wheel to zoom, right-drag to stretch).")
        self.reset_button.clicked.connect(self.reset_view)
        self.controls = QHBoxLayout()
        self.controls.addStretch(1)
        self.controls.addWidget(self.reset_button)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addWidget(self.heading)
        layout.addWidget(self.graphics, 1)
        layout.addWidget(self.readout)
        layout.addLayout(self.controls)
        self.legend = self.plot.addLegend(offset=self.legend_offset, labelTextColor="k",
                                          brush=pg.mkBrush(255, 255, 255, 220),
                                          pen=pg.mkPen(180, 180, 180))
        self.graphics.scene().sigMouseMoved.connect(self._mouse_moved)

    def reset_view(self) -> None:
        """Zoom back out to show every item, and keep following new items until the next zoom."""
        self.plot.enableAutoRange()

    def clear(self, message: str = "") -> None:
        """Remove every item; ``message`` goes to the heading."""
        self.plot.clear()
        self.legend.clear()
        if message:
            self.heading.setText(message)
        self.readout.setText(" ")

    def _mouse_moved(self, position) -> None:
        if not self.plot.sceneBoundingRect().contains(position):
            return
        point = self.plot.vb.mapSceneToView(position)
        self.readout.setText(self.describe_point(point.x(), point.y()))

    def describe_point(self, x: float, y: float) -> str:
        """Words for the readout under the cursor at view coordinates (x, y)."""
        return f"x = {x:.6g}, y = {y:.6g}"


class DistributionView(PlotView):
    """Histogram of the kept values with the mixture, its weighted components and cut points.

    The plot items are kept and given new data when the choice changes (making
    pyqtgraph items and legend labels costs milliseconds each), and the bars
    are computed once per set of values and bar rule.
    """

    def __init__(self, parent=None):
        super().__init__("Open a file to see its values here.", parent)
        self.rule = QComboBox()
        self.rule.addItems(BIN_RULES)
        self.rule.setToolTip("How the histogram bar width is chosen.")
        self.bins = QSpinBox()
        self.bins.setRange(2, 400)
        self.bins.setValue(30)
        self.bins.setPrefix("bars: ")
        self.bins.setEnabled(False)
        self.rule.currentTextChanged.connect(self._rule_changed)
        self.bins.valueChanged.connect(lambda _v: self.redraw())
        self.controls.insertWidget(0, QLabel("Bars:"))
        self.controls.insertWidget(1, self.rule)
        self.controls.insertWidget(2, self.bins)
        self._analysis = None
        self.edges = np.array([])
        self.heights = np.array([])
        self._base_heights = np.array([])  # density of the kept values for the current bars (cached)
        self._kept_total = 0.0
        self.cuts = np.array([])
        self.curves = {}
        self._bars_key = None
        self._legend_key = None
        self._bars = pg.PlotDataItem([0, 1], [0], stepMode="center", fillLevel=0,
                                     brush=pg.mkBrush(*_HIST_FILL), pen=pg.mkPen(*_HIST_EDGE, width=1))
        self._mixture = pg.PlotDataItem([], [], pen=pg.mkPen("k", width=2.5))
        self._components = []
        self._cut_lines = []
        self._cut_sample = pg.PlotDataItem([], [], pen=pg.mkPen(_CUT_COLOUR, width=1.5,
                                                                style=Qt.PenStyle.DashLine))
        for item in (self._bars, self._mixture):
            self.plot.addItem(item)
        self._bars.hide()

    def _rule_changed(self, rule: str) -> None:
        self.bins.setEnabled(rule == "fixed number")
        self.redraw()

    def show_analysis(self, analysis) -> None:
        """Draw the kept values of an analysis and, once fitted, its chosen model."""
        self._analysis = analysis
        self.redraw()
        self.reset_view()

    def redraw(self) -> None:
        """Draw again (after a new choice or bar rule); keeps the zoom."""
        analysis = self._analysis
        if analysis is None or analysis.measurements is None:
            self._show_model(None, 0)
            self._bars.hide()
            self.curves = {}
            self.heading.setText("Open a file to see its values here.")
            return
        m = analysis.measurements
        values, counts = analysis.fit_input()
        label = axis_label(m)
        value_at = analysis.settings.value_at
        key = (id(m), self.rule.currentText(), self.bins.value(), value_at)
        if key != self._bars_key:
            step = m.resolution if m.scale == "linear" else None
            if step:  # a class named by its lower (upper) end is drawn where it lies, not centred on its name
                lo, hi = interval_offsets(value_at, step)
                values = values + 0.5 * (lo + hi)
            self.edges = bin_edges(values, counts, rule=self.rule.currentText(), bins=self.bins.value(),
                                   grid_step=step)
            self._base_heights = weighted_histogram(values, counts, self.edges)
            self._kept_total = float(np.sum(counts)) if counts is not None else float(values.size)
            self._bars_key = key
            _style_axes(self.plot, label, "density")
        # With readings beyond a detection limit in the fit (censored), the mixture is the
        # density of the whole sample: the bars of the kept values hold only their share of it.
        kept = self._kept_total
        fitted_n = analysis.scan.n if analysis.scan is not None else kept
        share = kept / fitted_n if fitted_n > kept else 1.0
        self.heights = self._base_heights * share
        self._bars.setData(self.edges, self.heights)
        self._bars.show()
        self.curves = {"histogram": self._bars}
        # A tally's rows are classes: say how many observations they hold, not how many rows.
        observations = (f"{kept:,.0f} kept observations in {m.n:,} classes" if counts is not None
                        else f"{m.n:,} kept values")
        if analysis.scan is None:
            self._show_model(None, int(round(kept)))
            self.heading.setText(f"{label}: {observations}. Fit models to see the mixture.")
            return
        self._show_model(analysis.chosen, int(round(kept)))
        which = "best by BIC" if analysis.choice is None else "your choice"
        model = analysis.chosen
        censored = f" and {fitted_n - kept:,.0f} readings beyond a limit (in the fit, not drawn)" if share < 1 else ""
        self.heading.setText(f"{label}: {observations}{censored}; "
                             f"{model_words(model.k, model.widths)} ({which}).")

    def _show_model(self, model, n) -> None:
        """Give the curves and cut lines the model's data (None hides them)."""
        for line in self._cut_lines:
            self.plot.removeItem(line)
        self._cut_lines = []
        k = 0 if model is None else model.k
        while len(self._components) < k:
            j = len(self._components)
            curve = pg.PlotDataItem([], [], pen=pg.mkPen(component_colour(j), width=2))
            self.plot.addItem(curve)
            self._components.append(curve)
        if model is None:
            for curve in self._components + [self._mixture]:
                curve.setData([], [])
                curve.hide()
            self.cuts = np.array([])
            self._update_legend(0, False, n)
            return
        mix = model.mixture
        lo, hi = float(self.edges[0]), float(self.edges[-1])
        pad = 0.05 * (hi - lo)
        grid = np.linspace(lo - pad, hi + pad, _GRID_POINTS)
        parts = mix.component_densities(grid)
        for j, curve in enumerate(self._components):
            if j < k:
                curve.setData(grid, parts[:, j])
                curve.show()
                self.curves[f"component {j + 1}"] = curve
            else:
                curve.setData([], [])
                curve.hide()
        density = mix.pdf(grid)
        self._mixture.setData(grid, density)
        self._mixture.show()
        self.curves["mixture"] = self._mixture
        self.cuts = mix.cut_points()
        shown = [float(c) for c in self.cuts if np.isfinite(c)]
        detail = float(mix.sds.min()) / 10  # labels resolve a tenth of the narrowest component
        for cut in shown:
            line = pg.InfiniteLine(pos=cut, angle=90,
                                   pen=pg.mkPen(_CUT_COLOUR, width=1.5, style=Qt.PenStyle.DashLine),
                                   label=number_text(cut, detail),
                                   labelOpts={"position": 0.93, "color": _CUT_COLOUR, "fill": (255, 255, 255, 200)})
            self.plot.addItem(line)
            self._cut_lines.append(line)
        self._update_legend(k, bool(shown), n)
        self._place_legend(grid, density)

    def _update_legend(self, k: int, cuts: bool, n: int) -> None:
        key = (k, cuts, n)
        if key == self._legend_key:
            return
        self.legend.clear()
        self.legend.addItem(self._bars, f"kept values ({n:,})")
        for j in range(k):
            self.legend.addItem(self._components[j], f"component {j + 1}")
        if k:
            self.legend.addItem(self._mixture, "mixture")
        if cuts:
            self.legend.addItem(self._cut_sample, "cut point")
        self._legend_key = key

    def _place_legend(self, grid, density) -> None:
        """Put the legend in the upper corner where the curve is lower."""
        quarter = max(grid.size // 4, 1)
        right_is_lower = density[-quarter:].max() <= density[:quarter].max()
        self.legend.anchor(itemPos=(1, 0) if right_is_lower else (0, 0),
                           parentPos=(1, 0) if right_is_lower else (0, 0),
                           offset=(-10, 10) if right_is_lower else (10, 10))

    def describe_point(self, x: float, y: float) -> str:
        analysis = self._analysis
        if analysis is None or analysis.measurements is None:
            return " "
        m = analysis.measurements
        words = [f"value {x:.6g}"]
        if m.scale != "linear":
            words[0] = f"{axis_label(m)} = {x:.5g} (value {float(to_original_scale(x, m.scale)):.5g})"
        if self.edges.size > 1 and self.edges[0] <= x < self.edges[-1]:
            bar = int(np.searchsorted(self.edges, x, side="right") - 1)
            words.append(f"bar density {self.heights[bar]:.4g}")
        if analysis.scan is not None:
            words.append(f"mixture density {float(analysis.chosen.mixture.pdf(x)):.4g}")
        return "; ".join(words)


class CriteriaView(PlotView):
    """BIC and ICL against the number of components, one line per width variant."""

    _STYLES = {"separate": ("#0072B2", "o"), "shared": ("#D55E00", "s")}

    def __init__(self, parent=None):
        super().__init__("Fit models to compare the criteria.", parent)
        self.points = {}

    def show_analysis(self, analysis) -> None:
        """Draw the criteria of the analysis's scan, the chosen model ringed."""
        self.clear()
        self.points = {}
        if analysis is None or analysis.scan is None:
            self.heading.setText("Fit models to compare the criteria.")
            return
        scan = analysis.scan
        for widths, (colour, symbol) in self._STYLES.items():
            models = sorted((m for m in scan.models if m.widths == widths), key=lambda m: m.k)
            if not models:
                continue
            ks = np.array([m.k for m in models], dtype=float)
            word = "separate widths" if widths == "separate" else "shared width"
            for criterion, dash in (("bic", Qt.PenStyle.SolidLine), ("icl", Qt.PenStyle.DashLine)):
                ys = np.array([getattr(m, criterion) for m in models])
                item = pg.PlotDataItem(ks, ys, pen=pg.mkPen(colour, width=2, style=dash), symbol=symbol,
                                       symbolSize=8, symbolPen=pg.mkPen(colour),
                                       symbolBrush=pg.mkBrush(colour) if criterion == "bic" else pg.mkBrush("w"),
                                       name=f"{criterion.upper()}, {word}")
                self.plot.addItem(item)
                self.points[(criterion, widths)] = (ks, ys)
        self.ring = pg.ScatterPlotItem([], [], symbol="o", size=20, pen=pg.mkPen("k", width=2),
                                       brush=pg.mkBrush(None), name="chosen model")
        self.plot.addItem(self.ring)
        _style_axes(self.plot, "number of components", "criterion (lower is better)")
        self.plot.getAxis("bottom").setTickSpacing(1, 1)
        self.follow_choice(analysis)
        self.reset_view()

    def follow_choice(self, analysis) -> None:
        """Move the ring to the chosen model (the lines stay)."""
        chosen = analysis.chosen
        self.ring.setData([chosen.k], [chosen.bic])
        self.heading.setText(f"BIC (solid) and ICL (dashed) of {len(analysis.scan.models)} models; "
                             f"the ring marks the chosen model ({model_words(chosen.k, chosen.widths)}).")

    def describe_point(self, x: float, y: float) -> str:
        return f"components {x:.2f}; criterion {y:.6g}"


class QQView(PlotView):
    """Data quantiles against the chosen mixture's quantiles, with the fit check's verdict.

    The fit check can take seconds for a million values, so the view does not
    compute it: when it is shown with a model it has not drawn yet it emits
    :attr:`checkWanted`, and the window runs the check off its thread and
    hands the result to :meth:`show_check`.
    """

    legend_offset = (10, 10)  # top left: the points climb to the top right
    checkWanted = Signal()

    def __init__(self, parent=None):
        super().__init__("Fit models to check the fit.", parent)
        self.theoretical = np.array([])
        self.observed = np.array([])
        self.verdict = ""
        self.wanted = None   # (k, widths) of the model to show
        self.drawn = None    # (k, widths) of the model shown

    def show_analysis(self, analysis) -> None:
        """Note which model to show; the check is asked for once the view is visible."""
        if analysis is None or analysis.scan is None:
            self.wanted = self.drawn = None
            self.clear("Fit models to check the fit.")
            self.theoretical = self.observed = np.array([])
            self.verdict = ""
            return
        chosen = analysis.chosen
        self.wanted = (chosen.k, chosen.widths)
        if self.wanted != self.drawn:
            self.clear(f"Checking the fit of {model_words(chosen.k, chosen.widths)}…")
            if self.isVisible():
                self.checkWanted.emit()

    def showEvent(self, event) -> None:  # noqa: N802 (Qt name)
        super().showEvent(event)
        if self.wanted is not None and self.wanted != self.drawn:
            self.checkWanted.emit()

    def show_check(self, check, model, measurements) -> None:
        """Draw a fit check of ``model`` (ignored when another model is wanted by now)."""
        if (model.k, model.widths) != self.wanted:
            return
        self.clear()
        theoretical, observed = thin_qq(check)
        self.theoretical, self.observed, self.verdict = theoretical, observed, check.verdict
        lo = float(min(theoretical.min(), observed.min()))
        hi = float(max(theoretical.max(), observed.max()))
        self.plot.addItem(pg.PlotDataItem([lo, hi], [lo, hi], pen=pg.mkPen(120, 120, 120, width=1.5,
                                                                           style=Qt.PenStyle.DashLine),
                                          name="perfect fit"))
        self.plot.addItem(pg.ScatterPlotItem(theoretical, observed, size=5, pen=pg.mkPen(None),
                                             brush=pg.mkBrush(0, 114, 178, 170), name="data"))
        label = axis_label(measurements)
        _style_axes(self.plot, f"mixture quantile, {label}", f"data quantile, {label}")
        self.heading.setText(f"<b>{model_words(model.k, model.widths)}.</b> {check.verdict}")
        self.drawn = self.wanted
        self.reset_view()

    def describe_point(self, x: float, y: float) -> str:
        return f"mixture quantile {x:.5g}; data quantile {y:.5g}"


def thin_qq(check):
    """The fit check's Q-Q points, at most 4000 (evenly spaced in rank, ends kept), finite only.

    Returns
    -------
    theoretical, observed : ndarray, shape (m,)
    """
    theoretical = np.asarray(check.theoretical, dtype=float)
    observed = np.asarray(check.observed, dtype=float)
    if theoretical.size > _QQ_MAX_POINTS:
        keep = np.unique(np.linspace(0, theoretical.size - 1, _QQ_MAX_POINTS).round().astype(int))
        theoretical, observed = theoretical[keep], observed[keep]
    finite = np.isfinite(theoretical) & np.isfinite(observed)
    return theoretical[finite], observed[finite]
