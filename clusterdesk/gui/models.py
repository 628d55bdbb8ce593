"""Qt table models over what the analysis holds: ranking, components, excluded rows.

Each model shows rounded numbers but keeps the full values under
:data:`RAW_ROLE` (used for sorting and for copying to the clipboard), so a
table copied into a spreadsheet carries every digit.
"""

from __future__ import annotations

import math

import numpy as np
from PySide6.QtCore import QAbstractTableModel, QModelIndex, QSortFilterProxyModel, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QPixmap

from ..engine.criteria import evidence_wording
from ..report.csvfile import format_number
from ..report.tables import components_table

__all__ = ["RAW_ROLE", "model_words", "widths_words", "RankingModel", "ComponentsModel", "ExcludedRowsModel", "SortProxy",
           "as_tab_separated", "fmt"]

#: Role holding the unrounded value of a cell (float, int, bool or str).
RAW_ROLE = Qt.ItemDataRole.UserRole + 1

_BEST_TINT = QColor(230, 242, 250)    # pale blue behind the best model
_MUTED = QColor(110, 110, 110)        # collapsed models


def fmt(value, style: str = "g") -> str:
    """Text for a number as the tables show it.

    Parameters
    ----------
    value : float, int, bool, str or None
    style : {"g", "criterion", "weight"}, default "g"
        ``"g"``: 6 significant digits; ``"criterion"``: 2 decimals (BIC,
        log-likelihood); ``"weight"``: 3 decimals.

    Returns
    -------
    str
        '' for None and NaN.
    """
    if value is None:
        return ""
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, str):
        return value
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    value = float(value)
    if math.isnan(value):
        return ""
    if math.isinf(value):
        return "∞" if value > 0 else "−∞"
    if style == "criterion":
        return f"{value:.2f}"
    if style == "weight":
        return f"{value:.3f}"
    return f"{value:.6g}"


def widths_words(widths: str) -> str:
    """Our name of a width variant: "separate widths" or "shared width"."""
    return "separate widths" if widths == "separate" else "shared width"


def model_words(k: int, widths: str) -> str:
    """A model in words, e.g. "3 components, separate widths" or "1 component, shared width"."""
    return f"{k} component{'' if k == 1 else 's'}, {widths_words(widths)}"


class _TableModel(QAbstractTableModel):
    """A read-only table of raw cells with per-column formatting."""

    headers: tuple = ()
    styles: tuple = ()
    tips: tuple = ()

    def __init__(self, parent=None):
        super().__init__(parent)
        self._rows: list[list] = []

    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: N802 (Qt name)
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent=QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self.headers)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if orientation != Qt.Orientation.Horizontal or not 0 <= section < len(self.headers):
            return None
        if role == Qt.ItemDataRole.DisplayRole:
            return self.headers[section]
        if role == Qt.ItemDataRole.ToolTipRole and section < len(self.tips):
            return self.tips[section] or None
        return None

    def raw(self, row: int, column: int):
        """The unrounded cell."""
        return self._rows[row][column]

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        value = self._rows[index.row()][index.column()]
        if role == Qt.ItemDataRole.DisplayRole:
            style = self.styles[index.column()] if index.column() < len(self.styles) else "g"
            return fmt(value, style)
        if role == RAW_ROLE:
            return value
        if role == Qt.ItemDataRole.TextAlignmentRole:
            numeric = isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(value, bool)
            horizontal = Qt.AlignmentFlag.AlignRight if numeric else Qt.AlignmentFlag.AlignLeft
            return horizontal | Qt.AlignmentFlag.AlignVCenter
        return self.extra(index.row(), index.column(), role)

    def extra(self, row: int, column: int, role):
        """Further roles (fonts, colours, tooltips) for subclasses."""
        return None

    def set_rows(self, rows) -> None:
        """Replace every row."""
        self.beginResetModel()
        self._rows = [list(r) for r in rows]
        self.endResetModel()


class RankingModel(_TableModel):
    """Every scanned model, best first, with the best and the chosen one marked."""

    headers = ("mark", "components", "widths", "BIC", "ΔBIC", "evidence for the best", "ICL",
               "converged", "restarts agreeing", "BIC weight", "log-likelihood", "parameters",
               "smallest weight", "remarks")
    styles = ("g", "g", "g", "criterion", "criterion", "g", "criterion", "g", "g", "weight",
              "criterion", "g", "weight", "g")
    tips = ("The best model (lowest BIC) and the one you chose.", "", "",
            "Bayesian information criterion, -2 log L + p ln n; lower is better.",
            "BIC minus the best model's BIC.",
            "Kass & Raftery wording of the BIC gap: how strongly the best model is favoured over this one.",
            "Integrated completed likelihood: BIC plus twice the entropy of the posterior "
            "probabilities; it penalises overlapping components.",
            "Whether the fit met the convergence rule.",
            "How many of the restarts reached the same best log-likelihood (a trust signal).",
            "exp(-ΔBIC/2), normalised over the credible models.",
            "", "Free parameters: 3k-1 with separate widths, 2k with a shared width.",
            "", "")

    def __init__(self, parent=None):
        super().__init__(parent)
        self._ranking = ()
        self._chosen = None

    def set_scan(self, scan, chosen=None) -> None:
        """Show a scan (None clears the table); ``chosen`` is the (k, widths) marked as chosen."""
        self._ranking = () if scan is None else scan.ranking
        self._chosen = chosen
        rows = []
        for r in self._ranking:
            remarks = []
            if r.collapsed:
                remarks.append("collapsed: a spurious fit")
            if not r.converged:
                remarks.append("did not converge")
            evidence = "" if r.rank == 1 else evidence_wording(max(r.delta_bic, 0.0))
            rows.append([self._mark(r), r.k, widths_words(r.widths),
                         r.bic, r.delta_bic, evidence, r.icl, r.converged,
                         f"{r.restarts_agreeing} of {r.restarts}", r.bic_weight, r.loglik, r.n_params,
                         r.min_weight, "; ".join(remarks)])
        self.set_rows(rows)

    def set_chosen(self, chosen) -> None:
        """Move the 'chosen' mark to (k, widths)."""
        self._chosen = chosen
        for i, r in enumerate(self._ranking):
            self._rows[i][0] = self._mark(r)
        if self._rows:
            self.dataChanged.emit(self.index(0, 0), self.index(len(self._rows) - 1, 0))

    def key(self, row: int) -> tuple:
        """(k, widths) of a row."""
        r = self._ranking[row]
        return r.k, r.widths

    def row_of(self, k: int, widths: str) -> int:
        """Row of the (k, widths) model, or -1."""
        for i, r in enumerate(self._ranking):
            if r.k == k and r.widths == widths:
                return i
        return -1

    def _mark(self, r) -> str:
        words = ["best"] if r.rank == 1 else []
        if self._chosen is not None and (r.k, r.widths) == tuple(self._chosen):
            words.append("chosen")
        return ", ".join(words)

    def extra(self, row, column, role):
        r = self._ranking[row]
        if role == Qt.ItemDataRole.FontRole and r.rank == 1:
            font = QFont()
            font.setBold(True)
            return font
        if role == Qt.ItemDataRole.BackgroundRole and r.rank == 1:
            return QBrush(_BEST_TINT)
        if role == Qt.ItemDataRole.ForegroundRole and r.collapsed:
            return QBrush(_MUTED)
        return None


class ComponentsModel(_TableModel):
    """The chosen model's components, one column per component and one row per quantity.

    The numbers come from :func:`clusterdesk.report.tables.components_table`
    (the same as the exported CSV); the header of each component column
    carries the component's plot colour.
    """

    _LABELS = {"weight": "weight", "mean": "mean", "sd": "sd",
               "count_assigned": "count assigned", "share_confident": "share with posterior ≥ 0.9",
               "expected_misclassification": "expected misclassification",
               "cut_to_next": "cut point to next",
               "geometric_mean": "geometric mean", "multiplicative_spread": "multiplicative spread",
               "cut_to_next_original_scale": "cut point, original scale"}
    _STYLES = {"weight": "weight", "share_confident": "weight", "expected_misclassification": "weight"}

    def __init__(self, parent=None):
        super().__init__(parent)
        self.headers = ()
        self.styles = ()
        self.colours = ()
        self._row_styles = []
        self._interval_rows = set()

    def set_analysis(self, analysis, table=None, intervals=None, colours=()) -> None:
        """Show the chosen model's components (an analysis without a scan clears the table).

        Parameters
        ----------
        analysis : Analysis or None
        table : Table, optional
            ``components_table(analysis)`` when already computed.
        intervals : list of (str, str, list), optional
            Interval rows: the quantity they follow (a ``components_table``
            column name), the row label, and one text per component.
        colours : sequence of str
            Colour of each component, for the column headers.
        """
        self.beginResetModel()
        self.headers, self.styles, self._rows, self.colours = (), (), [], tuple(colours)
        if analysis is not None and analysis.scan is not None:
            table = components_table(analysis) if table is None else table
            k = len(table.rows)
            scale = analysis.measurements.scale
            after = {}
            for name, label, texts in (intervals or ()):
                after.setdefault(name, []).append([label, *texts])
            for i, name in enumerate(table.header):
                if name not in self._LABELS:
                    continue
                label = self._LABELS[name]
                if scale != "linear" and name in ("mean", "sd", "cut_to_next"):
                    label = f"{label} ({scale})"
                values = [row[i] for row in table.rows]
                if name.startswith("cut_to_next"):
                    values[-1] = None  # the last component has no next one
                self._rows.append([label, *values])
                self._rows.extend(after.get(name, []))
            self.headers = ("component",) + tuple(str(j + 1) for j in range(k))
            styles = {self._LABELS[n]: self._STYLES.get(n, "g") for n in self._LABELS}
            self._row_styles = [styles.get(r[0].split(" (")[0], "g") for r in self._rows]
            self._interval_rows = {i for i, r in enumerate(self._rows) if r[0].endswith("interval")}
        self.endResetModel()

    def extra(self, row, column, role):
        if row in self._interval_rows:
            if role == Qt.ItemDataRole.ForegroundRole:
                return QBrush(QColor(70, 70, 70))
            if role == Qt.ItemDataRole.FontRole:
                font = QFont()
                font.setItalic(True)
                return font
            if role == Qt.ItemDataRole.ToolTipRole:
                return "Bootstrap percentile interval of the quantity above."
        return None

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if index.isValid() and role == Qt.ItemDataRole.DisplayRole and index.column() > 0:
            return fmt(self._rows[index.row()][index.column()], self._row_styles[index.row()])
        return super().data(index, role)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if (orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.DecorationRole
                and 0 < section <= len(self.colours)):
            swatch = QPixmap(12, 12)
            swatch.fill(QColor(self.colours[section - 1]))
            return swatch
        return super().headerData(section, orientation, role)


class ExcludedRowsModel(_TableModel):
    """The excluded rows of a column: line, the text as written, and the reason.

    Reads the columnar row fates lazily, so a file with a million excluded
    rows opens at once.
    """

    headers = ("line", "as written", "reason")

    def __init__(self, rows, parent=None):
        super().__init__(parent)
        self._fates = rows
        self._positions = rows.excluded()

    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else int(self._positions.size)

    def raw(self, row: int, column: int):
        position = int(self._positions[row])
        if column == 0:
            return int(self._fates.line[position])
        if column == 1:
            return self._fates.raw(position) or ""
        return self._fates.reason_words(int(self._fates.reason[position]))

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        if role in (Qt.ItemDataRole.DisplayRole, RAW_ROLE):
            value = self.raw(index.row(), index.column())
            return str(value) if role == Qt.ItemDataRole.DisplayRole else value
        return None


class SortProxy(QSortFilterProxyModel):
    """Sorts on the unrounded values, numbers before text, empty cells last."""

    def lessThan(self, left, right) -> bool:  # noqa: N802
        a, b = left.data(RAW_ROLE), right.data(RAW_ROLE)
        return _sort_key(a) < _sort_key(b)


def _sort_key(value):
    if value is None or (isinstance(value, float) and math.isnan(value)) or value == "":
        return (2, 0.0, "")
    if isinstance(value, (int, float, np.integer, np.floating)):
        return (0, float(value), "")
    return (1, 0.0, str(value))


def as_tab_separated(model, rows=None, columns=None) -> str:
    """Cells of a model as tab-separated text with a header line.

    Parameters
    ----------
    model : QAbstractItemModel
        Any table model; cells are taken from :data:`RAW_ROLE` when present
        (full precision), else from the displayed text.
    rows, columns : sequence of int, optional
        Which rows and columns (default: all), in this order.

    Returns
    -------
    str
        Lines end with ``\\n``; tabs and line breaks inside cells become spaces.
    """
    rows = range(model.rowCount()) if rows is None else rows
    columns = range(model.columnCount()) if columns is None else columns

    def clean(text: str) -> str:
        return text.replace("\t", " ").replace("\r", " ").replace("\n", " ")

    lines = ["\t".join(clean(str(model.headerData(c, Qt.Orientation.Horizontal) or "")) for c in columns)]
    for r in rows:
        cells = []
        for c in columns:
            index = model.index(r, c)
            value = index.data(RAW_ROLE)
            if value is None:
                value = index.data(Qt.ItemDataRole.DisplayRole)
            text = value if isinstance(value, str) else format_number(value.item() if hasattr(value, "item") else value)
            cells.append(clean(text if text is not None else ""))
        lines.append("\t".join(cells))
    return "\n".join(lines) + "\n"
