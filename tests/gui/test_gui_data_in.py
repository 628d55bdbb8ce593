"""Getting data in: samples, drag and drop, paste, the column chooser, cleaning, bad files."""

from __future__ import annotations

import csv

import numpy as np
from PySide6.QtCore import QMimeData, QPointF, Qt, QUrl
from PySide6.QtGui import QDragEnterEvent, QDropEvent
from PySide6.QtWidgets import QApplication

from clusterdesk.analysis import Analysis, DataChoice
from clusterdesk.errors import InputError
from gui_helpers import SAMPLES, fit, open_sample, run, shoot


def lake_lengths():
    """The length column read with the csv module (an independent reading)."""
    with open(SAMPLES / "lake_net_lengths.csv", encoding="utf-8", newline="") as handle:
        return np.array([float(r["length_mm"]) for r in csv.DictReader(handle)])


def test_first_screen_offers_the_synthetic_samples_and_opens_one(qtbot, window):
    assert window.stack.currentIndex() == 0
    buttons = window.welcome.sample_buttons
    titles = [button.text() + " " + button.description() for button, _ in buttons]
    assert len(titles) >= 6 and all("Synthetic" in t for t in titles)
    shoot(window, "1-first-screen")
    lake = next(button for button, sample in buttons if sample.path.name == "lake_net_lengths.csv")
    with qtbot.waitSignal(window.runner.finished, timeout=20_000):
        lake.click()
    assert window.stack.currentIndex() == 1
    np.testing.assert_array_equal(window.analysis.measurements.values, lake_lengths())
    shoot(window, "2-opened")
    (button, path), = window.welcome.recent_buttons
    assert button.text() == "lake_net_lengths.csv" and path == str((SAMPLES / "lake_net_lengths.csv").resolve())
    assert [a.text() for a in window.recent_menu.actions()] == ["lake_net_lengths.csv"]
    # The tally names its classes by their lower end (sample_data/README.md): its button says so.
    window.stack.setCurrentIndex(0)
    tally = next(button for button, sample in buttons if sample.path.name == "length_tally.csv")
    with qtbot.waitSignal(window.runner.finished, timeout=20_000):
        tally.click()
    assert window.data_panel.value_at.currentData() == "lower"
    assert window.analysis.measurements.counts is not None


def test_drag_and_drop_a_file_and_text(qtbot, window):
    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(SAMPLES / "lake_net_lengths.csv"))])
    enter = QDragEnterEvent(QPointF(10, 10), Qt.DropAction.CopyAction, mime, Qt.MouseButton.LeftButton,
                            Qt.KeyboardModifier.NoModifier)
    window.dragEnterEvent(enter)
    assert enter.isAccepted()
    drop = QDropEvent(QPointF(10, 10), Qt.DropAction.CopyAction, mime, Qt.MouseButton.LeftButton,
                      Qt.KeyboardModifier.NoModifier)
    run(qtbot, window, lambda: window.dropEvent(drop))
    assert window.analysis.source_path == str((SAMPLES / "lake_net_lengths.csv").resolve())
    np.testing.assert_array_equal(window.analysis.measurements.values, lake_lengths())

    text = QMimeData()
    text.setText("diameter\n3.2\n3.4\n\n7.9\nbad\n8.1\n")  # a stray word is not a second header
    drop = QDropEvent(QPointF(10, 10), Qt.DropAction.CopyAction, text, Qt.MouseButton.LeftButton,
                      Qt.KeyboardModifier.NoModifier)
    run(qtbot, window, lambda: window.dropEvent(drop))
    m = window.analysis.measurements
    assert window.analysis.source_path is None and m.values.tolist() == [3.2, 3.4, 7.9, 8.1]
    assert m.summary.excluded == {"empty": 1, "not a number": 1}


def test_paste_a_column_from_the_clipboard_and_save_it(qtbot, window, tmp_path, monkeypatch):
    rng = np.random.default_rng(7)
    values = np.round(np.concatenate([rng.normal(20, 2, 150), rng.normal(30, 2, 100)]), 2)
    QApplication.clipboard().setText("reading\n" + "\n".join(f"{v:.2f}" for v in values))
    run(qtbot, window, window.paste_action.trigger)
    np.testing.assert_array_equal(window.analysis.measurements.values, values)
    assert "pasted values" in window.data_panel.source.text()
    fit(qtbot, window)
    # Saving pasted values keeps them beside the analysis, so it can be reopened.
    monkeypatch.setattr(window, "ask_save_path", lambda *a: str(tmp_path / "pasted.cdesk"))
    window.save_action.trigger()
    assert (tmp_path / "pasted-values.txt").is_file()
    bic = window.analysis.chosen.bic
    run(qtbot, window, lambda: window.open_path(str(tmp_path / "pasted.cdesk")))
    assert window.analysis.chosen.bic == bic and not window.message_bar.isVisible()


def test_empty_clipboard_is_a_message_not_a_crash(qtbot, window):
    QApplication.clipboard().setText("")
    window.paste_action.trigger()
    assert window.message_bar.level == "error" and "no text" in window.message_bar.text()


def test_column_scale_and_range_choices_reread_the_file(qtbot, window):
    open_sample(qtbot, window, "lake_net_lengths.csv")
    panel = window.data_panel
    lengths = lake_lengths()
    fit(qtbot, window)
    # Range limits (original scale, inclusive)
    panel.low.setText("100")
    run(qtbot, window, panel.low.editingFinished.emit)
    m = window.analysis.measurements
    assert m.n == int(np.sum(lengths >= 100)) and window.analysis.scan is None
    assert m.summary.excluded == {"outside the chosen range": int(np.sum(lengths < 100))}
    assert "Excluded" in panel.excluded_button.text() and panel.excluded_button.isEnabled()
    # A log scale
    run(qtbot, window, lambda: panel.scale.setCurrentIndex(panel.scale.findData("log10")))
    np.testing.assert_allclose(window.analysis.measurements.fit_values, np.log10(lengths[lengths >= 100]))
    assert window.distribution.plot.getAxis("bottom").labelText == "log10(length_mm)"
    # A text column cannot be analysed: a message, and the panel shows the column in use again
    outcome = run(qtbot, window, lambda: panel.columns.selectRow(1))
    assert outcome.status == "failed" and "holds no numbers" in window.message_bar.text()
    assert panel.columns.selectionModel().selectedRows()[0].row() == 2
    assert window.analysis.measurements.column.name == "length_mm"


def test_a_bad_file_shows_a_message_and_the_window_stays_usable(qtbot, window, tmp_path):
    bad = tmp_path / "broken.csv"
    bad.write_bytes(b"\x00\x01\x02PK\x00garbage" * 50)
    outcome = run(qtbot, window, lambda: window.open_path(str(bad)))
    assert outcome.status == "failed"
    try:  # the message is the analysis's own, shown as it is
        Analysis.from_file(bad)
    except InputError as exc:
        expected = str(exc)
    assert window.message_bar.isVisible() and window.message_bar.level == "error"
    assert expected.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;") in window.message_bar.text()
    assert window.stack.currentIndex() == 0 and window.analysis is None
    shoot(window, "6-bad-file-message")
    not_analysis = tmp_path / "notes.cdesk"
    not_analysis.write_text("{ truncated", encoding="utf-8")
    assert run(qtbot, window, lambda: window.open_path(str(not_analysis))).status == "failed"
    assert "not a readable ClusterDesk analysis" in window.message_bar.text()
    open_sample(qtbot, window, "lake_net_lengths.csv")  # still usable
    assert window.analysis.measurements.n == 600 and window.open_action.isEnabled()


def test_excluded_rows_dialog_lists_line_text_and_reason(qtbot, window):
    open_sample(qtbot, window, "messy_export.txt")
    # Independent reading: the thickness field (3rd, ';'-separated) of each data line below the header.
    lines = (SAMPLES / "messy_export.txt").read_text(encoding="utf-8-sig").split("\n")
    header = next(i for i, line in enumerate(lines) if line.startswith("Reading;"))
    expected = []
    for number, line in enumerate(lines[header + 1:], start=header + 2):
        if not line.strip():
            continue
        cell = line.split(";")[2].strip()
        try:
            float(cell.replace(",", "."))
        except ValueError:
            expected.append((number, cell, "empty" if cell == "" else "not a number"))
    window.data_panel.excluded_button.click()
    dialog = window._excluded_dialog
    model = dialog.model
    shown = [(model.raw(r, 0), model.raw(r, 1), model.raw(r, 2)) for r in range(model.rowCount())]
    assert shown == expected and len(shown) == 25  # 7 blank, 13 n/a, 5 ERR (sample_data/README.md)
    assert "7 empty, 18 not a number" in window.data_panel.cleaning.text()
    shoot(dialog, "7-excluded-rows")
    dialog.close()


def test_value_count_tables_and_workbook_sheets(qtbot, window):
    open_sample(qtbot, window, "length_tally.csv", DataChoice(column="length_cm", counts="count"))
    panel = window.data_panel
    assert panel.counts.currentText() == "count"
    assert "total count 2,500" in panel.cleaning.text()
    open_sample(qtbot, window, "shaft_diameters.xlsx", DataChoice(column="diameter_mm", sheet="inspection"))
    assert panel.sheet.isVisibleTo(panel) and [panel.sheet.itemText(i) for i in range(panel.sheet.count())] == [
        "inspection", "notes"]
    assert window.analysis.measurements.resolution == 0.001
