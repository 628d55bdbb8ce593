"""Bootstrap intervals, label matching and the likelihood-ratio test.

References named beside each check:
- Efron & Tibshirani (1993), An Introduction to the Bootstrap: percentile
  intervals (§13.3), bootstrap standard error (eq. 6.6), standard error of a
  mean sigma/sqrt(n) (§5.2, from memory);
- McLachlan (1987), Applied Statistics 36:318-324: bootstrap likelihood-ratio
  test for the number of components;
- scipy.optimize.brentq and scipy.stats.norm as an independent solver for cut points;
- scipy.stats.binom for the binomial tolerances of simulation studies.
All data are synthetic, drawn here with fixed seeds.
"""

from __future__ import annotations

import dataclasses
import threading

import numpy as np
import pytest
from scipy import optimize, stats

import clusterdesk
from clusterdesk.engine.bootstrap import bootstrap_model, cut_point_intervals, percentile_interval
from clusterdesk.engine.fitting import FitSettings
from clusterdesk.engine.labels import match_to_reference, posterior_agreement
from clusterdesk.engine.mixture import Mixture
from clusterdesk.engine.replicates import draw_replicates, plan_replicates
from clusterdesk.engine.validation import prepare_sample


def binomial_range(trials: int, p: float, tail: float = 0.0005) -> tuple[int, int]:
    """Central 99.9% range of a Binomial(trials, p) count (scipy.stats.binom)."""
    return int(stats.binom.ppf(tail, trials, p)), int(stats.binom.isf(tail, trials, p))


def two_groups(seed: int, n: int = 300) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.concatenate([rng.normal(10.0, 1.0, int(0.4 * n)), rng.normal(15.0, 1.5, n - int(0.4 * n))])


# ------------------------------------------------------ batched E-step
def test_per_row_counts_and_values_match_one_row_at_a_time():
    # Reference: the E-step with one shared count vector (the established
    # behaviour), applied to each replicate's counts / values separately.
    from clusterdesk.engine.em import e_step
    rng = np.random.default_rng(14)
    x = np.sort(rng.normal(0.0, 1.0, 3000))
    counts = rng.multinomial(3000, np.full(3000, 1 / 3000), size=5).astype(float)
    logw = np.log(np.tile([0.3, 0.7], (5, 1)))
    mu = np.tile([-0.5, 0.6], (5, 1)) + rng.normal(0, 0.1, (5, 2))
    var = np.tile([0.5, 0.8], (5, 1))
    values = rng.normal(0.0, 1.0, (5, 3000))
    for xs, cs in ((x, counts), (values, np.ones(3000)), (values, counts)):
        batched = e_step(xs, cs, logw, mu, var)
        for b in range(5):
            one = e_step(xs[b] if xs.ndim == 2 else xs, cs[b] if cs.ndim == 2 else cs,
                         logw[b:b + 1], mu[b:b + 1], var[b:b + 1])
            for name in ("loglik", "nk", "sd", "sdd"):
                np.testing.assert_allclose(getattr(batched, name)[b], getattr(one, name)[0], rtol=1e-12)


# ---------------------------------------------------------------- coverage
@pytest.mark.slow
def test_percentile_intervals_cover_true_means_at_nominal_rate():
    # Simulation study of percentile intervals (Efron & Tibshirani 1993, §13.3):
    # 150 samples of n = 200 from a known two-component mixture, 99 resampling
    # replicates each, nominal 90% intervals for both means.  The count of
    # intervals covering the truth must be a plausible Binomial(150, 0.9) count.
    truth = Mixture([0.4, 0.6], [0.0, 4.0], [1.0, 1.5])
    data_sets = 150
    covered = np.zeros(2, dtype=int)
    for i in range(data_sets):
        x = truth.sample(np.random.default_rng([77, i]), 200)
        model = clusterdesk.fit(x, 2, restarts=5, seed=i)
        result = clusterdesk.bootstrap(x, model, replicates=99, level=0.9, seed=i, workers=1)
        assert result.n_ok + result.n_failed + result.n_collapsed == 99
        lo, hi = result.mean_interval[:, 0], result.mean_interval[:, 1]
        covered += (lo <= truth.means) & (truth.means <= hi)
    low, high = binomial_range(data_sets, 0.9)
    assert np.all((low <= covered) & (covered <= high)), (covered, low, high)


def test_percentile_interval_uses_order_statistics():
    # Efron & Tibshirani (1993), §12.5/§13.3 (from memory): with B = 999 and 95%,
    # the limits are the 25th and the 975th ordered replicates.
    values = np.random.default_rng(1).permutation(np.arange(1.0, 1000.0))[:, None]
    np.testing.assert_array_equal(percentile_interval(values, 0.95), [[25.0, 975.0]])
    with_nan = np.vstack([values, [[np.nan]]])
    np.testing.assert_array_equal(percentile_interval(with_nan, 0.95), [[25.0, 975.0]])


# -------------------------------------------------------- standard errors
@pytest.mark.parametrize("method", ["resample", "parametric"])
def test_standard_error_of_one_component_mean_matches_textbook(method):
    # The standard error of a mean is s / sqrt(n) (Efron & Tibshirani 1993, §5.2);
    # the bootstrap standard error (their eq. 6.6) must agree within 10%
    # (Monte Carlo error with 1000 replicates is about 2%).
    x = np.random.default_rng(5).normal(50.0, 4.0, 400)
    model = clusterdesk.fit(x, 1)
    result = clusterdesk.bootstrap(x, model, replicates=1000, method=method, seed=2)
    textbook = np.std(x, ddof=1) / np.sqrt(x.size)
    assert result.path == ("values" if method == "resample" else "simulated values")
    assert result.mean_se[0] == pytest.approx(textbook, rel=0.10)


def test_standard_error_on_fine_histogram_path_matches_textbook():
    # Many distinct values: counts over a fine histogram (same distribution as
    # resampling then binning); s / sqrt(n) as above (Efron & Tibshirani 1993, §5.2).
    x = np.random.default_rng(6).normal(-3.0, 0.5, 6000)
    model = clusterdesk.fit(x, 1)
    result = clusterdesk.bootstrap(x, model, replicates=1000, seed=3)
    assert result.path == "fine histogram"
    assert result.mean_se[0] == pytest.approx(np.std(x, ddof=1) / np.sqrt(x.size), rel=0.10)
    assert any("fine histogram" in note for note in result.notes)


def test_fine_histogram_agrees_with_resampling_the_raw_values():
    # The histogram path draws from the binned empirical distribution; its
    # standard errors must match those of resampling the raw values (the same
    # procedure forced onto the raw values), within Monte Carlo error of 400
    # replicates each (about 5% on the ratio; tolerance 20%).
    x = two_groups(8, n=6000)
    model = clusterdesk.fit(x, 2)
    sample = prepare_sample(x)
    binned = bootstrap_model(sample, model, replicates=400, seed=4)
    raw = bootstrap_model(sample, model, replicates=400, seed=5,
                          settings=FitSettings(bin_above=10**9))
    assert (binned.path, raw.path) == ("fine histogram", "values")
    for name in ("weight_se", "mean_se", "sd_se"):
        np.testing.assert_allclose(getattr(binned, name), getattr(raw, name), rtol=0.2)


def test_binning_offset_is_sheppards_correction_and_recentres_the_replicates(monkeypatch):
    # One normal component on bins of about half its standard deviation (forced
    # coarse here; the real plans use at least 20 bins per sd). The maximum-
    # likelihood variance of one normal is the sample's population variance
    # (common practice), so the binning offset must equal the population
    # variance of the values minus that of their bin midpoints, and that is
    # about -h^2/12 (Sheppard 1898; within 35 %: the covariance of values and
    # rounding errors in a sample of 6,000 is a few tenths of it). With the
    # offset the replicates' median standard deviation sits on the exact fit's;
    # without it they sit about one standard error higher (checked too, so the
    # test can tell the two apart).
    from clusterdesk.engine import replicates

    x = np.random.default_rng(21).normal(5.0, 1.5, 6000)
    model = clusterdesk.fit(x, 1)
    sample = prepare_sample(x)
    coarse = FitSettings(replicate_bins=16)
    monkeypatch.setattr(replicates, "_BINS_PER_SD", 2)
    plan = plan_replicates(sample, model, "resample", 0, coarse)
    assert plan.path == "fine histogram" and plan.binning_offset is not None
    h = float(np.diff(plan.support).min())
    z = (x - plan.center) / plan.scale
    bins = int(round((z.max() - z.min()) / h))
    midpoints = z.min() + (np.minimum(np.floor((z - z.min()) / h), bins - 1) + 0.5) * h
    assert plan.binning_offset[2][0] == pytest.approx(np.var(z) - np.var(midpoints), rel=1e-6)
    assert plan.binning_offset[2][0] == pytest.approx(-h * h / 12.0, rel=0.35)
    fitted_sd = model.mixture.sds[0]
    recentred = bootstrap_model(sample, model, replicates=400, seed=8, settings=coarse)
    assert abs(np.median(recentred.sds[:, 0]) - fitted_sd) < 0.3 * recentred.sd_se[0]
    assert any("midpoints" in note for note in recentred.notes)
    monkeypatch.setattr(replicates, "binning_offset", lambda plan: None)
    plain = bootstrap_model(sample, model, replicates=400, seed=8, settings=coarse)
    assert np.median(plain.sds[:, 0]) - fitted_sd > 0.7 * plain.sd_se[0]


def test_parametric_bootstrap_of_rounded_values_uses_the_grid():
    # Values recorded to 0.1: simulated samples are rounded alike (counts over
    # grid cells); the mean's standard error is still s / sqrt(n) (as above).
    # The values are taken as exact here (the grid path of exact values).
    x = np.round(np.random.default_rng(9).normal(20.0, 2.0, 500), 1)
    model = clusterdesk.fit(x, 1, treatment="exact")
    result = clusterdesk.bootstrap(x, model, replicates=1000, method="parametric", seed=6)
    assert result.path == "grid"
    assert result.mean_se[0] == pytest.approx(np.std(x, ddof=1) / np.sqrt(x.size), rel=0.10)


# -------------------------------------------------------- label matching
def test_matching_recovers_a_known_permutation():
    # Reference: the permutation applied here; the matcher must undo it.
    rng = np.random.default_rng(12)
    w = np.array([0.3, 0.5, 0.2])
    mu = np.array([-2.0, 0.0, 2.5])
    var = np.array([0.5, 1.0, 0.3])
    x = np.linspace(-5.0, 5.0, 400)
    shuffles = np.array([rng.permutation(3) for _ in range(20)])
    replicate = tuple(np.take_along_axis(np.tile(a, (20, 1)), shuffles, axis=1) for a in (w, mu, var))
    order = match_to_reference(posterior_agreement(x, np.ones(x.size), (w, mu, var), replicate))
    np.testing.assert_array_equal(np.take_along_axis(shuffles, order, axis=1), np.tile(np.arange(3), (20, 1)))


@pytest.mark.parametrize("k", [1, 2, 4, 6, 7])
def test_matching_finds_the_assignment_optimum_of_scipy(k):
    # Reference: scipy.optimize.linear_sum_assignment (maximize=True) on random
    # agreement tables; up to six components the matcher tries every labelling
    # instead, beyond that it calls scipy itself.
    from scipy.optimize import linear_sum_assignment

    rng = np.random.default_rng(30 + k)
    tables = rng.uniform(0.0, 100.0, size=(40, k, k))
    order = match_to_reference(tables)
    for table, got in zip(tables, order):
        _, best = linear_sum_assignment(table, maximize=True)
        np.testing.assert_array_equal(got, best)


def test_agreement_matches_a_direct_sum_of_posteriors():
    # Independent computation with Mixture.posterior.
    ref = Mixture([0.6, 0.4], [0.0, 2.0], [1.0, 0.7])
    rep = Mixture([0.5, 0.5], [0.2, 1.8], [1.1, 0.8])
    x = np.linspace(-3.0, 5.0, 50)
    c = np.arange(1.0, 51.0)
    direct = (ref.posterior(x) * c[:, None]).T @ rep.posterior(x)
    got = posterior_agreement(x, c, (ref.weights, ref.means, ref.sds**2),
                              (rep.weights[None], rep.means[None], rep.sds[None] ** 2))
    np.testing.assert_allclose(got[0], direct, rtol=1e-12)


def test_close_means_with_different_widths_keep_their_labels():
    # Equal true means, sds 1 and 4: ordering replicates by mean would swap the
    # narrow and the wide component in many of them; matching by the values each
    # explains keeps every replicate's narrow component as the narrow one.
    truth = Mixture([0.5, 0.5], [0.0, 0.0], [1.0, 4.0])
    x = truth.sample(np.random.default_rng(11), 1500)
    model = clusterdesk.fit(x, 2)
    result = clusterdesk.bootstrap(x, model, replicates=100, seed=1)
    narrow = int(np.argmin(model.mixture.sds))
    wide = 1 - narrow
    swaps_by_mean = np.mean(result.means[:, 0] > result.means[:, 1])
    assert swaps_by_mean > 0.05, swaps_by_mean          # sorting by mean would mislabel these
    assert np.all(result.sds[:, narrow] < 1.5) and np.all(result.sds[:, wide] > 3.0)
    assert result.sd_interval[narrow, 1] < result.sd_interval[wide, 0]


# ------------------------------------------------------------- cut points
def _cut_by_root_finding(w1, m1, s1, w2, m2, s2):
    """Independent solver: brentq on log(w1 phi1) - log(w2 phi2) between the means."""
    f = lambda x: (np.log(w1) + stats.norm.logpdf(x, m1, s1)) - (np.log(w2) + stats.norm.logpdf(x, m2, s2))
    lo, hi = min(m1, m2), max(m1, m2)
    if np.sign(f(lo)) == np.sign(f(hi)):
        return np.nan
    return optimize.brentq(f, lo, hi, xtol=1e-13)


def test_replicate_cut_points_match_root_finding():
    # scipy.optimize.brentq with scipy.stats.norm.logpdf as the reference.
    x = two_groups(21)
    model = clusterdesk.fit(x, 2)
    result = clusterdesk.bootstrap(x, model, replicates=60, seed=7)
    for b in range(0, result.n_ok, 3):
        w, m, s = result.weights[b], result.means[b], result.sds[b]
        expected = _cut_by_root_finding(w[0], m[0], s[0], w[1], m[1], s[1])
        assert result.cut_points[b, 0] == pytest.approx(expected, rel=1e-10)
    lo, hi = result.cut_point_interval[0]
    assert lo < model.mixture.cut_points()[0] < hi
    assert result.cut_points_withheld.tolist() == [False] and result.cut_points_missing.tolist() == [0]


def test_shared_width_cut_points_match_the_equal_variance_formula():
    # Equal sds: x = (m1 + m2)/2 + s^2 ln(w1/w2) / (m2 - m1) (common practice).
    x = two_groups(22)
    model = clusterdesk.fit(x, 2, widths="shared")
    result = clusterdesk.bootstrap(x, model, replicates=40, seed=8)
    np.testing.assert_allclose(result.sds[:, 0], result.sds[:, 1], rtol=1e-12)
    w, m, s = result.weights, result.means, result.sds[:, 0]
    formula = 0.5 * (m[:, 0] + m[:, 1]) + s**2 * np.log(w[:, 0] / w[:, 1]) / (m[:, 1] - m[:, 0])
    np.testing.assert_allclose(result.cut_points[:, 0], formula, rtol=1e-10)


def test_cut_point_interval_is_withheld_when_too_many_replicates_lack_it():
    # Percentile interval of the replicates that have the cut point (Efron &
    # Tibshirani 1993, §13.3: order statistics j and B + 1 - j of the finite
    # entries). Withholding when more than (1 - level) of the replicates lack
    # the cut point, or when the fit has none, is our rule (the coverage
    # arithmetic of a percentile interval), not a published one.
    rng = np.random.default_rng(40)
    cuts = rng.normal(5.0, 0.3, (200, 3))
    cuts[:10, 0] = np.nan    # 10 of 200 = 5 %: still an interval (from the other 190)
    cuts[:11, 1] = np.nan    # 11 of 200 > 5 %: withheld
    interval, se, missing, withheld = cut_point_intervals(cuts, [4.9, 5.1, np.nan], 0.95)
    assert missing.tolist() == [10, 11, 0]
    assert withheld.tolist() == [False, True, True]  # the third: the fit itself has no cut point
    finite = np.sort(cuts[10:, 0])
    j = int(np.floor((190 + 1) * 0.025))
    assert interval[0].tolist() == [finite[j - 1], finite[190 - j]]
    assert se[0] == pytest.approx(np.std(finite, ddof=1), rel=1e-12)
    assert np.all(np.isnan(interval[1:])) and np.all(np.isnan(se[1:]))
    interval90, *_, withheld90 = cut_point_intervals(cuts, [4.9, 5.1, 5.0], 0.90)
    assert withheld90.tolist() == [False, False, False]  # 11 of 200 is within 10 %
    assert np.all(np.isfinite(interval90))


@pytest.mark.parametrize("seed, fit_has_cut", [(0, False), (1, True)])
def test_an_unstable_cut_point_gets_no_interval_and_a_note_says_why(seed, fit_has_cut):
    # A narrow small group on the shoulder of a wide one (synthetic, seeded):
    # whether the two fitted densities cross between their means changes from
    # resample to resample. Seed 0: the fit itself has no cut point; seed 1: it
    # has one, but 40 of 100 replicates do not (more than the 5 % a 95 %
    # interval may leave out). Either way no interval is reported.
    rng = np.random.default_rng(seed)
    x = np.concatenate([rng.normal(0.0, 0.25, 120), rng.normal(1.5, 2.0, 1380)])
    model = clusterdesk.fit(x, 2)
    assert np.isfinite(model.mixture.cut_points()[0]) == fit_has_cut
    result = clusterdesk.bootstrap(x, model, replicates=100, seed=1)
    assert result.cut_points_missing[0] > 0.05 * result.n_ok
    assert result.cut_points_withheld.tolist() == [True]
    assert np.all(np.isnan(result.cut_point_interval)) and np.isnan(result.cut_point_se[0])
    assert np.all(np.isfinite(result.mean_interval))  # the other quantities keep theirs
    wording = "not stable" if fit_has_cut else "there is no cut point 1-2"
    assert any(wording in note for note in result.notes)
    row = result.table_rows()[-1]
    assert row[0] == "cut point 1-2" and np.isnan(row[2]) and np.isnan(row[3])


# ------------------------------------------------------ failed and collapsed
def test_collapsed_replicates_are_counted_not_hidden():
    # Four far values make a small component (weight 4/300). A resample with at
    # most one of them cannot keep two values in it: the collapse rule of the
    # fits (min_count = 2) must flag it; the intervals come from the rest.
    rng = np.random.default_rng(3)
    x = np.concatenate([rng.normal(0.0, 1.0, 296), rng.normal(10.0, 0.3, 4)])
    model = clusterdesk.fit(x, 2)
    result = clusterdesk.bootstrap(x, model, replicates=200, seed=1)
    plan = plan_replicates(prepare_sample(x), model, "resample", 1)
    support, counts = draw_replicates(plan, np.arange(200))
    far = counts[:, plan.center + plan.scale * support > 5.0].sum(axis=1)
    usable = np.zeros(200, dtype=bool)
    usable[result.ok_replicates] = True
    assert result.n_collapsed >= np.count_nonzero(far <= 1) > 0
    assert not np.any(usable & (far <= 1))
    assert np.all(usable[far >= 4])
    assert result.n_ok + result.n_failed + result.n_collapsed == 200
    assert result.weights.shape == (result.n_ok, 2)
    assert any("collapsed" in note for note in result.notes)


# ------------------------------------------------- likelihood-ratio test
@pytest.mark.slow
def test_likelihood_ratio_test_holds_its_level_under_the_null():
    # McLachlan (1987): under one normal component the statistic's law does not
    # depend on the mean and sd (affine invariance, from memory), so the
    # bootstrap test is exact up to optimisation: with 19 simulated samples,
    # p <= 0.25 has probability 5/20 and must occur in a Binomial(30, 0.25) share.
    rejections = 0
    for i in range(30):
        x = np.random.default_rng([31, i]).normal(5.0, 2.0, 50)
        test = clusterdesk.likelihood_ratio_test(x, 1, replicates=19, restarts=3, seed=i, workers=1)
        rejections += test.p_value <= 0.25 + 1e-12
    low, high = binomial_range(30, 0.25)
    assert low <= rejections <= high, (rejections, low, high)


def test_likelihood_ratio_test_rejects_two_clear_groups():
    # McLachlan (1987): p = (1 + #{LR* >= LR}) / (1 + B), smallest 1 / (1 + B).
    x = two_groups(40, n=200)
    test = clusterdesk.likelihood_ratio_test(x, 1, replicates=19, seed=3)
    assert test.statistic > test.simulated.max()
    assert test.p_value == pytest.approx(1.0 / 20.0)
    assert test.statistic == pytest.approx(2.0 * (test.alternative_model.loglik - test.null_model.loglik))
    assert test.simulated.shape == (19,) and "p-value" in test.describe()


def test_likelihood_ratio_test_is_reproducible_and_worker_independent():
    x = np.random.default_rng(41).normal(0.0, 1.0, 80)
    one = clusterdesk.likelihood_ratio_test(x, 1, replicates=19, seed=5, workers=1)
    two = clusterdesk.likelihood_ratio_test(x, 1, replicates=19, seed=5, workers=2)
    other = clusterdesk.likelihood_ratio_test(x, 1, replicates=19, seed=6, workers=1)
    np.testing.assert_array_equal(one.simulated, two.simulated)
    assert one.p_value == two.p_value
    assert not np.array_equal(one.simulated, other.simulated)


def test_likelihood_ratio_test_gives_the_same_result_on_worker_processes(monkeypatch):
    # Long tests run their simulated samples on processes; force that path here.
    from clusterdesk.engine import lrtest
    x = np.random.default_rng(43).normal(0.0, 1.0, 60)
    serial = clusterdesk.likelihood_ratio_test(x, 1, replicates=19, seed=2, workers=1)
    monkeypatch.setattr(lrtest, "_PROCESS_WORTH_SECONDS", 0.0)
    calls = []
    pooled = clusterdesk.likelihood_ratio_test(x, 1, replicates=19, seed=2, workers=2,
                                               progress=lambda done, total: calls.append(done))
    np.testing.assert_array_equal(serial.simulated, pooled.simulated)
    assert calls[-1] == 19


@pytest.mark.parametrize("kwargs", [dict(k=0), dict(k=40), dict(replicates=5), dict(widths="both"),
                                    dict(restarts=0), dict(seed=-1)])
def test_likelihood_ratio_test_rejects_bad_arguments(kwargs):
    x = np.random.default_rng(42).normal(0.0, 1.0, 60)
    arguments = dict(k=1) | kwargs
    k = arguments.pop("k")
    with pytest.raises(clusterdesk.InputError):
        clusterdesk.likelihood_ratio_test(x, k, **arguments)


# ------------------------------------------- reproducibility, progress, cancel
@pytest.mark.parametrize("method", ["resample", "parametric"])
def test_same_seed_gives_identical_arrays_whatever_the_workers(method):
    x = two_groups(50)
    model = clusterdesk.fit(x, 2)
    one = clusterdesk.bootstrap(x, model, replicates=150, method=method, seed=9, workers=1)
    two = clusterdesk.bootstrap(x, model, replicates=150, method=method, seed=9, workers=2)
    other = clusterdesk.bootstrap(x, model, replicates=150, method=method, seed=10, workers=1)
    for name in ("weights", "means", "sds", "cut_points", "mean_interval", "sd_se"):
        np.testing.assert_array_equal(getattr(one, name), getattr(two, name))
    assert not np.array_equal(one.means, other.means)


def test_progress_is_reported_per_batch_and_results_are_read_only():
    x = two_groups(51)
    model = clusterdesk.fit(x, 2)
    calls = []
    result = clusterdesk.bootstrap(x, model, replicates=150, seed=1,
                                   progress=lambda done, total: calls.append((done, total)))
    assert len(calls) >= 2 and calls[-1] == (150, 150)
    assert all(a[0] < b[0] for a, b in zip(calls, calls[1:]))
    assert {total for _, total in calls} == {150}
    with pytest.raises(ValueError):
        result.means[0, 0] = 0.0
    assert result.describe().startswith("95% percentile intervals from")
    assert len(result.table_rows()) == 3 * 2 + 1


def test_cancel_stops_the_bootstrap():
    x = two_groups(52)
    model = clusterdesk.fit(x, 2)
    token = threading.Event()
    token.set()
    with pytest.raises(clusterdesk.Cancelled):
        clusterdesk.bootstrap(x, model, replicates=150, cancel=token)
    late = threading.Event()
    with pytest.raises(clusterdesk.Cancelled):
        clusterdesk.bootstrap(x, model, replicates=200, cancel=late, workers=1,
                              progress=lambda done, total: late.set())


@pytest.mark.parametrize("kwargs", [dict(method="jackknife"), dict(replicates=5), dict(replicates=2.5),
                                    dict(level=1.0), dict(level=0.0), dict(seed=-3), dict(workers=0)])
def test_bad_arguments_raise_input_error(kwargs):
    x = two_groups(53)
    model = clusterdesk.fit(x, 2)
    with pytest.raises(clusterdesk.InputError):
        clusterdesk.bootstrap(x, model, **kwargs)


def test_model_must_belong_to_the_values():
    x = two_groups(54)
    model = clusterdesk.fit(x, 2)
    with pytest.raises(clusterdesk.InputError, match="fitted to"):
        clusterdesk.bootstrap(x[:-1], model)
    with pytest.raises(clusterdesk.InputError, match="does not belong"):
        clusterdesk.bootstrap(two_groups(55), model)
    with pytest.raises(clusterdesk.InputError, match="fitted model"):
        clusterdesk.bootstrap(x, model.mixture)
    with pytest.raises(clusterdesk.InputError, match="collapsed"):
        clusterdesk.bootstrap(x, dataclasses.replace(model, collapsed=True))
