"""Set-up for the window's tests: light theme, private settings, helpers to wait on work.

Every test runs offscreen (tests/conftest.py) and with settings in a
temporary INI file, never the user's.
"""

from __future__ import annotations

import pytest

pytest.importorskip("pytestqt")

from PySide6.QtCore import QSettings  # noqa: E402

from clusterdesk.gui.app import configure_theme  # noqa: E402
from clusterdesk.gui.collector import collect_on_gui_thread, stop_collecting_on_gui_thread  # noqa: E402
from clusterdesk.gui.refcounts import guard_bool_singletons  # noqa: E402

guard_bool_singletons()
configure_theme()  # before any plot widget exists


@pytest.fixture(autouse=True, scope="session")
def private_settings_location(tmp_path_factory):
    """Point every default QSettings at a temporary folder for the whole session."""
    folder = tmp_path_factory.mktemp("qsettings")
    for fmt in (QSettings.Format.NativeFormat, QSettings.Format.IniFormat):
        QSettings.setPath(fmt, QSettings.Scope.UserScope, str(folder))
        QSettings.setPath(fmt, QSettings.Scope.SystemScope, str(folder))
    return folder


@pytest.fixture(autouse=True)
def collect_garbage_on_the_gui_thread(qapp):
    """As the application does: cyclic garbage is collected on this thread only, never by a worker.

    A worker thread that triggered Python's collector while a Qt object sat in
    a reference cycle crashed the test process (clusterdesk/gui/collector.py).
    """
    collect_on_gui_thread()
    yield
    stop_collecting_on_gui_thread()


@pytest.fixture
def settings_file(tmp_path):
    """A settings object in a temporary INI file."""
    return QSettings(str(tmp_path / "clusterdesk-test.ini"), QSettings.Format.IniFormat)


@pytest.fixture
def window(qtbot, settings_file):
    """A shown main window with private settings; closed (threads joined) afterwards."""
    from clusterdesk.gui.window import MainWindow

    w = MainWindow(settings_file)
    qtbot.addWidget(w)
    w.show()
    qtbot.waitExposed(w)
    yield w
    w.close()
