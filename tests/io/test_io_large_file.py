"""Large one-column files read by pandas from the path give what the other readers give.

References: the per-cell reader of ClusterDesk (``parser="general"``) and
the in-memory route (:func:`clusterdesk.io.fastpath.read_fast_table`, itself
checked against the per-cell reader in test_io_fastpath.py); Python's
``float`` and ``hashlib.sha256`` on the file's bytes.  The size from which
the route is taken is lowered for most tests, so that small files take it.
"""

from __future__ import annotations

import hashlib
import os
import time

import numpy as np
import pytest

from clusterdesk.errors import InputError
from clusterdesk.io import large_file, pandas_column, read_measurements, reading

pytestmark = pytest.mark.skipif(not pandas_column.pandas_usable(), reason="pandas 3 is not installed")

_VALUES = np.random.default_rng(41).normal(120, 30, 40_000)
_BODY = "\n".join(f"{v:.4f}" for v in _VALUES) + "\n"
_THREE = "\n".join(f"{v:.3f}" for v in np.clip(_VALUES, 1.5, 998)) + "\n"


_HOUR_AGO = 3600 * 10**9


def written_earlier(path):
    """Give a file the modification time of an hour ago (a file written just now is 'racy')."""
    then = os.stat(path).st_mtime_ns - _HOUR_AGO
    os.utime(path, ns=(then, then))
    return path


@pytest.fixture
def small_large_files(monkeypatch):
    """Let files of 64 KiB and more take the route, with a 300 kB head (the rest read from the file when needed)."""
    monkeypatch.setattr(large_file, "LARGE_FILE_BYTES", 1 << 16)
    monkeypatch.setattr(large_file, "_HEAD_BYTES", 300_000)


@pytest.mark.parametrize(
    "text",
    [
        "diameter_um\n" + _BODY,
        _BODY,  # no header
        "\ufeffdiameter_um\n" + _BODY,  # UTF-8 BOM
        "# instrument: sizer 2\n# operator: A\ndiameter_um\n" + _BODY,  # comments above the header
        "diameter_um\n" + _BODY.replace("\n", "\ninf\n", 1) + "-inf\n1e400\n",  # not finite, also beyond the head
        "v,w\n" + _BODY,  # a header with a comma over one column
        "v\n" + _THREE,  # only cells like 51.257: the point is read as decimal, "ambiguous"
        "v\n" + _THREE + "51.25\n",  # and one with two decimals at the end: "detected"
    ],
    ids=["header", "no header", "BOM", "comments", "not finite", "comma in the header", "three decimals",
         "three decimals then two"],
)
def test_large_route_equals_the_per_cell_reader(write, assert_same_reads, small_large_files, text):
    path = written_earlier(write("sizes.csv", text))
    general = read_measurements(path, parser="general")
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(reading, "read_fast_table", None)  # the large route must not need it
        fast = read_measurements(path)
    assert fast.format.parser == "vectorised (pandas C parser)"
    assert_same_reads(general, fast)
    assert fast.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize("kwargs", [{"low": 100.0, "high": 150.0}, {"scale": "ln"}])
def test_excluded_rows_beyond_the_head_are_read_from_the_file(write, assert_same_reads, small_large_files, kwargs):
    path = written_earlier(write("sizes.csv", "diameter_um\n" + _BODY.replace("\n", "\n-3.5\n", 1)))
    general = read_measurements(path, parser="general", **kwargs)
    fast = read_measurements(path, **kwargs)
    assert fast.summary.rows_kept < fast.summary.rows_read
    assert_same_reads(general, fast)


@pytest.mark.parametrize(
    "text",
    [
        "v\n" + _BODY + "\n\n# end of run\n",  # lines to trim after the table
        "v\r\n" + _BODY.replace("\n", "\r\n"),  # CRLF: the in-memory route checks line ends
        "v\n1.5\r2.5\n" + _BODY + "inf\n",  # a lone CR, and an excluded row after it
        "v\n" + _BODY + "abc\n12.5\n",  # a text cell: not for pandas
        "v,w\n" + _BODY.replace("\n", ",1\n"),  # two columns
    ],
    ids=["trailing lines", "CRLF", "lone CR", "text cell", "two columns"],
)
def test_files_the_route_declines_are_read_as_before(write, assert_same_reads, small_large_files, text):
    path = written_earlier(write("sizes.csv", text))
    assert large_file.read_large_column(path, "'sizes.csv'") is None
    assert_same_reads(read_measurements(path, parser="general"), read_measurements(path))


def test_a_file_changed_while_pandas_reads_it_is_read_again(write, small_large_files, monkeypatch):
    path = written_earlier(write("sizes.csv", "diameter_um\n" + _BODY))
    changed = "diameter_um\n" + _BODY.replace("\n", "\n7.25\n", 1)
    read_values = large_file.read_values

    def change_first(source, skip_lines=0):  # another program rewrites the file meanwhile
        path.write_text(changed)
        return read_values(source, skip_lines)

    monkeypatch.setattr(large_file, "read_values", change_first)
    m = read_measurements(path)
    assert m.values[1] == 7.25 and m.n == _VALUES.size + 1
    assert m.sha256 == hashlib.sha256(changed.encode()).hexdigest()


def test_text_beyond_the_head_of_a_changed_file_is_refused(write, small_large_files):
    path = written_earlier(write("sizes.csv", "diameter_um\n" + _BODY))
    table, _ = large_file.read_large_column(path, "'sizes.csv'")
    path.write_text("diameter_um\n" + _BODY.replace("1", "2"))  # same size: the modification time shows
    with pytest.raises(InputError, match="changed while it was being read"):
        table.raw(0, np.array([_VALUES.size - 1]))


@pytest.mark.slow
def test_a_file_pandas_reads_on_several_threads_equals_the_in_memory_route(tmp_path, assert_same_reads, monkeypatch):
    # 9 MB: above pandas' 5 MB threshold for its threaded reader and the route's own 8 MiB.
    values = np.random.default_rng(42).normal(500, 100, 1_000_000)
    path = tmp_path / "big.csv"
    path.write_text("diameter_um\n" + "\n".join(f"{v:.5f}" for v in values) + "\n")
    written_earlier(path)
    assert path.stat().st_size >= large_file.LARGE_FILE_BYTES
    assert large_file.read_large_column(path, "'big.csv'") is not None
    fast = read_measurements(path)
    monkeypatch.setattr(large_file, "LARGE_FILE_BYTES", 1 << 62)
    in_memory = read_measurements(path)
    assert_same_reads(in_memory, fast)
    assert fast.values.tolist() == [float(f"{v:.5f}") for v in values]


def _modified(path, seconds_ago: float, whole_seconds: bool):
    now = time.time_ns()
    then = now - int(seconds_ago * 1e9)
    if whole_seconds:
        then -= then % 10**9
    os.utime(path, ns=(then, then))
    return path


@pytest.mark.parametrize(
    "whole_seconds, just_now, a_while_ago",
    [(False, 0.02, 0.5), (True, 1.0, 3.5)],  # a tenth of a second for fine stamps, two seconds for whole ones
    ids=["fine time stamps", "whole-second time stamps"],
)
def test_a_file_written_just_now_is_read_into_memory(write, small_large_files, whole_seconds, just_now, a_while_ago):
    # It could be rewritten within the same tick of the file system's clock,
    # to the same size, without its stamp changing.
    path = write("sizes.csv", "diameter_um\n" + _BODY)
    assert large_file.read_large_column(_modified(path, just_now, whole_seconds), "'sizes.csv'") is None
    assert large_file.read_large_column(_modified(path, a_while_ago, whole_seconds), "'sizes.csv'") is not None


@pytest.mark.parametrize(
    "text",
    [
        "v\n" + _BODY + "\n# end of run\n",  # lines to trim after the table
        "v,w\n" + _BODY.replace("\n", ",1\n"),  # two columns
        "v\n" + "\n".join(str(k) for k in range(40_000)) + "\n",  # no point in the first lines
    ],
    ids=["trailing lines", "two columns", "whole numbers"],
)
def test_files_pandas_would_refuse_are_declined_before_it_reads_them(write, small_large_files, monkeypatch, text):
    # pandas would fail on them (or the points would need counting), after reading the whole file.
    path = written_earlier(write("sizes.csv", text))
    monkeypatch.setattr(large_file, "read_values", None)
    assert large_file.read_large_column(path, "'sizes.csv'") is None
