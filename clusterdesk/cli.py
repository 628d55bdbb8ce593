"""The ``clusterdesk`` command.

With no argument it opens the desktop window; with a single existing file as
its only argument (a data file or a saved analysis) it opens the window with
that file. Subcommands run headless: ``fit``, ``columns`` and ``demo`` (a
short demonstration scan on a seeded synthetic sample). The window's modules
are imported only when the window is opened, so the headless commands never
load Qt.
"""

from __future__ import annotations

import argparse
import math
import os
import sys

import numpy as np

from ._version import __version__
from .api import scan
from .display import shown
from .engine.bootstrap import CUT_POINT_CAUTION
from .io.cleaning import to_original_scale
from .screen.tasks import describe_model
from .errors import InputError

__all__ = ["main"]

DEMO_SEED = 20261201


def demo_sample(seed: int = DEMO_SEED) -> np.ndarray:
    """Synthetic fish lengths (mm) from three invented age classes.

    Invented for the demonstration: weights 0.5 / 0.3 / 0.2, means 95 / 140 /
    190 mm, standard deviations 9 / 12 / 15 mm, 600 fish, recorded to 1 mm.
    """
    rng = np.random.default_rng(seed)
    ages = rng.choice(3, size=600, p=[0.5, 0.3, 0.2])
    lengths = rng.normal(np.array([95.0, 140.0, 190.0])[ages], np.array([9.0, 12.0, 15.0])[ages])
    return np.round(lengths)


def run_demo(out=sys.stdout) -> int:
    """Scan the synthetic demonstration sample and print the ranking."""
    values = demo_sample()
    print("ClusterDesk", __version__, file=out)
    print("Headless demonstration (run clusterdesk with no argument for the window).", file=out)
    print(f"Synthetic sample: {values.size} invented fish lengths (mm) from three age classes "
          f"(seed {DEMO_SEED}).", file=out)
    result = scan(values, kmin=1, kmax=5, widths="both", seed=0)
    print(format_ranking(result), file=out)
    best = result.best
    print(f"\nBest model: {best.k} components, {best.widths} widths "
          f"(evidence over the runner-up: {result.evidence}).", file=out)
    print(format_components(best), file=out)
    print("\nCaution: a fitted cut point is a statistical estimate, not a validated diagnostic "
          "or acceptance limit.", file=out)
    return 0


def format_ranking(result) -> str:
    """The ranking as a plain-text table."""
    lines = [f"{'rank':>4} {'k':>2} {'widths':<9} {'log-lik':>12} {'params':>6} {'BIC':>11} "
             f"{'dBIC':>8} {'weight':>7} {'ICL':>11} {'conv':>4} {'agree':>6}"]
    if getattr(result, "treatment", None) is not None:
        lines.insert(0, f"Values treated as: {result.treatment.describe()}")
    for r in result.ranking:
        lines.append(f"{r.rank:>4} {r.k:>2} {r.widths:<9} {r.loglik:>12.3f} {r.n_params:>6} "
                     f"{r.bic:>11.3f} {r.delta_bic:>8.2f} {r.bic_weight:>7.3f} {r.icl:>11.3f} "
                     f"{'yes' if r.converged else 'NO':>4} {r.restarts_agreeing:>3}/{r.restarts:<2}"
                     + ("  collapsed" if r.collapsed else ""))
    return "\n".join(lines)


def _number(value: float, spec: str) -> str:
    """A number in a plain-text table; a missing one (NaN: no cut point, no interval) is "none"."""
    if math.isnan(value):
        width = int("".join(ch for ch in spec.split(".")[0] if ch.isdigit()) or 0)
        return f"{'none':>{width}}"
    return format(value, spec)


def format_components(model, scale: str = "linear") -> str:
    """The components of one model as a plain-text table, with cut points.

    On a log scale (``scale`` "ln" or "log10") the columns are on that scale
    and three more give the original scale: the geometric mean, the
    multiplicative spread (the back-transformed sd) and the cut point.
    """
    m = model.mixture
    cuts = m.cut_points()
    detail = float(m.sds.min()) / 10  # a tenth of the narrowest component's sd still shows
    on = "" if scale == "linear" else f" ({scale})"
    header = f"{'component':>9} {'weight':>8} {'mean' + on:>12} {'sd' + on:>12} {'cut to next':>12}"
    if scale != "linear":
        header += f" {'geom. mean':>12} {'mult. spread':>12} {'cut, original':>14}"
    lines = [header]
    for j in range(m.k):
        cut = f"{shown(cuts[j], detail):>12}" if j < m.k - 1 else " " * 12
        line = (f"{j + 1:>9} {m.weights[j]:>8.4f} {shown(m.means[j], detail):>12} "
                f"{shown(m.sds[j], detail):>12} {cut}")
        if scale != "linear":
            mean, spread = (float(to_original_scale(v, scale)) for v in (m.means[j], m.sds[j]))
            cut_back = float(to_original_scale(cuts[j], scale)) if j < m.k - 1 else math.nan
            # Back on the original scale the detail is relative: the same share of each number.
            relative = abs(mean) * (math.expm1(detail * (math.log(10) if scale == "log10" else 1.0)))
            line += f" {shown(mean, relative):>12} {shown(spread, 1e-4 * spread):>12}"
            line += f" {shown(cut_back, relative):>14}" if j < m.k - 1 else ""
        lines.append(line)
    return "\n".join(lines)


EXAMPLES = """\
examples:
  clusterdesk                                   open the window
  clusterdesk survey.csv                        open the window with this file (or a saved .cdesk)
  clusterdesk demo                              a short demonstration scan, headless
  clusterdesk columns survey.csv                list the columns and what they hold
  clusterdesk fit survey.csv --column length_mm --kmax 5
  clusterdesk fit tally.csv --column length_cm --counts count --widths separate
  clusterdesk fit assay.csv --scale log10 --low 0.01 --out results/
  clusterdesk fit survey.csv --intervals 200 --report survey.html --out results/
  clusterdesk fit gauge.xlsx --sheet inspection --column diameter_mm --json
  clusterdesk fit survey.csv --values-as exact      values at face value, not as intervals
  clusterdesk fit tally.csv --counts n --value-at lower   each class named by its lower end
  clusterdesk fit survey.csv --values-as intervals --resolution 0.5

exit codes: 0 success, 2 usage error, 3 unusable input (the message says why)
"""


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors and exit code 2 for usage mistakes."""

    def error(self, message):
        self.exit(2, f"{self.prog}: {message} (see --help)\n")


def build_parser() -> argparse.ArgumentParser:
    """The command-line grammar."""
    parser = _Parser(
        prog="clusterdesk",
        description="Find, measure and label the groups in one column of measurements "
                    "with Gaussian mixtures.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"clusterdesk {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    sub.add_parser("demo", help="a demonstration scan of a synthetic sample, headless")
    from .screen.cli import add_screen_parser

    add_screen_parser(sub)

    cols = sub.add_parser("columns", help="list the columns of a file and what they hold")
    cols.add_argument("file")
    cols.add_argument("--sheet", help="sheet name or 0-based number (workbooks)")

    fit = sub.add_parser("fit", help="fit mixtures to one column of one file",
                         epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    fit.add_argument("file", help="CSV, TSV, text or XLSX file")
    fit.add_argument("--column", help="value column: name or 0-based number (default: first numeric)")
    fit.add_argument("--counts", help="count column for value/count tables")
    fit.add_argument("--sheet", help="sheet name or 0-based number (workbooks)")
    fit.add_argument("--kmin", type=int, default=1, help="fewest components (default 1)")
    fit.add_argument("--kmax", type=int, default=6, help="most components (default 6)")
    fit.add_argument("--widths", choices=("separate", "shared", "both"), default="both",
                     help="each component its own sd, one shared sd, or both (default both)")
    fit.add_argument("--restarts", type=int, default=10, help="starts per model (default 10)")
    fit.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    fit.add_argument("--scale", choices=("linear", "ln", "log10"), default="linear",
                     help="fit on the values or on their logarithm (default linear)")
    fit.add_argument("--values-as", choices=("auto", "exact", "intervals"), default="auto",
                     help="fit the values as exact, or as intervals of their resolution "
                          "(each value known only to within its recording step); auto decides "
                          "from the resolution (default auto)")
    fit.add_argument("--resolution", type=float, metavar="STEP",
                     help="recording step or class width on the original scale "
                          "(default: detected from the values)")
    fit.add_argument("--value-at", choices=("middle", "lower", "upper"), default="middle",
                     help="where each value sits in its interval: the middle (rounded readings, "
                          "default), or the lower or upper end (a tally whose class 12 holds "
                          "12.0 to 12.99 is 'lower')")
    fit.add_argument("--low", type=float, help="exclude values below this (original scale)")
    fit.add_argument("--high", type=float, help="exclude values above this (original scale)")
    fit.add_argument("--choose", metavar="K[:WIDTHS]",
                     help="report this model instead of the best, e.g. 3 or 3:shared")
    fit.add_argument("--out", metavar="FOLDER", help="write CSV tables and summary.json here")
    fit.add_argument("--json", action="store_true", help="print the JSON summary instead of tables")
    boot = fit.add_argument_group("uncertainty")
    boot.add_argument("--intervals", type=int, metavar="REPLICATES", default=0,
                      help="estimate bootstrap intervals with this many replicates (e.g. 200)")
    boot.add_argument("--interval-method", choices=("resample", "parametric"), default="resample",
                      help="resample the values or simulate from the fit (default resample)")
    boot.add_argument("--level", type=float, default=0.95,
                      help="confidence level of the intervals (default 0.95)")
    boot.add_argument("--test-next", type=int, metavar="REPLICATES", default=0,
                      help="test the chosen k against k+1 components by a parametric bootstrap "
                           "of the likelihood ratio, with this many simulated samples (e.g. 99)")
    fit.add_argument("--report", metavar="FILE.html", help="write the HTML report here")
    return parser


def _column_arg(text):
    if text is None:
        return None
    return int(text) if text.isdigit() else text


def run_columns(args, out) -> int:
    """Print each column's name and what it holds."""
    from .io import list_columns

    columns = list_columns(args.file, sheet=_column_arg(args.sheet))
    print(f"{'#':>3}  {'name':<24} {'numbers':>8} {'other':>6} {'empty':>6}  first values", file=out)
    for c in columns:
        print(f"{c.index:>3}  {c.name[:24]:<24} {c.numeric_count:>8} {c.non_numeric_count:>6} "
              f"{c.empty_count:>6}  {', '.join(c.first_values)}", file=out)
    return 0


def run_fit(args, out) -> int:
    """Read, clean, scan, report; optionally write the tables."""
    import json

    from .analysis import Analysis, DataChoice, ScanSettings
    from .report.tables import CAUTION, summary_dict, write_tables

    data = DataChoice(column=_column_arg(args.column), counts=_column_arg(args.counts),
                      sheet=_column_arg(args.sheet), low=args.low, high=args.high, scale=args.scale)
    settings = ScanSettings(kmin=args.kmin, kmax=args.kmax, widths=args.widths,
                            restarts=args.restarts, seed=args.seed, treatment=args.values_as,
                            resolution=args.resolution, value_at=args.value_at)
    analysis = Analysis.from_file(args.file, data, settings)
    analysis.run_scan()
    if args.choose:
        k_text, _, widths = args.choose.partition(":")
        if not k_text.isdigit():
            raise InputError(f"--choose takes a component count such as 3 or 3:shared, not {args.choose!r}.")
        analysis.choose(int(k_text), widths or "separate")
    if args.intervals:
        analysis.run_intervals(replicates=args.intervals, method=args.interval_method,
                               level=args.level)
    lr_test = _next_component_test(analysis, args.test_next) if args.test_next else None
    written = write_tables(analysis, args.out) if args.out else {}
    if args.report:
        from .report.html import write_report

        written["report"] = write_report(analysis, args.report)
    if args.json:
        print(json.dumps(summary_dict(analysis), indent=2), file=out)
        return 0
    m = analysis.measurements
    print(f"{m.source}: column {m.column.name!r}; {m.summary}", file=out)
    censored = analysis.scan.treatment.censored
    if censored:  # excluded as values, yet in the likelihood: say so where the exclusion is printed
        print(f"the {censored:,} readings at a detection or reporting limit are in the fit as censored "
              "readings (known only to lie beyond their limit)", file=out)
    if m.resolution:
        print(f"values recorded to a resolution of {m.resolution:g}", file=out)
    print(f"fitted on the {m.scale} scale\n", file=out)
    print(format_ranking(analysis.scan), file=out)
    chosen = analysis.chosen
    label = "best" if analysis.choice is None else "chosen"
    print(f"\n{label.capitalize()} model: {describe_model(chosen.k, chosen.widths)} "
          f"(BIC evidence of the best over the runner-up: {analysis.scan.evidence or 'n/a'})", file=out)
    print(format_components(chosen, analysis.measurements.scale), file=out)
    for note in analysis.fit_notes:
        print(f"note: {note}", file=out)
    if analysis.intervals is not None:
        print(format_intervals(analysis.intervals), file=out)
    if lr_test is not None:
        print(f"\n{chosen.k} against {chosen.k + 1} components (parametric bootstrap of the "
              f"likelihood ratio, {lr_test.replicates} samples): statistic {lr_test.statistic:.3f}, "
              f"p = {lr_test.p_value:.3g}", file=out)
    if chosen.k > 1:
        print(f"\nCaution: {CAUTION}", file=out)
    for name, path in written.items():
        print(f"wrote {path}", file=out)
    return 0


def _next_component_test(analysis, replicates):
    from .api import likelihood_ratio_test

    values, counts = analysis.fit_input()
    chosen = analysis.chosen
    return likelihood_ratio_test(values, chosen.k, counts=counts, widths=chosen.widths,
                                 replicates=replicates, seed=analysis.settings.seed)


def format_intervals(boot) -> str:
    """Bootstrap intervals as a plain-text table."""
    lines = [f"\n{boot.describe()}",
             f"{'quantity':<16} {'estimate':>12} {'lower':>12} {'upper':>12} {'std. error':>12}"]
    floor = float(boot.reference.sds.min()) / 10
    for name, est, lo, hi, se in boot.table_rows():
        detail = min(se / 10, floor) if math.isfinite(se) and se > 0 else floor
        lines.append(f"{name:<16} {shown(est, detail):>12} {shown(lo, detail):>12} {shown(hi, detail):>12} "
                     f"{_number(se, '>12.4g')}")
    # The caution stands once, at the end of the output.
    lines += [f"note: {n}" for n in boot.notes if n != CUT_POINT_CAUTION]
    return "\n".join(lines)


_SUBCOMMANDS = ("fit", "columns", "demo", "screen")


def wants_window(argv) -> bool:
    """True for no argument, or one existing file that is not a subcommand's name."""
    if not argv:
        return True
    if len(argv) != 1 or argv[0] in _SUBCOMMANDS or argv[0].startswith("-"):
        return False
    from pathlib import Path

    return Path(argv[0]).is_file()


def display_missing(environ=None, platform=None) -> bool:
    """True on Linux when no display server is named and no Qt platform is chosen.

    Qt would then abort the process with a plugin error; the caller says what
    to do instead.
    """
    environ = os.environ if environ is None else environ
    platform = sys.platform if platform is None else platform
    return (platform.startswith("linux")
            and not any(environ.get(name) for name in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")))


def open_window(path=None) -> int:
    """Open the desktop window (imported here only, so headless use never loads Qt)."""
    if display_missing():
        print("clusterdesk: there is no display to open the window on (DISPLAY and WAYLAND_DISPLAY "
              "are not set). On a machine without a desktop use the command line (clusterdesk fit "
              "FILE; clusterdesk --help lists the commands), or set QT_QPA_PLATFORM=offscreen to run "
              "the window without showing it.", file=sys.stderr)
        return 3
    try:
        from .gui.app import main as window_main
    except ImportError as exc:
        print(f"clusterdesk: the window cannot start ({exc}); install PySide6-Essentials and "
              "pyqtgraph, or use a subcommand (see clusterdesk --help).", file=sys.stderr)
        return 3
    return window_main(path)


def main(argv=None) -> int:
    """Entry point; returns the process exit code (0 ok, 2 usage, 3 unusable input)."""
    argv = sys.argv[1:] if argv is None else list(argv)
    if wants_window(argv):
        return open_window(argv[0] if argv else None)
    parser = build_parser()
    args = parser.parse_args(argv)
    out = sys.stdout
    try:
        if args.command == "screen":
            from .screen.cli import run_screen

            return run_screen(args, out)
        if args.command == "fit":
            return run_fit(args, out)
        if args.command == "columns":
            return run_columns(args, out)
        if args.command == "demo":
            return run_demo(out)
        parser.print_help(out)
        return 2
    except InputError as exc:
        print(f"clusterdesk: {exc}", file=sys.stderr)
        return 3
    except OSError as exc:
        print(f"clusterdesk: {exc.strerror or exc} ({exc.filename or 'output'}); "
              "check the path and permissions.", file=sys.stderr)
        return 3
