"""Read benchmark: ClusterDesk's readers side by side with plain parsers, in one run.

Run by hand (pytest does not collect this folder)::

    /work/venv/bin/python tests/bench/bench_read.py            # 10**7-row CSV, 10**6-row XLSX
    /work/venv/bin/python tests/bench/bench_read.py --quick    # 10**6 / 10**5 rows

The files are generated (seeded) in a temporary folder and deleted afterwards.
Each reader runs in a fresh subprocess, so that its peak memory (VmHWM from
/proc/self/status) is its own; the best of ``--repeat`` runs is reported, the readers taking turns.
Targets: the 10**7-row CSV in under 1.5 times the fastest plain parser, with a
peak memory increase under 4 times the float64 size of the data.  The rows
"clusterdesk" (pandas' C parser for a plain one-column file, where pandas is
installed) and "clusterdesk (numpy kernels)" (no pandas) are both shown.
The machine is shared: compare ratios from one run, not times across runs.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import pathlib
import subprocess
import sys
import tempfile
import time

ROOT = pathlib.Path(__file__).resolve().parents[2]
SEED = 20261201


def _status_kib(key: str) -> int:
    for line in pathlib.Path("/proc/self/status").read_text().splitlines():
        if line.startswith(key + ":"):
            return int(line.split()[1])
    return 0


def _read(reader: str, path: str):
    """Run one reader and return its float64 values (shape (n,))."""
    import numpy as np

    if reader == "clusterdesk":
        from clusterdesk.io import read_measurements

        return read_measurements(path).values
    if reader == "clusterdesk (numpy kernels)":
        from clusterdesk.io import pandas_column, read_measurements

        pandas_column.ENABLED = False  # as on a machine without pandas
        return read_measurements(path).values
    if reader == "clusterdesk (per-cell)":
        from clusterdesk.io import read_measurements

        return read_measurements(path, parser="general").values
    if reader == "numpy.loadtxt":
        return np.loadtxt(path, skiprows=1)
    if reader == "pandas.read_csv":
        import pandas as pd

        return pd.read_csv(path).iloc[:, 0].to_numpy()
    if reader == "pandas.read_csv (tuned)":
        import pandas as pd

        # The fastest settings we know for a column of plain numbers: the dtype given,
        # no missing-value filter, C engine (what ClusterDesk's own route asks pandas for).
        frame = pd.read_csv(path, dtype=np.float64, na_filter=False, engine="c")
        return frame.iloc[:, 0].to_numpy()
    if reader == "python-calamine":
        from python_calamine import CalamineWorkbook

        rows = CalamineWorkbook.from_path(path).get_sheet_by_index(0).to_python()
        return np.array([r[0] for r in rows[1:]], dtype=float)
    if reader == "openpyxl":
        import openpyxl

        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
        values = [r[0] for r in book.active.iter_rows(min_row=2, values_only=True)]
        return np.array(values, dtype=float)
    if reader == "pandas.read_excel (calamine)":
        import pandas as pd

        return pd.read_excel(path, engine="calamine").iloc[:, 0].to_numpy()
    raise SystemExit(f"unknown reader {reader!r}")


def _imports(reader: str) -> None:
    import numpy  # noqa: F401

    if reader.startswith("clusterdesk"):
        import clusterdesk.io  # noqa: F401

        try:  # imported on first use by the reader; its import time is excluded, as for pandas.read_csv
            import pandas  # noqa: F401
        except ImportError:
            pass
    elif reader.startswith("pandas"):
        import pandas  # noqa: F401
    elif reader == "python-calamine":
        import python_calamine  # noqa: F401
    elif reader == "openpyxl":
        import openpyxl  # noqa: F401


def worker(reader: str, path: str) -> None:
    """Subprocess entry: import, measure the baseline, read, report JSON on stdout."""
    sys.path.insert(0, str(ROOT))
    _imports(reader)
    baseline = _status_kib("VmRSS")
    start = time.perf_counter()
    values = _read(reader, path)
    seconds = time.perf_counter() - start
    peak = _status_kib("VmHWM")
    digest = hashlib.sha256(values.astype("<f8").tobytes()).hexdigest()[:16]
    print(json.dumps({"seconds": seconds, "peak_kib": peak, "baseline_kib": baseline, "n": int(values.size), "digest": digest}))


def run_once(reader: str, path: pathlib.Path) -> dict:
    out = subprocess.run(
        [sys.executable, __file__, "--worker", reader, str(path)], capture_output=True, text=True, check=True
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def run_all(readers: list[str], path: pathlib.Path, repeat: int) -> dict:
    """The best of ``repeat`` runs of each reader, the readers taking turns (so a change in load hits all alike)."""
    best: dict = {}
    for _ in range(repeat):
        for reader in readers:
            result = run_once(reader, path)
            if reader not in best or result["seconds"] < best[reader]["seconds"]:
                best[reader] = result
    return best


def write_csv(path: pathlib.Path, n: int) -> None:
    import numpy as np

    rng = np.random.default_rng(SEED)
    with open(path, "w") as handle:
        handle.write("diameter_um\n")
        for start in range(0, n, 1_000_000):
            chunk = rng.normal(500.0, 100.0, min(1_000_000, n - start))
            handle.write("\n".join(map("{:.5f}".format, chunk)))
            handle.write("\n")


def write_xlsx(path: pathlib.Path, n: int) -> None:
    import numpy as np
    import openpyxl

    rng = np.random.default_rng(SEED + 1)
    book = openpyxl.Workbook(write_only=True)
    sheet = book.create_sheet("lengths")
    sheet.append(["length_mm"])
    for value in rng.normal(300.0, 40.0, n).round(1):
        sheet.append([float(value)])
    book.save(path)


def report(title: str, results: dict, plain: list[str], data_bytes: int) -> None:
    fastest = min(plain, key=lambda r: results[r]["seconds"])
    digests = {r["digest"] for r in results.values()}
    print(f"\n{title}")
    print(f"  values identical across readers: {'yes' if len(digests) == 1 else 'NO ' + str(digests)}")
    print(f"  {'reader':32s} {'time s':>8s} {'ratio':>7s} {'peak MB':>9s} {'+MB':>8s} {'+ / float64':>12s}")
    for reader, r in results.items():
        increase = (r["peak_kib"] - r["baseline_kib"]) / 1024
        print(
            f"  {reader:32s} {r['seconds']:8.2f} {r['seconds'] / results[fastest]['seconds']:7.2f} "
            f"{r['peak_kib'] / 1024:9.0f} {increase:8.0f} {increase * 2**20 / data_bytes:12.2f}"
        )
    print(f"  ratio = time / fastest plain parser ({fastest}); +MB = peak minus the memory held after imports")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="10**6-row CSV and 10**5-row XLSX")
    parser.add_argument("--repeat", type=int, default=3, help="runs per reader (best is reported)")
    parser.add_argument("--per-cell", action="store_true", help="also time the per-cell reader on the CSV (slow)")
    parser.add_argument("--worker", nargs=2, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        worker(*args.worker)
        return
    n_csv, n_xlsx = (10**6, 10**5) if args.quick else (10**7, 10**6)
    with tempfile.TemporaryDirectory(prefix="clusterdesk-bench-") as folder:
        csv_path = pathlib.Path(folder) / "values.csv"
        xlsx_path = pathlib.Path(folder) / "values.xlsx"
        t = time.perf_counter()
        write_csv(csv_path, n_csv)
        print(f"wrote {n_csv:,} rows, {csv_path.stat().st_size / 1e6:.0f} MB of CSV in {time.perf_counter() - t:.0f} s")
        csv_readers = ["clusterdesk", "clusterdesk (numpy kernels)", "numpy.loadtxt", "pandas.read_csv", "pandas.read_csv (tuned)"]
        csv_readers += ["clusterdesk (per-cell)"] if args.per_cell else []
        csv_results = run_all(csv_readers, csv_path, args.repeat)
        report(f"CSV, {n_csv:,} rows, one column", csv_results, ["numpy.loadtxt", "pandas.read_csv", "pandas.read_csv (tuned)"], n_csv * 8)
        ours = csv_results["clusterdesk"]
        fastest = min(csv_results[r]["seconds"] for r in ("numpy.loadtxt", "pandas.read_csv", "pandas.read_csv (tuned)"))
        increase = (ours["peak_kib"] - ours["baseline_kib"]) * 1024
        print(f"  target time < 1.5 x fastest: {'met' if ours['seconds'] < 1.5 * fastest else 'NOT met'} "
              f"({ours['seconds'] / fastest:.2f}); target memory < 4 x float64: "
              f"{'met' if increase < 4 * n_csv * 8 else 'NOT met'} ({increase / (n_csv * 8):.2f})")
        csv_path.unlink()
        t = time.perf_counter()
        write_xlsx(xlsx_path, n_xlsx)
        print(f"\nwrote {n_xlsx:,} rows, {xlsx_path.stat().st_size / 1e6:.0f} MB of XLSX in {time.perf_counter() - t:.0f} s")
        xlsx_readers = ["clusterdesk", "python-calamine", "openpyxl", "pandas.read_excel (calamine)"]
        xlsx_results = run_all(xlsx_readers, xlsx_path, max(1, args.repeat - 1))
        report(f"XLSX, {n_xlsx:,} rows, one column", xlsx_results, ["python-calamine", "openpyxl"], n_xlsx * 8)


if __name__ == "__main__":
    main()
