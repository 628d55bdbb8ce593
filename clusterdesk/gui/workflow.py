"""What the window's actions do to the analysis: open, paste, clean, fit, choose, intervals, save, export.

Long steps run through the window's :class:`~clusterdesk.gui.tasks.TaskRunner`:
the worker computes (``Analysis.from_file``, ``compute_scan``, ``Analysis.open``,
the bootstrap) and the window applies the result on its own thread, so a
cancelled or failed step leaves everything as it was. Dialog questions go
through the ``ask_*`` methods, which tests replace.
"""

from __future__ import annotations

import dataclasses

import functools
import traceback
from pathlib import Path

import numpy as np
from PySide6.QtWidgets import QApplication, QFileDialog

from ..analysis import ANALYSIS_SUFFIX, Analysis, DataChoice
from ..atomic import write_bytes_atomic
from ..errors import FileFormatError, InputError
from ..io import sheet_names
from . import export
from .dialogs import ExcludedRowsDialog
from .models import model_words

__all__ = ["Workflow", "OPEN_FILTERS"]

#: File-type filters of the open dialog.
OPEN_FILTERS = ";;".join([
    "Measurements and analyses (*.csv *.tsv *.txt *.dat *.xlsx *.xlsm *.ods *" + ANALYSIS_SUFFIX + ")",
    "Comma or tab separated text (*.csv *.tsv *.txt *.dat)",
    "Workbooks (*.xlsx *.xlsm *.ods)",
    "Saved ClusterDesk analyses (*" + ANALYSIS_SUFFIX + ")",
    "All files (*)",
])
_WORKBOOK = (".xlsx", ".xlsm", ".ods")


def reports_errors(method):
    """Show any exception of a slot in the window instead of letting it escape."""
    @functools.wraps(method)
    def wrapper(self, *args, **kwargs):
        try:
            return method(self, *args, **kwargs)
        except Exception as exc:  # every problem becomes a message in the window
            self.show_error(exc, traceback.format_exc())
            return None
    return wrapper


def _read_source(path, data, settings):
    """Worker side of opening a data file: the analysis and the sheet names."""
    analysis = Analysis.from_file(path, data, settings)
    sheets = []
    if Path(path).suffix.lower() in _WORKBOOK:
        try:
            sheets = sheet_names(path)
        except FileFormatError:
            sheets = []
    return analysis, sheets


class Workflow:
    """Mixed into :class:`~clusterdesk.gui.window.MainWindow`; holds no state of its own."""

    task_unit = "steps"
    sheets = ()

    # ---------------------------------------------------------------- questions
    def ask_open_path(self) -> str:
        """Ask for a file to open ('' when the user gives up)."""
        path, _ = QFileDialog.getOpenFileName(self, "Open measurements or an analysis",
                                              self.memory.last_folder(), OPEN_FILTERS)
        return path

    def ask_save_path(self, caption: str, suggested: str, filters: str) -> str:
        """Ask where to save ('' when the user gives up)."""
        start = str(Path(self.memory.last_folder()) / suggested)
        path, _ = QFileDialog.getSaveFileName(self, caption, start, filters)
        return path

    def ask_folder(self, caption: str) -> str:
        """Ask for a folder ('' when the user gives up)."""
        return QFileDialog.getExistingDirectory(self, caption, self.memory.last_folder())

    # ---------------------------------------------------------------- getting data in
    def open_dialog(self) -> None:
        """Ask for a file and open it."""
        path = self.ask_open_path()
        if path:
            self.open_path(path)

    def open_bundled_sample(self, sample) -> None:
        """Open one of the synthetic samples with the reading and interval settings that suit it."""
        panel = self.data_panel
        panel.value_at.setCurrentIndex(max(panel.value_at.findData(sample.value_at), 0))
        self.open_path(str(sample.path), sample.data)

    def open_path(self, path, data: DataChoice | None = None) -> None:
        """Open a data file (on the worker) or a saved analysis."""
        if self.runner.busy:
            self.status(f"{self.runner.label} is still running; wait for it or cancel it.")
            return
        path = str(path)
        if path.endswith(ANALYSIS_SUFFIX):
            self.open_analysis(path)
            return
        settings = self.current_settings()
        data = data or DataChoice()
        self.task_unit = "reading"

        def apply(result):
            analysis, sheets = result
            self._take(analysis, sheets, pasted=None)
            self._remember(path)
            self.status(f"Read {Path(path).name}: {analysis.measurements.summary}.")

        self.runner.start(f"Reading {Path(path).name}", lambda p, c: _read_source(path, data, settings), apply)

    def paste_from_clipboard(self) -> None:
        """Read the values on the clipboard."""
        self.read_text(QApplication.clipboard().text(), "the clipboard")

    def read_text(self, text: str, where: str = "pasted text") -> None:
        """Read pasted or dropped text; a line that names an existing file opens that file."""
        if self.runner.busy:
            return
        stripped = (text or "").strip()
        if not stripped:
            self.show_error(InputError(f"There is no text on {where}; copy a column of numbers first."))
            return
        if "\n" not in stripped and Path(stripped).is_file():
            self.open_path(stripped)
            return
        settings = self.current_settings()
        self.task_unit = "reading"

        def apply(analysis):
            self._take(analysis, (), pasted=text)
            self.status(f"Read values from {where}: {analysis.measurements.summary}.")

        self.runner.start("Reading the pasted values",
                          lambda p, c: Analysis.from_text(text, DataChoice(), settings), apply)

    def change_data(self, choice: DataChoice) -> None:
        """Read the same source again with a new column, counts, scale or range."""
        a = self.analysis
        if a is None or self.runner.busy:
            return
        settings = self.current_settings()
        path, text, sheets = a.source_path, self.pasted_text, self.sheets
        if text is not None:
            work = lambda p, c: (Analysis.from_text(text, choice, settings), sheets)  # noqa: E731
        else:
            work = lambda p, c: _read_source(path, choice, settings)  # noqa: E731
        had_results = a.scan is not None
        self.task_unit = "reading"

        def apply(result):
            analysis, new_sheets = result
            self._take(analysis, new_sheets, pasted=text)
            words = " Fit the models again for the new values." if had_results else ""
            self.status(f"Cleaned again: {analysis.measurements.summary}.{words}")

        self.runner.start("Reading the values again", work, apply)

    @reports_errors
    def leave_out_far_values(self) -> None:
        """Set range limits that leave out the far-out values the scan named, and read the values again."""
        a = self.analysis
        if a is None or a.scan is None or self.runner.busy:
            return
        choice, dropped = a.data_leaving_out_far_values()
        limits = " and ".join(f"{word} {value:.10g}" for word, value in (("lowest kept", choice.low),
                                                                        ("highest kept", choice.high))
                              if value is not None)
        self.change_data(choice)
        self.status(f"Range limits set ({limits}); {dropped} value{'s' if dropped != 1 else ''} "
                    "left out. Fit the models again when the values are read.")

    def _take(self, analysis, sheets, pasted) -> None:
        """Make a freshly read analysis the window's analysis."""
        self.analysis, self.sheets, self.pasted_text = analysis, list(sheets), pasted
        self.saved_path = None
        self.message_bar.dismiss()
        self.refresh()

    def _remember(self, path) -> None:
        recent = self.memory.add_recent(path)
        self.welcome.set_recent(recent)
        self._rebuild_recent_menu()

    def _rebuild_recent_menu(self) -> None:
        self.recent_menu.clear()
        recent = [p for p in self.memory.recent_files() if Path(p).exists()]
        for path in recent:
            action = self.recent_menu.addAction(Path(path).name)
            action.setToolTip(path)
            action.setStatusTip(path)
            action.triggered.connect(lambda _checked=False, p=path: self.open_path(p))
        if not recent:
            self.recent_menu.addAction("(nothing yet)").setEnabled(False)

    @reports_errors
    def show_excluded(self) -> None:
        """List the excluded rows with their reasons."""
        if self.analysis is None or self.analysis.measurements is None:
            return
        self._excluded_dialog = ExcludedRowsDialog(self.analysis.measurements, self)
        self._excluded_dialog.open()

    # ---------------------------------------------------------------- fitting
    def current_settings(self):
        """The scan settings the panels show: the fit panel's, with the measurement panel's treatment."""
        return dataclasses.replace(self.fit_panel.settings(), **self.data_panel.treatment_settings())

    def fit_from_panel(self) -> None:
        """Fit with the settings the panel shows."""
        self.fit(self.current_settings())

    def fit(self, settings, opening: str | None = None) -> None:
        """Scan the component counts on the worker; apply the result when it is complete.

        ``opening`` names what was opened to be fitted (a screened row), for the status line.
        """
        a = self.analysis
        if a is None or self.runner.busy:
            return
        self.task_unit = "models fitted"

        def apply(result):
            a.apply_scan(result, settings)
            self.show_results()
            self.distribution.redraw()
            best = model_words(a.scan.best.k, a.scan.best.widths)
            if opening is None:
                self.status(f"Fitted {len(result.models)} models; the best by BIC: {best}.")
            else:
                self.status(f"Opened {opening} from the screening (the column's seed {settings.seed}); "
                            f"the best by BIC: {best}.")
            self.update_actions()

        self.runner.start("Fitting models", lambda p, c: a.compute_scan(settings, p, c), apply)

    @reports_errors
    def choose(self, k: int, widths: str) -> None:
        """Make (k, widths) the chosen model; every view and export follows."""
        a = self.analysis
        if a is None or a.scan is None:
            return
        model = a.choose(k, widths)
        self.distribution.redraw()
        self.criteria.follow_choice(a)
        self.qq.show_analysis(a)
        self.ranking.follow_choice(a)
        self.show_components()
        self.update_plot_caution()
        self.update_actions()
        self.status(f"Showing {model_words(model.k, model.widths)}.")

    # ---------------------------------------------------------------- intervals
    def intervals_available(self):
        """Whether bootstrap intervals can be estimated, and if not, why."""
        if not callable(getattr(Analysis, "compute_intervals", None)):
            return False, "Comes with the bootstrap (not in this version yet)."
        if self.analysis is not None and self.analysis.scan is not None and self.analysis.chosen.collapsed:
            return False, "The chosen model collapsed; intervals would mean nothing. Choose a credible model."
        return True, "Bootstrap confidence intervals for the chosen model's parameters and cut points."

    def intervals_from_panel(self) -> None:
        """Estimate intervals with the panel's replicates, method and level."""
        c = self.components
        self.estimate_intervals(c.replicates.value(), c.method.currentData(), float(c.level.value()))

    def estimate_intervals(self, replicates: int, method: str, level: float) -> None:
        """Bootstrap the chosen model on the worker; the table gains interval columns."""
        a = self.analysis
        if a is None or a.scan is None or self.runner.busy or not self.intervals_available()[0]:
            return
        self.task_unit = "replicates"

        def work(progress, cancel):
            return a.compute_intervals(replicates=replicates, method=method, level=level,
                                       progress=progress, cancel=cancel)

        def apply(result):
            a.apply_intervals(result)
            self.show_components()
            self.status(f"Estimated intervals: {result.describe()}.")

        self.runner.start("Estimating intervals", work, apply)

    def interval_columns(self):
        """Interval rows for the components table and a note, from the analysis."""
        a = self.analysis
        result = getattr(a, "intervals", None) if a is not None and a.scan is not None else None
        if result is None:
            return None, ""

        def spans(interval):
            return [f"{interval[j, 0]:.4g} – {interval[j, 1]:.4g}" if np.all(np.isfinite(interval[j]))
                    else "" for j in range(interval.shape[0])]

        label = f"{result.level:.0%} interval"
        rows = [("weight", label, spans(result.weight_interval)),
                ("mean", label, spans(result.mean_interval)),
                ("sd", label, spans(result.sd_interval))]
        if result.k > 1:
            rows.append(("cut_to_next", label, spans(result.cut_point_interval) + [""]))
        # The full caution stands below the table; how replicates were drawn goes to the tooltip.
        notes = [n for n in result.notes if "not a validated" not in n
                 and not n.startswith(("Resampling:", "Parametric bootstrap:"))]
        return rows, " ".join([result.describe() + "."] + notes)

    # ---------------------------------------------------------------- save and reopen
    def save_analysis(self) -> None:
        """Save to the file it was saved to before, else ask where."""
        if self.saved_path:
            self._save_to(self.saved_path)
        else:
            self.save_analysis_as()

    def save_analysis_as(self) -> None:
        """Ask where to save the analysis and save it."""
        a = self.analysis
        if a is None or a.scan is None:
            return
        stem = Path(a.source_path).stem if a.source_path else "pasted-values"
        path = self.ask_save_path("Save the analysis", stem + ANALYSIS_SUFFIX,
                                  f"ClusterDesk analysis (*{ANALYSIS_SUFFIX})")
        if path:
            self._save_to(path)

    @reports_errors
    def _save_to(self, path) -> None:
        a = self.analysis
        path = Path(path)
        if not path.name.endswith(ANALYSIS_SUFFIX):
            path = path.with_name(path.name + ANALYSIS_SUFFIX)
        renamed = a.source_path is None
        if a.source_path is None and self.pasted_text is not None:
            # Pasted values have no file to re-read: keep them beside the analysis.
            values = path.with_name(path.name[: -len(ANALYSIS_SUFFIX)] + "-values.txt")
            write_bytes_atomic(values, self.pasted_text.encode("utf-8", "surrogatepass"))
            a.source_path, self.pasted_text = str(values.resolve()), None
        saved = a.save(path)
        self.saved_path = str(saved)
        self._remember(saved)
        if renamed:  # the pasted values now have a file: the title and data panel name it
            self.refresh()
        self.status(f"Saved the analysis to {saved}.")

    def open_analysis(self, path, accept_changed_source: bool = False) -> None:
        """Reopen a saved analysis on the worker: re-read its source, refit, restore the choice.

        A problem (a damaged file, a missing or changed source) is shown in a
        message box and the analysis shown is kept.
        """
        if self.runner.busy:
            return
        self.task_unit = "models fitted"

        def apply(opened):
            analysis = opened.analysis
            sheets = []
            if Path(analysis.source_path).suffix.lower() in _WORKBOOK:
                sheets = sheet_names(analysis.source_path)
            self.fit_panel.set_settings(analysis.settings)
            self.data_panel.set_treatment(analysis.settings)
            self._take(analysis, sheets, pasted=None)
            self.saved_path = str(path)
            self._remember(path)
            if opened.source_changed:
                self.show_warning(f"The source file {Path(analysis.source_path).name} changed since the "
                                  "analysis was saved; the numbers shown come from the file as it is now "
                                  "and may differ from the saved ones.")
            self.status(f"Reopened {Path(path).name}.")

        self.runner.start(f"Reopening {Path(path).name}",
                          lambda p, c: Analysis.open(path, accept_changed_source=accept_changed_source,
                                                    progress=p, cancel=c),
                          apply, self.analysis_file_refused)

    # ---------------------------------------------------------------- exports
    def _suggested(self, suffix: str) -> str:
        a = self.analysis
        return (Path(a.source_path).stem if a and a.source_path else "pasted-values") + suffix

    @reports_errors
    def export_tables_dialog(self) -> None:
        """Write the CSV tables and summary into a folder."""
        if self.analysis is None or self.analysis.scan is None:
            return
        folder = self.ask_folder("Folder for the tables")
        if not folder or self.runner.busy:
            return
        a = self.analysis
        self.task_unit = "writing"

        def apply(written):
            self.memory.remember_folder(folder)
            names = ", ".join(p.name for p in written.values())
            self.message_bar.show_message(f"Wrote {names} to {folder}.", "info")
            self.status(f"Wrote the tables to {folder}.")

        self.runner.start("Writing the tables", lambda p, c: export.export_tables(a, folder), apply)

    @reports_errors
    def export_plot_dialog(self, kind: str) -> None:
        """Write the visible plot as PNG or SVG."""
        view = self.current_plot()
        name = self.plots.tabText(self.plots.currentIndex()).lower().replace(" ", "-")
        path = self.ask_save_path(f"Save the plot as {kind.upper()}", self._suggested(f"-{name}.{kind}"),
                                  f"{kind.upper()} image (*.{kind})")
        if not path:
            return
        if not path.lower().endswith("." + kind):
            path += "." + kind
        writer = export.export_png if kind == "png" else export.export_svg
        written = writer(view.plot, path)
        self.memory.remember_folder(written)
        self.status(f"Wrote {written}.")

    @reports_errors
    def export_report_dialog(self) -> None:
        """Write the HTML report."""
        if self.analysis is None or self.analysis.scan is None or export.report_writer() is None:
            return
        path = self.ask_save_path("Save the report", self._suggested("-report.html"), "HTML report (*.html)")
        if not path:
            return
        if not path.lower().endswith((".html", ".htm")):
            path += ".html"
        if self.runner.busy:
            return
        a = self.analysis
        self.task_unit = "writing"

        def apply(written):
            self.memory.remember_folder(written)
            self.message_bar.show_message(f"Wrote the report {written}.", "info")
            self.status(f"Wrote {written}.")

        self.runner.start("Writing the report", lambda p, c: export.export_report(a, path), apply)
