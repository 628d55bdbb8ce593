"""The result panels: the ranking of the scanned models and the chosen model's components."""

from __future__ import annotations

import html

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QDoubleSpinBox, QGridLayout, QGroupBox, QLabel,
                               QPushButton, QSpinBox, QVBoxLayout)

from ..report.tables import CAUTION
from .models import ComponentsModel, RankingModel, SortProxy, model_words
from .panels import choice_box
from .plots import component_colour
from .tableview import CopyableTableView

__all__ = ["RankingPanel", "ComponentsPanel", "caution_label"]

#: Bootstrap methods and the words shown for them.
BOOTSTRAP_METHODS = (("resample", "resample the values"), ("parametric", "simulate from the fit"))


#: The short form under the plot; the full caution stands under the components table.
SHORT_CAUTION = ("Dashed lines are fitted cut points: statistical estimates, not validated "
                 "diagnostic or acceptance limits.")


def caution_label(parent=None, *, short: bool = False) -> QLabel:
    """The caution about cut points, shown wherever cut points are shown."""
    label = QLabel(f"<b>Caution.</b> {SHORT_CAUTION if short else CAUTION}", parent)
    label.setWordWrap(True)
    label.setStyleSheet("QLabel { background: #FFF4E5; border-left: 4px solid #D55E00; "
                        "padding: 4px 6px; color: #222; }")
    return label


class WrappedLabel(QLabel):
    """A word-wrapped label that asks its layout for the height its text needs at its width.

    A wrapped QLabel in a box beside a stretching table is otherwise given the
    height of one line, and its second line (the likelihood used) is cut off.
    """

    def __init__(self, text: str = "", parent=None):
        super().__init__(text, parent)
        self.setWordWrap(True)

    def setText(self, text: str) -> None:  # noqa: N802 (Qt's name)
        super().setText(text)
        self._fit_height()

    def resizeEvent(self, event) -> None:  # noqa: N802 (Qt's name)
        super().resizeEvent(event)
        self._fit_height()

    def _fit_height(self) -> None:
        needed = self.heightForWidth(max(self.width(), 1))
        if needed > 0 and needed != self.minimumHeight():
            self.setMinimumHeight(needed)


class RankingPanel(QGroupBox):
    """The ranking table; selecting a row chooses that model.

    Signals
    -------
    modelChosen(int, str)
        ``k`` and ``widths`` of the row the user selected.
    leaveOutRequested()
        The user asked to set range limits that leave out the far-out
        values the scan named.
    """

    modelChosen = Signal(int, str)
    leaveOutRequested = Signal()

    def __init__(self, parent=None):
        super().__init__("Models ranked by BIC", parent)
        self.model = RankingModel(self)
        self.proxy = SortProxy(self)
        self.proxy.setSourceModel(self.model)
        self.view = CopyableTableView()
        self.view.setModel(self.proxy)
        self.view.setSortingEnabled(True)
        self.view.setSelectionMode(self.view.SelectionMode.SingleSelection)
        self.view.sortByColumn(3, Qt.SortOrder.AscendingOrder)
        self.summary = WrappedLabel("Fit models to rank them.")
        self.leave_out_button = QPushButton("Leave the far-out values out")
        self.leave_out_button.setToolTip("Set the range limits to the nearest values that stay, read the "
                                         "values again, then fit again. Check the named values for "
                                         "recording errors first.")
        self.leave_out_button.setVisible(False)
        self.leave_out_button.clicked.connect(self.leaveOutRequested)
        layout = QVBoxLayout(self)
        layout.addWidget(self.summary)
        layout.addWidget(self.leave_out_button, 0, Qt.AlignmentFlag.AlignLeft)
        layout.addWidget(self.view, 1)
        self.view.selectionModel().selectionChanged.connect(self._selection_changed)
        self.view.fit_columns()  # headings whole before the first fit too
        self._updating = False

    def show_analysis(self, analysis) -> None:
        """Show the analysis's scan and select its chosen model."""
        self._updating = True
        try:
            self.leave_out_button.setVisible(analysis is not None and analysis.scan is not None
                                             and bool(analysis.scan.suspect_values))
            if analysis is None or analysis.scan is None:
                self.model.set_scan(None)
                self.view.fit_columns()  # the empty table shows whole headings, not cut ones
                self.summary.setText("Fit models to rank them.")
                return
            chosen = analysis.chosen
            self.model.set_scan(analysis.scan, (chosen.k, chosen.widths))
            self.view.fit_columns()
            self._select(chosen.k, chosen.widths)
            self.summary.setText(ranking_words(analysis))
        finally:
            self._updating = False

    def follow_choice(self, analysis) -> None:
        """Move the 'chosen' mark and the selection after a new choice."""
        chosen = analysis.chosen
        self._updating = True
        try:
            self.model.set_chosen((chosen.k, chosen.widths))
            self._select(chosen.k, chosen.widths)
            self.summary.setText(ranking_words(analysis))
        finally:
            self._updating = False

    def _select(self, k: int, widths: str) -> None:
        row = self.model.row_of(k, widths)
        if row < 0:
            return
        index = self.proxy.mapFromSource(self.model.index(row, 0))
        self.view.selectRow(index.row())
        self.view.scrollTo(index)

    def selected_key(self):
        """(k, widths) of the selected row, or None."""
        rows = self.view.selectionModel().selectedRows()
        if not rows:
            return None
        return self.model.key(self.proxy.mapToSource(rows[0]).row())

    def _selection_changed(self, *_args) -> None:
        if self._updating:
            return
        key = self.selected_key()
        if key is not None:
            self.modelChosen.emit(int(key[0]), str(key[1]))


def ranking_words(analysis) -> str:
    """One or two sentences above the ranking: the best model, its evidence, the choice."""
    scan = analysis.scan
    best = scan.best
    words = f"Best: <b>{model_words(best.k, best.widths)}</b>"
    if scan.evidence:
        runner_up = next(r for r in scan.ranking[1:] if not r.collapsed)
        words += f", BIC {runner_up.delta_bic:.1f} below the runner-up ({scan.evidence} evidence)."
    else:
        words += "."
    chosen = analysis.chosen
    if analysis.choice is not None and (chosen.k, chosen.widths) != (best.k, best.widths):
        words += f" Shown: <b>your choice, {model_words(chosen.k, chosen.widths)}</b>."
    else:
        words += " Select a row to show that model."
    if scan.treatment is not None:
        words += f"<br>Values treated as: {html.escape(scan.treatment.describe())}"
    for note in scan.notes:  # on the scan as a whole, e.g. far-out values
        words += f"<br><b>Note:</b> {html.escape(note)}"
    return words


class ComponentsPanel(QGroupBox):
    """The chosen model's components, the intervals action and the cut-point caution.

    Signals
    -------
    intervalsRequested(int, str, float)
        Replicates, bootstrap method and confidence level.
    """

    intervalsRequested = Signal(int, str, float)

    def __init__(self, parent=None):
        super().__init__("Components of the chosen model", parent)
        self.model = ComponentsModel(self)
        self.view = CopyableTableView()
        self.view.setModel(self.model)
        self.heading = WrappedLabel("Fit models to see their components.")
        self.replicates = QSpinBox()
        self.replicates.setRange(10, 10_000)
        self.replicates.setValue(200)
        self.replicates.setSuffix(" replicates")
        self.method = choice_box(BOOTSTRAP_METHODS, "Resample the values with replacement, or simulate "
                                 "new samples from the fitted mixture.")
        self.level = QDoubleSpinBox()
        self.level.setRange(0.5, 0.999)
        self.level.setDecimals(3)
        self.level.setSingleStep(0.01)
        self.level.setValue(0.95)
        self.level.setPrefix("level ")
        self.intervals_button = QPushButton("Estimate intervals")
        self.intervals_button.setToolTip("Bootstrap confidence intervals for the weights, means, "
                                         "standard deviations and cut points of the chosen model.")
        self.intervals_button.clicked.connect(
            lambda: self.intervalsRequested.emit(self.replicates.value(), self.method.currentData(),
                                                 float(self.level.value())))
        row = QGridLayout()
        row.addWidget(self.intervals_button, 0, 0)
        row.addWidget(self.replicates, 0, 1)
        row.addWidget(self.method, 1, 0)
        row.addWidget(self.level, 1, 1)
        self.intervals_note = QLabel("")
        self.intervals_note.setWordWrap(True)
        self.caution = caution_label()
        layout = QVBoxLayout(self)
        layout.addWidget(self.heading)
        layout.addWidget(self.view, 1)
        layout.addLayout(row)
        layout.addWidget(self.intervals_note)
        layout.addWidget(self.caution)
        self.set_intervals_available(False, "")

    def set_intervals_available(self, available: bool, why: str) -> None:
        """Enable the intervals action, or disable it with a tooltip saying why."""
        for w in (self.intervals_button, self.replicates, self.method, self.level):
            w.setEnabled(available)
        if why:
            self.intervals_button.setToolTip(why)

    def show_pending(self, model) -> None:
        """Say that the table of ``model`` is being computed (large samples)."""
        self.model.set_analysis(None)
        self.heading.setText(f"<b>{model_words(model.k, model.widths)}</b>: summarising the components…")

    def show_analysis(self, analysis, table=None, intervals=None, note: str = "") -> None:
        """Show the chosen model's components, with interval rows when given.

        Parameters
        ----------
        analysis : Analysis or None
        table : Table, optional
            The model's ``components_table`` when already computed.
        intervals : list of (str, str, list), optional
            See :meth:`ComponentsModel.set_analysis`.
        note : str
            Words about the intervals.
        """
        k = analysis.chosen.k if analysis is not None and analysis.scan is not None else 0
        self.model.set_analysis(analysis, table, intervals, [component_colour(j) for j in range(k)])
        self.view.fit_columns()
        self.intervals_note.setText(note)
        intervals_result = getattr(analysis, "intervals", None) if analysis is not None and analysis.scan else None
        self.intervals_note.setToolTip("\n".join(intervals_result.notes) if intervals_result is not None else "")
        if analysis is None or analysis.scan is None:
            self.heading.setText("Fit models to see their components.")
            self.caution.setVisible(False)
            return
        chosen = analysis.chosen
        scale = analysis.measurements.scale
        on = "" if scale == "linear" else f" Means, sds and cut points are on the {scale} scale."
        self.heading.setText(f"<b>{model_words(chosen.k, chosen.widths)}</b>: log-likelihood "
                             f"{chosen.loglik:.2f}; {chosen.restarts_agreeing} of {chosen.restarts} "
                             f"restarts agree.{on}" + "".join(f" Note: {html.escape(n)}" for n in
                                                               chosen.notes + chosen.mixture.cut_point_notes()))
        self.caution.setVisible(chosen.k > 1)
