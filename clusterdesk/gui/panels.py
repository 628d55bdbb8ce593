"""The side panels: which values (column, counts, scale, range, cleaning) and how to fit them.

Panels only show and collect choices; the window turns a choice into work on
the analysis. Changing a choice in code never emits the panel's signal (the
widgets are updated with their signals blocked).
"""

from __future__ import annotations

import math

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QAbstractItemView, QComboBox, QFormLayout, QGroupBox, QHBoxLayout,
                               QHeaderView, QLabel, QLineEdit, QPushButton, QSpinBox, QTableWidget,
                               QTableWidgetItem, QVBoxLayout)

from ..analysis import DataChoice, ScanSettings
from .seedbox import SeedBox

__all__ = ["DataPanel", "FitPanel", "SCALE_CHOICES", "WIDTH_CHOICES", "choice_box"]

#: Scale codes and the words shown for them.
SCALE_CHOICES = (("linear", "as measured (linear)"), ("ln", "natural log, ln"), ("log10", "log10"))
#: Width settings and the words shown for them.
WIDTH_CHOICES = (("both", "both variants"), ("separate", "separate widths"), ("shared", "shared width"))
_NO_COUNTS = "(none: each row counts once)"
#: Treatments of the values (exact or intervals) and the words shown for them.
TREATMENT_CHOICES = (("auto", "decide from the resolution"), ("exact", "exact values"),
                     ("intervals", "intervals of the resolution"))
VALUE_AT_CHOICES = (("middle", "middle of its interval"), ("lower", "lower end (class named by its start)"),
                    ("upper", "upper end (class named by its end)"))


def choice_box(choices, tip: str) -> QComboBox:
    """A drop-down of (code, words) choices: shows the words, keeps the code as item data."""
    box = QComboBox()
    for code, words in choices:
        box.addItem(words, code)
    box.setToolTip(tip)
    return box


def _parse_limit(text: str):
    """A range limit typed by the user: float, or None when empty; ValueError when unreadable."""
    text = text.strip().replace(",", ".")
    if not text:
        return None
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(text)
    return value


class DataPanel(QGroupBox):
    """Source, column chooser with each column's summary, counts, scale, range and cleaning summary.

    Signals
    -------
    choiceChanged(object)
        A new :class:`~clusterdesk.analysis.DataChoice` chosen by the user.
    excludedRequested()
        The user asked to see the excluded rows.
    """

    choiceChanged = Signal(object)
    excludedRequested = Signal()

    def __init__(self, parent=None):
        super().__init__("Measurements", parent)
        self.source = QLabel("No file open.")
        self.source.setWordWrap(True)
        self.source.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.sheet = QComboBox()
        self.sheet_label = QLabel("Sheet")
        self.columns = QTableWidget(0, 5)
        self.columns.setHorizontalHeaderLabels(["column", "numbers", "other", "empty", "first values"])
        self.columns.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.columns.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.columns.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.columns.verticalHeader().setVisible(False)
        self.columns.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 8)
        self.columns.horizontalHeader().setStretchLastSection(True)
        self.columns.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.columns.setToolTip("Click a column to analyse it. 'other' counts cells that are not numbers.")
        self.columns.setWordWrap(False)
        self.counts = QComboBox()
        self.counts.setToolTip("For value/count tables: the column saying how many times each value was seen.")
        self.scale = choice_box(SCALE_CHOICES, "Fit on the values or on their logarithm (for right-skewed "
                                "values such as sizes or concentrations). Values <= 0 are excluded on a "
                                "log scale.")
        self.low = QLineEdit()
        self.high = QLineEdit()
        for edit, words in ((self.low, "lowest kept"), (self.high, "highest kept")):
            edit.setPlaceholderText("no limit")
            edit.setToolTip(f"The {words} value, on the original scale (inclusive); leave empty for no limit.")
        self.values_as = choice_box(TREATMENT_CHOICES, "Exact values, or intervals: a value recorded "
                                    "to a resolution h is only known to lie within h/2 of it (each count "
                                    "of a tally is a class of that width). Decide from the resolution: "
                                    "intervals for tallies and for a grid coarse against the spread.")
        self.resolution = QLineEdit()
        self.resolution.setToolTip("The recording step (or class width) on the original scale; leave "
                                   "empty to use the one detected in the values.")
        self.value_at = choice_box(VALUE_AT_CHOICES, "Where each recorded value sits in its interval: the "
                                   "middle for rounded readings; the lower end for a tally whose class 12 "
                                   "holds 12.0 to 12.99 (recorded to the unit below); the upper end for one "
                                   "named by where each class ends.")
        self.values_as.currentIndexChanged.connect(self._show_cleaning)
        self.resolution.textChanged.connect(self._show_cleaning)
        self.cleaning = QLabel("")
        self.cleaning.setWordWrap(True)
        self.cleaning.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.excluded_button = QPushButton("Excluded rows…")
        self.excluded_button.setToolTip("List every excluded row: its line, its text and why it was left out.")
        self.excluded_button.clicked.connect(self.excludedRequested)

        range_row = QHBoxLayout()
        range_row.addWidget(self.low)
        range_row.addWidget(QLabel("to"))
        range_row.addWidget(self.high)
        form = QFormLayout()
        form.addRow(self.sheet_label, self.sheet)
        form.addRow("Counts", self.counts)
        form.addRow("Scale", self.scale)
        form.addRow("Range", range_row)
        form.addRow("Values as", self.values_as)
        form.addRow("Resolution", self.resolution)
        form.addRow("Value at", self.value_at)
        layout = QVBoxLayout(self)
        layout.addWidget(self.source)
        layout.addWidget(self.columns)
        layout.addLayout(form)
        layout.addWidget(self.cleaning)
        layout.addWidget(self.excluded_button, 0, Qt.AlignmentFlag.AlignLeft)
        layout.addStretch(1)

        self.columns.itemSelectionChanged.connect(self._emit)
        self.counts.currentIndexChanged.connect(self._emit)
        self.scale.currentIndexChanged.connect(self._emit)
        self.sheet.currentIndexChanged.connect(self._sheet_changed)
        self.low.editingFinished.connect(self._range_edited)
        self.high.editingFinished.connect(self._range_edited)
        self._shown: DataChoice | None = None
        self._sheets: list[str] = []
        self._names: list[str] = []
        self.setEnabled(False)

    # ---------------------------------------------------------------- show
    def show_measurements(self, measurements, data: DataChoice, sheets=(), source_label: str = "") -> None:
        """Show what was read, without emitting :attr:`choiceChanged`.

        Parameters
        ----------
        measurements : Measurements or None
        data : DataChoice
            The choice the measurements were read with.
        sheets : sequence of str
            Sheet names for a workbook (empty for text).
        source_label : str
            The file name (or "pasted values").
        """
        widgets = (self.columns, self.counts, self.scale, self.sheet, self.low, self.high)
        for w in widgets:
            w.blockSignals(True)
        try:
            self._fill(measurements, data, list(sheets), source_label)
        finally:
            for w in widgets:
                w.blockSignals(False)
        self._shown = self.current_choice() if measurements is not None else None

    def treatment_settings(self) -> dict:
        """``treatment``, ``resolution`` and ``value_at`` for :class:`~clusterdesk.analysis.ScanSettings`.

        An unreadable resolution is taken as empty (the detected one is used).
        """
        try:
            step = _parse_limit(self.resolution.text())
        except ValueError:
            step = None
        return {"treatment": self.values_as.currentData(),
                "resolution": step if step is not None and step > 0 else None,
                "value_at": self.value_at.currentData()}

    def set_treatment(self, settings) -> None:
        """Show the treatment and resolution of some settings (e.g. a reopened analysis)."""
        self.values_as.setCurrentIndex(max(self.values_as.findData(settings.treatment), 0))
        self.resolution.setText("" if settings.resolution is None else f"{settings.resolution:g}")
        self.value_at.setCurrentIndex(max(self.value_at.findData(settings.value_at), 0))
        self._show_cleaning()

    def _show_cleaning(self, *_) -> None:
        """The cleaning summary, saying what becomes of limit rows under the treatment shown."""
        m = getattr(self, "_measurements", None)
        if m is not None:
            self.cleaning.setText(cleaning_words(m, **self.treatment_settings()))

    def _fill(self, m, data, sheets, source_label) -> None:
        self.setEnabled(m is not None)
        detected = getattr(m, "resolution", None)
        self.resolution.setPlaceholderText("none detected" if detected is None
                                           else f"detected: {detected:g}")
        self._sheets = sheets
        self.sheet.clear()
        self.sheet.addItems(sheets)
        self.sheet.setVisible(bool(sheets))
        self.sheet_label.setVisible(bool(sheets))
        if m is None:
            self.source.setText("No file open.")
            self.columns.setRowCount(0)
            self.counts.clear()
            self.cleaning.setText("")
            return
        if sheets and m.format.sheet in sheets:
            self.sheet.setCurrentIndex(sheets.index(m.format.sheet))
        self.source.setText(f"<b>{source_label}</b><br>{_format_words(m)}")
        self._names = [c.name for c in m.columns]
        self.columns.setRowCount(len(m.columns))
        for row, c in enumerate(m.columns):
            cells = [c.name, str(c.numeric_count), str(c.non_numeric_count), str(c.empty_count),
                     ", ".join(c.first_values)]
            for col, text in enumerate(cells):
                item = QTableWidgetItem(text)
                item.setToolTip(f"{c.name}: {c.numeric_count} numbers, {c.non_numeric_count} other cells, "
                                f"{c.empty_count} empty; first values {', '.join(c.first_values)}")
                if 1 <= col <= 3:
                    item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
                if not c.mostly_numeric:
                    item.setForeground(Qt.GlobalColor.darkGray)
                self.columns.setItem(row, col, item)
        self.columns.selectRow(m.column.index)
        shown = min(len(m.columns), 6)
        self.columns.setFixedHeight(self.columns.horizontalHeader().sizeHint().height() + 6
                                    + shown * self.columns.verticalHeader().defaultSectionSize()
                                    + self.columns.horizontalScrollBar().sizeHint().height())
        self.counts.clear()
        self.counts.addItem(_NO_COUNTS, None)
        for c in m.columns:
            if c.index != m.column.index and c.mostly_numeric:
                self.counts.addItem(c.name, c.index)
        if m.count_column is not None:
            self.counts.setCurrentIndex(max(self.counts.findData(m.count_column.index), 0))
        self.scale.setCurrentIndex(max(self.scale.findData(m.scale), 0))
        self.low.setText("" if m.low is None else f"{m.low:g}")
        self.high.setText("" if m.high is None else f"{m.high:g}")
        self.low.setStyleSheet("")
        self.high.setStyleSheet("")
        self._measurements = m
        self._show_cleaning()
        self.excluded_button.setEnabled(m.summary.rows_read > m.summary.rows_kept)

    # ---------------------------------------------------------------- read
    def current_choice(self) -> DataChoice:
        """The choice the widgets show (range fields that do not read as numbers are left out)."""
        rows = self.columns.selectionModel().selectedRows()
        column = self._column_key(rows[0].row()) if rows else None
        counts = self.counts.currentData()
        sheet = self.sheet.currentText() if self._sheets else None
        low = high = None
        try:
            low = _parse_limit(self.low.text())
        except ValueError:
            pass
        try:
            high = _parse_limit(self.high.text())
        except ValueError:
            pass
        return DataChoice(column=column, counts=None if counts is None else self._column_key(counts),
                          sheet=sheet, low=low,
                          high=high, scale=self.scale.currentData() or "linear")

    def _column_key(self, index: int):
        """A column's name when it is unique (clearer in a saved analysis), else its position."""
        names = self._names
        return names[index] if names.count(names[index]) == 1 else index

    def _emit(self) -> None:
        choice = self.current_choice()
        if choice.column is None or choice == self._shown:
            return
        self._shown = choice
        self.choiceChanged.emit(choice)

    def _sheet_changed(self) -> None:
        # A new sheet has other columns: let the reader pick the default column again.
        choice = DataChoice(sheet=self.sheet.currentText(), scale=self.scale.currentData() or "linear")
        self._shown = choice
        self.choiceChanged.emit(choice)

    def _range_edited(self) -> None:
        for edit in (self.low, self.high):
            try:
                _parse_limit(edit.text())
                edit.setStyleSheet("")
                edit.setToolTip("On the original scale (inclusive); leave empty for no limit.")
            except ValueError:
                edit.setStyleSheet("QLineEdit { border: 2px solid #D55E00; }")
                edit.setToolTip(f"{edit.text()!r} is not a number; type a number such as 12.5, or leave it empty.")
                return
        self._emit()


def _format_words(m) -> str:
    f = m.format
    words = [f.reader]
    if f.sheet:
        words.append(f"sheet {f.sheet!r}")
    if f.delimiter:
        words.append(f"{f.delimiter}-separated" if "none" not in f.delimiter else "one column")
    if f.decimal_mark == ",":
        words.append("decimal commas")
    if f.encoding:
        words.append(f.encoding)
    if f.preamble_lines:
        words.append(f"{len(f.preamble_lines)} lines above the table skipped")
    if f.unit:
        words.append(f"unit {f.unit}")
    return "; ".join(words)


def cleaning_words(m, treatment: str = "auto", resolution: float | None = None, value_at: str = "middle") -> str:
    """The cleaning summary as shown under the column chooser (rich text).

    ``treatment``, ``resolution`` and ``value_at`` are the settings shown beside it: rows at
    a detection or reporting limit enter the fit as censored readings unless
    the values are taken as exact or no resolution is known
    (:meth:`~clusterdesk.analysis.Analysis.likelihood_input`).
    """
    s = m.summary
    lines = [f"<b>{s.rows_kept:,}</b> of {s.rows_read:,} rows kept"]
    if s.total_count is not None:
        lines[0] += f" (total count {s.total_count:,.0f})"
    if s.excluded:
        lines.append("excluded: " + ", ".join(f"{n:,} {words}" for words, n in s.excluded.items()))
    else:
        lines.append("nothing excluded")
    on = "" if m.scale == "linear" else " (original scale)"
    lines.append(f"resolution {m.resolution:g}{on}" if m.resolution else "no recording grid (continuous values)")
    limits = [w for w in s.excluded if w in ("below detection limit", "above reporting limit")]
    censored = treatment != "exact" and (resolution or m.resolution) is not None
    if limits and censored:
        lines.append("<i>Rows at a detection or reporting limit enter the fit as censored readings "
                     "(the likelihood of intervals); they are not drawn in the histogram.</i>")
    elif limits:
        lines.append("<i>Rows at a detection or reporting limit are left out of this fit, which can "
                     "distort the lowest or highest group; values as intervals would keep them "
                     "as censored readings.</i>")
    return "<br>".join(lines)


class FitPanel(QGroupBox):
    """The scan options and the button that starts the fit.

    Signals
    -------
    fitRequested(object)
        The :class:`~clusterdesk.analysis.ScanSettings` to fit with.
    """

    fitRequested = Signal(object)

    def __init__(self, parent=None):
        super().__init__("Fit", parent)
        self.kmin = QSpinBox()
        self.kmax = QSpinBox()
        for spin in (self.kmin, self.kmax):
            spin.setRange(1, 15)
        self.kmin.setToolTip("Fewest components to try.")
        self.kmax.setToolTip("Most components to try.")
        self.kmin.valueChanged.connect(lambda v: self.kmax.setValue(max(self.kmax.value(), v)))
        self.kmax.valueChanged.connect(lambda v: self.kmin.setValue(min(self.kmin.value(), v)))
        self.widths = choice_box(WIDTH_CHOICES, "Separate widths: each component has its own standard "
                                 "deviation. Shared width: one standard deviation for all components.")
        self.restarts = QSpinBox()
        self.restarts.setRange(1, 200)
        self.restarts.setToolTip("Starting points per model; more restarts make a poor local fit less likely.")
        self.seed = SeedBox()  # seeds of screened columns go up to 2**63 - 1
        self.seed.setToolTip("Random seed of the starting points: the same seed gives the same numbers.")
        self.fit_button = QPushButton("Fit models")
        self.fit_button.setToolTip("Fit every component count in the range and rank the models by BIC.")
        self.fit_button.clicked.connect(lambda: self.fitRequested.emit(self.settings()))
        k_row = QHBoxLayout()
        k_row.addWidget(self.kmin)
        k_row.addWidget(QLabel("to"))
        k_row.addWidget(self.kmax)
        form = QFormLayout()
        form.addRow("Components", k_row)
        form.addRow("Widths", self.widths)
        form.addRow("Restarts", self.restarts)
        form.addRow("Seed", self.seed)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addWidget(self.fit_button)
        self.set_settings(ScanSettings())
        self.setEnabled(False)

    def settings(self) -> ScanSettings:
        """The settings the widgets show."""
        return ScanSettings(kmin=self.kmin.value(), kmax=self.kmax.value(),
                            widths=self.widths.currentData(), restarts=self.restarts.value(),
                            seed=self.seed.value())

    def set_settings(self, s: ScanSettings) -> None:
        """Show settings (e.g. those of a reopened analysis)."""
        self.kmax.setValue(s.kmax)
        self.kmin.setValue(s.kmin)
        self.widths.setCurrentIndex(max(self.widths.findData(s.widths), 0))
        self.restarts.setValue(s.restarts)
        self.seed.setValue(s.seed)
