"""CSV tables: numbers read back exactly, formula injection neutralised, writes atomic."""

from __future__ import annotations

import csv
import os

import numpy as np
import pytest

from clusterdesk.atomic import atomic_open, write_text_atomic
from clusterdesk.report.csvfile import neutralise, write_csv


@pytest.mark.parametrize("text", ["=1+1", "+41", "-2+3", "@SUM(A1)", "\tx", "\rx"])
def test_formula_like_text_is_neutralised(text):
    # Source: OWASP "CSV Injection" (cells starting with = + - @ tab CR).
    assert neutralise(text) == "'" + text


@pytest.mark.parametrize("text", ["kept", "not a number", "3 mm", ""])
def test_ordinary_text_is_left_alone(text):
    assert neutralise(text) == text


def test_numbers_round_trip_exactly_and_negative_numbers_stay_numbers(tmp_path, rng):
    values = np.concatenate([rng.normal(size=50) * 10.0 ** rng.integers(-8, 8, 50), [-0.0, 1e308]])
    path = write_csv(tmp_path / "t.csv", ["value", "label"], [(v, "=cmd") for v in values])
    with open(path, encoding="utf-8", newline="") as handle:
        rows = list(csv.reader(handle))
    assert rows[0] == ["value", "label"]
    back = np.array([float(r[0]) for r in rows[1:]])
    assert np.array_equal(back, values)  # shortest round-trip repr (Python float repr)
    assert all(r[1] == "'=cmd" for r in rows[1:])


def test_nan_is_an_empty_cell(tmp_path):
    path = write_csv(tmp_path / "t.csv", ["a", "b"], [(np.nan, None), (np.float64(2.5), True)])
    assert path.read_text(encoding="utf-8").splitlines() == ["a,b", ",", "2.5,true"]


def test_interrupted_write_leaves_the_old_file_intact(tmp_path):
    target = tmp_path / "table.csv"
    write_text_atomic(target, "old content\n")

    def rows():
        yield (1.0,)
        raise RuntimeError("disk full (simulated)")

    with pytest.raises(RuntimeError):
        write_csv(target, ["x"], rows())
    assert target.read_text(encoding="utf-8") == "old content\n"
    assert [p.name for p in tmp_path.iterdir()] == ["table.csv"]  # no temporary file left


def test_atomic_open_binary(tmp_path):
    with atomic_open(tmp_path / "b.bin", "wb") as handle:
        handle.write(b"\x00\x01")
    assert (tmp_path / "b.bin").read_bytes() == b"\x00\x01"


def test_replacing_a_large_file_lets_the_old_one_go_on_a_helper_thread(tmp_path, monkeypatch):
    # The old file is held open across the rename and closed on a helper thread (POSIX only).
    from clusterdesk import atomic

    monkeypatch.setattr(atomic, "RELEASE_BEHIND_BYTES", 4)
    released = []
    real_release = atomic._release_behind
    monkeypatch.setattr(atomic, "_release_behind", lambda fd: released.append((fd, real_release(fd))))
    target = tmp_path / "big.csv"
    write_text_atomic(target, "old content\n")
    assert not released  # nothing was replaced
    write_text_atomic(target, "new\n")
    assert target.read_text(encoding="utf-8") == "new\n"
    assert [p.name for p in tmp_path.iterdir()] == ["big.csv"]
    if os.name != "posix":
        assert not released
        return
    (fd, thread), = released
    thread.join(10.0)
    with pytest.raises(OSError):
        os.fstat(fd)  # closed by the helper
