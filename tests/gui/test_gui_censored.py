"""Readings beyond a detection limit in the window: what the panels say and draw.

The serosurvey sample (sample_data/README.md, synthetic) has 75 readings
written "<0.5"; with values as intervals they enter the fit as censored
readings (clusterdesk/analysis.py likelihood_input), so the histogram of the
725 drawn values must hold only their share of the mixture's unit area.
"""

from __future__ import annotations

import numpy as np

from clusterdesk.analysis import DataChoice
from gui_helpers import fit, open_sample

SERO = DataChoice(column="antibody_au", scale="log10")


def test_the_cleaning_words_follow_the_treatment_shown(qtbot, window):
    open_sample(qtbot, window, "serosurvey_antibody.csv", SERO)
    panel = window.data_panel
    assert "enter the fit as censored readings" in panel.cleaning.text()
    panel.values_as.setCurrentIndex(panel.values_as.findData("exact"))
    assert "left out of this fit" in panel.cleaning.text()
    panel.values_as.setCurrentIndex(panel.values_as.findData("auto"))
    assert "enter the fit as censored readings" in panel.cleaning.text()


def test_bars_of_the_kept_values_hold_their_share_of_the_fitted_density(qtbot, window):
    open_sample(qtbot, window, "serosurvey_antibody.csv", SERO)
    fit(qtbot, window, kmax=2, restarts=2)
    scan = window.analysis.scan
    assert scan.treatment.censored == 75 and scan.n == 800
    view = window.distribution
    area = float(np.sum(np.diff(view.edges) * view.heights))
    # Area of the bars = kept share of the sample (725 of 800); a density of all
    # 800 readings of which the censored 75 are not drawn.
    assert abs(area - 725 / 800) < 1e-12
    assert "75 readings beyond a limit" in view.heading.text()


def test_the_ranking_summary_shows_its_second_line(qtbot, window):
    window.resize(1360, 860)
    open_sample(qtbot, window, "serosurvey_antibody.csv", SERO)
    fit(qtbot, window, kmax=2, restarts=2)
    qtbot.wait(100)  # let the layout take the label's new height
    label = window.ranking.summary
    assert "Values treated as: Likelihood of intervals" in label.text()
    assert label.height() >= label.heightForWidth(label.width()) >= 2 * label.fontMetrics().lineSpacing()
