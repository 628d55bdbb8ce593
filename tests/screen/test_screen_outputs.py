"""summary.csv, overview.html and the progress line."""

from __future__ import annotations

import csv
import io
import re
from html.parser import HTMLParser

import numpy as np
import pytest

from clusterdesk.screen.overview import _PAD, _W, density_svg, render_overview
from clusterdesk.screen.progress import ScreenProgress, TerminalProgress, format_duration
from clusterdesk.screen.summary import MAX_COMPONENT_COLUMNS, summary_cells, summary_header
from clusterdesk.screen.tasks import ScreenRow

from screen_helpers import SETTINGS


def test_summary_csv_holds_components_as_text_and_as_numbers(reference_run):
    result, out = reference_run
    with open(out / "summary.csv", newline="", encoding="utf-8") as handle:
        records = list(csv.DictReader(handle))
    diameter = next(r for r in records if r["column"] == "diameter_mm")
    row = next(r for r in result.rows if r.column == "diameter_mm")
    assert diameter["status"] == "ok" and int(diameter["best_k"]) == row.best_k == 3
    means = [float(v) for v in diameter["means"].split(";")]
    assert means == list(row.means)  # shortest round-trip text: exact
    assert [float(diameter[f"mean_{j}"]) for j in (1, 2, 3)] == means
    assert diameter["mean_4"] == "" and diameter["evidence"] in ("weak", "positive", "strong", "very strong")
    assert diameter["treatment"] == "exact values" and int(diameter["seed"]) == row.seed
    empty = next(r for r in records if r["file"].endswith("empty.csv"))
    assert empty["status"] == "failed" and "empty" in empty["reason"]


def test_summary_cells_follow_the_header_and_neutralise_formulas(tmp_path):
    from clusterdesk.screen.summary import write_summary

    row = ScreenRow(file="=cmd.csv", sheet="", column="@x", position=0, status="ok", weights=(1.0,),
                    means=(-2.5,), sds=(1.0,))
    assert len(summary_cells(row)) == len(summary_header())
    write_summary(tmp_path / "s.csv", [row])
    record = next(csv.DictReader(open(tmp_path / "s.csv", newline="", encoding="utf-8")))
    # OWASP "CSV Injection": text starting with = + - @ is prefixed with a quote.
    assert record["file"] == "'=cmd.csv" and record["column"] == "'@x" and record["means"] == "'-2.5"
    assert record["mean_1"] == "-2.5" and len([h for h in summary_header() if h.startswith("sd_")]) == \
        MAX_COMPONENT_COLUMNS


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


def test_overview_is_self_contained_with_a_plot_per_screened_column(reference_run):
    result, out = reference_run
    text = (out / "overview.html").read_text(encoding="utf-8")
    parser = _Collect()
    parser.feed(text)
    tags = [t for t, _ in parser.tags]
    assert "script" not in tags and "link" not in tags and "img" not in tags
    assert not re.search(r'(src|href)="(https?:)?//', text)
    assert tags.count("svg") == result.counts["ok"]
    assert text.count('<tr class="failed">') == result.counts["failed"]
    assert "not a validated" in text  # the caution


def test_density_plot_draws_the_histogram_and_the_mixture():
    rng = np.random.default_rng(3)
    x = np.concatenate([rng.normal(0, 1, 400), rng.normal(6, 1, 600)])
    counts, edges = np.histogram(x, bins=40)
    row = ScreenRow(file="f", sheet="", column="c", position=0, status="ok", rows_kept=1000, best_k=2,
                    best_widths="separate", weights=(0.4, 0.6), means=(0.0, 6.0), sds=(1.0, 1.0),
                    histogram=(float(x.min()), float(x.max()), *map(int, counts)))
    svg = density_svg(row)
    assert svg.count("<rect") == int(np.count_nonzero(counts))
    assert svg.count("<polyline") == 3  # two components and the mixture
    # The mixture curve peaks near the taller component's mean (6): x of the lowest y point.
    mixture = re.findall(r'stroke="#000"[^>]*points="([^"]+)"', svg)[0]
    pts = np.array([[float(v) for v in p.split(",")] for p in mixture.split()])
    peak_x = pts[np.argmin(pts[:, 1]), 0]
    to_value = row.histogram[0] + (peak_x - _PAD) * (row.histogram[1] - row.histogram[0]) / (_W - 2 * _PAD)
    assert to_value == pytest.approx(6.0, abs=0.4)
    assert density_svg(ScreenRow(file="f", sheet="", column="c", position=0, status="failed")) == ""


def test_render_overview_escapes_names():
    row = ScreenRow(file="<b>f</b>", sheet="", column="c&d", position=0, status="skipped", reason="<x>")
    text = render_overview([row], SETTINGS)
    assert "<b>f</b>" not in text and "&lt;b&gt;f&lt;/b&gt;" in text and "c&amp;d" in text


def test_progress_line_and_durations():
    assert format_duration(None) == "estimating"
    assert format_duration(42.4) == "42 s" and format_duration(200) == "3 min 20 s"
    assert format_duration(7500) == "2 h 05 min"
    stream = io.StringIO()
    bar = TerminalProgress(stream, min_interval=0)
    bar(ScreenProgress(done=25, total=100, computed=20, failed=2, files_to_list=1, elapsed=10.0,
                       seconds_left=37.5))
    bar.close()
    text = stream.getvalue()
    assert text.startswith("\r") and text.endswith("\n")
    assert "25/100+ columns" in text and "2 failed" in text and "2.00/s" in text and "38 s left" in text
    assert "25%" in text
    assert len(bar.line(ScreenProgress(1, 2, 1, 0, 0, 1.0, 1.0), columns=40)) <= 40
