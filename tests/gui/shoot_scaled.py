"""Screenshots of the main window at a given scale factor (run by test_gui_screenshots.py).

Usage: QT_SCALE_FACTOR=2 python tests/gui/shoot_scaled.py OUT_FOLDER PREFIX SETTINGS_INI

Not collected by pytest: the scale factor must be set before Qt starts, so
the test runs this in a fresh process.
"""

from __future__ import annotations

import sys
from pathlib import Path

from PySide6.QtCore import QEventLoop, QSettings, QTimer

from clusterdesk.analysis import DataChoice
from clusterdesk.gui.app import application, make_window

SAMPLES = Path(__file__).resolve().parents[2] / "sample_data"


def wait(runner, seconds=60):
    loop = QEventLoop()
    runner.finished.connect(loop.quit)
    QTimer.singleShot(int(seconds * 1000), loop.quit)
    loop.exec()


def main(out: str, prefix: str, ini: str) -> int:
    application()
    window = make_window(None, QSettings(ini, QSettings.Format.IniFormat))
    out_dir = Path(out)
    out_dir.mkdir(parents=True, exist_ok=True)
    window.resize(1360, 860)
    window.grab().save(str(out_dir / f"{prefix}-first-screen.png"))
    window.open_path(str(SAMPLES / "serosurvey_antibody.csv"), DataChoice(column="antibody_au", scale="log10"))
    wait(window.runner)
    window.fit_panel.kmax.setValue(3)
    window.fit_panel.restarts.setValue(2)
    window.fit_from_panel()
    wait(window.runner)
    window.grab().save(str(out_dir / f"{prefix}-fitted.png"))
    window.plots.setCurrentWidget(window.qq)
    wait(window.view_jobs)
    window.grab().save(str(out_dir / f"{prefix}-qq.png"))
    ok = window.analysis is not None and window.analysis.scan is not None and window.qq.drawn is not None
    window.close()
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main(*sys.argv[1:4]))
