"""Helpers shared by the window's tests: wait on work, open samples, fit, screenshots."""

from __future__ import annotations

from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_data"
SHOTS = ROOT / "screenshots"  # ignored by git (.gitignore)

#: Small scans keep the whole GUI suite quick.
QUICK = dict(kmax=3, restarts=2)


def run(qtbot, window, start, timeout=30_000):
    """Start work with ``start()`` and wait (without blocking the event loop) until it ends."""
    with qtbot.waitSignal(window.runner.finished, timeout=timeout) as blocker:
        start()
    return blocker.args[0]


def open_sample(qtbot, window, name, data=None):
    """Open a sample file through the window and return the outcome."""
    outcome = run(qtbot, window, lambda: window.open_path(str(SAMPLES / name), data))
    assert outcome.status == "done", outcome
    return outcome


def fit(qtbot, window, **settings):
    """Fit through the fit panel with small settings."""
    panel = window.fit_panel
    options = {**QUICK, **settings}
    panel.kmax.setValue(options["kmax"])
    panel.kmin.setValue(options.get("kmin", 1))
    panel.restarts.setValue(options["restarts"])
    if "widths" in options:
        panel.widths.setCurrentIndex(panel.widths.findData(options["widths"]))
    outcome = run(qtbot, window, panel.fit_button.click)
    assert outcome.status == "done", outcome
    settle(qtbot, window)
    return outcome


def settle(qtbot, window, timeout=20_000):
    """Wait until the view computations (fit check, large component tables) are done."""
    qtbot.waitUntil(lambda: not window.view_jobs.busy, timeout=timeout)


def shoot(widget, name):
    """Save a screenshot for people to look at (screenshots/ is ignored by git)."""
    SHOTS.mkdir(exist_ok=True)
    path = SHOTS / f"{name}.png"
    assert widget.grab().save(str(path)), path
    return path
