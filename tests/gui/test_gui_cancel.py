"""Cancelling a fit or a bootstrap, and closing the window while work runs.

A cancelled run must stop within a second (the engine checks the cancel
token every EM cycle) and leave the previous results exactly in place.
"""

from __future__ import annotations

import time

import numpy as np
import pytest

from clusterdesk.analysis import DataChoice
from clusterdesk.gui.window import SYNC_VALUES
from gui_helpers import fit, run


@pytest.fixture
def big_file(tmp_path):
    """60,000 invented values from four overlapping groups, continuous (seeded).

    More than SYNC_VALUES, so the components table is summarised off the window's thread.
    """
    rng = np.random.default_rng(20261201)
    groups = rng.choice(4, size=60_000, p=[0.4, 0.3, 0.2, 0.1])
    values = rng.normal(np.array([10.0, 13.0, 16.5, 21.0])[groups], np.array([1.2, 1.5, 2.0, 2.5])[groups])
    path = tmp_path / "big.csv"
    path.write_text("value\n" + "\n".join(f"{v:.6f}" for v in values) + "\n", encoding="utf-8")
    return path


def cancel_after_first_progress(qtbot, window, start):
    """Start work, cancel once it has reported progress, return (outcome, seconds to stop)."""
    with qtbot.waitSignal(window.runner.progressed, timeout=60_000):
        start()
    assert window.runner.busy
    t0 = time.perf_counter()
    with qtbot.waitSignal(window.runner.finished, timeout=5_000) as blocker:
        window.cancel_button.click()
    return blocker.args[0], time.perf_counter() - t0


def test_cancel_during_a_fit_keeps_the_previous_results(qtbot, window, big_file):
    run(qtbot, window, lambda: window.open_path(str(big_file), DataChoice(column="value")))
    fit(qtbot, window, kmax=2, restarts=1, widths="separate")
    before = window.analysis.scan
    shown = [window.ranking.model.raw(r, 3) for r in range(window.ranking.model.rowCount())]
    panel = window.fit_panel
    panel.kmax.setValue(9)
    panel.restarts.setValue(30)
    panel.widths.setCurrentIndex(panel.widths.findData("both"))
    outcome, seconds = cancel_after_first_progress(qtbot, window, panel.fit_button.click)
    assert outcome.status == "cancelled"
    assert seconds < 1.0, f"the fit took {seconds:.2f} s to stop"
    assert window.analysis.scan is before
    assert [window.ranking.model.raw(r, 3) for r in range(window.ranking.model.rowCount())] == shown
    assert "cancelled" in window.statusBar().currentMessage()
    assert panel.fit_button.isEnabled()  # the window is usable again


def test_cancel_during_a_bootstrap_keeps_the_table_without_intervals(qtbot, window, big_file):
    run(qtbot, window, lambda: window.open_path(str(big_file), DataChoice(column="value")))
    fit(qtbot, window, kmax=3, restarts=2, widths="separate")
    rows_before = window.components.model.rowCount()
    assert rows_before > 0 and window.analysis.measurements.n > SYNC_VALUES
    window.components.replicates.setValue(5000)
    outcome, seconds = cancel_after_first_progress(qtbot, window, window.components.intervals_button.click)
    assert outcome.status == "cancelled"
    assert seconds < 1.0, f"the bootstrap took {seconds:.2f} s to stop"
    assert window.analysis.intervals is None
    assert window.components.model.rowCount() == rows_before


def test_closing_during_a_fit_cancels_and_joins_the_thread(qtbot, window, big_file):
    run(qtbot, window, lambda: window.open_path(str(big_file), DataChoice(column="value")))
    panel = window.fit_panel
    panel.kmax.setValue(9)
    panel.restarts.setValue(30)
    with qtbot.waitSignal(window.runner.progressed, timeout=60_000):
        panel.fit_button.click()
    thread = window.runner._thread
    t0 = time.perf_counter()
    window.close()
    assert time.perf_counter() - t0 < 2.0
    assert not window.runner.busy and thread.isFinished()
    assert window.analysis.scan is None  # nothing half-finished was applied
