"""The HTML report: one self-contained file holding every section."""

from __future__ import annotations

import base64
import hashlib
import html
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from clusterdesk.analysis import Analysis, DataChoice, ScanSettings
from clusterdesk.report.html import write_report
from clusterdesk.report.tables import CAUTION

SAMPLES = Path(__file__).resolve().parents[2] / "sample_data"


class _Collector(HTMLParser):
    def __init__(self):
        super().__init__()
        self.headings, self.sources, self.links, self._in_h = [], [], [], False

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag in ("h1", "h2", "h3"):
            self._in_h = True
        if "src" in attrs:
            self.sources.append(attrs["src"])
        if tag in ("link", "script"):
            self.links.append(tag)

    def handle_endtag(self, tag):
        if tag in ("h1", "h2", "h3"):
            self._in_h = False

    def handle_data(self, data):
        if self._in_h:
            self.headings.append(data.strip())


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    path = SAMPLES / "powder_diameters.csv"
    analysis = Analysis.from_file(path, DataChoice(column="diameter_um", scale="ln"),
                                  ScanSettings(kmin=1, kmax=3, restarts=5, seed=1))
    analysis.run_scan()
    analysis.run_intervals(replicates=40)
    out = write_report(analysis, tmp_path_factory.mktemp("r") / "report.html")
    return analysis, out.read_text(encoding="utf-8"), path


def test_report_holds_every_section(report):
    analysis, text, path = report
    parser = _Collector()
    parser.feed(text)
    for heading in ("Data", "Settings", "Models ranked by BIC", "Figures", "Fit check",
                    "About decisions"):
        assert heading in parser.headings
    assert any(h.startswith("Chosen model: 2 components") for h in parser.headings)
    assert any(h.startswith("Bootstrap intervals") for h in parser.headings)
    # The data source is identified by name and SHA-256 of its bytes.
    assert path.name in text
    assert hashlib.sha256(path.read_bytes()).hexdigest() in text
    assert CAUTION in text
    # The bootstrap's notes (how the replicates were drawn, ...) stand under its table.
    for note in analysis.intervals.notes:
        if "not a validated" not in note:
            assert html.escape(note) in text


def test_report_is_self_contained(report):
    _, text, _ = report
    parser = _Collector()
    parser.feed(text)
    assert parser.links == []  # no external stylesheet or script
    assert len(parser.sources) == 3  # histogram, criteria, Q-Q
    for src in parser.sources:
        assert src.startswith("data:image/png;base64,")
        png = base64.b64decode(src.split(",", 1)[1])
        assert png[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948)
    assert not re.search(r"https?://", text)


def test_report_numbers_are_the_analysis_numbers(report):
    analysis, text, _ = report
    mix = analysis.chosen.mixture
    for value in (*mix.weights, *mix.means):
        assert f"{value:.6g}" in text
