"""Whole runs: a folder of good and bad files, workers 1 vs 2, interruption and resume."""

from __future__ import annotations

import csv
import json
import shutil
import threading

import pytest

from clusterdesk.analysis import ScanSettings
from clusterdesk.errors import InputError
from clusterdesk.screen import UnfinishedRunError, screen, tasks, unfinished_run
from clusterdesk.screen.journal import JOURNAL_NAME
from clusterdesk.screen.summary import summary_header

from screen_helpers import SETTINGS, locked_is_readable


def _by_name(result):
    from pathlib import Path

    return {(Path(r.file).name, r.sheet, r.column): r for r in result.rows}


def test_folder_screens_to_completion_with_a_reason_for_every_failure(inputs, reference_run):
    _, files = inputs
    result, out = reference_run
    rows = _by_name(result)
    assert not result.cancelled and result.computed == result.counts["ok"]  # every failure here is a file or sheet
    assert rows[("empty.csv", "", "")].status == "failed" and "empty" in rows[("empty.csv", "", "")].reason
    assert "binary" in rows[("blob.dat", "", "")].reason
    assert rows[("gauges.xlsx", "empty", "")].status == "failed"
    assert rows[("remarks.csv", "", "remark")].status == "skipped"
    assert "no numbers" in rows[("remarks.csv", "", "remark")].reason
    assert rows[("good.csv", "", "site")].status == "skipped"
    assert rows[("good.csv", "", "id")].status == "skipped"
    for key in (("gauges.xlsx", "north", "gauge_a_mm"), ("gauges.xlsx", "south", "gauge_b_mm"),
                ("big.csv", "", "level_au"), ("good.csv", "", "length_mm"), ("tiny.csv", "", "value")):
        assert rows[key].status == "ok", key
    assert rows[("big.csv", "", "level_au")].rows_kept == 80_000
    if locked_is_readable(files["locked.csv"]):
        assert rows[("locked.csv", "", "x")].status == "ok"  # this user reads it anyway (root)
    else:
        assert rows[("locked.csv", "", "")].status == "failed"
        assert "could not be opened" in rows[("locked.csv", "", "")].reason
    assert all(r.reason for r in result.rows if r.status != "ok")
    with open(out / "summary.csv", newline="", encoding="utf-8") as handle:
        table = list(csv.reader(handle))
    assert tuple(table[0]) == summary_header() and len(table) == 1 + len(result.rows)


def test_permission_denied_file_fails_with_its_reason(inputs, monkeypatch):
    _, files = inputs
    if locked_is_readable(files["locked.csv"]):
        # chmod 000 does not stop this user (root): refuse the read the way the system would.
        import errno
        import pathlib

        real, locked = pathlib.Path.read_bytes, files["locked.csv"]

        def read_bytes(self):
            if self == locked:
                raise PermissionError(errno.EACCES, "Permission denied", str(self))
            return real(self)

        monkeypatch.setattr(pathlib.Path, "read_bytes", read_bytes)
    result = screen([files["locked.csv"]], settings=SETTINGS, workers=1)
    assert result.rows[0].status == "failed" and "could not be opened" in result.rows[0].reason


def test_two_workers_give_the_same_summary_as_one(inputs, reference_run, tmp_path):
    folder, _ = inputs
    result1, out1 = reference_run
    result2 = screen([folder], settings=SETTINGS, workers=2, out=tmp_path)
    assert result2.workers == 2 and result2.counts == result1.counts
    assert (tmp_path / "summary.csv").read_bytes() == (out1 / "summary.csv").read_bytes()


def _small_folder(inputs, tmp_path):
    _, files = inputs
    folder = tmp_path / "in"
    folder.mkdir()
    for name in ("good.csv", "gauges.xlsx", "tiny.csv", "empty.csv"):
        shutil.copy(files[name], folder / name)
    return folder


def _counting(monkeypatch):
    calls = []
    real = tasks.screen_column

    def counted(task, settings, cancel=None):
        calls.append(task.key)
        return real(task, settings, cancel)

    monkeypatch.setattr(tasks, "screen_column", counted)
    return calls


def test_interrupted_run_resumes_without_redoing_finished_columns(inputs, tmp_path, monkeypatch):
    folder = _small_folder(inputs, tmp_path)
    fresh = screen([folder], settings=SETTINGS, workers=1, out=tmp_path / "fresh")
    total = fresh.computed
    assert total == 8
    calls = _counting(monkeypatch)
    stop = threading.Event()

    def stop_after_three(progress):
        if progress.computed >= 3:
            stop.set()

    out = tmp_path / "run"
    first = screen([folder], settings=SETTINGS, workers=1, out=out, progress=stop_after_three, cancel=stop)
    assert first.cancelled and first.computed == 3 and len(calls) == 3
    assert not (out / "summary.csv").exists()
    journal_rows = [json.loads(l) for l in (out / JOURNAL_NAME).read_text().splitlines()]
    assert sum(e["kind"] == "row" for e in journal_rows) == 3
    with pytest.raises(UnfinishedRunError, match="unfinished"):
        screen([folder], settings=SETTINGS, workers=1, out=out)
    done_before = set(calls)
    calls.clear()
    resumed = screen([folder], settings=SETTINGS, workers=1, out=out, resume=True)
    assert not resumed.cancelled and resumed.reused == 3 and resumed.computed == total - 3
    assert len(calls) == total - 3 and not done_before & set(calls)
    assert (out / "summary.csv").read_bytes() == (tmp_path / "fresh" / "summary.csv").read_bytes()
    calls.clear()
    again = screen([folder], settings=SETTINGS, workers=1, out=out, resume=True)
    assert again.computed == 0 and again.reused == total and calls == []


def test_unfinished_run_is_found_with_the_columns_a_resume_would_keep(inputs, tmp_path):
    folder = _small_folder(inputs, tmp_path)
    out = tmp_path / "run"
    assert unfinished_run(out, SETTINGS) is None  # no folder yet
    stop = threading.Event()
    screen([folder], settings=SETTINGS, workers=1, out=out, cancel=stop,
           progress=lambda p: stop.set() if p.computed >= 3 else None)
    found = unfinished_run(out, SETTINGS)
    assert (found.folder, found.columns_done, found.with_these_settings) == (out, 3, 3)
    other = ScanSettings(kmin=1, kmax=2, widths="separate", restarts=2, seed=7)
    assert unfinished_run(out, other).with_these_settings == 0
    resumed = screen([folder], settings=SETTINGS, workers=1, out=out, resume=True)
    assert resumed.reused == found.with_these_settings
    assert unfinished_run(out, SETTINGS) is None  # the run finished
    (out / JOURNAL_NAME).write_text("not a journal\n", encoding="utf-8")
    with pytest.raises(InputError, match="not a ClusterDesk screening journal"):
        unfinished_run(out, SETTINGS)


def test_resume_redoes_changed_files_and_other_settings(inputs, tmp_path, monkeypatch):
    folder = _small_folder(inputs, tmp_path)
    out = tmp_path / "run"
    screen([folder], settings=SETTINGS, workers=1, out=out)
    with open(folder / "tiny.csv", "a", encoding="utf-8") as handle:
        handle.write("4\n5\n")
    calls = _counting(monkeypatch)
    changed = screen([folder], settings=SETTINGS, workers=1, out=out, resume=True)
    assert [key.split("\x1f")[0].endswith("tiny.csv") for key in calls] == [True]
    assert changed.computed == 1
    calls.clear()
    other = ScanSettings(kmin=1, kmax=2, widths="separate", restarts=2, seed=7)
    redone = screen([folder], settings=other, workers=1, out=out, resume=True)
    assert redone.reused == 0 and redone.computed == len(calls) == 8


def test_a_cut_journal_line_is_ignored_and_start_over_discards(inputs, tmp_path):
    folder = _small_folder(inputs, tmp_path)
    out = tmp_path / "run"
    stop = threading.Event()
    screen([folder], settings=SETTINGS, workers=1, out=out, cancel=stop,
           progress=lambda p: stop.set() if p.computed >= 2 else None)
    with open(out / JOURNAL_NAME, "a", encoding="utf-8") as handle:
        handle.write('{"kind": "row", "key": "cut sh')  # an interruption in the middle of a line
    resumed = screen([folder], settings=SETTINGS, workers=1, out=out, resume=True)
    assert resumed.reused == 2 and resumed.computed == 6
    anew = screen([folder], settings=SETTINGS, workers=1, out=out, start_over=True)
    assert anew.reused == 0 and anew.computed == 8


def test_nothing_to_screen_and_bad_settings(tmp_path):
    (tmp_path / "empty.csv").write_bytes(b"")
    result = screen([tmp_path / "empty.csv", tmp_path / "missing.csv"], settings=SETTINGS, workers=1)
    assert result.counts == {"ok": 0, "failed": 2, "skipped": 0}

    with pytest.raises(InputError, match="kmin"):
        screen([tmp_path], settings=ScanSettings(kmin=4, kmax=2), workers=1)
    with pytest.raises(InputError, match="workers"):
        screen([tmp_path], settings=SETTINGS, workers=0)
