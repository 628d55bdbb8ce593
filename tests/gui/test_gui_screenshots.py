"""Screenshots of the main states, at 100 % and 200 % scaling, for people to look at.

They go to screenshots/ at the top of the checkout (ignored by git).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from PySide6.QtGui import QImage

from clusterdesk.analysis import DataChoice
from gui_helpers import SHOTS, fit, open_sample, shoot


def test_screenshots_of_each_plot_tab(qtbot, window):
    window.resize(1360, 860)
    open_sample(qtbot, window, "lake_net_lengths.csv", DataChoice(column="length_mm"))
    fit(qtbot, window, kmax=4, restarts=3)
    window.plots.setCurrentWidget(window.criteria)
    path = shoot(window, "8-criteria")
    with qtbot.waitSignal(window.view_jobs.finished, timeout=20_000):
        window.plots.setCurrentWidget(window.qq)
    shoot(window, "9-qq-check")
    image = QImage(str(path))
    assert image.width() == window.width() * window.devicePixelRatio()


def test_screenshots_at_200_percent(tmp_path):
    script = Path(__file__).with_name("shoot_scaled.py")
    env = {**os.environ, "QT_SCALE_FACTOR": "2", "QT_QPA_PLATFORM": os.environ.get("QT_QPA_PLATFORM", "offscreen")}
    result = subprocess.run([sys.executable, str(script), str(SHOTS), "200", str(tmp_path / "s.ini")],
                            env=env, capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    fitted = QImage(str(SHOTS / "200-fitted.png"))
    assert fitted.width() == 2 * 1360  # drawn at twice the pixels
