"""Goodness of fit: Q-Q points, Kolmogorov-Smirnov distance, verdicts.

References named beside each check:
- scipy.stats.kstest(values, mixture.cdf): statistic and p-value;
- plotting positions (i - 0.5) / n (common practice), with tied values at
  their mid-rank (the mean of their positions);
- Lilliefors (1967, JASA 62:399-402): a Kolmogorov p-value is too large when
  the distribution was fitted to the same data, which is why the wording is
  "no clear sign of misfit";
- a brute-force supremum of |F_n - G| on a dense grid for rounded values.
All data are synthetic, drawn here with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

import clusterdesk
from clusterdesk.engine.fitcheck import fit_check_bootstrap, goodness_of_fit
from clusterdesk.engine.mixture import Mixture

TRUTH = Mixture([0.45, 0.55], [10.0, 14.0], [1.0, 1.5])


def _sample(seed: int, n: int = 400) -> np.ndarray:
    return TRUTH.sample(np.random.default_rng(seed), n)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_ks_distance_and_p_value_match_scipy(seed):
    # Reference: scipy.stats.kstest against the mixture's distribution function.
    x = _sample(seed)
    mixture = Mixture([0.5, 0.5], [10.2, 14.1], [1.1, 1.4])  # close to, not equal to, the truth
    check = goodness_of_fit(mixture, x)
    reference = stats.kstest(x, mixture.cdf)
    assert check.ks_distance == pytest.approx(reference.statistic, rel=1e-12)
    assert check.ks_p_value == pytest.approx(reference.pvalue, rel=1e-6)
    assert not check.rounded


def test_counts_give_the_same_distance_as_repeated_values():
    # Reference: scipy.stats.kstest on the values repeated by their counts.
    rng = np.random.default_rng(4)
    values = np.round(_sample(5, 150), 2)
    counts = rng.integers(1, 5, size=values.size)
    check = goodness_of_fit(TRUTH, values, counts)
    expanded = np.repeat(values, counts)
    assert check.ks_distance == pytest.approx(stats.kstest(expanded, TRUTH.cdf).statistic, rel=1e-12)
    assert check.n == counts.sum()


def test_qq_points_use_mid_rank_plotting_positions():
    # (i - 0.5) / n for each of n ordered values (common practice); tied values
    # share the mean of their positions.
    values = np.array([3.0, 1.0, 2.0, 2.0, 5.0, 2.0])
    check = goodness_of_fit(TRUTH, values)
    positions = (np.arange(1, 7) - 0.5) / 6
    np.testing.assert_allclose(check.plotting_positions,
                               [positions[0], positions[1:4].mean(), positions[4], positions[5]])
    np.testing.assert_array_equal(check.observed, [1.0, 2.0, 3.0, 5.0])
    np.testing.assert_allclose(check.theoretical, TRUTH.quantile(check.plotting_positions), rtol=1e-14)


def test_qq_points_of_a_large_sample_follow_the_fitted_quantiles():
    x = _sample(6, 3000)
    model = clusterdesk.fit(x, 2)
    check = goodness_of_fit(model.mixture, x)
    i = np.arange(1, x.size + 1)
    np.testing.assert_allclose(check.theoretical, model.mixture.quantile((i - 0.5) / x.size), rtol=1e-12)
    inner = slice(30, -30)  # away from the extreme order statistics
    assert np.max(np.abs(check.theoretical[inner] - check.observed[inner])) < 0.3


def test_verdicts_use_cautious_words():
    # A good fit: "no clear sign of misfit", with the Lilliefors (1967) caution
    # that the p-value is optimistic; one component on two groups: clear misfit.
    x = _sample(7)
    good = goodness_of_fit(clusterdesk.fit(x, 2).mixture, x)
    bad = goodness_of_fit(clusterdesk.fit(x, 1).mixture, x)
    assert good.verdict.startswith("No clear sign of misfit") and "optimistic" in good.verdict
    assert "fits well" not in good.verdict
    assert bad.verdict.startswith("Clear sign of misfit") and bad.ks_p_value < 0.01


def test_rounded_values_are_compared_with_the_rounded_mixture():
    # Values on a 0.5 grid with ties: the distance is to G(x) = F(x + h/2), the
    # mixture rounded to the grid. Reference: brute-force sup |F_n - G| over a
    # dense set of points (both are step functions between grid points).
    x = np.round(_sample(8) * 2) / 2
    check = goodness_of_fit(TRUTH, x)
    assert check.rounded and check.grid_step == 0.5
    dense = np.linspace(x.min() - 3, x.max() + 3, 200_001)
    empirical = np.searchsorted(np.sort(x), dense, side="right") / x.size
    rounded_cdf = TRUTH.cdf(np.floor(dense * 2) / 2 + 0.25)  # P(rounded <= d), grid point at or below d
    assert check.verdict_distance == pytest.approx(np.max(np.abs(empirical - rounded_cdf)), abs=1e-12)
    assert check.verdict_distance < check.ks_distance


def test_bootstrap_p_value_separates_good_and_poor_models():
    # Parametric bootstrap of the distance with refits (the remedy for the
    # Lilliefors effect): a correct model gets an unremarkable p-value, a
    # one-component model of two groups the smallest possible, 1 / (1 + B).
    x = _sample(9)
    good = fit_check_bootstrap(x, clusterdesk.fit(x, 2), replicates=99, seed=1)
    poor = fit_check_bootstrap(x, clusterdesk.fit(x, 1), replicates=99, seed=1)
    assert good.bootstrap_p_value > 0.05 and good.verdict.startswith("No clear sign")
    assert poor.bootstrap_p_value == pytest.approx(0.01)
    assert "bootstrap p" in poor.verdict
    again = fit_check_bootstrap(x, clusterdesk.fit(x, 2), replicates=99, seed=1)
    assert again.bootstrap_p_value == good.bootstrap_p_value


def test_bad_input_raises_input_error():
    with pytest.raises(clusterdesk.InputError):
        goodness_of_fit(TRUTH, [1.0, np.inf])
    with pytest.raises(clusterdesk.InputError):
        goodness_of_fit("mixture", [1.0, 2.0])
    with pytest.raises(clusterdesk.InputError):
        fit_check_bootstrap([1.0, 2.0, 3.0], TRUTH)
    x = _sample(10, 100)
    with pytest.raises(clusterdesk.InputError):
        fit_check_bootstrap(x, clusterdesk.fit(x, 1), replicates=5)


def test_censored_readings_count_in_the_data_distribution():
    # A sample from the true mixture with the readings below L known only to lie
    # below it. Reference: sup |F_n - F| taken over a dense set of points at or
    # above L, with F_n counting every reading of the full sample (scipy.stats
    # .kstest's empirical function, computed here directly) - where the
    # censored readings are known to lie. Leaving them out of F_n (the kept
    # values alone against the mixture of all) shows a misfit that is not there.
    full = np.sort(_sample(12, 800))
    limit = 9.5
    kept = full[full >= limit]
    below = full.size - kept.size
    check = goodness_of_fit(TRUTH, kept, censored=([limit], [-1], [below]))
    dense = np.linspace(limit, full.max() + 3, 400_001)
    after = np.searchsorted(full, dense, side="right") / full.size
    before = np.searchsorted(full, dense, side="left") / full.size
    cdf = TRUTH.cdf(dense)
    at_points = np.maximum(np.abs(after - cdf), np.abs(before - cdf)).max()
    assert check.ks_distance == pytest.approx(at_points, abs=2e-4)  # the grid misses jumps by < 2e-4
    assert check.n == full.size and check.censored == below
    assert "readings beyond a limit count" in check.verdict
    ignoring = goodness_of_fit(TRUTH, kept)
    assert ignoring.ks_distance > 3 * check.ks_distance
    # Plotting positions count the censored readings below every kept value.
    np.testing.assert_allclose(check.plotting_positions[0], (below + 0.5) / full.size)


def test_no_distance_where_a_censored_reading_could_lie_either_side():
    # Readings above 12 (a reporting limit) and kept values above it too: those
    # values have a censored reading of unknown side, so only values at or
    # below 12 enter the distance; with the limit below every value, none does.
    x = _sample(13, 300)
    check = goodness_of_fit(TRUTH, x[x <= 13.0], censored=([12.0], [1], [5]))
    assert check.ks_location <= 12.0
    nothing = goodness_of_fit(TRUTH, x, censored=([x.min() - 1.0], [1], [5]))
    assert np.isnan(nothing.ks_distance) and nothing.verdict.startswith("No fit check")


def test_rounded_location_is_that_of_the_verdict_distance():
    x = np.round(_sample(8) * 2) / 2
    check = goodness_of_fit(TRUTH, x)
    cells = np.unique(x)
    after = np.searchsorted(np.sort(x), cells, side="right") / x.size
    before = np.searchsorted(np.sort(x), cells, side="left") / x.size
    gaps = np.maximum(np.abs(after - TRUTH.cdf(cells + 0.25)), np.abs(before - TRUTH.cdf(cells - 0.25)))
    assert check.ks_location == cells[gaps.argmax()]
    assert check.verdict_distance == pytest.approx(gaps.max(), abs=1e-12)
