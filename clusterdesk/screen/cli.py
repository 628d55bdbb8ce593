"""The ``screen`` subcommand: its options and the function that runs it.

:func:`add_screen_parser` adds the subcommand to the subparsers of the
``clusterdesk`` command; :func:`run_screen` runs it and returns the exit code:
0 when the run finished (even if some columns failed: they have rows with the
reason), 2 for a usage mistake, 3 when nothing could be screened, 130 when
interrupted (the journal keeps the finished columns; ``--resume`` goes on).
"""

from __future__ import annotations

import argparse
import sys

from ..analysis import ScanSettings
from ..errors import InputError
from .discover import column_matcher
from .progress import TerminalProgress, format_duration
from .runner import UnfinishedRunError, check_settings, default_workers, screen

__all__ = ["add_screen_parser", "run_screen", "SCREEN_EXAMPLES"]

SCREEN_EXAMPLES = """\
examples:
  clusterdesk screen survey/ --out screening/
  clusterdesk screen 'plant_*/**/*.csv' gauges.xlsx --columns 'diameter*' --out screening/
  clusterdesk screen lab/ --columns 're:^(ab|titre)_' --kmax 4 --workers 2 --out screening/
  clusterdesk screen lab/ --out screening/ --resume        go on after an interruption
  clusterdesk screen /shared/data --scheduler tcp://10.0.0.5:8786 --out screening/

The output folder receives summary.csv (one row per column: best number of
components, its evidence, the components; a reason for each column that
failed or was skipped), overview.html (a small plot per column) and
screen-journal.jsonl (finished columns, for --resume).

exit codes: 0 finished (failed columns have rows), 2 usage error,
3 nothing could be screened, 130 interrupted (resume with --resume)
"""


def _workers(text: str) -> int:
    if not text.isdigit() or int(text) < 1:
        raise argparse.ArgumentTypeError(f"takes a whole number >= 1, not {text!r}")
    return int(text)


def add_screen_parser(subparsers) -> argparse.ArgumentParser:
    """Add the ``screen`` subcommand.

    Parameters
    ----------
    subparsers
        The object returned by ``ArgumentParser.add_subparsers``.

    Returns
    -------
    argparse.ArgumentParser
        The subcommand's parser (its ``func`` default is :func:`run_screen`).
    """
    parser = subparsers.add_parser(
        "screen", help="screen many files and columns: one summary row per column",
        description="Fit mixtures to every numeric column (or those named by --columns) of many files, "
                    "and write one summary table, an overview page and a journal for resuming.",
        epilog=SCREEN_EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("inputs", nargs="+", metavar="INPUT",
                        help="files, folders (searched recursively for .csv .tsv .txt .tab .dat .xlsx "
                             ".xlsm .ods) or quoted glob patterns such as 'data/**/*.csv'")
    parser.add_argument("--columns", action="append", metavar="PATTERN",
                        help="screen the columns whose name matches: wildcards * ? [..] ignoring case, "
                             "or re:REGEX; repeat for several (default: every numeric column)")
    parser.add_argument("--kmin", type=int, default=1, help="fewest components (default 1)")
    parser.add_argument("--kmax", type=int, default=6, help="most components (default 6)")
    parser.add_argument("--widths", choices=("separate", "shared", "both"), default="both",
                        help="each component its own sd, one shared sd, or both (default both)")
    parser.add_argument("--restarts", type=int, default=10, help="starts per model (default 10)")
    parser.add_argument("--seed", type=int, default=0,
                        help="random seed (default 0); each column's own seed is derived from it")
    parser.add_argument("--workers", type=_workers, metavar="N",
                        help=f"worker processes (default: the cores available, here {default_workers()}; "
                             "ignored with --scheduler)")
    parser.add_argument("--out", metavar="FOLDER", required=True,
                        help="output folder for summary.csv, overview.html and the journal")
    again = parser.add_mutually_exclusive_group()
    again.add_argument("--resume", action="store_true",
                       help="go on with an interrupted run in --out, without redoing finished columns")
    again.add_argument("--start-over", action="store_true",
                       help="discard an unfinished run in --out and start again")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help="run on a Dask cluster (e.g. tcp://10.0.0.5:8786); needs the 'cluster' extra")
    shown = parser.add_mutually_exclusive_group()
    shown.add_argument("--progress", action="store_true",
                       help="draw the progress bar on stderr even when it is not a terminal")
    shown.add_argument("--quiet", action="store_true", help="no progress bar and no report; errors only")
    parser.set_defaults(func=run_screen)
    return parser


def _settings(args) -> ScanSettings:
    return ScanSettings(kmin=args.kmin, kmax=args.kmax, widths=args.widths, restarts=args.restarts,
                        seed=args.seed)


def _print_report(result, out) -> None:
    counts = result.counts
    reused = f", {result.reused} reused from the journal" if result.reused else ""
    print(f"screening finished in {format_duration(result.elapsed)} "
          f"({result.workers} worker{'s' if result.workers != 1 else ''}): {counts['ok']} ok, "
          f"{counts['failed']} failed, {counts['skipped']} skipped{reused}", file=out)
    failed = [r for r in result.rows if r.status == "failed"]
    for row in failed[:10]:
        where = " ".join(part for part in (row.file, f"[{row.sheet}]" if row.sheet else "",
                                           repr(row.column) if row.column else "") if part)
        print(f"  failed: {where}: {row.reason}", file=out)
    if len(failed) > 10:
        print(f"  ... and {len(failed) - 10} more (see the summary)", file=out)
    for path in result.written.values():
        print(f"wrote {path}", file=out)


def _interrupted(args, err) -> int:
    print(f"clusterdesk screen: interrupted; the finished columns are in the journal in {args.out}; "
          "run the same command with --resume to go on.", file=err)
    return 130


def run_screen(args, out) -> int:
    """Run the ``screen`` subcommand.

    Parameters
    ----------
    args : argparse.Namespace
        From the parser made by :func:`add_screen_parser`.
    out : text file
        Where the report goes (the progress bar and errors go to stderr).

    Returns
    -------
    int
        0 finished, 2 usage error, 3 nothing could be screened, 130 interrupted.
    """
    err = sys.stderr
    settings = _settings(args)
    try:
        check_settings(settings)
        column_matcher(args.columns)
    except InputError as exc:
        print(f"clusterdesk screen: {exc}", file=err)
        return 2
    bar = TerminalProgress(err) if not args.quiet and (args.progress or err.isatty()) else None
    try:
        result = screen(args.inputs, columns=args.columns, settings=settings, workers=args.workers,
                        out=args.out, resume=args.resume, start_over=args.start_over,
                        scheduler=args.scheduler, progress=bar)
    except UnfinishedRunError as exc:
        print(f"clusterdesk screen: {exc}", file=err)
        return 2
    except InputError as exc:
        print(f"clusterdesk screen: {exc}", file=err)
        return 3
    except OSError as exc:
        print(f"clusterdesk screen: {exc.strerror or exc} ({exc.filename or args.out}); "
              "check the path and permissions.", file=err)
        return 3
    except KeyboardInterrupt:
        if bar is not None:
            bar.close()
            bar = None
        return _interrupted(args, err)
    finally:
        if bar is not None:
            bar.close()
            bar = None
    if result.cancelled:
        return _interrupted(args, err)
    if not args.quiet:
        _print_report(result, out)
    if result.counts["ok"] == 0:
        reasons = sorted({r.reason for r in result.rows if r.status == "failed"})[:3]
        print("clusterdesk screen: nothing could be screened"
              + (f" ({'; '.join(reasons)})" if reasons else " (no column of numbers was found)")
              + ".", file=err)
        return 3
    return 0
