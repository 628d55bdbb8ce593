"""The application: light theme, the exception hook, and :func:`main`."""

from __future__ import annotations

import sys

__all__ = ["main", "configure_theme", "application", "make_window"]


def configure_theme() -> None:
    """Light plots (white background, black text); must run before any plot widget exists."""
    import pyqtgraph as pg

    pg.setConfigOptions(background="w", foreground="k", antialias=True)


#: Seconds a busy worker thread may keep the GIL while the window's thread waits for it.
#: Python's default is 5 ms; PySide6 releases the GIL around every call into Qt, so drawing
#: a plot re-acquires it hundreds of times and each wait would add up to a visible stall
#: while a worker computes (measured in tests/bench/bench_gui_stall.py).
SWITCH_INTERVAL = 0.001


def application(argv=None):
    """The QApplication (created once, with our names and the light theme)."""
    from PySide6.QtWidgets import QApplication

    from .collector import collect_on_gui_thread
    from .refcounts import guard_bool_singletons
    from .settings import APPLICATION, ORGANISATION

    guard_bool_singletons()
    sys.setswitchinterval(min(sys.getswitchinterval(), SWITCH_INTERVAL))
    app = QApplication.instance()
    if app is None:
        app = QApplication(list(argv) if argv is not None else [sys.argv[0]])
    app.setOrganizationName(ORGANISATION)
    app.setApplicationName(APPLICATION)
    app.setApplicationDisplayName(APPLICATION)
    configure_theme()
    collect_on_gui_thread()  # never in a worker thread: Qt objects in a cycle must die on this one
    return app


def make_window(path=None, settings=None):
    """A shown main window, opening ``path`` when given.

    Parameters
    ----------
    path : str or Path, optional
        A data file or a saved analysis to open at once.
    settings : QSettings, optional
        Where the window remembers things (default: the user's settings).

    Returns
    -------
    MainWindow
    """
    application()
    from .window import MainWindow

    window = MainWindow(settings)
    window.show()
    if path is not None:
        window.open_path(str(path))
    return window


def main(path=None) -> int:
    """Open the window (with ``path`` when given) and run until it is closed.

    Parameters
    ----------
    path : str or Path, optional

    Returns
    -------
    int
        The exit code: 0 after a normal close.
    """
    from .errors import install_exception_hook

    app = application()
    window = make_window(path)
    previous = install_exception_hook(window.show_error)
    try:
        return int(app.exec())
    finally:
        sys.excepthook = previous
