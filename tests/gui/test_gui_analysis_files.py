"""Reopening a damaged or stale analysis in the window: a message box, the analysis shown kept, nothing written.

The messages are the analysis's own (tests/test_analysis_files.py checks
them); here the window must show them in a box, keep what it showed, keep
saving to the file it saved before, and leave every file's bytes alone.
"""

from __future__ import annotations

import hashlib
import json
import shutil

import pytest

from clusterdesk.analysis import Analysis, ScanSettings
from gui_helpers import SAMPLES, fit, run

pytestmark = pytest.mark.gui


def _digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture
def shown(qtbot, window, tmp_path, monkeypatch):
    """The window with a fitted analysis saved as shown.cdesk; returns (window, its saved path)."""
    source = tmp_path / "lake.csv"
    shutil.copy(SAMPLES / "lake_net_lengths.csv", source)
    assert run(qtbot, window, lambda: window.open_path(str(source))).status == "done"
    fit(qtbot, window, kmax=2, restarts=1)
    monkeypatch.setattr(window, "ask_save_path", lambda *args: str(tmp_path / "shown.cdesk"))
    window.save_action.trigger()
    return window, tmp_path / "shown.cdesk"


def _other_analysis(tmp_path):
    """A second saved analysis (of its own copy of the sample), as JSON, and its source."""
    source = tmp_path / "other.csv"
    shutil.copy(SAMPLES / "lake_net_lengths.csv", source)
    analysis = Analysis.from_file(source, settings=ScanSettings(kmax=2, restarts=1))
    analysis.run_scan()
    path = analysis.save(tmp_path / "other.cdesk")
    return path, source


@pytest.mark.parametrize("damage, words", [
    (lambda text: text[: len(text) // 2], "not a readable ClusterDesk analysis"),
    (lambda text: "{ not json", "not a readable ClusterDesk analysis"),
    (lambda text: json.dumps(dict(json.loads(text), format_version=99)), "newer ClusterDesk"),
    (lambda text: json.dumps(dict(json.loads(text), settings={"kmax": "six"})), "kmax is 'six'"),
    (lambda text: text.replace("other.csv", "gone.csv"), "is missing"),
])
def test_a_bad_analysis_file_shows_a_box_and_keeps_the_analysis(qtbot, shown, tmp_path, damage, words):
    window, saved = shown
    before, ranking_rows = window.analysis, window.ranking.model.rowCount()
    path, source = _other_analysis(tmp_path)
    path.write_text(damage(path.read_text(encoding="utf-8")), encoding="utf-8")
    digests = (_digest(path), _digest(source), _digest(saved))
    outcome = run(qtbot, window, lambda: window.open_path(str(path)))
    assert outcome.status == "failed"
    box = window.analysis_file_box
    assert box.isVisible() and words in box.text() and "no file was written" in box.informativeText()
    assert [b.text() for b in box.buttons()] == ["OK"]  # nothing to open anyway
    assert window.analysis is before and window.ranking.model.rowCount() == ranking_rows
    assert window.saved_path == str(saved)  # Save still goes to the file saved before
    assert (_digest(path), _digest(source), _digest(saved)) == digests
    box.buttons()[0].click()
    assert not box.isVisible() and window.fit_action.isEnabled()


def test_a_changed_source_can_be_opened_anyway_or_not(qtbot, shown, tmp_path):
    window, _saved = shown
    before = window.analysis
    path, source = _other_analysis(tmp_path)
    with open(source, "a", encoding="utf-8") as handle:
        handle.write("F9999,N1,150\n")
    assert run(qtbot, window, lambda: window.open_path(str(path))).status == "failed"
    box = window.analysis_file_box
    assert "other.csv changed since other.cdesk was saved" in box.text()
    cancel = next(b for b in box.buttons() if b.text() != "Open anyway")
    cancel.click()
    assert window.analysis is before
    assert run(qtbot, window, lambda: window.open_path(str(path))).status == "failed"
    anyway = next(b for b in window.analysis_file_box.buttons() if b.text() == "Open anyway")
    assert run(qtbot, window, anyway.click).status == "done"
    assert window.analysis is not before and window.analysis.measurements.n == 601
    assert window.message_bar.level == "warning" and "changed since" in window.message_bar.text()


def test_an_analysis_with_a_screened_columns_seed_reopens(qtbot, window, tmp_path):
    # Seeds of screened columns go up to 2**63 - 1; the fit panel's seed once overflowed on them
    # (found by the monkey test: OverflowError when reopening such an analysis).
    source = tmp_path / "lake.csv"
    shutil.copy(SAMPLES / "lake_net_lengths.csv", source)
    seed = 2**63 - 25
    analysis = Analysis.from_file(source, settings=ScanSettings(kmax=2, restarts=1, seed=seed))
    analysis.run_scan()
    path = analysis.save(tmp_path / "screened.cdesk")
    assert run(qtbot, window, lambda: window.open_path(str(path))).status == "done"
    assert window.analysis.settings.seed == seed and window.fit_panel.settings().seed == seed
    assert [r.bic for r in window.analysis.scan.ranking] == [r.bic for r in analysis.scan.ranking]
