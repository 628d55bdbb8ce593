"""The measurement panel's 'Values as' setting drives the analysis, and the window says which was used.

The lake sample (synthetic, sample_data/make_samples.py) holds lengths recorded
to whole millimetres, so the automatic treatment takes them as intervals of
width 1; the user can ask for exact values instead, and a saved analysis keeps
the choice.
"""

from __future__ import annotations

from clusterdesk.analysis import Analysis, DataChoice
from gui_helpers import fit, open_sample, run

LAKE = DataChoice(column="length_mm")


def test_values_as_setting_drives_the_scan_and_is_shown(qtbot, window, tmp_path):
    open_sample(qtbot, window, "lake_net_lengths.csv", LAKE)
    panel = window.data_panel
    assert panel.resolution.placeholderText() == "detected: 1"
    fit(qtbot, window)
    scan = window.analysis.scan
    assert scan.treatment.used == "intervals" and scan.treatment.requested == "auto"
    assert "intervals of width 1" in window.ranking.summary.text()

    panel.values_as.setCurrentIndex(panel.values_as.findData("exact"))
    fit(qtbot, window)
    assert window.analysis.scan.treatment.used == "exact"
    assert window.analysis.settings.treatment == "exact"
    assert {row.likelihood for row in window.analysis.scan.ranking} == {"exact"}
    assert "exact values" in window.ranking.summary.text()

    panel.values_as.setCurrentIndex(panel.values_as.findData("intervals"))
    panel.resolution.setText("2")
    fit(qtbot, window)
    assert window.analysis.scan.treatment.resolution == 2.0
    assert "intervals of width 2" in window.ranking.summary.text()

    saved = window.analysis.save(tmp_path / "lake")
    reopened = Analysis.open(saved).analysis
    assert reopened.settings.treatment == "intervals" and reopened.settings.resolution == 2.0
    assert reopened.scan.treatment.resolution == 2.0
    run(qtbot, window, lambda: window.open_analysis(str(saved)))
    assert panel.values_as.currentData() == "intervals" and panel.resolution.text() == "2"
