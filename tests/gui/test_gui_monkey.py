"""A seeded monkey: a few hundred random user actions, and the window must stay whole and consistent.

The actions are what a user does with the mouse and keyboard: open good and
bad files, paste text, change the column, scale, range and scan settings,
fit, cancel, choose a model, estimate intervals, export, save and reopen;
some are tried while work is running (the window must refuse them politely);
the screening page screens the same folder, is cancelled, and opens rows.
After every action the test waits until the window is idle and checks that
no exception escaped (a replaced ``sys.excepthook``; pytest-qt also fails the
test for exceptions raised in Qt virtual methods), that no message speaks of
an unexpected error, and that every view shows what the analysis holds.

The files are small and synthetic (seeded), the component range at most 3,
so the walk stays well under a minute on a shared machine.
"""

from __future__ import annotations

import json
import random
import sys
from pathlib import Path

import numpy as np
import pytest

from clusterdesk.analysis import Analysis, ScanSettings
from clusterdesk.gui.models import model_words

pytestmark = [pytest.mark.gui, pytest.mark.slow]

STEPS = 300
SEED = 20261202


def _write_files(folder: Path) -> tuple[list, list]:
    """Small good files and a set of bad ones; returns (good, bad) paths."""
    rng = np.random.default_rng(SEED)
    labels = rng.integers(0, 2, 160)
    two = rng.normal(np.array([20.0, 30.0])[labels], 2.0)
    one = rng.lognormal(1.0, 0.4, 160)
    lines = ["id,length_mm,mass_g,note"]
    for i, (a, b) in enumerate(zip(two, one)):
        cell = "n/a" if i % 23 == 5 else f"{a:.2f}"
        lines.append(f"{i + 1},{cell},{b:.3f},net {i % 3}")
    good_csv = folder / "nets.csv"
    good_csv.write_text("\n".join(lines) + "\n", encoding="utf-8")
    good_txt = folder / "sizes.txt"
    good_txt.write_text("\n".join(f"{v:.3f}" for v in rng.normal(5.0, 1.0, 120)) + "\n", encoding="utf-8")
    tally = folder / "tally.csv"
    tally.write_text("length_cm,count\n" + "\n".join(f"{L},{c}" for L, c in
                                                     zip(range(10, 30), rng.integers(1, 30, 20))) + "\n",
                     encoding="utf-8")
    empty = folder / "empty.csv"
    empty.write_bytes(b"")
    binary = folder / "blob.csv"
    binary.write_bytes(bytes(rng.integers(0, 256, 1500, dtype=np.uint8)))
    words = folder / "words.csv"
    words.write_text("remark\nclear\nmurky\n", encoding="utf-8")
    truncated = folder / "cut.cdesk"
    truncated.write_text('{"format": "clusterdesk-analysis", "format_ver', encoding="utf-8")
    newer = folder / "newer.cdesk"
    newer.write_text(json.dumps({"format": "clusterdesk-analysis", "format_version": 999,
                                 "source": {"path": str(good_csv), "sha256": "0"}, "data": {},
                                 "settings": {}, "choice": None}), encoding="utf-8")
    stale_source = folder / "stale.csv"
    stale_source.write_text(good_txt.read_text(encoding="utf-8"), encoding="utf-8")
    analysis = Analysis.from_file(stale_source, settings=ScanSettings(kmax=2, restarts=1))
    analysis.run_scan()
    stale = analysis.save(folder / "stale.cdesk")
    with open(stale_source, "a", encoding="utf-8") as handle:
        handle.write("7.5\n")  # changed since saved: the window asks whether to open it anyway
    return [good_csv, good_txt, tally], [empty, binary, words, truncated, newer, stale, folder / "missing.csv"]


class Monkey:
    """Random user actions on one window; every choice comes from one seeded generator."""

    def __init__(self, qtbot, window, folder: Path):
        self.qtbot, self.w, self.folder = qtbot, window, folder
        self.rng = random.Random(SEED)
        self.good, self.bad = _write_files(folder)
        self.saved: list[Path] = []
        self.count = 0
        out = folder / "out"
        out.mkdir()
        window.ask_save_path = lambda caption, suggested, filters: str(out / f"{self.count}-{suggested}")
        window.ask_folder = lambda caption: str(out)
        window.ask_open_path = lambda: str(self.rng.choice(self.good))
        self.actions = [
            (6, self.open_good), (3, self.open_bad), (2, self.paste), (5, self.change_settings),
            (4, self.change_data), (8, self.fit), (3, self.fit_and_cancel), (6, self.choose),
            (2, self.intervals), (2, self.export_tables), (2, self.export_plot), (1, self.export_report),
            (2, self.save), (2, self.reopen), (2, self.poke_while_busy), (1, self.excluded_rows),
            (2, self.switch_plot), (2, self.screen_folder), (2, self.open_screened_row),
        ]

    # ------------------------------------------------------------------ actions
    def open_good(self):
        if self.rng.random() < 0.5:
            self.w.open_action.trigger()  # through the (replaced) open dialog
        else:
            self.w.open_path(str(self.rng.choice(self.good)))

    def open_bad(self):
        self.w.open_path(str(self.rng.choice(self.bad)))

    def paste(self):
        texts = ["", "  ", "1\n2\n3\n2.5\n1.5\n2\n3.1\n", "abc\ndef\n",
                 "\n".join(f"{v:.2f}" for v in np.random.default_rng(self.count).normal(0, 1, 40))]
        self.w.read_text(self.rng.choice(texts), "the clipboard")

    def change_settings(self):
        p = self.w.fit_panel
        p.kmax.setValue(self.rng.randint(1, 3))
        p.kmin.setValue(self.rng.randint(1, 3))
        p.widths.setCurrentIndex(self.rng.randrange(p.widths.count()))
        p.restarts.setValue(self.rng.randint(1, 2))
        p.seed.setValue(self.rng.randint(0, 99))

    def change_data(self):
        panel = self.w.data_panel
        if not panel.isEnabled():
            return
        what = self.rng.choice(["column", "scale", "range", "junk range"])
        if what == "column" and panel.columns.rowCount():
            panel.columns.selectRow(self.rng.randrange(panel.columns.rowCount()))
        elif what == "scale":
            panel.scale.setCurrentIndex(self.rng.randrange(panel.scale.count()))
        else:
            edit = self.rng.choice([panel.low, panel.high])
            edit.setText(self.rng.choice(["", "abc", "5", "25", "1e9", "-3"]) if what == "range"
                         else self.rng.choice(["12,5.3", "--", "∞"]))
            edit.editingFinished.emit()

    def fit(self):
        self.w.fit_panel.fit_button.click()

    def fit_and_cancel(self):
        p = self.w.fit_panel
        if not p.fit_button.isEnabled():
            return
        p.fit_button.click()
        if self.rng.random() < 0.5:
            self.qtbot.wait(self.rng.randint(0, 30))
        self.w.cancel_action.trigger()

    def choose(self):
        ranking = self.w.ranking
        rows = ranking.proxy.rowCount()
        if rows and ranking.isEnabled():
            ranking.view.selectRow(self.rng.randrange(rows))

    def intervals(self):
        c = self.w.components
        c.replicates.setValue(10)
        if self.w.intervals_action.isEnabled():
            self.w.intervals_action.trigger()
            if self.rng.random() < 0.3:
                self.w.cancel_button.click()

    def export_tables(self):
        self.w.export_tables_action.trigger()

    def export_plot(self):
        self.rng.choice([self.w.export_png_action, self.w.export_svg_action]).trigger()

    def export_report(self):
        self.w.export_report_action.trigger()

    def save(self):
        if self.w.save_as_action.isEnabled():
            self.w.save_as_action.trigger()
            if self.w.saved_path:
                self.saved.append(Path(self.w.saved_path))

    def reopen(self):
        if self.saved:
            self.w.open_path(str(self.rng.choice(self.saved)))

    def poke_while_busy(self):
        """Start a fit, then try things that must wait: they are refused, nothing breaks."""
        if not self.w.fit_panel.fit_button.isEnabled():
            return
        self.w.fit_panel.fit_button.click()
        before = self.w.analysis
        self.w.open_path(str(self.good[0]))
        self.w.read_text("1\n2\n3\n")
        self.w.fit_from_panel()
        assert self.w.analysis is before  # nothing replaced the analysis while the fit ran

    def excluded_rows(self):
        if self.w.excluded_action.isEnabled():
            self.w.excluded_action.trigger()
            self.w._excluded_dialog.close()

    def screen_folder(self):
        """Screen the folder of good and bad files (small settings, one worker); sometimes cancel."""
        page = self.w.screening
        self.w.screening_action.trigger()
        page.set_inputs([self.folder])
        page.set_settings(ScanSettings(kmin=1, kmax=self.rng.randint(1, 3), widths="both", restarts=1,
                                       seed=self.rng.randint(0, 9)))
        page.workers.setValue(1)
        page.start_button.click()
        if self.rng.random() < 0.3:
            self.qtbot.wait(self.rng.randint(0, 50))
            page.cancel_button.click()
        self.qtbot.waitUntil(lambda: not page.busy, timeout=60_000)
        if page.result is not None:  # finished: the table holds every row of the run
            assert page.table_model.rowCount() == len(page.result.rows)
        if self.rng.random() < 0.5:
            page.back_button.click()

    def open_screened_row(self):
        page = self.w.screening
        rows = page.proxy.rowCount()
        if not rows:
            return
        self.w.screening_action.trigger()
        page.view.selectRow(self.rng.randrange(rows))
        page.open_button.click()  # disabled for rows that cannot be opened
        self.qtbot.waitUntil(lambda: not self.w.runner.busy, timeout=60_000)
        self.qtbot.wait(5)  # the fit starts on the next turn of the event loop

    def switch_plot(self):
        self.w.plots.setCurrentIndex(self.rng.randrange(self.w.plots.count()))

    # ------------------------------------------------------------------ walking
    def wait_idle(self):
        w = self.w
        self.qtbot.waitUntil(lambda: not w.runner.busy and not w.view_jobs.busy and not w.screening.busy,
                             timeout=60_000)

    def step(self):
        self.count += 1
        weights = [weight for weight, _ in self.actions]
        action = self.rng.choices([a for _, a in self.actions], weights)[0]
        action()
        self.wait_idle()
        box = self.w.analysis_file_box
        if box is not None and box.isVisible():  # answer the box like a user: any of its buttons
            self.rng.choice(box.buttons()).click()
            self.wait_idle()
        return action.__name__


def check_consistent(w, where: str) -> None:
    """Every view shows what the analysis holds; no message speaks of a defect."""
    a = w.analysis
    text = w.message_bar.text()
    assert "unexpected" not in text.lower(), f"{where}: {text}"
    assert not w.runner.busy and w.progress.isHidden() and w.cancel_button.isHidden(), where
    loaded = a is not None and a.measurements is not None
    assert w.fit_action.isEnabled() == loaded and w.open_action.isEnabled(), where
    ranking = w.ranking.model
    if not loaded or a.scan is None:
        assert ranking.rowCount() == 0, where
        assert not w.save_action.isEnabled() and not w.export_tables_action.isEnabled(), where
    if loaded:
        m = a.measurements
        assert w.data_label.text().startswith(f"{m.n:,} values"), where
        source = "pasted values" if a.source_path is None else Path(a.source_path).name
        assert w.windowTitle() == f"ClusterDesk – {source}", where
    if loaded and a.scan is not None:
        keys = [ranking.key(r) for r in range(ranking.rowCount())]
        assert keys == [(r.k, r.widths) for r in a.scan.ranking], where
        chosen = (a.chosen.k, a.chosen.widths)
        marked = [ranking.key(r) for r in range(ranking.rowCount()) if "chosen" in ranking.raw(r, 0)]
        assert marked == [chosen], where
        selected = w.ranking.view.selectionModel().selectedRows()
        assert [ranking.key(w.ranking.proxy.mapToSource(i).row()) for i in selected] == [chosen], where
        assert model_words(*chosen) in w.components.heading.text(), where
        assert w.save_action.isEnabled(), where


def test_a_few_hundred_random_actions_leave_the_window_whole_and_consistent(qtbot, window, tmp_path,
                                                                            monkeypatch):
    escaped = []
    monkeypatch.setattr(sys, "excepthook", lambda kind, exc, tb: escaped.append(exc))
    monkey = Monkey(qtbot, window, tmp_path)
    outcomes = []
    window.runner.finished.connect(lambda outcome: outcomes.append(outcome.status))
    done = []
    for _ in range(STEPS):
        name = monkey.step()
        done.append(name)
        where = f"step {len(done)} ({name}); before: {done[-6:-1]}"
        assert not escaped, f"{where}: {escaped!r}"
        check_consistent(window, where)
    # The walk really went through the main paths (same seed, same walk).
    assert {"fit", "choose", "save", "reopen", "open_bad", "fit_and_cancel", "screen_folder",
            "open_screened_row"} <= set(done)
    assert monkey.saved and window.analysis is not None
    assert {"done", "failed", "cancelled"} <= set(outcomes)  # work finished, failed on bad input, was stopped
