"""EM on interval data (clusterdesk.engine.grouped) against independent references.

References: scipy.stats.norm.cdf / sf differences for the interval
probabilities and log-likelihood; scipy.stats.truncnorm for the truncated
moments of the M-step; scipy.optimize.minimize as an independent maximiser of
the interval log-likelihood; Sheppard (1898, Proc. London Math. Soc. 29:353-380)
for the variance inflation h**2/12 of values rounded to a step h.
The data sets are synthetic, drawn here with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, stats

import clusterdesk
from clusterdesk.engine.em import run_em
from clusterdesk.engine.fitting import FitSettings, has_spike
from clusterdesk.engine.grouped import (INTERVAL_MAX_ITER, fit_intervals, histogram_bins, interval_e_step,
                                        interval_loglik, interval_posterior, log_interval_mass,
                                        prepare_intervals)
from clusterdesk.engine.mixture import Mixture
from clusterdesk.engine.scan import model_rng
from clusterdesk.errors import InputError


def _two_groups(seed, n, means=(0.0, 8.0), sds=(1.0, 1.0), share=0.5):
    rng = np.random.default_rng(seed)
    first = rng.random(n) < share
    return np.where(first, rng.normal(means[0], sds[0], n), rng.normal(means[1], sds[1], n))


def _rounded_intervals(z, h):
    x = np.round(z / h) * h
    v, c = np.unique(x, return_counts=True)
    return prepare_intervals(v, c, v - h / 2, v + h / 2)


# ----------------------------------------------------------- the pieces
@pytest.mark.parametrize("a, b", [(-1.0, 0.5), (-40.0, -39.0), (30.0, 31.0), (2.0, 2.0 + 1e-6),
                                  (-np.inf, -5.0), (6.0, np.inf), (-np.inf, np.inf)])
def test_log_interval_mass_matches_scipy_cdf_differences(a, b):
    # Source: scipy.stats.norm; the upper tail through sf and the lower tail
    # through cdf (and logcdf where cdf itself underflows), so neither cancels.
    if a > 0:
        reference = np.log(stats.norm.sf(a) - stats.norm.sf(b))
    elif b < -38:
        reference = stats.norm.logcdf(b) + np.log1p(-np.exp(stats.norm.logcdf(a) - stats.norm.logcdf(b)))
    else:
        reference = np.log(stats.norm.cdf(b) - stats.norm.cdf(a))
    assert float(log_interval_mass(np.array(a), np.array(b))) == pytest.approx(reference, rel=1e-9)


def test_e_step_statistics_match_truncated_normal_moments():
    # Source: scipy.stats.truncnorm mean and var for E[X | a <= X < b]; the
    # responsibilities from scipy.stats.norm.cdf differences (McLachlan & Jones 1988).
    lower = np.array([-np.inf, -1.0, 0.0, 0.5, 2.0])
    upper = np.array([-1.0, 0.0, 0.5, 2.0, np.inf])
    counts = np.array([3.0, 7.0, 5.0, 9.0, 2.0])
    w, mu, sd = np.array([0.3, 0.7]), np.array([-0.5, 1.0]), np.array([0.8, 1.3])
    stats_ = interval_e_step(lower, upper, counts, np.log(w)[None], mu[None], (sd ** 2)[None])
    mass = stats.norm.cdf((upper[:, None] - mu) / sd) - stats.norm.cdf((lower[:, None] - mu) / sd)
    joint = w * mass
    resp = counts[:, None] * joint / joint.sum(axis=1, keepdims=True)
    a, b = (lower[:, None] - mu) / sd, (upper[:, None] - mu) / sd
    mean = stats.truncnorm.mean(a, b, loc=mu, scale=sd)
    second = stats.truncnorm.var(a, b, loc=mu, scale=sd) + (mean - mu) ** 2
    np.testing.assert_allclose(stats_.loglik[0], counts @ np.log(joint.sum(axis=1)), rtol=1e-12)
    np.testing.assert_allclose(stats_.nk[0], resp.sum(axis=0), rtol=1e-12)
    np.testing.assert_allclose(stats_.sd[0], (resp * (mean - mu)).sum(axis=0), rtol=1e-9)
    np.testing.assert_allclose(stats_.sdd[0], (resp * second).sum(axis=0), rtol=1e-9)


def test_interval_loglik_and_posterior_match_scipy():
    # Source: scipy.stats.norm.cdf differences.
    mix = Mixture([0.4, 0.6], [10.0, 14.0], [1.5, 2.0])
    v = np.arange(5.0, 20.0)
    counts = np.arange(1.0, 16.0)
    mass = mix.weights * (stats.norm.cdf(v[:, None] + 0.5, mix.means, mix.sds)
                          - stats.norm.cdf(v[:, None] - 0.5, mix.means, mix.sds))
    assert interval_loglik(v - 0.5, v + 0.5, counts, mix) == pytest.approx(
        counts @ np.log(mass.sum(axis=1)), rel=1e-12)
    np.testing.assert_allclose(interval_posterior(v - 0.5, v + 0.5, mix),
                               mass / mass.sum(axis=1, keepdims=True), rtol=1e-10, atol=1e-13)
    # (absolute tolerance: the reference's cdf differences cancel in the upper tail)


def test_bad_intervals_are_input_errors():
    with pytest.raises(InputError, match="lower < upper"):
        prepare_intervals([1.0, 2.0], None, [1.0, 2.5], [1.5, 2.0])
    with pytest.raises(InputError, match="one lower and one upper"):
        prepare_intervals([1.0, 2.0], None, [0.5], [1.5, 2.5])


# -------------------------------------------------------------- the fit
@pytest.mark.parametrize("widths", ["separate", "shared"])
def test_em_optimum_matches_an_independent_maximiser(widths):
    # Source: scipy.optimize.minimize (L-BFGS-B) on the interval log-likelihood
    # written with scipy.stats.norm.cdf, started from a rough guess: the EM
    # optimum must be at least as high and the parameters must agree.
    z = _two_groups(5, 300, means=(0.0, 3.0), sds=(1.0, 0.7))
    sample = _rounded_intervals(z, 0.5)
    fit = fit_intervals(sample, 2, widths, model_rng(0, 2, widths))
    assert fit.converged and fit.likelihood == "intervals"
    lo, hi, c = sample.lower, sample.upper, sample.counts

    def negative(theta):
        w1 = 1.0 / (1.0 + np.exp(-theta[0]))
        sds = np.exp(theta[3:5]) if widths == "separate" else np.exp([theta[3], theta[3]])
        mass = (np.array([w1, 1.0 - w1])
                * (stats.norm.cdf(hi[:, None], theta[1:3], sds) - stats.norm.cdf(lo[:, None], theta[1:3], sds)))
        return -c @ np.log(mass.sum(axis=1))

    start = np.array([0.0, -0.5, 2.5, 0.0, 0.0])
    ref = optimize.minimize(negative, start if widths == "separate" else start[:4],
                            method="L-BFGS-B", options={"ftol": 1e-15, "gtol": 1e-10, "maxiter": 5000})
    assert fit.loglik >= -ref.fun - 1e-6
    assert fit.loglik - (-ref.fun) < 1e-4
    np.testing.assert_allclose(fit.mixture.means, ref.x[1:3], atol=2e-3)
    assert interval_loglik(lo, hi, c, fit.mixture) == pytest.approx(fit.loglik, rel=1e-12)


def test_overfitted_interval_model_is_certified_at_a_maximum():
    # Three components on two rounded groups: the likelihood is flat along a
    # ridge, where EM alone crawls (thousands of steps); the Newton endgame
    # must stop at a point that an independent optimiser cannot improve.
    # Source: scipy.optimize.minimize (L-BFGS-B) on the interval log-likelihood
    # written with scipy.stats.norm.cdf, started from the reported fit.
    z = _two_groups(8, 3000, means=(0.0, 3.0), sds=(1.0, 0.7))
    sample = _rounded_intervals(z, 0.5)
    fit = fit_intervals(sample, 3, "separate", model_rng(0, 3, "separate"))
    assert fit.converged and not fit.collapsed
    assert fit.iterations < INTERVAL_MAX_ITER // 10
    lo, hi, c = sample.lower, sample.upper, sample.counts

    def negative(theta):
        logw = np.r_[theta[:2], 0.0]
        w = np.exp(logw - logw.max())
        w /= w.sum()
        mu, sds = theta[2:5], np.exp(theta[5:8])
        mass = w * (stats.norm.cdf(hi[:, None], mu, sds) - stats.norm.cdf(lo[:, None], mu, sds))
        return -c @ np.log(mass.sum(axis=1))

    m = fit.mixture
    start = np.r_[np.log(m.weights[:2] / m.weights[2]), m.means, np.log(m.sds)]
    assert -negative(start) == pytest.approx(fit.loglik, abs=1e-8)
    ref = optimize.minimize(negative, start, method="L-BFGS-B",
                            options={"ftol": 1e-15, "gtol": 1e-10, "maxiter": 5000})
    assert -ref.fun <= fit.loglik + 1e-6 * c.sum()


def test_interval_fit_removes_sheppard_inflation_of_midpoint_fit():
    # Source: Sheppard (1898): values rounded to a step h have variance
    # sigma**2 + h**2/12 (for h small against sigma), so a fit to the midpoints
    # (exact values) inflates each variance by about h**2/12, while the interval
    # likelihood recovers the unrounded parameters within sampling error.
    h, n = 1.5, 20000
    z = _two_groups(11, n)
    x = np.round(z / h) * h
    exact = clusterdesk.fit(x, 2, treatment="exact", seed=0)
    grouped = clusterdesk.fit(x, 2, treatment="intervals", seed=0)
    assert exact.likelihood == "exact" and grouped.likelihood == "intervals"
    se_var = np.sqrt(2.0 / (n / 2))  # common practice: se of a normal variance, 2 sigma**4 / n
    np.testing.assert_allclose(grouped.mixture.sds ** 2, 1.0, atol=4 * se_var)
    np.testing.assert_allclose(exact.mixture.sds ** 2, 1.0 + h * h / 12, atol=4 * se_var)
    # The difference is the rounding variance, with far less noise (same data).
    np.testing.assert_allclose(exact.mixture.sds ** 2 - grouped.mixture.sds ** 2, h * h / 12, atol=0.02)
    np.testing.assert_allclose(grouped.mixture.means, [0.0, 8.0], atol=0.05)


def test_tied_integer_values_exact_fit_spikes_interval_fit_does_not():
    # Integer-valued data (two groups, sd 1.2 and 1.5) with a heavily tied mode:
    # plain EM on the values as exact puts a zero-width component on a tied
    # value (the unbounded likelihood; McLachlan & Peel 2000, section 3.10,
    # from memory), whereas the interval likelihood is bounded, gains little
    # from a third component, and BIC (Schwarz 1978) ranks the true k = 2 first.
    rng = np.random.default_rng(3)
    x = np.round(np.concatenate([rng.normal(12, 1.2, 600), rng.normal(18, 1.5, 400)]))
    assert np.unique(x, return_counts=True)[1].max() > 150
    two = run_em(x, 2, restarts=20, seed=1)
    three = run_em(x, 3, restarts=20, seed=1)
    assert three.sds.min() < 1e-3 and three.loglik - two.loglik > 1000  # the spike
    result = clusterdesk.scan(x, kmin=1, kmax=4, widths="separate", seed=0, treatment="intervals")
    assert result.ranking[0].k == 2 and result.ranking[0].likelihood == "intervals"
    fit3 = result.model(3, "separate")
    assert not fit3.collapsed
    assert not has_spike(fit3.mixture.weights, fit3.mixture.sds, FitSettings())
    assert fit3.mixture.sds.min() > 0.1  # nothing much narrower than the recording step
    mode = np.argmin(np.abs(fit3.mixture.means - 12.0))
    assert fit3.mixture.sds[mode] > 1.0  # the tied mode keeps its group's width
    assert fit3.loglik - result.model(2, "separate").loglik < 10


def test_interval_likelihood_tends_to_the_exact_one_as_resolution_shrinks():
    # Definition of the density as the limit of P(x <= X < x + h) / h: the
    # interval log-likelihood minus n log h approaches the exact one, the gap
    # falling like h**2 (the midpoint rule's error; common practice).
    mix = Mixture([0.3, 0.7], [0.0, 3.0], [0.6, 1.1])
    x = mix.sample(np.random.default_rng(2), 500)
    exact = mix.loglik(x)
    gaps = []
    for h in (0.1, 0.01, 0.001):
        gaps.append(abs(interval_loglik(x - h / 2, x + h / 2, np.ones_like(x), mix) - x.size * np.log(h) - exact))
    assert gaps[2] < 1e-4 * abs(exact)
    assert gaps[1] < gaps[0] / 50 and gaps[2] < gaps[1] / 50
    # and the fitted parameters approach the exact fit's
    fits = [clusterdesk.fit(np.round(x / h) * h, 2, treatment="intervals", resolution=h, seed=0)
            for h in (0.2, 0.002)]
    ref = clusterdesk.fit(x, 2, treatment="exact", seed=0)
    err = [np.abs(f.mixture.means - ref.mixture.means).max() for f in fits]
    assert err[1] < 1e-3 and err[1] < err[0]


def test_censored_readings_enter_as_open_intervals():
    # Left-censored readings (-inf, L): the fit uses them instead of dropping
    # them. Reference: the same data with the censored values known exactly;
    # the censored fit must be close to it and far closer than dropping them.
    rng = np.random.default_rng(21)
    z = np.concatenate([rng.normal(0.0, 0.25, 780), rng.normal(1.2, 0.35, 220)])
    limit = -0.3
    below = z < limit
    values = np.where(below, limit, z)
    lower = np.where(below, -np.inf, values - 0.005)
    upper = np.where(below, limit, values + 0.005)
    censored = clusterdesk.fit(values, 2, treatment="intervals", bounds=(lower, upper), seed=0)
    full = clusterdesk.fit(z, 2, treatment="exact", seed=0)
    dropped = clusterdesk.fit(z[~below], 2, treatment="exact", seed=0)
    err_c = np.abs(censored.mixture.means - full.mixture.means).max()
    err_d = np.abs(dropped.mixture.means - full.mixture.means).max()
    assert err_c < 0.02 and err_c < err_d / 3


def test_bootstrap_of_an_interval_fit_resamples_the_intervals():
    # Source (as in test_bootstrap): the standard error of a one-component
    # mean is s / sqrt(n) (common practice); values rounded to whole units.
    x = np.round(np.random.default_rng(9).normal(20.0, 2.0, 500))
    model = clusterdesk.fit(x, 1)  # auto: step 1 against sd 2 is coarse
    assert model.likelihood == "intervals"
    result = clusterdesk.bootstrap(x, model, replicates=400, seed=6)
    assert result.path == "intervals"
    assert result.mean_se[0] == pytest.approx(np.std(x, ddof=1) / np.sqrt(x.size), rel=0.12)


# --------------------------------------------------- large samples: bins
def test_binned_stage_agrees_with_the_full_data_fit():
    # Reference: the same model fitted to every raw value (no histogram stage).
    # The bins are exact intervals of the values, so the interval-likelihood
    # optimum of the bins (McLachlan & Jones 1988) must sit within a small
    # fraction of a standard error of the raw-value optimum (standard errors:
    # sd/sqrt(n w) for a mean and sd/sqrt(2 n w) for a standard deviation,
    # common practice for separated components); the histogram stage of the
    # scan, polished on the raw values, must agree with the full fit within
    # 1e-6 of log-likelihood per observation.
    from clusterdesk.engine.fitting import fit_model, standardise
    from clusterdesk.engine.validation import prepare_sample

    n = 60000
    z = _two_groups(31, n, means=(0.0, 4.0), sds=(1.0, 0.6), share=0.6)
    sample = prepare_sample(z)
    assert sample.n_distinct > FitSettings().bin_above
    full = fit_model(sample, 2, "separate", model_rng(0, 2, "separate"),
                     FitSettings(bin_above=10 ** 9))
    binned = fit_model(sample, 2, "separate", model_rng(0, 2, "separate"))
    assert abs(binned.loglik - full.loglik) <= 1e-6 * n
    data = standardise(sample, FitSettings())
    # the bins of the width the scan's histogram stage reports it ended on
    assert binned.bin_width is not None
    lower, upper, counts = histogram_bins(data.x, data.c, FitSettings().bins, data.step,
                                          width=binned.bin_width / data.scale)
    assert counts.sum() == n
    assert np.allclose(upper - lower, binned.bin_width / data.scale)
    bins = prepare_intervals(0.5 * (lower + upper), counts, lower, upper)
    stage = fit_intervals(bins, 2, "separate", model_rng(0, 2, "separate")).mixture  # sorted by mean
    means = data.center + data.scale * stage.means
    sds = data.scale * stage.sds
    ref = full.mixture
    se_mean = ref.sds / np.sqrt(n * ref.weights)
    se_sd = ref.sds / np.sqrt(2 * n * ref.weights)
    assert np.all(np.abs(means - ref.means) < 0.05 * se_mean)
    assert np.all(np.abs(sds - ref.sds) < 0.05 * se_sd)


@pytest.mark.parametrize("bins_likelihood", ["intervals", "midpoints"])
@pytest.mark.parametrize("widths", ["separate", "shared"])
def test_histogram_stage_by_either_likelihood_polishes_to_the_full_fit(bins_likelihood, widths):
    # Reference: the same model fitted to every raw value (no histogram stage);
    # whether the bins are fitted as intervals (the default) or by their
    # midpoints, the polish on the raw values must end on the full fit's
    # maximum (1e-6 of log-likelihood per observation).
    from clusterdesk.engine.fitting import fit_model
    from clusterdesk.engine.validation import prepare_sample

    n = 30000
    sample = prepare_sample(_two_groups(17, n, means=(0.0, 3.5), sds=(1.0, 0.8), share=0.7))
    assert sample.n_distinct > FitSettings().bin_above
    full = fit_model(sample, 2, widths, model_rng(0, 2, widths), FitSettings(bin_above=10 ** 9))
    binned = fit_model(sample, 2, widths, model_rng(0, 2, widths),
                       FitSettings(bins_likelihood=bins_likelihood))
    assert binned.bin_width is not None and binned.converged
    assert abs(binned.loglik - full.loglik) <= 1e-6 * n
    with pytest.raises(ValueError, match="bins_likelihood"):
        FitSettings(bins_likelihood="centres")


def test_histogram_bins_on_a_grid_hold_whole_cells():
    # Values on a grid of 0.5: every edge lies halfway between grid points, so
    # each bin's count is the number of values in it (direct comparison as reference).
    x = np.sort(np.round(np.random.default_rng(4).normal(0, 20, 5000) * 2) / 2)
    c = np.ones_like(x)
    lower, upper, counts = histogram_bins(x, c, 64, step=0.5)
    width = upper - lower
    np.testing.assert_allclose(width / 0.5, np.round(width / 0.5))
    offsets = (lower - x[0]) / 0.5
    np.testing.assert_allclose(offsets % 1.0, 0.5, atol=1e-9)
    ref = [np.count_nonzero((x >= a) & (x < b)) for a, b in zip(lower, upper)]
    np.testing.assert_array_equal(counts, ref)
    assert counts.sum() == x.size


@pytest.mark.parametrize("step", [0.5, None])
def test_histogram_bins_of_a_given_width_skip_the_empty_range_to_far_values(step):
    # Bins of a chosen width: a reading 10^9 widths away adds one bin, not 10^9
    # empty ones; each bin's count is the number of values in it (direct
    # comparison as reference), and on a grid the bins hold whole cells.
    rng = np.random.default_rng(11)
    bulk = rng.normal(0, 20, 5000)
    if step is not None:
        bulk = np.round(bulk / step) * step
    x = np.sort(np.append(bulk, 2.0e9))
    c = np.ones_like(x)
    lower, upper, counts = histogram_bins(x, c, 64, step=step, width=1.2)
    assert counts.sum() == x.size
    assert counts.size < 300
    width = upper - lower
    expected = 1.5 if step is not None else 1.2  # whole cells of 0.5: 1.2 rounds up to 1.5
    np.testing.assert_allclose(width, expected)
    assert np.all(np.diff(lower) >= expected - 1e-6)
    ref = [np.count_nonzero((x >= a) & (x < b)) for a, b in zip(lower, upper)]
    np.testing.assert_array_equal(counts, ref)


def test_a_far_out_value_is_named_under_the_interval_likelihood_too():
    # Two groups recorded to whole units (intervals by the automatic rule) and one
    # recording error of 999. Tukey's far-out fences (3 interquartile ranges past
    # the quartiles; Tukey 1977, Exploratory Data Analysis, from memory) put 999
    # far out; the models that give it a component collapse, and the scan names
    # it as on the exact path. Without it, no note. Synthetic, seeded.
    rng = np.random.default_rng(41)
    x = np.round(np.concatenate([rng.normal(10.0, 1.0, 300), rng.normal(16.0, 1.0, 200)]))
    clean = clusterdesk.scan(x, kmax=3, seed=0)
    assert clean.treatment.used == "intervals" and clean.notes == () and clean.best.k == 2
    dirty = clusterdesk.scan(np.append(x, 999.0), kmax=3, seed=0)
    assert dirty.treatment.used == "intervals"
    assert dirty.suspect_values == (999.0,)
    assert any("far outside the rest" in n and "999" in n for n in dirty.notes)
