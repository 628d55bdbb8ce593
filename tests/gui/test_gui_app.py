"""Starting the window: the clusterdesk command, main(path), the theme, and the refcount guard."""

from __future__ import annotations

import sys

import pyqtgraph as pg
import pytest
from PySide6.QtCore import QObject, QSettings, QTimer, Signal
from PySide6.QtWidgets import QApplication

import clusterdesk.gui.app as app_module
from clusterdesk import cli
from clusterdesk.gui.refcounts import guard_bool_singletons
from gui_helpers import SAMPLES


@pytest.fixture
def opened(monkeypatch):
    calls = []
    monkeypatch.setattr(app_module, "main", lambda path=None: calls.append(path) or 0)
    return calls


def test_no_argument_opens_the_window(opened):
    assert cli.main([]) == 0
    assert opened == [None]


def test_a_single_existing_file_opens_the_window_with_it(opened):
    path = str(SAMPLES / "lake_net_lengths.csv")
    assert cli.main([path]) == 0
    assert opened == [path]


def test_subcommands_and_unknown_words_stay_headless(opened, capsys):
    assert cli.main(["demo"]) == 0
    assert "Best model: 3 components" in capsys.readouterr().out
    with pytest.raises(SystemExit) as stop:
        cli.main(["no-such-file.csv"])
    assert stop.value.code == 2
    assert opened == []


def test_make_window_opens_a_file_and_main_returns_the_exit_code(qtbot, tmp_path, monkeypatch):
    settings = QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat)
    window = app_module.make_window(SAMPLES / "length_tally.csv", settings)
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.analysis is not None, timeout=20_000)
    assert window.analysis.measurements.column.name == "length_cm"
    window.close()
    # main(): the window closes itself here, so exec() returns and main gives the exit code.
    ini = str(tmp_path / "main.ini")
    monkeypatch.setattr(app_module, "make_window", lambda path=None, settings=None: _closing_window(qtbot, ini))
    hook = sys.excepthook
    assert app_module.main() == 0
    assert sys.excepthook is hook  # the exception hook is removed again


def _closing_window(qtbot, ini):
    """A window that ends the event loop soon after main() starts it."""
    from clusterdesk.gui.window import MainWindow

    window = MainWindow(QSettings(ini, QSettings.Format.IniFormat))
    qtbot.addWidget(window)
    QTimer.singleShot(100, QApplication.instance().quit)
    return window


def test_light_theme_is_configured():
    assert pg.getConfigOption("background") == "w" and pg.getConfigOption("foreground") == "k"


def test_emitting_signals_no_longer_exhausts_true(qtbot):
    # PySide6 6.12 on Python 3.11 drops a reference to True per emit (see refcounts.py).
    guard_bool_singletons()

    class Probe(QObject):
        ping = Signal()

    probe = Probe()
    for _ in range(20_000):
        probe.ping.emit()
    assert sys.getrefcount(True) > 1_000_000  # guarded (or immortal on Python 3.12+)
    assert sys.getrefcount(False) > 1_000_000


def test_table_models_returning_none_no_longer_exhaust_none(qtbot):
    # PySide6 6.12 on Python 3.11 drops a reference to None each time Qt calls a Python
    # data() that returns None (see refcounts.py); the monkey test aborted on it.
    from PySide6.QtCore import QAbstractListModel, QModelIndex, Qt

    guard_bool_singletons()

    class Silent(QAbstractListModel):
        def rowCount(self, parent=QModelIndex()):  # noqa: N802
            return 1

        def data(self, index, role=Qt.ItemDataRole.DisplayRole):
            return None

    model = Silent()  # kept: an index must not outlive its model
    index = model.index(0, 0)
    for _ in range(20_000):
        index.data(Qt.ItemDataRole.ToolTipRole)
    assert sys.getrefcount(None) > 1_000_000  # guarded (or immortal on Python 3.12+)
