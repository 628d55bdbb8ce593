"""Rows reach the progress callback as they become known, so a front end can fill its table in.

Checked against the run's own final table: every row reported once, none
invented, and the counts of each report consistent with the rows seen so far.
"""

from __future__ import annotations

from collections import Counter

from clusterdesk.screen import screen

from screen_helpers import SETTINGS


def _key(row):
    return (row.file, row.sheet, row.column, row.position, row.status)


def test_new_rows_arrive_once_each_and_add_up_to_the_result(inputs):
    folder, files = inputs
    reports = []
    result = screen([folder, str(folder / "no-such-file.csv")], settings=SETTINGS, workers=1,
                    progress=reports.append)
    seen = [row for report in reports for row in report.new_rows]
    assert Counter(map(_key, seen)) == Counter(map(_key, result.rows))
    assert seen[0].reason.startswith("There is no file")  # an input that gave no file is known at once
    running = 0
    for report in reports:
        running += sum(1 for row in report.new_rows if row.column and row.status != "skipped")
        assert report.done <= running  # finished columns were all reported by then
    assert reports[-1].done == len([r for r in result.rows if r.column and r.status != "skipped"])


def test_a_resumed_run_reports_the_reused_rows_too(inputs, tmp_path):
    import shutil
    import threading

    _, files = inputs
    folder = tmp_path / "in"
    folder.mkdir()
    for name in ("good.csv", "tiny.csv", "empty.csv"):
        shutil.copy(files[name], folder / name)
    stop = threading.Event()

    def stop_after_two(report):
        if report.computed >= 2:
            stop.set()

    out = tmp_path / "run"
    first = screen([folder], settings=SETTINGS, workers=1, out=out, progress=stop_after_two, cancel=stop)
    assert first.cancelled and first.computed == 2
    reports = []
    resumed = screen([folder], settings=SETTINGS, workers=1, out=out, resume=True, progress=reports.append)
    assert resumed.reused == 2 and not resumed.cancelled
    seen = [row for report in reports for row in report.new_rows]
    assert Counter(map(_key, seen)) == Counter(map(_key, resumed.rows))
