"""Recording cells: the support of a parametric bootstrap of interval data.

References named beside each check:
- scipy.stats.norm for the mixture's cell probabilities;
- Efron & Tibshirani (1993), An Introduction to the Bootstrap, §6.5 (the
  parametric bootstrap simulates from the fitted model and records the
  simulated data as the data were recorded) and eq. 6.6 (standard error);
- the standard error of a one-component mean, s / sqrt(n) (common practice).
All data are synthetic, drawn here with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

import clusterdesk
from clusterdesk.engine.mixture import Mixture
from clusterdesk.engine.recording_cells import recording_cells

MIX = Mixture(np.array([0.6, 0.4]), np.array([10.0, 16.0]), np.array([1.0, 1.5]))


def _scipy_mass(lower, upper):
    """P(lower <= X < upper) under MIX, by scipy.stats.norm; shape like lower."""
    return sum(w * (stats.norm.cdf(upper, m, s) - stats.norm.cdf(lower, m, s))
               for w, m, s in zip(MIX.weights, MIX.means, MIX.sds))


def test_cells_tile_the_line_with_gaps_cut_into_steps_and_tails_folded():
    # Observed cells of width 0.5 on a grid, with empty cells between them.
    values = np.array([9.0, 9.5, 11.0, 15.0, 15.5])
    cells = recording_cells(values, values - 0.25, values + 0.25, MIX, n=200, max_cells=10_000)
    lo, hi, p = cells.lower, cells.upper, cells.probabilities
    np.testing.assert_array_equal(hi[:-1], lo[1:])                        # no gap, no overlap
    np.testing.assert_allclose(hi - lo, 0.5, rtol=1e-9)                  # every cell one step
    assert set(values) <= set(cells.values)                              # observed cells kept
    assert cells.added == lo.size - values.size
    tail = 1e-3 / 200
    assert lo[0] <= MIX.quantile(tail) and hi[-1] >= MIX.quantile(1 - tail)
    expected = _scipy_mass(lo, hi)
    expected[0] += _scipy_mass(-np.inf, lo[0])
    expected[-1] += _scipy_mass(hi[-1], np.inf)
    np.testing.assert_allclose(p, expected, rtol=1e-9, atol=1e-15)
    assert p.sum() == pytest.approx(1.0, abs=1e-12)


def test_censored_ends_stay_open_and_an_uneven_gap_is_one_cell():
    values = np.array([8.0, 9.0, 10.0, 13.3])      # 10.5 .. 12.8 is not a whole number of steps
    lower = np.array([-np.inf, 8.5, 9.5, 12.8])
    upper = np.array([8.5, 9.5, 10.5, np.inf])     # a reading below 8.5 and one above 12.8
    cells = recording_cells(values, lower, upper, MIX, n=100, max_cells=10_000)
    assert cells.lower[0] == -np.inf and cells.upper[-1] == np.inf
    assert cells.added == 1
    np.testing.assert_array_equal(cells.lower, [-np.inf, 8.5, 9.5, 10.5, 12.8])
    np.testing.assert_allclose(cells.probabilities, _scipy_mass(cells.lower, cells.upper), rtol=1e-9)


def test_overlapping_intervals_have_no_tiling_and_too_many_steps_make_single_cells():
    assert recording_cells(np.array([1.0, 1.2]), np.array([0.5, 1.0]), np.array([1.5, 1.4]),
                           MIX, n=10, max_cells=100) is None
    values = np.array([9.0, 16.0])
    few = recording_cells(values, values - 0.005, values + 0.005, MIX, n=50, max_cells=20)
    assert few.lower.size == 5  # below, 9, between, 16, above
    np.testing.assert_array_equal(few.upper[:-1], few.lower[1:])


def test_parametric_bootstrap_of_rounded_values_records_simulated_values_on_the_whole_grid():
    # Two groups recorded to whole units, sparse enough that many grid cells
    # between and beyond the data are empty. A parametric bootstrap that drew
    # only over the observed cells put estimates outside their own intervals.
    rng = np.random.default_rng(31)
    x = np.round(np.concatenate([rng.normal(1200.0, 40.0, 240), rng.normal(1400.0, 45.0, 160)]))
    model = clusterdesk.fit(x, 2, widths="shared", treatment="intervals", seed=0)
    assert model.likelihood == "intervals"
    para = clusterdesk.bootstrap(x, model, replicates=200, method="parametric", seed=4)
    resample = clusterdesk.bootstrap(x, model, replicates=200, seed=4)
    assert para.path == "recording cells" and para.support_size > np.unique(x).size
    mix = model.mixture
    for estimate, interval, se, replicates in (
            (mix.weights, para.weight_interval, para.weight_se, para.weights),
            (mix.means, para.mean_interval, para.mean_se, para.means),
            (mix.sds, para.sd_interval, para.sd_se, para.sds)):
        assert np.all((interval[:, 0] < estimate) & (estimate < interval[:, 1]))
        # Replicates scatter about the fit: the bias of these estimates is small
        # against their standard error at n = 400 (common practice).
        assert np.all(np.abs(replicates.mean(axis=0) - estimate) < 0.5 * se)
    # Both bootstraps estimate the same standard errors (Efron & Tibshirani 1993, eq. 6.6).
    for a, b in ((para.mean_se, resample.mean_se), (para.sd_se, resample.sd_se),
                 (para.weight_se, resample.weight_se)):
        assert np.all((a / b > 1 / 1.4) & (a / b < 1.4))


def test_parametric_bootstrap_of_one_rounded_group_gives_the_textbook_standard_error():
    x = np.round(np.random.default_rng(9).normal(20.0, 2.0, 500))
    model = clusterdesk.fit(x, 1)
    assert model.likelihood == "intervals"
    result = clusterdesk.bootstrap(x, model, replicates=400, method="parametric", seed=6)
    assert result.path == "recording cells"
    assert result.mean_se[0] == pytest.approx(model.mixture.sds[0] / np.sqrt(x.size), rel=0.12)
