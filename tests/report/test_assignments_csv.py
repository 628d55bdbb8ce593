"""The assignment table written a block of rows at a time: the same bytes as the per-row writer.

Two references: the per-row route (the csv module's writer over one list of
cells per row, as the table was written before) for the exact bytes, and
Python's csv reader with ``float()`` for what the cells say (Python's float
repr is the shortest text that reads back to the same float). Rows given as
entries shared by index (distinct values) are checked against the per-row
writer over the rows spelt out one by one.
"""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import numpy as np
import pytest

from clusterdesk.analysis import Analysis, DataChoice, ScanSettings
from clusterdesk.engine.distinct import group_rows
from clusterdesk.report.assignments_csv import write_assignments_csv
from clusterdesk.report.csvfile import neutralise, write_csv
from clusterdesk.report.tables import _assignment_rows, assignment_table, write_tables

SAMPLES = Path(__file__).resolve().parents[2] / "sample_data"

REASONS = np.array(["kept", "not a number", "=below, the \"limit\"", "empty\ncell", "-1 excluded"], dtype=object)


def _awkward_assignments(rng, n: int = 257, k: int = 3) -> dict:
    """Rows with every kind of cell: NaN, infinities, tiny and huge floats, text needing quotes."""
    reason_code = np.where(rng.random(n) < 0.8, 0, rng.integers(1, REASONS.size, n))
    kept = reason_code == 0
    value = rng.normal(25, 5, n) * 10.0 ** rng.integers(-7, 18, n)
    value[::17] = np.round(value[::17], 3)
    value[~kept & (rng.random(n) < 0.5)] = np.nan
    value[[3, 4, 5]] = [np.inf, -np.inf, -0.0]
    posterior = rng.dirichlet(np.full(k, 0.2), n)
    posterior[::11, 0] = 5e-324
    posterior[::13, 1] = 1.0
    posterior[~kept] = np.nan
    component = np.where(kept, np.argmax(np.nan_to_num(posterior, nan=-1.0), axis=1) + 1, 0)
    top = np.where(kept, np.nanmax(np.nan_to_num(posterior, nan=-1.0), axis=1), np.nan)
    return {"line": np.arange(2, n + 2, dtype=np.int64), "value": value, "kept": kept,
            "reason": REASONS[reason_code], "component": component, "max_posterior": top,
            "posterior": posterior}


def _tied_assignments(rng, n: int = 400, k: int = 3, follow_value: bool = True) -> dict:
    """Recorded values with many copies; posteriors a function of the value unless told otherwise."""
    a = _awkward_assignments(rng, n, k)
    a["value"] = rng.choice(np.array([0.0, -0.0, 1.5, 2.25, 3.0, 1e-7, 4e17]), n)
    a["value"][~a["kept"] & (rng.random(n) < 0.5)] = np.nan
    logits = -np.subtract.outer(np.sign(a["value"]) * np.log1p(np.abs(a["value"])), np.arange(k)) ** 2
    if not follow_value:  # e.g. intervals given end by end: two copies may differ
        logits += rng.normal(scale=1e-3, size=logits.shape)
    posterior = np.exp(logits - logits.max(axis=1, keepdims=True))
    posterior /= posterior.sum(axis=1, keepdims=True)
    posterior[~a["kept"]] = np.nan
    a["posterior"] = posterior
    a["component"] = np.where(a["kept"], np.argmax(np.nan_to_num(posterior, nan=-1.0), axis=1) + 1, 0)
    a["max_posterior"] = np.where(a["kept"], np.nanmax(np.nan_to_num(posterior, nan=-1.0), axis=1), np.nan)
    return a


@pytest.mark.parametrize("block", [1, 7, 64, 10_000])
@pytest.mark.parametrize("kind", ["awkward", "tied", "tied, not following the value"])
def test_block_writer_gives_the_bytes_of_the_per_row_writer(tmp_path, rng, block, kind):
    a = {"awkward": lambda: _awkward_assignments(rng), "tied": lambda: _tied_assignments(rng),
         "tied, not following the value": lambda: _tied_assignments(rng, follow_value=False)}[kind]()
    header = ("line", "value", "status", "component", "max_posterior", "posterior_1", "posterior_2",
              "posterior_3")
    per_row = write_csv(tmp_path / "per_row.csv", header, _assignment_rows(a))
    blocks = write_assignments_csv(tmp_path / "blocks.csv", a, block=block)
    assert blocks.read_bytes() == per_row.read_bytes()


def _grouped(a: dict, lines=None) -> dict:
    """The same rows as shared entries: one per distinct (value, status, posteriors), and each row's entry."""
    groups = group_rows(a["value"], follow=[a["posterior"][:, j] for j in range(a["posterior"].shape[1])]
                        + [a["max_posterior"], a["component"], np.unique(a["reason"], return_inverse=True)[1]])
    entries = {key: column[groups.first] for key, column in a.items() if key != "line"}
    return {"line": a["line"] if lines is None else lines, "row_group": groups.index, **entries}


def _spelt_out(grouped: dict) -> dict:
    """Every row with its entry's cells (the per-row layout)."""
    return {key: (column if key == "line" else column[grouped["row_group"]])
            for key, column in grouped.items() if key != "row_group"}


ODD_LINES = np.array([0, 1, 9, 10, 99, 9_999, 10_000, 10_001, 99_999_999, 100_000_000, 1_234_567_890])


@pytest.mark.parametrize("block", [1, 7, 64, 10_000])
@pytest.mark.parametrize("lines", ["file order", "odd numbers"])
@pytest.mark.parametrize("kind", ["tied", "mostly distinct"])
def test_shared_entries_give_the_bytes_of_the_per_row_writer(tmp_path, rng, block, lines, kind):
    a = _tied_assignments(rng) if kind == "tied" else _awkward_assignments(rng)
    if lines == "odd numbers":  # every count of digits, zero and the ten-thousands boundaries
        numbers = np.sort(np.concatenate([ODD_LINES, rng.integers(0, 10**11, a["line"].size - ODD_LINES.size)]))
        a["line"] = numbers
    grouped = _grouped(a)
    shared = grouped["value"].size < a["line"].size // 2  # else each block formats its own rows' entries
    assert shared == (kind == "tied")
    header = ("line", "value", "status", "component", "max_posterior", "posterior_1", "posterior_2",
              "posterior_3")
    per_row = write_csv(tmp_path / "per_row.csv", header, _assignment_rows(_spelt_out(grouped)))
    shared = write_assignments_csv(tmp_path / "shared.csv", grouped, block=block)
    assert shared.read_bytes() == per_row.read_bytes()


def test_entries_with_a_zero_byte_are_written_row_by_row_with_the_same_bytes(tmp_path, rng):
    a = _tied_assignments(rng)
    a["reason"] = np.where(a["kept"], "kept", "odd\0reason").astype(object)
    grouped = _grouped(a)
    header = ("line", "value", "status", "component", "max_posterior", "posterior_1", "posterior_2",
              "posterior_3")
    per_row = write_csv(tmp_path / "per_row.csv", header, _assignment_rows(_spelt_out(grouped)))
    assert write_assignments_csv(tmp_path / "shared.csv", grouped).read_bytes() == per_row.read_bytes()
    assert b"odd\0reason" in per_row.read_bytes()


def test_cells_read_back_with_the_csv_module(tmp_path, rng):
    # Reference: Python's csv reader; float() of each cell gives back the float written.
    a = _awkward_assignments(rng)
    path = write_assignments_csv(tmp_path / "a.csv", a, block=50)
    with open(path, encoding="utf-8", newline="") as handle:
        rows = list(csv.reader(handle))
    assert rows[0][:5] == ["line", "value", "status", "component", "max_posterior"]
    body = rows[1:]
    assert len(body) == a["line"].size

    def number(cell):
        return np.nan if cell == "" else float(cell)

    assert [int(r[0]) for r in body] == a["line"].tolist()
    assert np.array_equal([number(r[1]) for r in body], a["value"], equal_nan=True)
    assert [r[2] for r in body] == [neutralise(w) for w in a["reason"]]
    assert [r[3] for r in body] == [str(c) if c else "" for c in a["component"]]
    assert np.array_equal([number(r[4]) for r in body], a["max_posterior"], equal_nan=True)
    back = np.array([[number(c) for c in r[5:]] for r in body])
    assert np.array_equal(back, a["posterior"], equal_nan=True)


def test_written_tables_hold_the_per_row_assignment_text(tmp_path):
    # A file with excluded rows (text, empty cells) through the whole route.
    source = tmp_path / "messy_export.txt"
    shutil.copy(SAMPLES / "messy_export.txt", source)
    analysis = Analysis.from_file(source, DataChoice(), ScanSettings(kmin=1, kmax=3, restarts=3, seed=1))
    analysis.run_scan()
    written = write_tables(analysis, tmp_path / "out")["assignments"]
    table = assignment_table(analysis)
    per_row = write_csv(tmp_path / "per_row.csv", table.header, table.rows)
    assert written.read_bytes() == per_row.read_bytes()
    statuses = {r["status"] for r in csv.DictReader(open(written, encoding="utf-8", newline=""))}
    assert "kept" in statuses and len(statuses) > 1  # excluded rows are there with their reasons
