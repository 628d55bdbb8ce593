"""Saved analyses (.cdesk) under abuse: truncated, malformed, newer, edited, or pointing at a missing or changed source.

Each problem must give an InputError (FileFormatError for the file itself)
with one sentence that names the problem and what to try, and opening must
never write: the analysis file and its source keep their bytes. The checks
live in clusterdesk/analysis.py and clusterdesk/saved_layout.py.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest

from clusterdesk.analysis import Analysis, ScanSettings, SourceChangedError
from clusterdesk.errors import FileFormatError, InputError
from test_analysis import lake  # noqa: F401 (a fixture: a copy of a sample file)

SETTINGS = ScanSettings(kmin=1, kmax=2, widths="both", restarts=2, seed=5)


@pytest.fixture
def saved(lake, tmp_path):  # noqa: F811
    """A saved analysis of a copy of a sample file (choice: 2 components, shared width); (analysis path, source)."""
    source = lake
    analysis = Analysis.from_file(source, settings=SETTINGS)
    analysis.run_scan()
    analysis.choose(2, "shared")
    return analysis.save(tmp_path / "study.cdesk"), source


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _one_sentence(message: str) -> None:
    """A message of one sentence (ends once, with a full stop) that says what to try."""
    body = message.rstrip()
    assert body.endswith(".") and ". " not in body.replace("e.g. ", ""), message
    assert any(word in body.lower() for word in ("open", "put", "update", "check")), message


def _refused(path: Path, source: Path, error=FileFormatError, match=None, **options):
    before = (_digest(path) if path.is_file() else None, _digest(source))
    with pytest.raises(error, match=match) as caught:
        Analysis.open(path, **options)
    assert (_digest(path) if path.is_file() else None, _digest(source)) == before  # nothing written
    _one_sentence(str(caught.value))
    return str(caught.value)


def test_a_saved_file_cut_short_anywhere_is_refused(saved):
    path, source = saved
    text = path.read_text(encoding="utf-8")
    for cut in range(0, len(text) - 2, max(1, len(text) // 25)):
        path.write_text(text[:cut], encoding="utf-8")
        message = _refused(path, source)
        assert path.name in message


def test_bytes_that_are_not_text_or_not_json(saved, tmp_path):
    path, source = saved
    path.write_bytes(b"\xff\xfe\x00garbage\x80")
    assert "not a readable ClusterDesk analysis" in _refused(path, source)
    path.write_text("format = clusterdesk-analysis\n", encoding="utf-8")
    assert "not a readable ClusterDesk analysis" in _refused(path, source)
    folder = tmp_path / "folder.cdesk"
    folder.mkdir()
    _refused(folder, source)


@pytest.mark.parametrize("edit, words", [
    (lambda d: d.update(format_version="1"), "not a ClusterDesk analysis"),
    (lambda d: d.update(source=[]), "not a ClusterDesk analysis"),
    (lambda d: d["source"].update(path=12), "not a ClusterDesk analysis"),
    (lambda d: d.update(data="all"), "not a ClusterDesk analysis"),
    (lambda d: d.update(choice=[2]), "not a ClusterDesk analysis"),
    (lambda d: d.update(choice=["two", "shared"]), "not a ClusterDesk analysis"),
    (lambda d: d.update(choice=[2, "wide"]), "not a ClusterDesk analysis"),
    (lambda d: d["settings"].update(kmax="six"), "kmax is 'six'"),
    (lambda d: d["settings"].update(kmin=0), "kmin is 0"),
    (lambda d: d["settings"].update(kmin=5, kmax=2), "larger than kmax"),
    (lambda d: d["settings"].update(seed=-1), "seed is -1"),
    (lambda d: d["settings"].update(restarts=True), "restarts is True"),
    (lambda d: d["settings"].update(widths="wide"), "widths is 'wide'"),
    (lambda d: d["settings"].update(treatment="rounded"), "treatment is 'rounded'"),
    (lambda d: d["settings"].update(value_at="start"), "value_at is 'start'"),
    (lambda d: d["settings"].update(resolution=-0.1), "resolution is -0.1"),
    (lambda d: d["settings"].update(resolution="0.1"), "resolution is '0.1'"),
    (lambda d: d["data"].update(scale="log2"), "scale is 'log2'"),
    (lambda d: d["data"].update(low="ten"), "low is 'ten'"),
    (lambda d: d["data"].update(column=[1]), "column is [1]"),
])
def test_edited_fields_are_refused_with_what_is_wrong(saved, edit, words):
    path, source = saved
    content = json.loads(path.read_text(encoding="utf-8"))
    edit(content)
    path.write_text(json.dumps(content), encoding="utf-8")
    assert words in _refused(path, source)


def test_a_chosen_model_outside_the_fitted_range_is_refused(saved):
    path, source = saved
    content = json.loads(path.read_text(encoding="utf-8"))
    content["choice"] = [5, "separate"]  # kmax is 2
    path.write_text(json.dumps(content), encoding="utf-8")
    assert "5 components" in _refused(path, source)


def test_from_a_newer_version(saved):
    path, source = saved
    content = json.loads(path.read_text(encoding="utf-8"))
    content.update(format_version=content["format_version"] + 1, software_version="99.0")
    path.write_text(json.dumps(content), encoding="utf-8")
    message = _refused(path, source, match="newer")
    assert "99.0" in message and "update ClusterDesk" in message


def test_a_missing_source(saved):
    path, source = saved
    moved = source.with_name("moved.csv")
    source.rename(moved)
    with pytest.raises(InputError, match="missing") as caught:
        Analysis.open(path)
    _one_sentence(str(caught.value))
    assert str(source) in str(caught.value)


def test_a_changed_source_is_refused_unless_accepted(saved):
    path, source = saved
    with open(source, "a", encoding="utf-8") as handle:
        handle.write("F9999,N1,150\n")
    message = _refused(path, source, error=SourceChangedError)
    assert "lake.csv" in message and "study.cdesk" in message
    opened = Analysis.open(path, accept_changed_source=True)
    assert opened.source_changed and opened.analysis.choice == (2, "shared")


def test_a_huge_file_or_a_pipe_is_refused_without_reading_it(saved, tmp_path):
    import os

    path, source = saved
    path.write_bytes(path.read_bytes() + b" " * (2 << 20))  # valid JSON, padded past the limit
    assert "far more than a saved analysis" in _refused(path, source)
    if hasattr(os, "mkfifo"):
        pipe = tmp_path / "pipe.cdesk"
        os.mkfifo(pipe)  # reading it would wait for a writer for ever
        assert "not a regular file" in _refused(pipe, source)
