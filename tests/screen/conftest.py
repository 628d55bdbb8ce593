"""A folder of generated input files for the screening tests, and one reference run over it.

Every file is synthetic, generated here with fixed seeds: invented fish
lengths, weights and particle diameters, a two-sheet workbook (openpyxl), an
empty file, a binary file, a file past the 1 MiB threshold of the vectorised
reader, a file nobody may read (chmod 000), a file whose only column is text
and a file with too few distinct values for the component range.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl
import pytest


from screen_helpers import SETTINGS
SEED = 20261202


def mixture_sample(rng, n, weights, means, sds, decimals=1):
    """n values from a normal mixture, rounded; shape (n,)."""
    labels = rng.choice(len(weights), size=n, p=weights)
    return np.round(rng.normal(np.asarray(means)[labels], np.asarray(sds)[labels]), decimals)


def write_good_csv(path: Path, rng) -> None:
    """Row numbers, three numeric columns (2, 1 and 3 well separated groups), a text column."""
    n = 300
    length = mixture_sample(rng, n, [0.6, 0.4], [95.0, 140.0], [8.0, 10.0])
    weight = mixture_sample(rng, n, [1.0], [250.0], [20.0])
    diameter = mixture_sample(rng, n, [0.3, 0.4, 0.3], [2.0, 6.0, 10.0], [0.5, 0.5, 0.5], 2)
    sites = ["north bank", "south bank", "weir"]
    lines = ["id,length_mm,weight_g,diameter_mm,site"]
    for i in range(n):
        w = "NA" if i % 50 == 7 else repr(float(weight[i]))
        lines.append(f"{i + 1},{float(length[i])!r},{w},{float(diameter[i])!r},{sites[i % 3]}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def write_workbook(path: Path, rng) -> None:
    """Two sheets with two numeric columns each, and an empty third sheet."""
    book = openpyxl.Workbook()
    book.remove(book.active)
    for name, shift in (("north", 0.0), ("south", 30.0)):
        sheet = book.create_sheet(name)
        sheet.append(["gauge_a_mm", "gauge_b_mm"])
        a = mixture_sample(rng, 200, [0.5, 0.5], [10.0 + shift, 14.0 + shift], [0.8, 0.8], 2)
        b = mixture_sample(rng, 200, [1.0], [20.0 + shift], [1.5], 2)
        for x, y in zip(a, b):
            sheet.append([float(x), float(y)])
    book.create_sheet("empty")
    book.save(path)


def write_big_csv(path: Path, rng) -> None:
    """Past 1 MiB (the vectorised reader's threshold): row numbers and one value column."""
    n = 80_000
    values = mixture_sample(rng, n, [0.5, 0.5], [40.0, 60.0], [4.0, 5.0], 4)
    body = "\n".join(f"{i + 1:06d},{v:.4f}" for i, v in enumerate(values))
    path.write_text("row,level_au\n" + body + "\n", encoding="ascii")
    assert path.stat().st_size > 1 << 20


def make_inputs(folder: Path) -> dict:
    """Write the input folder; returns {name: path} of the files written."""
    rng = np.random.default_rng(SEED)
    folder.mkdir(parents=True, exist_ok=True)
    files = {name: folder / name for name in ("good.csv", "gauges.xlsx", "empty.csv", "blob.dat",
                                               "nested/big.csv", "locked.csv", "remarks.csv", "tiny.csv")}
    write_good_csv(files["good.csv"], rng)
    write_workbook(files["gauges.xlsx"], rng)
    files["empty.csv"].write_bytes(b"")
    files["blob.dat"].write_bytes(bytes(rng.integers(0, 256, 4096, dtype=np.uint8)) + b"\x00" * 64)
    files["nested/big.csv"].parent.mkdir()
    write_big_csv(files["nested/big.csv"], rng)
    files["locked.csv"].write_text("x\n4.5\n2.25\n3.5\n", encoding="utf-8")
    files["locked.csv"].chmod(0)
    files["remarks.csv"].write_text("remark\nclear\nmurky\nweedy\nclear\n", encoding="utf-8")
    files["tiny.csv"].write_text("value\n1\n2\n3\n2\n1\n", encoding="utf-8")
    return files


@pytest.fixture(scope="session")
def inputs(tmp_path_factory):
    """The generated input folder and its files."""
    folder = tmp_path_factory.mktemp("screen_inputs") / "data"
    files = make_inputs(folder)
    yield folder, files
    files["locked.csv"].chmod(0o644)


@pytest.fixture(scope="session")
def reference_run(inputs, tmp_path_factory):
    """The folder screened in this process (one worker), with its output folder."""
    from clusterdesk.screen import screen

    folder, _ = inputs
    out = tmp_path_factory.mktemp("screen_out_w1")
    return screen([folder], settings=SETTINGS, workers=1, out=out), out
