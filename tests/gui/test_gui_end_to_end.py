"""The whole job through the window, checking what it shows against the engine and references.

Open a sample file, fit, choose a model that is not the best, estimate
intervals, export every format, save and reopen. The numbers on screen must be
the analysis's (and so the engine's); the fitted components are also checked
against scikit-learn's GaussianMixture on the same values.
"""

from __future__ import annotations

import csv
import re
import shutil
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from PySide6.QtCore import QPointF
from PySide6.QtGui import QImage

import clusterdesk
from clusterdesk.analysis import DataChoice
from clusterdesk.report.tables import CAUTION
from gui_helpers import SAMPLES, fit, open_sample, run, shoot

LAKE = DataChoice(column="length_mm")


def shown_components(window):
    """The components table as {quantity: [value per component]} (raw, unrounded)."""
    model = window.components.model
    return {model.raw(r, 0): [model.raw(r, c) for c in range(1, model.columnCount())]
            for r in range(model.rowCount())}


def select_model(window, k, widths):
    panel = window.ranking
    row = panel.proxy.mapFromSource(panel.model.index(panel.model.row_of(k, widths), 0)).row()
    panel.view.selectRow(row)


def test_open_fit_choose_intervals_export_save_reopen(qtbot, window, tmp_path, monkeypatch):
    source = tmp_path / "lake.csv"
    shutil.copy(SAMPLES / "lake_net_lengths.csv", source)
    run(qtbot, window, lambda: window.open_path(str(source), LAKE))
    a = window.analysis
    assert window.stack.currentIndex() == 1 and a.measurements.n == 600
    columns = window.data_panel.columns
    assert [columns.item(r, 0).text() for r in range(columns.rowCount())] == ["fish_id", "station", "length_mm"]
    assert [columns.item(2, c).text() for c in (1, 2, 3)] == ["600", "0", "0"]
    assert "600</b> of 600 rows kept" in window.data_panel.cleaning.text()
    assert "resolution 1" in window.data_panel.cleaning.text()

    fit(qtbot, window, kmax=4, restarts=3)
    # The ranking shown is the engine's scan of the same kept values.
    direct = clusterdesk.scan(a.measurements.values, kmin=1, kmax=4, widths="both", restarts=3, seed=0)
    ranking = window.ranking.model
    assert [ranking.raw(r, 3) for r in range(ranking.rowCount())] == [r.bic for r in direct.ranking]
    assert ranking.raw(0, 0) == "best, chosen"
    assert ranking.raw(1, 5) in {"weak", "positive", "strong", "very strong"}
    best = a.chosen
    assert best.k == 3  # three age classes were generated (sample_data/README.md)
    # Reference: scikit-learn's EM on the same values finds the same three components.
    from sklearn.mixture import GaussianMixture

    gm = GaussianMixture(3, n_init=2, tol=1e-10, max_iter=5000, random_state=0).fit(
        a.measurements.values[:, None])
    order = np.argsort(gm.means_.ravel())
    table = shown_components(window)
    np.testing.assert_allclose(table["mean"], gm.means_.ravel()[order], rtol=1e-4)
    np.testing.assert_allclose(table["weight"], gm.weights_[order], rtol=1e-3)
    np.testing.assert_allclose(table["sd"], np.sqrt(gm.covariances_.ravel()[order]), rtol=1e-3)
    assert CAUTION in window.components.caution.text()
    shoot(window, "3-fitted")

    # Choose a model that is not the best: everything follows the choice.
    select_model(window, 2, "shared")
    assert a.choice == (2, "shared")
    chosen = a.chosen
    assert chosen is direct.model(2, "shared") or chosen.bic == direct.model(2, "shared").bic
    table = shown_components(window)
    np.testing.assert_array_equal(table["mean"], chosen.mixture.means)
    np.testing.assert_array_equal(table["weight"], chosen.mixture.weights)
    assert table["cut point to next"][0] == pytest.approx(chosen.mixture.cut_points()[0])
    curve = window.distribution.curves["mixture"]
    x, y = curve.getData()
    np.testing.assert_allclose(y, chosen.mixture.pdf(x))
    assert set(window.distribution.curves) >= {"component 1", "component 2"}
    assert "component 3" not in window.distribution.curves
    assert ranking.raw(ranking.row_of(2, "shared"), 0) == "chosen"
    assert "your choice" in window.distribution.heading.text()
    assert "your choice, 2 components, shared width" in window.ranking.summary.text()

    # Intervals of the chosen model, on the worker, equal to a direct bootstrap call.
    window.components.replicates.setValue(20)
    outcome = run(qtbot, window, window.components.intervals_button.click)
    assert outcome.status == "done"
    reference = clusterdesk.bootstrap(a.measurements.values, chosen, replicates=20, seed=0)
    table = shown_components(window)
    lo, hi = reference.mean_interval[0]
    assert "95% interval" in table
    rows = [window.components.model.raw(r, 1) for r in range(window.components.model.rowCount())]
    assert f"{lo:.4g} – {hi:.4g}" in rows
    assert reference.describe() in window.components.intervals_note.text()
    shoot(window, "4-chosen-with-intervals")

    # Every export format.
    out = tmp_path / "out"
    out.mkdir()
    monkeypatch.setattr(window, "ask_folder", lambda caption: str(out))
    assert run(qtbot, window, window.export_tables_action.trigger).status == "done"
    with open(out / "components.csv", encoding="utf-8", newline="") as handle:
        components = list(csv.DictReader(handle))
    assert [float(r["mean"]) for r in components] == chosen.mixture.means.tolist()  # the choice, not the best
    with open(out / "assignments.csv", encoding="utf-8", newline="") as handle:
        assert sum(1 for _ in csv.DictReader(handle)) == 600

    answers = iter([str(tmp_path / "plot.png"), str(tmp_path / "plot.svg")])
    monkeypatch.setattr(window, "ask_save_path", lambda caption, suggested, filters: next(answers))
    window.plots.setCurrentWidget(window.distribution)
    window.export_png_action.trigger()
    image = QImage(str(tmp_path / "plot.png"))
    assert not image.isNull() and image.width() >= 800
    window.export_svg_action.trigger()
    root = ET.parse(tmp_path / "plot.svg").getroot()  # valid XML
    assert root.tag.rsplit("}", 1)[-1] == "svg"
    assert any(el.tag.endswith("path") or el.tag.endswith("polyline") for el in root.iter())

    if window.export_report_action.isEnabled():
        monkeypatch.setattr(window, "ask_save_path", lambda caption, suggested, filters: str(tmp_path / "report.html"))
        assert run(qtbot, window, window.export_report_action.trigger).status == "done"
        html = (tmp_path / "report.html").read_text(encoding="utf-8")
        assert html.startswith("<!DOCTYPE html>") and "length_mm" in html

    # Save, reopen: the same numbers and the same choice.
    monkeypatch.setattr(window, "ask_save_path", lambda caption, suggested, filters: str(tmp_path / "study"))
    window.save_action.trigger()
    saved = tmp_path / "study.cdesk"
    assert saved.is_file() and window.saved_path == str(saved)
    bics = [r.bic for r in a.scan.ranking]
    run(qtbot, window, lambda: window.open_path(str(saved)))
    again = window.analysis
    assert again is not a and again.choice == (2, "shared")
    assert [r.bic for r in again.scan.ranking] == bics
    assert again.chosen.loglik == chosen.loglik
    np.testing.assert_array_equal(shown_components(window)["mean"], chosen.mixture.means)
    assert not window.message_bar.isVisible()

    # A source changed since saving: a box says so and offers to open it anyway, with a warning.
    with open(source, "a", encoding="utf-8") as handle:
        handle.write("F9999,N1,150\n")
    assert run(qtbot, window, lambda: window.open_path(str(saved))).status == "failed"
    box = window.analysis_file_box
    assert box.isVisible() and "changed since" in box.text() and window.analysis is again
    anyway = next(b for b in box.buttons() if b.text() == "Open anyway")
    assert run(qtbot, window, anyway.click).status == "done"
    assert window.message_bar.level == "warning" and "changed since" in window.message_bar.text()
    assert window.analysis.measurements.n == 601


def test_qq_view_follows_the_choice_and_matches_a_normal_for_one_component(qtbot, window):
    from scipy.stats import norm

    open_sample(qtbot, window, "lake_net_lengths.csv", LAKE)
    fit(qtbot, window)
    with qtbot.waitSignal(window.view_jobs.finished, timeout=20_000):
        window.plots.setCurrentWidget(window.qq)
    assert window.qq.drawn == (window.analysis.chosen.k, window.analysis.chosen.widths)
    assert "misfit" in window.qq.verdict
    with qtbot.waitSignal(window.view_jobs.finished, timeout=20_000):
        select_model(window, 1, "separate")
    qtbot.waitUntil(lambda: window.qq.drawn == (1, "separate"), timeout=5000)
    # Reference: with one component the mixture quantiles are scipy's normal quantiles
    # at the plotting positions (i - 0.5)/n of the distinct values (mid-ranks for ties).
    m = window.analysis.chosen.mixture
    values = np.sort(window.analysis.measurements.values)
    distinct, counts = np.unique(values, return_counts=True)
    positions = (np.cumsum(counts) - 0.5 * counts) / values.size
    np.testing.assert_allclose(window.qq.observed, distinct)
    np.testing.assert_allclose(window.qq.theoretical, norm.ppf(positions, m.means[0], m.sds[0]), rtol=1e-9)
    assert "1 component, separate widths." in window.qq.heading.text()


def test_log_scale_axis_label_and_readout(qtbot, window):
    open_sample(qtbot, window, "powder_diameters.csv", DataChoice(column="diameter_um", scale="ln"))
    fit(qtbot, window, kmax=2, widths="separate")
    view = window.distribution
    assert view.plot.getAxis("bottom").labelText == "ln(diameter_um)"
    qtbot.wait(50)  # let the view range settle
    (x0, x1), (y0, y1) = view.plot.vb.viewRange()
    scene = view.plot.vb.mapViewToScene(QPointF(0.5 * (x0 + x1), 0.5 * (y0 + y1)))
    qtbot.mouseMove(view.graphics.viewport(), view.graphics.mapFromScene(scene))
    text = view.readout.text()
    found = re.match(r"ln\(diameter_um\) = (\S+) \(value (\S+)\); bar density \S+; mixture density (\S+)$", text)
    assert found, text
    x, value, density = (float(g) for g in found.groups())
    assert x0 < x < x1 and value == pytest.approx(np.exp(x), rel=1e-4)
    assert density == pytest.approx(float(window.analysis.chosen.mixture.pdf(x)), rel=1e-3)
    shoot(window, "5-log-scale")
