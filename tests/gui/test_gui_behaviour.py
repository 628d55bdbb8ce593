"""Window behaviour: errors as messages, shortcuts, copying tables, remembered settings."""

from __future__ import annotations

import sys

import numpy as np
import pytest
from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import QApplication

from clusterdesk.analysis import DataChoice
from clusterdesk.errors import InputError
from clusterdesk.gui.errors import describe_error, install_exception_hook
from clusterdesk.gui.window import MainWindow
from gui_helpers import SAMPLES, fit, open_sample, run, shoot

LAKE = DataChoice(column="length_mm")


def test_an_exception_in_a_slot_becomes_a_message(qtbot, window):
    previous = install_exception_hook(window.show_error)
    try:
        def broken():
            raise RuntimeError("a defect in a slot")

        QTimer.singleShot(0, broken)
        qtbot.waitUntil(window.message_bar.isVisible, timeout=2000)
        assert "Something unexpected went wrong (RuntimeError: a defect in a slot)" in window.message_bar.text()
        assert window.message_bar.details_button.isVisibleTo(window.message_bar)
        assert "Traceback" in window.message_bar.details

        def user_problem():
            raise InputError("The range is empty; widen it.")

        QTimer.singleShot(0, user_problem)
        qtbot.waitUntil(lambda: "The range is empty; widen it." in window.message_bar.text(), timeout=2000)
        assert not window.message_bar.details_button.isVisibleTo(window.message_bar)
    finally:
        sys.excepthook = previous
    window.message_bar.dismiss()
    assert window.message_bar.text() == ""


def test_error_words_for_files_and_defects():
    message, details = describe_error(FileNotFoundError(2, "No such file or directory", "/nowhere/x.csv"))
    assert message.startswith("No such file or directory (/nowhere/x.csv)") and details == ""
    message, details = describe_error(InputError("Choose a column."))
    assert (message, details) == ("Choose a column.", "")


def test_standard_shortcuts(window):
    keys = QKeySequence.StandardKey
    assert window.open_action.shortcut() == QKeySequence(keys.Open)
    assert window.save_action.shortcut() == QKeySequence(keys.Save)
    assert window.quit_action.shortcut() == QKeySequence(keys.Quit)
    assert window.paste_action.shortcut() == QKeySequence(keys.Paste)
    assert window.ranking.view.copy_action.shortcut() == QKeySequence(keys.Copy)


def test_tables_copy_as_tab_separated_text_with_every_digit(qtbot, window):
    open_sample(qtbot, window, "lake_net_lengths.csv", LAKE)
    fit(qtbot, window)
    view = window.ranking.view
    view.setFocus()
    view.selectRow(1)
    qtbot.keyClick(view, Qt.Key.Key_C, Qt.KeyboardModifier.ControlModifier)
    lines = QApplication.clipboard().text().splitlines()
    header = lines[0].split("\t")
    assert header[:5] == ["mark", "components", "widths", "BIC", "ΔBIC"] and len(lines) == 2
    row = dict(zip(header, lines[1].split("\t")))
    model = window.ranking.model
    source_row = window.ranking.proxy.mapToSource(window.ranking.proxy.index(1, 0)).row()
    assert float(row["BIC"]) == model.raw(source_row, 3)  # full precision, not the 2 decimals shown
    window.copy_components_action.trigger()
    lines = QApplication.clipboard().text().splitlines()
    assert lines[0].split("\t") == ["component", "1", "2", "3"]
    means = next(line for line in lines if line.startswith("mean\t")).split("\t")[1:]
    np.testing.assert_array_equal([float(v) for v in means], window.analysis.chosen.mixture.means)


def test_sorting_the_ranking_keeps_the_choice_marked(qtbot, window):
    open_sample(qtbot, window, "lake_net_lengths.csv", LAKE)
    fit(qtbot, window)
    view, proxy = window.ranking.view, window.ranking.proxy
    view.sortByColumn(1, Qt.SortOrder.DescendingOrder)  # by number of components
    ks = [proxy.index(r, 1).data(Qt.ItemDataRole.DisplayRole) for r in range(proxy.rowCount())]
    assert ks == sorted(ks, reverse=True)
    view.selectRow(proxy.rowCount() - 1)  # a one-component model
    assert window.analysis.chosen.k == 1
    assert "chosen model (1 component, " in window.criteria.heading.text()
    assert len(window.distribution.cuts) == 0 and not window.plot_caution.isVisible()


def test_geometry_last_folder_and_recent_files_are_remembered(qtbot, tmp_path):
    settings = QSettings(str(tmp_path / "remember.ini"), QSettings.Format.IniFormat)
    first = MainWindow(settings)
    qtbot.addWidget(first)
    first.show()
    first.resize(760, 560)
    with qtbot.waitSignal(first.runner.finished, timeout=20_000):
        first.open_path(str(SAMPLES / "lake_net_lengths.csv"))
    size = (first.width(), first.height())
    first.close()
    again = QSettings(str(tmp_path / "remember.ini"), QSettings.Format.IniFormat)
    assert again.value("files/last_folder") == str(SAMPLES.resolve())
    second = MainWindow(again)
    qtbot.addWidget(second)
    # Restoring clamps to the screen (the offscreen screen is 800 x 600 pixels).
    available = second.screen().availableGeometry()
    assert abs(second.width() - min(size[0], available.width())) <= 4
    assert second.height() == size[1] == 560
    assert second.memory.recent_files() == [str((SAMPLES / "lake_net_lengths.csv").resolve())]
    assert second.memory.last_folder() == str(SAMPLES.resolve())
    second.close()


def test_the_user_settings_are_never_touched(private_settings_location):
    # The default QSettings of this session lives in the temporary folder.
    default = QSettings("ClusterDesk Developers", "ClusterDesk")
    assert str(private_settings_location) in default.fileName()


def test_status_bar_says_what_is_happening(qtbot, window):
    open_sample(qtbot, window, "lake_net_lengths.csv", LAKE)
    assert window.statusBar().currentMessage().startswith("Read lake_net_lengths.csv")
    with qtbot.waitSignal(window.runner.finished, timeout=30_000):
        window.fit_panel.kmax.setValue(3)
        window.fit_panel.restarts.setValue(2)
        window.fit_action.trigger()
        assert window.statusBar().currentMessage() == "Fitting models…"
        assert window.cancel_button.isVisible() and not window.fit_action.isEnabled()
    assert window.statusBar().currentMessage().startswith("Fitted 6 models")
    assert not window.cancel_button.isVisible()


@pytest.mark.parametrize("name", ["serosurvey_antibody.csv"])
def test_detection_limit_rows_are_reported(qtbot, window, name):
    open_sample(qtbot, window, name, DataChoice(column="antibody_au", scale="log10"))
    # 75 readings written as "<0.5" (sample_data/README.md)
    assert "75 below detection limit" in window.data_panel.cleaning.text()


def test_far_out_values_named_by_the_scan_can_be_left_out_from_the_ranking(qtbot, window, tmp_path):
    # Synthetic: two groups and one recording error of 1000000 (common
    # practice: far beyond Tukey's far-out fences). The scan names it; the
    # button sets the high limit to the largest other value, and the next
    # fit has nothing to name.
    rng = np.random.default_rng(8)
    values = np.concatenate([rng.normal(20.0, 1.0, 150), rng.normal(26.0, 1.0, 150)])
    source = tmp_path / "lengths.csv"
    source.write_text("length\n" + "\n".join(f"{v:.3f}" for v in np.append(values, 1e6)) + "\n",
                      encoding="utf-8")
    outcome = run(qtbot, window, lambda: window.open_path(str(source), DataChoice(column="length")))
    assert outcome.status == "done"
    fit(qtbot, window, kmax=3, restarts=3, widths="separate")
    button = window.ranking.leave_out_button
    assert button.isVisible()
    window.resize(1360, 860)
    qtbot.wait(100)  # let the wrapped labels take their heights
    shoot(window, "10-far-out-value-named")
    assert "far outside the rest of the sample" in window.ranking.summary.text()
    assert "1000000" in window.ranking.summary.text()
    outcome = run(qtbot, window, button.click)
    assert outcome.status == "done"
    assert float(window.data_panel.high.text()) == pytest.approx(float(f"{values.max():.3f}"))
    assert window.analysis.measurements.values.size == values.size
    assert not button.isVisible()  # the results went with the old values
    fit(qtbot, window, kmax=3, restarts=3, widths="separate")
    assert not button.isVisible()
    assert window.analysis.scan.best.k == 2


def test_ranking_headings_are_whole_before_the_first_fit(qtbot, window):
    # Found in review: 'evidence for the best' and 'restarts agreeing' were cut
    # off until models had been fitted.
    from gui_helpers import open_sample

    open_sample(qtbot, window, "lake_net_lengths.csv", DataChoice(column="length_mm"))
    view = window.ranking.view
    header = view.horizontalHeader()
    metrics = header.fontMetrics()
    model = view.model()
    for column in range(model.columnCount()):
        text = str(model.headerData(column, Qt.Orientation.Horizontal))
        assert header.sectionSize(column) >= metrics.horizontalAdvance(text), text
