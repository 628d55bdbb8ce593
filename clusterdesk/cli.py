"""The ``clusterdesk`` command.

With no argument it will open the window (not built yet: for now it runs a
short headless demonstration scan on a seeded synthetic sample).
"""

from __future__ import annotations

import argparse
import sys

import numpy as np

from . import __version__
from .api import scan
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
    print("The desktop window is not built yet; here is a headless demonstration instead.", file=out)
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
    for r in result.ranking:
        lines.append(f"{r.rank:>4} {r.k:>2} {r.widths:<9} {r.loglik:>12.3f} {r.n_params:>6} "
                     f"{r.bic:>11.3f} {r.delta_bic:>8.2f} {r.bic_weight:>7.3f} {r.icl:>11.3f} "
                     f"{'yes' if r.converged else 'NO':>4} {r.restarts_agreeing:>3}/{r.restarts:<2}"
                     + ("  collapsed" if r.collapsed else ""))
    return "\n".join(lines)


def format_components(model) -> str:
    """The components of one model as a plain-text table, with cut points."""
    m = model.mixture
    cuts = m.cut_points()
    lines = [f"{'component':>9} {'weight':>8} {'mean':>12} {'sd':>12} {'cut to next':>12}"]
    for j in range(m.k):
        cut = f"{cuts[j]:12.4g}" if j < m.k - 1 else " " * 12
        lines.append(f"{j + 1:>9} {m.weights[j]:>8.4f} {m.means[j]:>12.5g} {m.sds[j]:>12.5g} {cut}")
    return "\n".join(lines)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="clusterdesk",
        description="Find, measure and label the groups in one column of measurements.",
        epilog="Run with no argument for a demonstration scan of a synthetic sample.",
    )
    parser.add_argument("--version", action="version", version=f"clusterdesk {__version__}")
    return parser


def main(argv=None) -> int:
    """Entry point; returns the process exit code (0 ok, 2 usage, 3 unusable input)."""
    parser = build_parser()
    args = sys.argv[1:] if argv is None else list(argv)
    try:
        parser.parse_args(args)
        return run_demo()
    except InputError as exc:
        print(f"clusterdesk: {exc}", file=sys.stderr)
        return 3
