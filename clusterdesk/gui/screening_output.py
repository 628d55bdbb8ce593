"""The screening page's output folder: where a run keeps its journal, summary and overview.

Without an output folder the rows live in the window only. With one, the
Qt-free run (:func:`clusterdesk.screen.screen`) appends every finished column
to the folder's journal as it goes and writes summary.csv and overview.html
at the end, so a run that was cancelled, or stopped with the window, can be
resumed later without redoing the finished columns: the page finds the
unfinished run (:func:`clusterdesk.screen.unfinished_run`) and asks whether
to resume it or start over.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QFileDialog, QHBoxLayout, QLabel, QMessageBox, QPushButton, QWidget

__all__ = ["OutputFolderRow", "unfinished_run_question", "RESUME", "START_OVER"]

#: Answers of :meth:`OutputFolderRow.ask_unfinished` ('' is "do nothing").
RESUME, START_OVER = "resume", "start over"

_NONE_CHOSEN = ("None: the rows stay in the window only. Choose a folder to keep each finished column on "
                "disk as the run goes (an interrupted run can then be resumed) and to get summary.csv and "
                "overview.html at the end.")


def unfinished_run_question(found) -> tuple[str, str]:
    """The question and its explanation for an unfinished run found in the output folder.

    Parameters
    ----------
    found : UnfinishedRun
        From :func:`clusterdesk.screen.unfinished_run` with the settings shown.

    Returns
    -------
    text, informative : str
        The box's text and its informative text.
    """
    done, same = found.columns_done, found.with_these_settings
    text = (f"{found.folder} holds a screening run that stopped after {done:,} "
            f"column{'' if done == 1 else 's'}.")
    if same == done:
        reuse = (f"{'It was' if done == 1 else 'All of them were'} screened with the settings shown: "
                 "Resume keeps them (for files unchanged since) and screens the rest.")
    elif same == 0:
        reuse = ("None of them was screened with the settings shown, so resuming with these settings "
                 "screens every column again; to keep them, set that run's settings first.")
    else:
        reuse = (f"{same:,} of them were screened with the settings shown: Resume keeps those (for files "
                 "unchanged since) and screens the rest.")
    return text, f"{reuse} Start over discards the unfinished run's journal."


class OutputFolderRow(QWidget):
    """The output folder of the next run: a label with the path, "Choose…" and "None".

    Signals
    -------
    changed(str)
        The folder ('' for none) after the user chose or cleared it.
    """

    changed = Signal(str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.folder = ""
        self.label = QLabel()
        self.label.setWordWrap(True)
        self.label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.choose_button = QPushButton("Choose…")
        self.choose_button.setToolTip("The folder that receives the journal (for resuming), summary.csv "
                                      "and overview.html; it is created when missing.")
        self.choose_button.clicked.connect(self.choose)
        self.clear_button = QPushButton("None")
        self.clear_button.setToolTip("Keep the rows in the window only.")
        self.clear_button.clicked.connect(lambda: self.set_folder(""))
        layout = QHBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.label, 1)
        layout.addWidget(self.choose_button)
        layout.addWidget(self.clear_button)
        self._show()

    # ------------------------------------------------------------------ questions (tests replace)
    def ask_folder(self) -> str:
        """Ask for the output folder ('' when the user gives up)."""
        return QFileDialog.getExistingDirectory(self, "Output folder of the screening run")

    def ask_unfinished(self, found) -> str:
        """Ask what to do with an unfinished run in the folder: RESUME, START_OVER or '' (do nothing)."""
        text, informative = unfinished_run_question(found)
        box = QMessageBox(self)
        box.setIcon(QMessageBox.Icon.Question)
        box.setWindowTitle("An unfinished screening run")
        box.setText(text)
        box.setInformativeText(informative)
        resume = box.addButton("Resume", QMessageBox.ButtonRole.AcceptRole)
        start_over = box.addButton("Start over", QMessageBox.ButtonRole.DestructiveRole)
        box.addButton(QMessageBox.StandardButton.Cancel)
        box.setDefaultButton(resume)
        box.exec()
        clicked = box.clickedButton()
        return RESUME if clicked is resume else START_OVER if clicked is start_over else ""

    # ------------------------------------------------------------------ the folder
    def choose(self) -> None:
        """Ask for a folder and make it the output folder."""
        folder = self.ask_folder()
        if folder:
            self.set_folder(folder)

    def set_folder(self, folder) -> None:
        """Make ``folder`` (str or Path; '' for none) the output folder."""
        self.folder = str(Path(folder).resolve()) if folder else ""
        self._show()
        self.changed.emit(self.folder)

    def _show(self) -> None:
        self.label.setText(self.folder or _NONE_CHOSEN)
        self.clear_button.setEnabled(bool(self.folder))
