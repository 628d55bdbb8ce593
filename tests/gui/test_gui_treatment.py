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


def test_value_at_places_tally_classes_in_the_fit_and_in_the_histogram(qtbot, window, tmp_path):
    # The bundled tally names each 1 cm class by its lower end (sample_data/README.md).
    # Moving every interval by half a class moves the fitted means by exactly that
    # (the interval likelihood is unchanged by a common shift) and the bars with them.
    import numpy as np

    open_sample(qtbot, window, "length_tally.csv", DataChoice(column="length_cm", counts="count"))
    panel = window.data_panel
    fit(qtbot, window, kmin=3, kmax=3, widths="separate")
    middle = window.analysis.chosen.mixture
    first_edge = window.distribution.edges[0]
    assert "middle of its interval" in window.ranking.summary.text()
    panel.value_at.setCurrentIndex(panel.value_at.findData("lower"))
    fit(qtbot, window, kmin=3, kmax=3, widths="separate")
    lower = window.analysis.chosen.mixture
    assert window.analysis.settings.value_at == "lower"
    assert "lower end of its interval" in window.ranking.summary.text()
    np.testing.assert_allclose(lower.means - middle.means, 0.5, atol=1e-4)
    values, _ = window.analysis.fit_input()
    assert window.distribution.edges[0] == values.min() == first_edge + 0.5  # class 7 drawn over [7, 8)
    assert "2,500 kept observations in 32 classes" in window.distribution.heading.text()
    saved = window.analysis.save(tmp_path / "tally")
    run(qtbot, window, lambda: window.open_analysis(str(saved)))
    assert panel.value_at.currentData() == "lower" and window.analysis.settings.value_at == "lower"
