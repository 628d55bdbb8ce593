"""Benchmark: clusterdesk.bootstrap against refitting each replicate with scikit-learn, side by side.

Run:  /work/venv/bin/python tests/bench/bench_bootstrap.py [--quick] [--replicates B]

Data: 10^5 synthetic values from three normal components (fixed seed).  One
reference fit (clusterdesk.fit, k = 3, separate widths) is the start of every
replicate in both programs.

- ours: clusterdesk.bootstrap(values, model, replicates=200), resampling; the
  sample has many distinct values, so each replicate is a vector of
  multinomial counts over a fine histogram (the same distribution as
  resampling the raw values and then binning), refitted side by side in
  batches; timed with 1 and with 2 worker threads.
- reference: scikit-learn's GaussianMixture(3, covariance_type="full",
  tol=1e-10, max_iter=100000, reg_covar=0 (1e-12 if refused)) started from our
  reference fit (weights_init, means_init, precisions_init), fitted to the
  same replicates as raw values: replicate b's raw resample is built from our
  replicate b's bin counts by drawing, within each bin, that many of the
  values in the bin with replacement, which is an exact resample of the raw
  values whose histogram is our replicate.

Printed: both times, the ratio (target: ours at least 20 times faster), the
largest difference between matching replicates' parameters in units of the
bootstrap standard error, and between the two programs' 95% percentile
interval limits in units of the interval width.  Both run with BLAS limited
to one thread (threadpoolctl); our two workers are our own threads.
"""

from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path

import numpy as np
from sklearn.exceptions import ConvergenceWarning
from sklearn.mixture import GaussianMixture
from threadpoolctl import threadpool_limits

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
import clusterdesk  # noqa: E402
from clusterdesk.engine.bootstrap import percentile_interval  # noqa: E402
from clusterdesk.engine.replicates import draw_replicates, plan_replicates  # noqa: E402
from clusterdesk.engine.validation import prepare_sample  # noqa: E402

SPEED_TARGET = 20.0
SEED = 7


def synthetic_values(n: int, seed: int = 20250) -> np.ndarray:
    """Synthetic values from three normal components, shape (n,)."""
    rng = np.random.default_rng(seed)
    labels = rng.choice(3, size=n, p=[0.45, 0.35, 0.2])
    return rng.normal(np.array([20.0, 26.0, 33.0])[labels], np.array([2.0, 2.5, 3.0])[labels])


def run_ours(values, model, replicates, workers):
    start = time.perf_counter()
    result = clusterdesk.bootstrap(values, model, replicates=replicates, seed=SEED, workers=workers)
    return result, time.perf_counter() - start


def raw_resamples(values, model, replicates):
    """Raw resamples whose fine-histogram counts are exactly our replicates' counts."""
    sample = prepare_sample(values)
    plan = plan_replicates(sample, model, "resample", SEED)
    assert plan.path == "fine histogram", plan.path
    z = (sample.values - plan.center) / plan.scale
    edges = 0.5 * (plan.support[1:] + plan.support[:-1])
    bin_of = np.searchsorted(edges, z)                     # sample.values are sorted
    starts = np.searchsorted(bin_of, np.arange(plan.support.size))
    sizes = np.diff(np.r_[starts, z.size])
    _, counts = draw_replicates(plan, np.arange(replicates))
    rng = np.random.default_rng(12345)
    for b in range(replicates):
        c = counts[b].astype(np.int64)
        bins = np.repeat(np.arange(c.size), c)
        picks = starts[bins] + (rng.random(bins.size) * sizes[bins]).astype(np.int64)
        yield sample.values[picks]


def run_reference(values, model, replicates):
    mix = model.mixture
    start_params = dict(weights_init=mix.weights, means_init=mix.means[:, None],
                        precisions_init=(1.0 / mix.sds**2)[:, None, None])
    params, iterations, unconverged, seconds = [], [], 0, 0.0
    for b, resample in enumerate(raw_resamples(values, model, replicates)):
        column = resample[:, None]
        start = time.perf_counter()
        for reg_covar in (0.0, 1e-12):
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore", ConvergenceWarning)
                    gm = GaussianMixture(3, covariance_type="full", tol=1e-10, max_iter=100_000,
                                         reg_covar=reg_covar, **start_params).fit(column)
                break
            except ValueError:
                if reg_covar:
                    raise
        seconds += time.perf_counter() - start
        params.append((gm.weights_, gm.means_[:, 0], np.sqrt(gm.covariances_[:, 0, 0])))
        iterations.append(gm.n_iter_)
        unconverged += not gm.converged_
        if (b + 1) % 20 == 0:
            print(f"  reference: {b + 1} replicates, {seconds:7.1f} s", flush=True)
    w, m, s = (np.array(a) for a in zip(*params))
    return dict(weights=w, means=m, sds=s, iterations=np.array(iterations),
                unconverged=unconverged), seconds


def agreement(ours, reference, level=0.95):
    """Largest differences: per replicate in standard errors, per limit in interval widths."""
    ok = ours.ok_replicates
    rows = []
    for name in ("weights", "means", "sds"):
        mine, theirs = getattr(ours, name), reference[name][ok]
        se = np.std(mine, axis=0, ddof=1)
        per_replicate = np.max(np.abs(mine - theirs) / se)
        lim_ours, lim_ref = percentile_interval(mine, level), percentile_interval(theirs, level)
        width = lim_ours[:, 1] - lim_ours[:, 0]
        per_limit = np.max(np.abs(lim_ours - lim_ref) / width[:, None])
        rows.append((name, per_replicate, per_limit, lim_ours, lim_ref))
    return rows


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=100_000)
    parser.add_argument("--replicates", type=int, default=200)
    parser.add_argument("--quick", action="store_true", help="40 replicates instead of 200")
    args = parser.parse_args()
    replicates = 40 if args.quick else args.replicates
    values = synthetic_values(args.n)
    with threadpool_limits(1):
        model = clusterdesk.fit(values, 3)
        clusterdesk.bootstrap(values[:2000], clusterdesk.fit(values[:2000], 3), replicates=10)  # warm-up
        ours1, t1 = run_ours(values, model, replicates, workers=1)
        ours2, t2 = run_ours(values, model, replicates, workers=2)
        assert all(np.array_equal(getattr(ours1, a), getattr(ours2, a)) for a in ("weights", "means", "sds"))
        print(f"ours: 1 worker {t1:.2f} s, 2 workers {t2:.2f} s (identical results); "
              f"path {ours1.path!r} over {ours1.support_size} bins; "
              f"{ours1.n_ok} ok, {ours1.n_failed} failed, {ours1.n_collapsed} collapsed", flush=True)
        reference, t_ref = run_reference(values, model, replicates)
    best = min(t1, t2)
    print(f"\n=== {replicates} resampling replicates, k = 3, n = {args.n:,} ===")
    print(f"clusterdesk, 1 worker : {t1:9.2f} s   ratio {t_ref / t1:7.1f}x")
    print(f"clusterdesk, 2 workers: {t2:9.2f} s   ratio {t_ref / t2:7.1f}x   (threads speed-up {t1 / t2:.2f}x)")
    print(f"sklearn tol=1e-10     : {t_ref:9.2f} s   (median {int(np.median(reference['iterations']))} "
          f"iterations per replicate, {reference['unconverged']} not converged)")
    print("\nagreement (ours vs sklearn on the same replicates):")
    for name, per_replicate, per_limit, lim_ours, lim_ref in agreement(ours1, reference):
        print(f"  {name:8s} largest replicate difference {per_replicate:.3g} standard errors; "
              f"largest 95% limit difference {per_limit:.3g} interval widths")
        for j in range(3):
            print(f"      component {j + 1}: ours [{lim_ours[j, 0]:.5g}, {lim_ours[j, 1]:.5g}]  "
                  f"sklearn [{lim_ref[j, 0]:.5g}, {lim_ref[j, 1]:.5g}]")
    passed = t_ref / best >= SPEED_TARGET
    print(f"\nspeed target (>= {SPEED_TARGET:.0f}x): {'met' if passed else 'NOT met'} ({t_ref / best:.1f}x)")
    return 0 if passed else 1


if __name__ == "__main__":
    sys.exit(main())
