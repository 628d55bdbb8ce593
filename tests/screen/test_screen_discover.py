"""Inputs -> files, and a file's listing -> column tasks and rows."""

from __future__ import annotations

import os

import pytest

from clusterdesk.errors import InputError
from clusterdesk.screen.discover import column_matcher, expand_inputs, plan_file
from clusterdesk.screen.filecache import ColumnInfo, FileListing, SheetListing
from clusterdesk.screen.tasks import ColumnTask, column_seed


def _touch(path, text="v\n1.5\n2.5\n"):
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def test_folder_is_searched_recursively_sorted_and_skips_hidden_unknown_and_excluded(tmp_path):
    for name in ("b.csv", "a.tsv", "sub/c.xlsx", "sub/deeper/d.txt", ".hidden.csv", "notes.md",
                 ".git/e.csv", "out/summary.csv"):
        _touch(tmp_path / name)
    refs = expand_inputs([tmp_path], exclude=[tmp_path / "out"])
    shown = [os.path.relpath(r.file, tmp_path) for r in refs]
    assert shown == ["a.tsv", "b.csv", os.path.join("sub", "c.xlsx"), os.path.join("sub", "deeper", "d.txt")]
    assert all(not r.problem and os.path.isabs(r.path) for r in refs)


def test_explicit_file_taken_whatever_its_name_and_duplicates_keep_first_place(tmp_path):
    md = _touch(tmp_path / "notes.md")
    csv = _touch(tmp_path / "x.csv")
    refs = expand_inputs([md, tmp_path, csv])
    assert [os.path.basename(r.file) for r in refs] == ["notes.md", "x.csv"]


def test_glob_patterns_and_inputs_that_give_no_file(tmp_path):
    _touch(tmp_path / "p1" / "a.csv")
    _touch(tmp_path / "p2" / "deep" / "b.csv")
    (tmp_path / "emptydir").mkdir()
    refs = expand_inputs([str(tmp_path / "**" / "*.csv"), str(tmp_path / "missing.csv"),
                          str(tmp_path / "*.nothing"), tmp_path / "emptydir"])
    found = [os.path.basename(r.file) for r in refs if not r.problem]
    assert found == ["a.csv", "b.csv"]
    problems = [r.problem for r in refs if r.problem]
    assert len(problems) == 3
    assert "no file or folder" in problems[0]
    assert "matches no file" in problems[1]
    assert "holds no data file" in problems[2]


def test_column_patterns_wildcards_ignore_case_and_regular_expressions():
    match = column_matcher(["LENGTH*", "re:^dia(meter)?_"])
    assert match("length_mm") and match("Length") and match("dia_mm") and match("DIAMETER_um")
    assert not match("weight_g") and not match("xlength")
    assert column_matcher(None) is None and column_matcher([]) is None
    with pytest.raises(InputError, match="not a valid regular expression"):
        column_matcher(["re:(unclosed"])
    with pytest.raises(InputError, match="empty column pattern"):
        column_matcher([""])


def _listing():
    cols = (ColumnInfo(0, "id", 10, 0, 0, True, True, ("1", "2")),
            ColumnInfo(1, "length_mm", 10, 0, 0, True, False, ("9.5",)),
            ColumnInfo(2, "site", 0, 10, 0, False, False, ("weir",)),
            ColumnInfo(3, "note", 2, 8, 0, False, False, ("a",)))
    return FileListing(path="/d/f.xlsx", sha256="ab" * 32,
                       sheets=(SheetListing("s1", cols), SheetListing("broken", error="Sheet 'broken' is empty.")))


def test_plan_default_screens_numeric_columns_and_gives_reasons_for_the_rest():
    from clusterdesk.screen.discover import FileRef

    ref = FileRef(file="f.xlsx", path="/d/f.xlsx")
    entries = plan_file(ref, _listing(), None, seed=3)
    kinds = [(type(e).__name__, getattr(e, "column", ""), getattr(e, "status", "task")) for e in entries]
    assert kinds == [("ScreenRow", "id", "skipped"), ("ColumnTask", "length_mm", "task"),
                     ("ScreenRow", "site", "skipped"), ("ScreenRow", "note", "skipped"),
                     ("ScreenRow", "", "failed")]
    task = entries[1]
    assert isinstance(task, ColumnTask)
    assert task.seed == column_seed(3, "ab" * 32, "s1", 1, "length_mm")
    assert "running row number" in entries[0].reason
    assert "no numbers" in entries[2].reason and "weir" in entries[2].reason
    assert entries[4].sheet == "broken" and "empty" in entries[4].reason


def test_plan_with_patterns_fails_a_named_text_column_and_flags_sheets_without_match():
    from clusterdesk.screen.discover import FileRef

    ref = FileRef(file="f.xlsx", path="/d/f.xlsx")
    entries = plan_file(ref, _listing(), column_matcher(["site", "id"]), seed=3)
    assert [(getattr(e, "column", None), getattr(e, "status", "task")) for e in entries] == [
        ("id", "task"), ("site", "failed"), ("", "failed")]
    listing = FileListing(path="/d/g.csv", sha256="cd" * 32, sheets=(SheetListing(None, _listing().sheets[0].columns),))
    none = plan_file(FileRef(file="g.csv", path="/d/g.csv"), listing, column_matcher(["nothing*"]), seed=3)
    assert len(none) == 1 and none[0].status == "skipped" and "No column matches" in none[0].reason


def test_unreadable_file_gives_one_failed_row():
    from clusterdesk.screen.discover import FileRef

    rows = plan_file(FileRef(file="x.csv", path="/x.csv"), FileListing(path="/x.csv", error="It is empty."),
                     None, seed=0)
    assert len(rows) == 1 and rows[0].status == "failed" and rows[0].reason == "It is empty."
