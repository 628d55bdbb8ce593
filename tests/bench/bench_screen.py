"""Benchmark: screening 1,000 columns with 1 and with 2 workers, side by side.

Run:  /work/venv/bin/python tests/bench/bench_screen.py [--quick]

Generates (in a temporary folder, fixed seed) 20 synthetic CSV files of 50
columns with 10^4 values each: invented measurements from normal mixtures of
1 to 3 components, recorded to 0.01. Then screens the folder twice in this
one run with clusterdesk.screen.screen, timed with time.perf_counter:

- 1 worker: in this process;
- 2 workers: two worker processes.

Prints columns per second of each and their ratio; target: 2 workers at
least 1.8 times 1 worker. Also checks that both runs wrote the same summary
(bit for bit). The load average (os.getloadavg) is printed with every run:
on a shared machine a ratio measured under load says little, so run it when
the load is low. --repeat N runs each worker count N times in the order
1, 2, 2, 1, 1, 2, ... (so that a drift in the load hits both alike) and
compares the fastest run of each.

For context it also measures the machine's own ceiling right after each
run: the same scans (``clusterdesk.scan`` on 40 of the generated columns,
BLAS on one thread) in one process alone, then in two processes at once,
with no screening code at all. On a shared or virtual machine two processes
may not get twice the work done; the screening ratio is best read against
that ceiling.

The scan settings are light by default (1 to 2 components, separate widths,
2 restarts) so that the run takes minutes rather than hours: the benchmark
measures the screening machinery (reading, scheduling, workers), not the EM.
--quick screens 4 files x 25 columns.
"""

from __future__ import annotations

import argparse
import filecmp
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

# Run from a checkout without installing: put the repository root on the path.
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
from clusterdesk.analysis import ScanSettings  # noqa: E402
from clusterdesk.screen import screen  # noqa: E402

SEED = 20261203
TARGET = 1.8


def write_files(folder: Path, files: int, columns: int, values: int, seed: int = SEED) -> None:
    """Write the synthetic CSV files: ``files`` x ``columns`` columns of ``values`` values."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    for f in range(files):
        data = np.empty((values, columns))
        for j in range(columns):
            k = 1 + (f * columns + j) % 3
            means = rng.uniform(0.0, 12.0, k) + np.arange(k) * 6.0
            labels = rng.integers(0, k, values)
            data[:, j] = rng.normal(means[labels], rng.uniform(0.8, 1.5))
        header = ",".join(f"value_{j:02d}" for j in range(columns))
        np.savetxt(folder / f"batch_{f:02d}.csv", data, fmt="%.2f", delimiter=",", header=header, comments="")


def timed_run(folder: Path, out: Path, workers: int, settings: ScanSettings):
    """Screen the folder; returns (seconds, result)."""
    start = time.perf_counter()
    result = screen([folder], settings=settings, workers=workers, out=out)
    return time.perf_counter() - start, result


def _scan_columns(args) -> float:
    """Seconds to scan the given columns one after another in this process (BLAS on one thread)."""
    columns, settings = args
    from threadpoolctl import threadpool_limits

    import clusterdesk

    with threadpool_limits(1):
        start = time.perf_counter()
        for x in columns:
            clusterdesk.scan(x, kmin=settings.kmin, kmax=settings.kmax, widths=settings.widths,
                             restarts=settings.restarts, seed=0)
        return time.perf_counter() - start


def machine_ceiling(folder: Path, settings: ScanSettings, n: int = 40) -> float:
    """Throughput of two plain processes over one, on the same scans (the machine's ceiling)."""
    import multiprocessing

    first = sorted(folder.glob("*.csv"))[0]
    data = np.loadtxt(first, delimiter=",", skiprows=1)
    columns = [data[:, j % data.shape[1]].copy() for j in range(n)]
    ctx = multiprocessing.get_context("forkserver")
    with ctx.Pool(1) as pool:
        one = pool.apply(_scan_columns, ((columns, settings),))
    with ctx.Pool(2) as pool:
        both = pool.map(_scan_columns, [(columns, settings)] * 2)
    ratio = 2 * one / max(both)
    print(f"      machine ceiling after it: {n} scans take {one:.1f} s alone, {max(both):.1f} s in each "
          f"of two processes at once: x{ratio:.2f}")
    return ratio


def load_text() -> str:
    one, five, fifteen = os.getloadavg()
    return f"load average {one:.2f}, {five:.2f}, {fifteen:.2f} on {os.cpu_count()} cores"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="4 files x 25 columns")
    parser.add_argument("--files", type=int, default=20)
    parser.add_argument("--columns", type=int, default=50, help="columns per file")
    parser.add_argument("--values", type=int, default=10_000, help="values per column")
    parser.add_argument("--kmax", type=int, default=2)
    parser.add_argument("--widths", default="separate", choices=("separate", "shared", "both"))
    parser.add_argument("--restarts", type=int, default=2)
    parser.add_argument("--repeat", type=int, default=1, help="runs of each worker count (default 1)")
    args = parser.parse_args(argv)
    if args.quick:
        args.files, args.columns = 4, 25
    settings = ScanSettings(kmin=1, kmax=args.kmax, widths=args.widths, restarts=args.restarts, seed=0)
    n_columns = args.files * args.columns
    with tempfile.TemporaryDirectory(prefix="bench_screen_") as tmp:
        tmp = Path(tmp)
        start = time.perf_counter()
        write_files(tmp / "data", args.files, args.columns, args.values)
        print(f"wrote {args.files} files x {args.columns} columns x {args.values} values "
              f"in {time.perf_counter() - start:.1f} s")
        print(f"settings: k {settings.kmin}..{settings.kmax}, {settings.widths} widths, "
              f"{settings.restarts} restarts")
        print(f"before: {load_text()}")
        runs = {1: [], 2: []}
        ceilings = []
        order = [w for i in range(args.repeat) for w in ((1, 2) if i % 2 == 0 else (2, 1))]
        for i, workers in enumerate(order):
            seconds, result = timed_run(tmp / "data", tmp / f"out_{workers}_{i}", workers, settings)
            runs[workers].append(seconds)
            print(f"  {workers} worker{'s' if workers > 1 else ' '}: {seconds:8.1f} s  "
                  f"{n_columns / seconds:7.2f} columns/s  ({result.counts['ok']} ok, "
                  f"{result.counts['failed']} failed)   [{load_text()}]")
            ceilings.append(machine_ceiling(tmp / "data", settings))
        ceiling = float(np.median(ceilings))
        summaries = sorted(tmp.glob("out_*/summary.csv"))
        same = all(filecmp.cmp(summaries[0], other, shallow=False) for other in summaries[1:])
    best = {w: min(times) for w, times in runs.items()}
    print(f"fastest: 1 worker {n_columns / best[1]:.2f} columns/s, 2 workers {n_columns / best[2]:.2f} "
          "columns/s")
    ratio = best[1] / best[2]
    print(f"after: {load_text()}")
    print(f"speed-up, 2 workers over 1: {ratio:.2f} (target >= {TARGET}) -> "
          f"{'met' if ratio >= TARGET else 'NOT met'}; the machine's ceiling in this run (median): "
          f"{ceiling:.2f}")
    print(f"summaries identical: {'yes' if same else 'NO'}")
    return 0 if ratio >= TARGET and same else 1


if __name__ == "__main__":
    sys.exit(main())
