"""Property tests: any data give a valid fit or a clear InputError; EM is monotone.

Sources: the EM ascent property, the log-likelihood never decreases from one
iteration to the next (Dempster, Laird & Rubin 1977; Wu 1983); SQUAREM with a
monotone safeguard keeps that property for the recorded iterates (Varadhan &
Roland 2008).  Valid-parameter conditions (weights positive summing to one,
positive finite standard deviations) are the definition of a normal mixture.

Data are synthetic, drawn by hypothesis (derandomized) and numpy generators
seeded from the drawn integers.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, event, example, given, settings
from hypothesis import strategies as st

import clusterdesk
from clusterdesk import InputError
from clusterdesk.engine.em import run_em

PROPERTY_SETTINGS = settings(
    derandomize=True,
    deadline=None,
    max_examples=50,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)

SCALES = [1e-8, 1e-3, 1.0, 1e3, 1e8]


@st.composite
def normal_mixture_values(draw, min_n=2, max_n=400):
    """Values from a random normal mixture, maybe rounded, at a random scale."""
    seed = draw(st.integers(0, 2**32 - 1))
    n = draw(st.integers(min_n, max_n))
    k_true = draw(st.integers(1, 3))
    scale = draw(st.sampled_from(SCALES))
    rounding = draw(st.sampled_from([None, None, 1.0, 0.5]))  # many ties when rounded
    rng = np.random.default_rng(seed)
    means = rng.uniform(-10, 10, k_true)
    sds = np.exp(rng.uniform(np.log(0.05), np.log(3.0), k_true))
    weights = rng.dirichlet(np.ones(k_true))
    labels = rng.choice(k_true, size=n, p=weights)
    z = rng.normal(means[labels], sds[labels])
    if rounding is not None:
        z = np.round(z / rounding) * rounding
    return z * scale


small_integer_values = st.lists(st.integers(0, 6), min_size=0, max_size=40).map(
    lambda xs: np.asarray(xs, dtype=float)
)
tiny_samples = st.lists(
    st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False, allow_subnormal=False), min_size=0, max_size=6
).map(np.asarray)

any_values = st.one_of(normal_mixture_values(), small_integer_values, tiny_samples)


def assert_valid_model(model, n_total):
    mixture = model.mixture
    weights, means, sds = mixture.weights, mixture.means, mixture.sds
    assert mixture.k == model.k == weights.size == means.size == sds.size
    assert np.all(np.isfinite(weights)) and np.all(weights > 0)
    assert abs(weights.sum() - 1.0) <= 1e-9
    assert np.all(np.isfinite(means))
    assert np.all(np.isfinite(sds)) and np.all(sds > 0)
    assert np.all(np.diff(means) >= 0)  # contract: sorted by mean
    assert np.isfinite(model.loglik) and np.isfinite(model.bic) and np.isfinite(model.icl)
    assert model.n == n_total


@PROPERTY_SETTINGS
@given(values=any_values, kmax=st.integers(1, 3), widths=st.sampled_from(["separate", "shared", "both"]))
# Spreads far below any physical scale but still normal floats (no warnings may escape).
@example(values=np.array([0.0, 1e-200, 2e-200, 3e-200]), kmax=1, widths="separate")
@example(values=np.array([0.0, 1e-300, 2e-300, 3e-300, 5e-300]), kmax=2, widths="both")
# Huge offset, ordinary spread: values on a coarse floating-point grid.
@example(values=1e12 + np.arange(40.0) % 7, kmax=2, widths="separate")
def test_scan_gives_valid_fit_or_input_error(values, kmax, widths):
    try:
        result = clusterdesk.scan(values, kmin=1, kmax=kmax, widths=widths, restarts=3, seed=0)
    except InputError as error:
        event("refused with InputError")
        assert str(error)
        distinct = np.unique(values).size
        # A usable sample (many distinct finite values, few components) must be fitted.
        assert not (values.size >= 30 and distinct >= 20 and kmax <= 2), (
            f"refused a usable sample: n={values.size}, distinct={distinct}: {error}"
        )
        return
    event("fitted")
    event(f"collapsed models: {sum(m.collapsed for m in result.models)}")
    assert len(result.models) >= kmax
    for model in result.models:
        assert_valid_model(model, values.size)
    # Ranking rule (ScanResult docstring): by BIC, a collapsed model after every
    # credible one.
    keys = [(row.collapsed, row.bic) for row in result.ranking]
    assert keys == sorted(keys)
    assert result.ranking[0].delta_bic == 0.0
    assert abs(sum(row.bic_weight for row in result.ranking) - 1.0) <= 1e-12


def _monotone(trace, slack=1e-9):
    trace = np.asarray(trace, dtype=float)
    assert trace.size >= 1 and np.all(np.isfinite(trace))
    steps = np.diff(trace)
    allowed = -slack * np.abs(trace[1:])
    worst = int(np.argmin(steps - allowed)) if steps.size else 0
    assert np.all(steps >= allowed), (
        f"log-likelihood fell at iteration {worst + 1}: {trace[worst]!r} -> {trace[worst + 1]!r}"
    )


em_case = st.tuples(normal_mixture_values(min_n=40, max_n=600), st.sampled_from([2, 3, 3, 4, 1]),
                    st.integers(0, 1000), st.sampled_from(["separate", "shared"]))


def _trace_or_none(values, k, seed, widths, accelerate):
    try:
        fitted = run_em(values, k, widths=widths, restarts=1, seed=seed,
                        accelerate=accelerate, record_trace=True)
    except InputError:
        event("refused with InputError")
        assert np.unique(values).size < 10 * k, "refused a usable sample"
        return None
    trace = fitted.loglik_trace
    event(f"trace length {'< 10' if len(trace) < 10 else '< 100' if len(trace) < 100 else '>= 100'}")
    return trace


# Plain EM: the ascent property itself (Dempster, Laird & Rubin 1977).
# Accelerated: SQUAREM with its monotone safeguard (Varadhan & Roland 2008).
@pytest.mark.parametrize("accelerate", [False, True], ids=["plain", "accelerated"])
@PROPERTY_SETTINGS
@given(case=em_case)
def test_em_trace_never_decreases(accelerate, case):
    values, k, seed, widths = case
    trace = _trace_or_none(values, k, seed, widths, accelerate=accelerate)
    if trace is not None:
        _monotone(trace)
