"""The per-process file cache cleans a column exactly as clusterdesk.io.read_measurements does."""

from __future__ import annotations

import numpy as np
import pytest

from clusterdesk.errors import InputError
from clusterdesk.io import read_measurements
from clusterdesk.screen import filecache


def _compare(path, sheet, listing_sheet):
    for info in listing_sheet.columns:
        if info.numeric_count == 0:
            continue
        # Independent route: the public reader, one column at a time.
        m = read_measurements(path, column=info.position, sheet=sheet)
        got = filecache.column_values(str(path), _sha(path), sheet, info.position)
        np.testing.assert_array_equal(got.values, m.values)
        assert got.rows_read == m.summary.rows_read
        assert got.rows_kept == m.summary.rows_kept
        assert got.excluded == dict(m.summary.excluded)
        assert got.resolution == m.resolution


def _sha(path):
    import hashlib

    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize("name", ["good.csv", "gauges.xlsx", "nested/big.csv", "tiny.csv"])
def test_values_equal_read_measurements(inputs, name):
    _, files = inputs
    path = files[name]
    filecache.clear_cache()
    listing = filecache.list_file(str(path))
    assert listing.error == "" and listing.sha256 == _sha(path)
    for sheet in listing.sheets:
        if not sheet.error:
            _compare(path, sheet.name, sheet)


def test_listing_of_a_workbook_has_every_sheet_and_the_empty_one_failed(inputs):
    _, files = inputs
    listing = filecache.list_file(str(files["gauges.xlsx"]))
    assert [s.name for s in listing.sheets] == ["north", "south", "empty"]
    assert [bool(s.error) for s in listing.sheets] == [False, False, True]
    assert [c.name for c in listing.sheets[0].columns] == ["gauge_a_mm", "gauge_b_mm"]


@pytest.mark.parametrize("name, words", [("empty.csv", "empty"), ("blob.dat", "binary")])
def test_unreadable_files_are_listed_with_the_reason(inputs, name, words):
    _, files = inputs
    listing = filecache.list_file(str(files[name]))
    assert words in listing.error and listing.sheets == ()


def test_missing_file_and_changed_file(tmp_path):
    assert "no file" in filecache.list_file(str(tmp_path / "gone.csv")).error
    path = tmp_path / "v.csv"
    path.write_text("v\n1.5\n2.5\n3.5\n", encoding="utf-8")
    listing = filecache.list_file(str(path))
    path.write_text("v\n9.5\n8.5\n7.5\n6.5\n", encoding="utf-8")
    with pytest.raises(InputError, match="changed"):
        filecache.column_values(str(path), listing.sha256, None, 0)


def test_cache_keeps_a_bounded_number_of_files(tmp_path):
    filecache.clear_cache()
    for i in range(filecache.CACHE_FILES + 2):
        path = tmp_path / f"f{i}.csv"
        path.write_text(f"v\n{i}.5\n{i}.25\n", encoding="utf-8")
        filecache.list_file(str(path))
    assert len(filecache._CACHE) == filecache.CACHE_FILES
