"""Helpers shared by the io tests: writing fixture files and comparing two reads."""

from __future__ import annotations

import dataclasses
import io

import numpy as np
import openpyxl
import pytest


def xlsx_bytes(rows_by_sheet: dict, merge: str | None = None) -> bytes:
    """An XLSX workbook written by openpyxl: {sheet name: rows}; ``merge`` merges a range on each sheet."""
    book = openpyxl.Workbook()
    book.remove(book.active)
    for name, rows in rows_by_sheet.items():
        sheet = book.create_sheet(name)
        for row in rows:
            sheet.append(row)
        if merge:
            sheet.merge_cells(merge)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


@pytest.fixture
def make_xlsx():
    """The :func:`xlsx_bytes` builder, for tests."""
    return xlsx_bytes


@pytest.fixture
def write(tmp_path):
    """Write bytes (or text as UTF-8) to a file in the test's temporary folder and return its path."""

    def _write(name: str, content) -> object:
        path = tmp_path / name
        path.write_bytes(content.encode("utf-8") if isinstance(content, str) else content)
        return path

    return _write


def _same_array(a, b) -> bool:
    if a is None or b is None:
        return a is None and b is None
    if a.dtype != b.dtype or a.shape != b.shape:
        return False
    if a.dtype.kind == "f":
        return bool(np.array_equal(a, b, equal_nan=True) and np.array_equal(np.signbit(a), np.signbit(b)))
    return bool(np.array_equal(a, b))


def differences(a, b) -> list[str]:
    """Fields in which two Measurements differ (the parser used is not compared)."""
    out = []
    for field in dataclasses.fields(a):
        x, y = getattr(a, field.name), getattr(b, field.name)
        if field.name == "format":
            x, y = dataclasses.replace(x, parser=""), dataclasses.replace(y, parser="")
        if field.name == "rows":
            names = [g.name for g in dataclasses.fields(x)] + ["position"]
            out += [f"rows.{name}" for name in names if not _same_array(getattr(x, name), getattr(y, name))]
        elif isinstance(x, np.ndarray) or isinstance(y, np.ndarray):
            if not _same_array(x, y):
                out.append(field.name)
        elif x != y:
            out.append(field.name)
    return out


@pytest.fixture
def assert_same_reads():
    """Assert that two Measurements agree in every field but the parser name."""

    def _check(a, b) -> None:
        diff = differences(a, b)
        assert not diff, f"the two reads differ in {diff}"

    return _check
