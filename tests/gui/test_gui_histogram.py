"""Histogram bins: the Freedman-Diaconis rule against numpy's, counts as weights, grid alignment."""

from __future__ import annotations

import numpy as np
import pytest

from clusterdesk.gui.histogram import bin_edges, weighted_histogram


def test_freedman_diaconis_width_matches_numpy(rng):
    x = rng.normal(50, 8, 5000)
    edges = bin_edges(x, rule="Freedman-Diaconis")
    # Reference: numpy.histogram_bin_edges(..., bins="fd"), width 2 IQR n^(-1/3).
    reference = np.histogram_bin_edges(x, bins="fd")
    width = np.diff(edges)
    assert width == pytest.approx(np.full(width.size, np.diff(reference)[0]), rel=0.02)
    assert edges[0] <= x.min() and edges[-1] >= x.max()


@pytest.mark.parametrize("rule, numpy_rule", [("Sturges", "sturges"), ("Scott", "scott")])
def test_other_rules_match_numpy(rng, rule, numpy_rule):
    x = rng.gamma(3.0, 2.0, 2000)
    ours = np.diff(bin_edges(x, rule=rule))[0]
    theirs = np.diff(np.histogram_bin_edges(x, bins=numpy_rule))[0]
    assert ours == pytest.approx(theirs, rel=0.05)


def test_counts_act_as_repeated_values(rng):
    values = np.arange(10.0, 40.0)
    counts = rng.integers(1, 50, values.size).astype(float)
    expanded = np.repeat(values, counts.astype(int))
    edges = bin_edges(values, counts, rule="Freedman-Diaconis", grid_step=1.0)
    np.testing.assert_array_equal(edges, bin_edges(expanded, rule="Freedman-Diaconis", grid_step=1.0))
    heights = weighted_histogram(values, counts, edges)
    reference, _ = np.histogram(expanded, bins=edges, density=True)
    np.testing.assert_allclose(heights, reference)
    assert np.sum(heights * np.diff(edges)) == pytest.approx(1.0)


def test_rounded_values_get_whole_grid_steps_with_edges_between_grid_points(rng):
    x = np.round(rng.normal(100, 15, 3000))  # recorded to 1 unit
    edges = bin_edges(x, rule="Freedman-Diaconis", grid_step=1.0)
    widths = np.diff(edges)
    assert np.allclose(widths, widths[0]) and widths[0] == round(widths[0]) >= 1
    assert np.allclose((edges - 0.5) % 1.0, 0.0)  # no grid value sits on an edge
    counts, _ = np.histogram(x, bins=edges)
    assert counts.sum() == x.size


def test_fixed_number_and_constant_values():
    assert bin_edges(np.linspace(0, 1, 100), rule="fixed number", bins=7).size == 8
    edges = bin_edges(np.full(20, 3.0))
    assert edges.size >= 2 and edges[0] <= 3.0 <= edges[-1]
