"""The screening page: the table fills in, Cancel stops it, sorting and filtering, opening a row.

The page must show what :func:`clusterdesk.screen.screen` (the Qt-free run,
called here directly as the reference) finds for the same folder and
settings, and opening a row must give an analysis whose best model is the
row's. The folder is synthetic, generated here with fixed seeds.
"""

from __future__ import annotations

import csv
import multiprocessing
import time
from collections import Counter
from pathlib import Path

import numpy as np
import pytest

from PySide6.QtCore import Qt

from clusterdesk.analysis import ScanSettings
from clusterdesk.gui.models import RAW_ROLE
from clusterdesk.gui.screening_table import COLUMNS
from clusterdesk.screen import screen

pytestmark = pytest.mark.gui

SETTINGS = ScanSettings(kmin=1, kmax=3, widths="both", restarts=2, seed=11)
HEADERS = [c[0] for c in COLUMNS]


def _groups(rng, n, means, sd):
    """n values from equal-weight normal groups with the given means and one sd (seeded); shape (n,)."""
    labels = rng.integers(0, len(means), n)
    return rng.normal(np.asarray(means, dtype=float)[labels], sd)


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    """Three small synthetic files (one and three well separated groups), an empty file and a binary one."""
    rng = np.random.default_rng(20261202)
    root = tmp_path_factory.mktemp("screening_page")
    n = 240
    one = _groups(rng, n, [50.0], 4.0)
    three = _groups(rng, n, [10.0, 30.0, 50.0], 1.5)
    lines = ["length_mm,width_mm,site"] + [f"{a:.3f},{b:.3f},pond {i % 4}" for i, (a, b) in
                                            enumerate(zip(three, one))]
    (root / "ponds.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    two = _groups(rng, n, [5.0, 9.0], 0.6)
    (root / "sizer.tsv").write_text("diameter_um\n" + "\n".join(f"{v:.4f}" for v in two) + "\n",
                                    encoding="utf-8")
    (root / "empty.csv").write_bytes(b"")
    (root / "noise.dat").write_bytes(bytes(rng.integers(0, 256, 2048, dtype=np.uint8)) + b"\x00" * 16)
    return root


@pytest.fixture(scope="module")
def reference(folder):
    """The Qt-free run over the folder, in this process."""
    return screen([folder], settings=SETTINGS, workers=1)


def _key(row):
    return (Path(row.file).name, row.sheet, row.column, row.status, row.best_k, row.bic)


def _screen_in_page(qtbot, window, folder, workers=1, settings=SETTINGS):
    page = window.screening
    window.screening_action.trigger()
    assert window.stack.currentWidget() is page
    page.ask_folder = lambda: str(folder)
    page.folder_button.click()
    page.set_settings(settings)
    page.workers.setValue(workers)
    inserted = []
    page.table_model.rowsInserted.connect(lambda *args: inserted.append(page.table_model.rowCount()))
    with qtbot.waitSignal(page.runner.finished, timeout=60_000) as blocker:
        page.start_button.click()
        assert page.busy and not page.start_button.isEnabled() and page.cancel_button.isEnabled()
    return blocker.args[0], inserted


def _shown(page, column):
    return [page.proxy.index(r, column).data() for r in range(page.proxy.rowCount())]


def test_the_table_fills_in_as_the_run_goes_and_matches_the_headless_run(qtbot, window, folder, reference):
    outcome, inserted = _screen_in_page(qtbot, window, folder)
    page = window.screening
    assert outcome.status == "done"
    assert Counter(map(_key, page.table_model.screen_rows)) == Counter(map(_key, reference.rows))
    assert len(inserted) >= 3 and inserted == sorted(inserted)  # rows arrived in several steps
    rows = {(Path(r.file).name, r.column): r for r in page.table_model.screen_rows}
    # Well separated groups (means 4+ sds apart) are found by BIC: common practice, no source.
    assert rows[("ponds.csv", "length_mm")].best_k == 3
    assert rows[("ponds.csv", "width_mm")].best_k == 1
    assert rows[("sizer.tsv", "diameter_um")].best_k == 2
    assert rows[("empty.csv", "")].status == "failed" and rows[("empty.csv", "")].reason
    assert rows[("noise.dat", "")].status == "failed" and "binary" in rows[("noise.dat", "")].reason
    assert rows[("ponds.csv", "site")].status == "skipped"
    assert "3 columns fitted, 2 failed, 1 skipped" in page.progress_label.text()
    assert page.shown_label.text() == f"{len(reference.rows)} rows"
    assert page.start_button.isEnabled() and not page.cancel_button.isEnabled()


def test_sorting_and_filtering(qtbot, window, folder, reference, tmp_path):
    _screen_in_page(qtbot, window, folder)
    page = window.screening
    k_column = HEADERS.index("best k")
    page.view.sortByColumn(k_column, Qt.SortOrder.DescendingOrder)
    ks = [page.proxy.index(r, k_column).data(RAW_ROLE) for r in range(page.proxy.rowCount())]
    numbers = [k for k in ks if k is not None]
    assert numbers == sorted(numbers, reverse=True) and numbers[0] == 3
    gap_column = HEADERS.index("BIC gap")
    page.view.sortByColumn(gap_column, Qt.SortOrder.AscendingOrder)
    gaps = [page.proxy.index(r, gap_column).data(RAW_ROLE) for r in range(page.proxy.rowCount())]
    present = [g for g in gaps if g is not None]
    assert present == sorted(present) and gaps[:len(present)] == present  # empty cells last
    page.status_filter.setCurrentIndex(page.status_filter.findData("failed"))
    assert sorted(_shown(page, HEADERS.index("file"))) == ["empty.csv", "noise.dat"]
    assert set(_shown(page, HEADERS.index("status"))) == {"failed"}
    assert page.shown_label.text() == f"2 of {len(reference.rows)} rows"
    page.ask_save_path = lambda kind: str(tmp_path / f"failed.{kind}")  # the table as shown is what is saved
    page.save_button.click()
    with open(tmp_path / "failed.csv", newline="", encoding="utf-8") as handle:
        saved = list(csv.DictReader(handle))
    assert sorted(Path(r["file"]).name for r in saved) == ["empty.csv", "noise.dat"]
    page.overview_button.click()
    overview = (tmp_path / "failed.html").read_text(encoding="utf-8")
    assert "noise.dat" in overview and "sizer.tsv" not in overview
    page.status_filter.setCurrentIndex(0)
    page.filter_text.setText("PONDS width")  # every word, ignoring case
    assert _shown(page, HEADERS.index("column")) == ["width_mm"]
    page.filter_text.clear()
    assert page.proxy.rowCount() == len(reference.rows)


@pytest.mark.parametrize("workers", [1, 2])
def test_cancel_stops_within_a_second_and_keeps_the_finished_rows(qtbot, window, tmp_path, workers):
    rng = np.random.default_rng(20261203)
    columns = [_groups(rng, 3000, [0.0, 3.0, 5.0, 9.0], 1.3) for _ in range(12)]
    header = ",".join(f"reading_{j}" for j in range(len(columns)))
    body = "\n".join(",".join(f"{c[i]:.5f}" for c in columns) for i in range(3000))
    (tmp_path / "many.csv").write_text(header + "\n" + body + "\n", encoding="utf-8")
    page = window.screening
    window.show_screening()
    page.set_inputs([tmp_path])
    page.set_settings(ScanSettings(kmin=1, kmax=8, widths="both", restarts=20, seed=3))
    page.workers.setValue(workers)
    with qtbot.waitSignal(page._relay.reported, timeout=60_000):
        page.start_button.click()
    assert page.busy
    t0 = time.perf_counter()
    with qtbot.waitSignal(page.runner.finished, timeout=5_000) as blocker:
        page.cancel_button.click()
    seconds = time.perf_counter() - t0
    assert blocker.args[0].status == "cancelled"
    assert seconds < 1.0, f"the screening took {seconds:.2f} s to stop"
    assert page.table_model.rowCount() < len(columns)
    assert "Screening cancelled after" in page.progress_label.text()
    assert page.start_button.isEnabled()


def test_opening_a_row_loads_that_column_and_fits_it_as_the_screening_did(qtbot, window, folder):
    _screen_in_page(qtbot, window, folder)
    page = window.screening
    source = next(i for i, r in enumerate(page.table_model.screen_rows) if r.column == "length_mm")
    page.select_source_row(source)
    row = page.selected_row()
    assert row.column == "length_mm" and page.open_button.isEnabled()
    page.open_button.click()
    qtbot.waitUntil(lambda: window.analysis is not None and window.analysis.scan is not None
                    and not window.runner.busy, timeout=30_000)
    a = window.analysis
    assert window.stack.currentIndex() == 1
    assert Path(a.source_path) == (folder / "ponds.csv").resolve()
    assert a.measurements.column.name == "length_mm" and a.measurements.n == row.rows_kept
    assert a.settings.seed == row.seed and a.settings.kmax == row.kmax
    assert (a.scan.best.k, a.scan.best.widths) == (row.best_k, row.best_widths)
    assert a.scan.best.bic == pytest.approx(row.bic, rel=1e-9)
    np.testing.assert_allclose(np.sort(a.scan.best.mixture.means), row.means, rtol=1e-7)
    assert window.ranking.model.rowCount() == len(a.scan.ranking)
    assert window.fit_panel.settings() == a.settings  # the panel shows the column's seed (up to 2**63 - 1)
    assert row.seed > 2**31 and f"seed {row.seed}" in window.statusBar().currentMessage()
    # Back to the table: a skipped column cannot be opened
    window.show_screening()
    page.select_source_row(next(i for i, r in enumerate(page.table_model.screen_rows) if r.status == "skipped"))
    assert not page.open_button.isEnabled()


def test_a_look_at_the_page(qtbot, window, folder):
    """Renders the page for people to look at (screenshots/ is not committed)."""
    from gui_helpers import shoot

    _screen_in_page(qtbot, window, folder)
    window.resize(1360, 860)
    path = shoot(window, "8-screening-page")
    assert path.stat().st_size > 0


def test_a_bad_column_pattern_stops_the_run_with_its_reason(qtbot, window, folder):
    page = window.screening
    page.set_inputs([folder])
    page.patterns.setText("length*, re:(unclosed")
    with qtbot.waitSignal(page.runner.finished, timeout=30_000) as blocker:
        page.start_button.click()
    assert blocker.args[0].status == "failed"
    assert "not a valid regular expression" in page.progress_label.text()
    assert page.table_model.rowCount() == 0 and page.start_button.isEnabled()


def test_closing_the_window_while_screening_stops_the_workers(qtbot, window, folder):
    page = window.screening
    page.set_inputs([folder])
    page.set_settings(ScanSettings(kmin=1, kmax=8, widths="both", restarts=30, seed=1))
    page.workers.setValue(2)
    with qtbot.waitSignal(page._relay.reported, timeout=60_000):
        page.start_button.click()
    assert any(p.name.startswith("clusterdesk-screen-") for p in multiprocessing.active_children())
    window.close()  # cancels the run and joins its thread (the process would abort otherwise)
    assert not page.busy
    assert not any(p.name.startswith("clusterdesk-screen-") for p in multiprocessing.active_children())


def test_a_workbook_sheet_row_opens_that_sheet_and_column(qtbot, window):
    from gui_helpers import SAMPLES

    window.welcome.screen_button.click()  # the start page leads here too
    page = window.screening
    assert window.stack.currentWidget() is page
    page.ask_files = lambda: [str(SAMPLES / "shaft_diameters.xlsx")]
    page.files_button.click()
    page.set_settings(SETTINGS)
    page.workers.setValue(1)
    with qtbot.waitSignal(page.runner.finished, timeout=60_000):
        page.start_button.click()
    rows = page.table_model.screen_rows
    source = next(i for i, r in enumerate(rows) if r.sheet and r.status == "ok")
    row = rows[source]
    page.select_source_row(source)
    page.view.doubleClicked.emit(page.view.currentIndex())  # double-click opens it
    qtbot.waitUntil(lambda: window.analysis is not None and window.analysis.scan is not None
                    and not window.runner.busy, timeout=30_000)
    a = window.analysis
    assert a.data.sheet == row.sheet and a.measurements.column.name == row.column
    assert window.data_panel.sheet.currentText() == row.sheet
    assert (a.scan.best.k, a.scan.best.widths) == (row.best_k, row.best_widths)
    assert a.scan.best.bic == pytest.approx(row.bic, rel=1e-9)


def test_an_output_folder_keeps_the_finished_columns_and_a_cancelled_run_resumes(qtbot, window, tmp_path):
    from clusterdesk.gui.screening_output import RESUME, START_OVER
    from clusterdesk.screen.journal import JOURNAL_NAME

    rng = np.random.default_rng(20261204)
    columns = [_groups(rng, 1500, [0.0, 4.0, 9.0], 1.2) for _ in range(8)]
    data = tmp_path / "data"
    data.mkdir()
    header = ",".join(f"reading_{j}" for j in range(len(columns)))
    body = "\n".join(",".join(f"{c[i]:.5f}" for c in columns) for i in range(1500))
    (data / "gauge.csv").write_text(header + "\n" + body + "\n", encoding="utf-8")
    settings = ScanSettings(kmin=1, kmax=5, widths="both", restarts=6, seed=5)
    out = tmp_path / "results"
    page = window.screening
    window.show_screening()
    page.set_inputs([data])
    page.set_settings(settings)
    page.workers.setValue(1)
    page.output.ask_folder = lambda: str(out)
    page.output.choose_button.click()
    assert page.output.folder == str(out.resolve()) and page.output.clear_button.isEnabled()

    def fitted():
        return [r for r in page.table_model.screen_rows if r.status == "ok"]

    page.start_button.click()
    assert page.busy and not page.output.isEnabled()
    assert str(out.resolve()) in window.statusBar().currentMessage()  # the status bar says what runs
    qtbot.waitUntil(lambda: len(fitted()) >= 2, timeout=60_000)
    with qtbot.waitSignal(page.runner.finished, timeout=10_000):
        page.cancel_button.click()
    done_before = {r.column: r for r in fitted()}
    assert 2 <= len(done_before) < len(columns)
    assert "in the journal in" in page.progress_label.text()
    assert "Screening cancelled after" in window.statusBar().currentMessage()
    assert not (out / "summary.csv").exists()  # an interrupted run writes its journal only
    journal = (out / JOURNAL_NAME).read_bytes()

    questions = []
    page.output.ask_unfinished = lambda found: questions.append(found) or ""  # the user thinks again
    page.start_button.click()
    assert not page.busy and (out / JOURNAL_NAME).read_bytes() == journal
    assert "Nothing started" in page.progress_label.text()
    assert (questions[0].columns_done, questions[0].with_these_settings) == (len(done_before),) * 2

    page.output.ask_unfinished = lambda found: RESUME
    with qtbot.waitSignal(page.runner.finished, timeout=120_000) as blocker:
        page.start_button.click()
    assert blocker.args[0].status == "done"
    result = page.result
    assert result.reused == len(done_before) and result.computed == len(columns) - len(done_before)
    for column, row in done_before.items():  # the kept rows are the first run's, unchanged
        assert next(r for r in result.rows if r.column == column) == row
    # The table of the resumed run is the table of one uninterrupted run (our headless run, in memory).
    whole = screen([data], settings=settings, workers=1)
    assert Counter(map(_key, page.table_model.screen_rows)) == Counter(map(_key, whole.rows))
    assert (out / "summary.csv").exists() and (out / "overview.html").exists()
    message = page.progress_label.text()
    assert f"({len(done_before)} kept from the earlier run)" in message
    assert f"Wrote summary.csv and overview.html to {out.resolve()}" in message
    assert window.statusBar().currentMessage() == message

    # A finished run asks nothing; an unfinished one can be started over.
    page.output.ask_unfinished = lambda found: pytest.fail("a finished run is not unfinished")
    page.start_button.click()
    qtbot.waitUntil(lambda: len(fitted()) >= 1, timeout=60_000)
    with qtbot.waitSignal(page.runner.finished, timeout=10_000):
        page.cancel_button.click()
    page.output.ask_unfinished = lambda found: START_OVER
    with qtbot.waitSignal(page.runner.finished, timeout=120_000):
        page.start_button.click()
    assert page.result.reused == 0 and page.result.computed == len(columns)
    assert Counter(map(_key, page.result.rows)) == Counter(map(_key, whole.rows))

    page.output.clear_button.click()
    assert page.output.folder == "" and "rows stay in the window only" in page.output.label.text()
    window.leave_screening()
    assert window.statusBar().currentMessage() == ""  # the page's last word does not linger


def test_the_unfinished_run_question_says_which_columns_a_resume_keeps():
    from clusterdesk.gui.screening_output import unfinished_run_question
    from clusterdesk.screen import UnfinishedRun

    text, info = unfinished_run_question(UnfinishedRun(Path("/data/out"), 37, 37))
    assert "stopped after 37 columns" in text and "All of them were screened" in info
    _, info = unfinished_run_question(UnfinishedRun(Path("/data/out"), 37, 31))
    assert "31 of them were screened with the settings shown" in info
    _, info = unfinished_run_question(UnfinishedRun(Path("/data/out"), 1, 0))
    assert "None of them" in info and "set that run's settings first" in info
