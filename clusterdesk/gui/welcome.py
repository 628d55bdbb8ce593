"""The first screen: ways to get data in, recent files and the synthetic samples."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QCommandLinkButton, QGroupBox, QHBoxLayout, QLabel, QPushButton,
                               QVBoxLayout, QWidget)

from .samples import bundled_samples

__all__ = ["WelcomePage"]


class WelcomePage(QWidget):
    """Shown until something is opened.

    Signals
    -------
    openRequested()
        The user wants the open dialog.
    pasteRequested()
        The user wants to paste a column from the clipboard.
    screenRequested()
        The user wants the screening page (many files and columns).
    pathChosen(str, object)
        A recent file was picked (the object is None: the reader's defaults).
    sampleChosen(object)
        A bundled :class:`~clusterdesk.gui.samples.Sample` was picked (its
        data choice and where its values sit in their intervals come with it).

    Attributes
    ----------
    sample_buttons : list of (QCommandLinkButton, Sample)
    recent_buttons : list of (QCommandLinkButton, str)
    """

    openRequested = Signal()
    pasteRequested = Signal()
    screenRequested = Signal()
    pathChosen = Signal(str, object)
    sampleChosen = Signal(object)

    def __init__(self, parent=None):
        super().__init__(parent)
        title = QLabel("<h2>Find the groups in one column of measurements</h2>")
        intro = QLabel("ClusterDesk fits mixtures of normal components to one column of values "
                       "(lengths, diameters, readings), ranks the number of components by BIC, "
                       "and reports the components, cut points and intervals. Open a CSV, text or "
                       "XLSX file, drop one onto this window, or paste a column copied from a "
                       "spreadsheet.")
        intro.setWordWrap(True)
        self.open_button = QPushButton("Open a file…")
        self.open_button.clicked.connect(self.openRequested)
        self.paste_button = QPushButton("Paste a column")
        self.paste_button.setToolTip("Read the values on the clipboard (e.g. a column copied from a spreadsheet).")
        self.paste_button.clicked.connect(self.pasteRequested)
        buttons = QHBoxLayout()
        buttons.addWidget(self.open_button)
        buttons.addWidget(self.paste_button)
        self.screen_button = QPushButton("Screen many files…")
        self.screen_button.setToolTip("Screen every numeric column of a folder or of several files into one "
                                      "table, then open any column as an analysis.")
        self.screen_button.clicked.connect(self.screenRequested)
        buttons.addWidget(self.screen_button)
        buttons.addStretch(1)

        self.sample_buttons = []
        sample_box = QGroupBox("Sample data sets (synthetic, invented for trying ClusterDesk)")
        sample_layout = QVBoxLayout(sample_box)
        for sample in bundled_samples():
            button = QCommandLinkButton(sample.title, sample.description)
            button.setToolTip(str(sample.path))
            button.clicked.connect(lambda _c=False, s=sample: self.sampleChosen.emit(s))
            sample_layout.addWidget(button)
            self.sample_buttons.append((button, sample))
        if not self.sample_buttons:
            sample_layout.addWidget(QLabel("No sample data found (they come with a source checkout)."))
        sample_layout.addStretch(1)

        self.recent_box = QGroupBox("Recent files")
        self.recent_layout = QVBoxLayout(self.recent_box)
        self.recent_buttons = []

        columns = QHBoxLayout()
        columns.addWidget(sample_box, 3)
        columns.addWidget(self.recent_box, 2)
        content = QWidget()
        content.setMaximumWidth(1200)
        layout = QVBoxLayout(content)
        layout.setContentsMargins(24, 16, 24, 16)
        layout.addWidget(title)
        layout.addWidget(intro)
        layout.addLayout(buttons)
        layout.addLayout(columns)
        layout.addWidget(QLabel("Tip: you can also drop a file, or text, anywhere on this window."))
        layout.addStretch(1)
        outer = QHBoxLayout(self)
        outer.addWidget(content, 1, Qt.AlignmentFlag.AlignHCenter)

    def set_recent(self, paths) -> None:
        """Show the recent files, newest first (missing files are skipped)."""
        while self.recent_layout.count():
            item = self.recent_layout.takeAt(0)
            if item.widget() is not None:
                item.widget().deleteLater()
        self.recent_buttons = []
        for path in paths:
            if not Path(path).exists():
                continue
            button = QCommandLinkButton(Path(path).name, str(Path(path).parent))
            button.setToolTip(str(path))
            button.clicked.connect(lambda _c=False, p=str(path): self.pathChosen.emit(p, None))
            self.recent_layout.addWidget(button)
            self.recent_buttons.append((button, str(path)))
        if not self.recent_buttons:
            empty = QLabel("Nothing opened yet.")
            empty.setEnabled(False)
            self.recent_layout.addWidget(empty)
        self.recent_layout.addStretch(1)
