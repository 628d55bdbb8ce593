"""The journal: rows and listings survive the round trip; damaged or foreign files are handled."""

from __future__ import annotations

import json
import math

import pytest

from clusterdesk.analysis import ScanSettings
from clusterdesk.errors import InputError
from clusterdesk.screen.filecache import ColumnInfo, FileListing, SheetListing
from clusterdesk.screen.journal import Journal, read_journal, row_from_dict, row_to_dict, settings_fingerprint
from clusterdesk.screen.tasks import ScreenRow


def _row():
    return ScreenRow(file="a.csv", sheet="", column="x", position=2, status="ok", rows_read=10, rows_kept=9,
                     weights=(0.25, 0.75), means=(-1.0000000000000002, 3.5), sds=(0.1, math.pi),
                     notes=("a note",), seed=2 ** 62 + 1, bic=123.456789012345678, histogram=(0.0, 1.0, 4, 5))


def test_row_round_trip_is_exact():
    row = _row()
    back = row_from_dict(json.loads(json.dumps(row_to_dict(row))))
    assert back == row


def test_journal_written_line_by_line_and_read_back(tmp_path):
    path = tmp_path / "j.jsonl"
    settings = ScanSettings(kmax=3)
    fp = settings_fingerprint(settings)
    listing = FileListing(path="/d/a.csv", sha256="a" * 64,
                          sheets=(SheetListing(None, (ColumnInfo(0, "x", 3, 0, 0, True, False, ("1",)),)),))
    journal = Journal(path, fp, settings, fresh=True)
    journal.add_listing(listing)
    journal.add_row("key1", "a" * 64, _row())
    # written and flushed before close: another reader sees both lines now
    now = read_journal(path)
    assert now.listings[("/d/a.csv", "a" * 64)] == listing
    assert now.rows[("key1", "a" * 64, fp)] == _row() and not now.finished
    journal.finish({"ok": 1})
    journal.close()
    assert read_journal(path).finished
    assert settings_fingerprint(ScanSettings(kmax=4)) != fp


def test_cut_line_is_counted_and_mended_before_appending(tmp_path):
    path = tmp_path / "j.jsonl"
    settings = ScanSettings()
    fp = settings_fingerprint(settings)
    journal = Journal(path, fp, settings, fresh=True)
    journal.add_row("k", "s" * 64, _row())
    journal.close()
    with open(path, "a", encoding="utf-8") as handle:
        handle.write('{"kind": "row", "ke')
    assert read_journal(path).unreadable_lines == 1
    again = Journal(path, fp, settings, fresh=False)
    again.add_row("k2", "s" * 64, _row())
    again.close()
    contents = read_journal(path)
    assert contents.unreadable_lines == 1 and len(contents.rows) == 2


def test_a_foreign_file_is_refused_and_a_missing_one_is_empty(tmp_path):
    other = tmp_path / "other.jsonl"
    other.write_text('{"kind": "start", "format": "something else"}\n', encoding="utf-8")
    with pytest.raises(InputError, match="not a ClusterDesk screening journal"):
        read_journal(other)
    for foreign in (b"site,length\n1,2\n", b"\xff\xfe\x00binary\x00\n", b"[1, 2]\n"):
        other.write_bytes(foreign)  # not JSON, not text, JSON of another shape: refused, never overwritten
        with pytest.raises(InputError, match="not a ClusterDesk screening journal"):
            read_journal(other)
    assert read_journal(tmp_path / "none.jsonl").row_count() == 0
