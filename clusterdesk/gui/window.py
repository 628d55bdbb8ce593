"""The main window: layout, menus, shortcuts, drag and drop, and showing the analysis.

What each action does to the analysis lives in :mod:`clusterdesk.gui.workflow`;
this module builds the widgets, keeps them in step with the analysis and
looks after the window itself (geometry, closing while work runs).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (QLabel, QMainWindow, QProgressBar, QPushButton, QScrollArea,
                               QSplitter, QStackedWidget, QTabWidget, QVBoxLayout, QWidget)

from .. import __version__
from ..report.tables import components_table
from .dialogs import MessageBar
from .errors import describe_error
from .export import report_writer
from .file_problems import AnalysisFileProblems
from .panels import DataPanel, FitPanel
from .plots import CriteriaView, DistributionView, QQView
from .results import ComponentsPanel, RankingPanel, caution_label
from .screening import ScreeningView
from .screening_flow import ScreeningWorkflow
from .settings import Memory
from .tasks import LatestJobs, TaskRunner
from .welcome import WelcomePage
from .workflow import Workflow

__all__ = ["MainWindow", "SYNC_VALUES"]

#: Up to this many kept values the components table is computed at once on the window's thread.
SYNC_VALUES = 50_000


class MainWindow(Workflow, ScreeningWorkflow, AnalysisFileProblems, QMainWindow):
    """The ClusterDesk window.

    Parameters
    ----------
    settings : QSettings, optional
        Where geometry, the last folder and recent files are remembered
        (default: the user's ClusterDesk settings; tests pass a temporary one).

    Attributes
    ----------
    analysis : Analysis or None
        The analysis shown; every number on screen comes from it.
    runner : TaskRunner
        Runs long work (reading, fitting, intervals, reopening) off the window's thread.
    """

    def __init__(self, settings=None, parent=None):
        super().__init__(parent)
        self.memory = Memory(settings)
        self.analysis = None
        self.pasted_text = None
        self.saved_path = None
        self.runner = TaskRunner(self)
        self.view_jobs = LatestJobs(self)  # fit check and large component tables, beside other work
        self._tables = {}  # (k, widths) -> components table, for the scan in _tables_owner
        self._tables_owner = None
        self.setWindowTitle("ClusterDesk")
        self.setAcceptDrops(True)
        self._build_widgets()
        self._build_actions()
        self._build_menus()
        self._connect()
        self._restore_geometry()
        self.welcome.set_recent(self.memory.recent_files())
        self._rebuild_recent_menu()
        self.refresh()
        self.status("Ready. Open a file, paste a column or pick a sample data set.")

    # -------------------------------------------------------------- widgets
    def _build_widgets(self) -> None:
        self.message_bar = MessageBar()
        self.welcome = WelcomePage()
        self.data_panel = DataPanel()
        self.fit_panel = FitPanel()
        self.distribution = DistributionView()
        self.criteria = CriteriaView()
        self.qq = QQView()
        self.ranking = RankingPanel()
        self.components = ComponentsPanel()
        self.plot_caution = caution_label(short=True)

        side = QWidget()
        side_layout = QVBoxLayout(side)
        side_layout.setContentsMargins(0, 0, 0, 0)
        side_layout.addWidget(self.data_panel)
        side_layout.addWidget(self.fit_panel)
        side_layout.addStretch(1)
        side_scroll = QScrollArea()
        side_scroll.setWidgetResizable(True)
        side_scroll.setWidget(side)
        side_scroll.setMinimumWidth(290)

        self.plots = QTabWidget()
        self.plots.addTab(self.distribution, "Distribution")
        self.plots.addTab(self.criteria, "Criteria")
        self.plots.addTab(self.qq, "Q-Q check")
        plot_box = QWidget()
        plot_layout = QVBoxLayout(plot_box)
        plot_layout.setContentsMargins(0, 0, 0, 0)
        plot_layout.addWidget(self.plots, 1)
        plot_layout.addWidget(self.plot_caution)

        horizontal, vertical = Qt.Orientation.Horizontal, Qt.Orientation.Vertical
        self.top_splitter = _splitter(horizontal, (plot_box, self.components), (1, 0), (580, 440))
        self.right_splitter = _splitter(vertical, (self.top_splitter, self.ranking), (3, 2), (520, 300))
        self.side_splitter = _splitter(horizontal, (side_scroll, self.right_splitter), (0, 1), (320, 1040))

        self.stack = QStackedWidget()
        self.stack.addWidget(self.welcome)
        self.stack.addWidget(self.side_splitter)
        self.screening = ScreeningView()
        self.stack.addWidget(self.screening)
        central = QWidget()
        layout = QVBoxLayout(central)
        layout.setContentsMargins(4, 4, 4, 0)
        layout.addWidget(self.message_bar)
        layout.addWidget(self.stack, 1)
        self.setCentralWidget(central)

        self.progress = QProgressBar()
        self.progress.setMaximumWidth(260)
        self.progress.setTextVisible(True)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop the running work; the previous results stay in place (Esc).")
        self.data_label = QLabel("")
        bar = self.statusBar()
        bar.addPermanentWidget(self.data_label)
        bar.addPermanentWidget(self.progress)
        bar.addPermanentWidget(self.cancel_button)
        self.progress.hide()
        self.cancel_button.hide()

    def _action(self, text, slot, shortcut=None, tip="") -> QAction:
        action = QAction(text, self)
        if shortcut is not None:
            action.setShortcut(shortcut)
        if tip:
            action.setStatusTip(tip)
            action.setToolTip(tip)
        action.triggered.connect(lambda _checked=False: slot())
        return action

    def _build_actions(self) -> None:
        K = QKeySequence.StandardKey
        self.open_action = self._action("&Open…", self.open_dialog, K.Open,
                                        "Open a CSV, text or XLSX file, or a saved analysis.")
        self.paste_action = self._action("&Paste values", self.paste_from_clipboard, K.Paste,
                                         "Read a column copied from a spreadsheet.")
        self.save_action = self._action("&Save analysis", self.save_analysis, K.Save,
                                        "Save the analysis (source, settings, choice) to reopen later.")
        self.save_as_action = self._action("Save analysis &as…", self.save_analysis_as, K.SaveAs)
        self.export_tables_action = self._action("Tables (CSV)…", self.export_tables_dialog, None,
                                                 "Ranking, components and every row's assignment as CSV, "
                                                 "with a summary.")
        self.export_png_action = self._action("Current plot as PNG…", lambda: self.export_plot_dialog("png"))
        self.export_svg_action = self._action("Current plot as SVG…", lambda: self.export_plot_dialog("svg"))
        self.export_report_action = self._action("Report (HTML)…", self.export_report_dialog, None,
                                                 "One HTML file with the data, settings, ranking, "
                                                 "chosen model, figures and cautions.")
        self.quit_action = self._action("&Quit", self.close, K.Quit)
        self.copy_ranking_action = self._action("Copy ranking table", self.ranking.view.copy_all)
        self.copy_components_action = self._action("Copy components table", self.components.view.copy_all)
        self.fit_action = self._action("&Fit models", self.fit_from_panel, QKeySequence("Ctrl+R"),
                                       "Fit every component count in the range and rank the models.")
        self.cancel_action = self._action("&Cancel running work", self.runner.cancel,
                                          QKeySequence(Qt.Key.Key_Escape))
        self.intervals_action = self._action("Estimate &intervals", self.intervals_from_panel,
                                             QKeySequence("Ctrl+I"))
        self.excluded_action = self._action("Show &excluded rows…", self.show_excluded)
        self.reset_view_action = self._action("&Reset plot view", self.reset_current_plot, QKeySequence("Ctrl+0"))
        self.start_action = self._action("&Start screen", lambda: self.stack.setCurrentIndex(0))
        self.screening_action = self._action("Screen &many files…", self.show_screening, QKeySequence("Ctrl+M"),
                                             "Screen every numeric column of a folder or of several files "
                                             "into one table.")
        self.about_action = self._action("&About ClusterDesk", self.show_about)

    def _build_menus(self) -> None:
        bar = self.menuBar()
        file_menu = bar.addMenu("&File")
        file_menu.addAction(self.open_action)
        self.recent_menu = file_menu.addMenu("Open &recent")
        file_menu.addAction(self.paste_action)
        file_menu.addAction(self.screening_action)
        file_menu.addSeparator()
        file_menu.addAction(self.save_action)
        file_menu.addAction(self.save_as_action)
        export_menu = file_menu.addMenu("&Export")
        for action in (self.export_tables_action, self.export_png_action, self.export_svg_action,
                       self.export_report_action):
            export_menu.addAction(action)
        file_menu.addSeparator()
        file_menu.addAction(self.quit_action)
        edit_menu = bar.addMenu("&Edit")
        edit_menu.addAction(self.paste_action)
        edit_menu.addAction(self.copy_ranking_action)
        edit_menu.addAction(self.copy_components_action)
        analysis_menu = bar.addMenu("&Analysis")
        for action in (self.fit_action, self.intervals_action, self.cancel_action, self.excluded_action):
            analysis_menu.addAction(action)
        view_menu = bar.addMenu("&View")
        view_menu.addAction(self.reset_view_action)
        view_menu.addAction(self.start_action)
        view_menu.addAction(self.screening_action)
        help_menu = bar.addMenu("&Help")
        help_menu.addAction(self.about_action)

    def _connect(self) -> None:
        self.plots.currentChanged.connect(lambda _i: self.update_plot_caution())
        self.welcome.openRequested.connect(self.open_dialog)
        self.welcome.pasteRequested.connect(self.paste_from_clipboard)
        self.welcome.pathChosen.connect(lambda path, data: self.open_path(path, data))
        self.welcome.sampleChosen.connect(self.open_bundled_sample)
        self.data_panel.choiceChanged.connect(self.change_data)
        self.data_panel.excludedRequested.connect(self.show_excluded)
        self.fit_panel.fitRequested.connect(lambda _settings: self.fit_from_panel())
        self.ranking.modelChosen.connect(self.choose)
        self.ranking.leaveOutRequested.connect(self.leave_out_far_values)
        self.components.intervalsRequested.connect(self.estimate_intervals)
        self.cancel_button.clicked.connect(self.runner.cancel)
        self.runner.started.connect(self._task_started)
        self.runner.progressed.connect(self._task_progressed)
        self.runner.finished.connect(self._task_finished)
        self.qq.checkWanted.connect(self.request_fit_check)
        self.view_jobs.finished.connect(self._view_job_finished)
        self.welcome.screenRequested.connect(self.show_screening)
        self.screening.openRequested.connect(self.open_screened_row)
        self.screening.backRequested.connect(self.leave_screening)
        self.screening.statusChanged.connect(self.status)

    # -------------------------------------------------------------- showing
    def status(self, text: str) -> None:
        """Say in the status bar what the window is doing."""
        self.statusBar().showMessage(text)

    def show_error(self, exc: BaseException, details: str = "") -> None:
        """Show an exception as a readable message in the window."""
        message, details = describe_error(exc, details)
        self.message_bar.show_message(message, "error", details)
        self.status("Problem: " + message.split(";")[0][:120])

    def show_warning(self, text: str) -> None:
        """Show a warning in the window's message bar."""
        self.message_bar.show_message(text, "warning")

    def refresh(self) -> None:
        """Bring every view and action in line with the analysis."""
        a = self.analysis
        m = a.measurements if a is not None else None
        if m is not None:
            self.stack.setCurrentIndex(1)
        source = ("pasted values" if a is not None and a.source_path is None
                  else Path(a.source_path).name if a is not None else "")
        self.data_panel.show_measurements(m, a.data if a else None, getattr(self, "sheets", ()), source)
        self.distribution.show_analysis(a)
        self.show_results()
        self.data_label.setText(f"{m.n:,} values · {m.scale} scale" if m is not None else "")
        self.setWindowTitle(f"ClusterDesk – {source}" if source else "ClusterDesk")
        self.update_actions()

    def show_results(self) -> None:
        """Redraw what depends on the chosen model (after a scan or a new choice)."""
        a = self.analysis
        self.criteria.show_analysis(a)
        self.qq.show_analysis(a)
        self.ranking.show_analysis(a)
        self.show_components()
        self.update_plot_caution()

    def update_plot_caution(self) -> None:
        """The short caution shows under the distribution whenever cut points are drawn on it."""
        a = self.analysis
        drawn = a is not None and a.scan is not None and a.chosen.k > 1
        self.plot_caution.setVisible(drawn and self.plots.currentWidget() is self.distribution)

    def show_components(self) -> None:
        """The components table of the chosen model, with its intervals when estimated.

        The table classifies every kept value; above :data:`SYNC_VALUES` values
        it is computed off the window's thread, once per model of the scan.
        """
        a = self.analysis
        rows, note = self.interval_columns()
        if a is None or a.scan is None:
            self.components.show_analysis(a, None, rows, note)
            return
        owner = self._tables_owner
        if owner is None or owner[0] is not a or owner[1] is not a.scan:
            self._tables_owner, self._tables = (a, a.scan), {}  # references held: no stale reuse
        model = a.chosen
        key = (model.k, model.widths)
        if key not in self._tables and a.measurements.n <= SYNC_VALUES:
            self._tables[key] = components_table(a)
        if key in self._tables:
            self.components.show_analysis(a, self._tables[key], rows, note)
            return
        self.components.show_pending(model)
        scan = a.scan

        def apply(table):
            if self.analysis is a and a.scan is scan:
                self._tables[key] = table
                if (a.chosen.k, a.chosen.widths) == key:
                    self.show_components()

        snapshot = dataclasses.replace(a, choice=key)  # later clicks cannot change what it summarises
        self.view_jobs.request("components", "Summarising the components",
                               lambda p, c: components_table(snapshot), apply)

    def update_actions(self) -> None:
        """Enable what makes sense now (nothing that starts work while work runs)."""
        a = self.analysis
        busy = self.runner.busy
        loaded = a is not None and a.measurements is not None
        fitted = loaded and a.scan is not None
        for action in (self.open_action, self.paste_action):
            action.setEnabled(not busy)
        self.welcome.setEnabled(not busy)
        self.recent_menu.setEnabled(not busy)
        self.data_panel.setEnabled(loaded and not busy)
        self.fit_panel.setEnabled(loaded and not busy)
        self.fit_action.setEnabled(loaded and not busy)
        self.cancel_action.setEnabled(busy)
        for action in (self.save_action, self.save_as_action, self.export_tables_action):
            action.setEnabled(fitted and not busy)
        self.export_png_action.setEnabled(loaded)
        self.export_svg_action.setEnabled(loaded)
        has_report = report_writer() is not None
        self.export_report_action.setEnabled(fitted and not busy and has_report)
        if not has_report:
            self.export_report_action.setToolTip("Comes with the report writer (not in this version yet).")
        self.excluded_action.setEnabled(loaded and a.measurements.summary.rows_read > a.measurements.n)
        available, why = self.intervals_available()
        self.intervals_action.setEnabled(available and fitted and not busy)
        self.components.set_intervals_available(available and fitted and not busy, why)
        self.ranking.setEnabled(fitted)

    def reset_current_plot(self) -> None:
        """Zoom the visible plot back out."""
        self.plots.currentWidget().reset_view()

    def current_plot(self):
        """The plot view on the visible tab."""
        return self.plots.currentWidget()

    # -------------------------------------------------------------- tasks
    def _task_started(self, label: str) -> None:
        self.progress.setRange(0, 0)
        self.progress.setFormat(label)
        self.progress.show()
        self.cancel_button.show()
        self.status(f"{label}…")
        self.update_actions()

    def _task_progressed(self, done: int, total: int) -> None:
        self.progress.setRange(0, max(total, 1))
        self.progress.setValue(done)
        self.progress.setFormat(f"{self.task_unit}: %v of %m")

    def _task_finished(self, outcome) -> None:
        self.progress.hide()
        self.cancel_button.hide()
        if outcome.status == "cancelled":
            self.status(f"{outcome.label} was cancelled; the previous results are unchanged.")
        elif outcome.status == "failed":
            self.show_error(outcome.error, outcome.details)
            self.refresh()  # put the panels back to what the analysis holds
        self.update_actions()

    def request_fit_check(self) -> None:
        """Run the fit check of the chosen model off the window's thread, for the Q-Q view."""
        a = self.analysis
        if a is None or a.scan is None:
            return
        model = a.chosen

        def apply(check):
            if self.analysis is a:
                self.qq.show_check(check, model, a.measurements)

        self.view_jobs.request("fit check", "Checking the fit", lambda p, c: a.fit_check(model), apply)

    def _view_job_finished(self, outcome) -> None:
        if outcome.status == "failed":
            message, details = describe_error(outcome.error, outcome.details)
            self.message_bar.show_message(f"{outcome.label} failed: {message}", "error", details)

    # -------------------------------------------------------------- window events
    def dragEnterEvent(self, event) -> None:  # noqa: N802 (Qt name)
        mime = event.mimeData()
        if not self.runner.busy and (mime.hasUrls() or mime.hasText()):
            event.acceptProposedAction()
        else:
            event.ignore()

    def dropEvent(self, event) -> None:  # noqa: N802
        mime = event.mimeData()
        files = [url.toLocalFile() for url in mime.urls() if url.isLocalFile()] if mime.hasUrls() else []
        if files:
            if len(files) > 1:
                self.show_warning(f"{len(files)} files were dropped; opening the first, {Path(files[0]).name}.")
            self.open_path(files[0])
        elif mime.hasText():
            self.read_text(mime.text(), "dropped text")
        else:
            event.ignore()
            return
        event.acceptProposedAction()

    def _restore_geometry(self) -> None:
        geometry, state = self.memory.geometry()
        if geometry is not None:
            self.restoreGeometry(geometry)
        else:
            self.resize(1360, 860)
        if state is not None:
            self.restoreState(state)
        splitters = {"side": self.side_splitter, "right": self.right_splitter, "tables": self.top_splitter}
        for key, value in self.memory.splitters().items():
            if value is not None:
                splitters[key].restoreState(value)

    def closeEvent(self, event) -> None:  # noqa: N802
        """Cancel running work, wait for its thread, remember the geometry, then close."""
        if self.runner.busy or self.view_jobs.busy or self.screening.busy:
            self.status("Stopping the running work before closing…")
        self.screening.shutdown()
        self.runner.shutdown()
        self.view_jobs.shutdown()
        self.memory.save_geometry(self.saveGeometry(), self.saveState())
        self.memory.save_splitters({"side": self.side_splitter.saveState(),
                                    "right": self.right_splitter.saveState(),
                                    "tables": self.top_splitter.saveState()})
        self.memory.sync()
        event.accept()

    def show_about(self) -> None:
        """A short note about the program, in the message bar (never blocks)."""
        self.message_bar.show_message(
            f"ClusterDesk {__version__}: Gaussian mixtures for one column of measurements. "
            "The sample data sets are synthetic.", "info")


def _splitter(orientation, widgets, stretches, sizes) -> QSplitter:
    """A splitter holding ``widgets`` with the given stretch factors and starting sizes (pixels)."""
    splitter = QSplitter(orientation)
    for i, (widget, stretch) in enumerate(zip(widgets, stretches)):
        splitter.addWidget(widget)
        splitter.setStretchFactor(i, stretch)
    splitter.setSizes(list(sizes))
    return splitter
