"""The public API: clusterdesk.scan and clusterdesk.fit.

Sources for the criteria: BIC = -2 logL + p ln n (Schwarz 1978); AIC = -2 logL
+ 2p (Akaike 1974); ICL = BIC + 2 x entropy of the posterior probabilities
(Biernacki, Celeux & Govaert 2000); BIC weights exp(-delta/2) normalised
(common practice, e.g. Burnham & Anderson 2002 for the AIC analogue); evidence
wording for BIC gaps 0-2 / 2-6 / 6-10 / >10 (Kass & Raftery 1995).  The normal
density comes from scipy.stats.norm as an independent reference.

Data are synthetic, drawn here with fixed seeds.
"""

from __future__ import annotations

import math
import threading

import numpy as np
import pytest
from scipy.special import logsumexp
from scipy.stats import norm

import clusterdesk
from clusterdesk import Cancelled, InputError


def three_groups(seed: int = 5, n: int = 600) -> np.ndarray:
    """Synthetic values from three well separated normal groups, shape (n,)."""
    rng = np.random.default_rng(seed)
    labels = rng.choice(3, size=n, p=[0.3, 0.45, 0.25])
    return rng.normal(np.array([10.0, 16.0, 23.0])[labels], np.array([1.0, 1.5, 1.2])[labels])


@pytest.fixture(scope="module")
def values():
    return three_groups()


@pytest.fixture(scope="module")
def both_scan(values):
    return clusterdesk.scan(values, kmin=1, kmax=4, widths="both", restarts=5, seed=1)


def kass_raftery_wording(gap: float) -> str:
    # Source: Kass & Raftery 1995, table of evidence on the 2 ln(Bayes factor) scale.
    if gap <= 2:
        return "weak"
    if gap <= 6:
        return "positive"
    if gap <= 10:
        return "strong"
    return "very strong"


def posterior_entropy(x: np.ndarray, mixture) -> float:
    """-sum_i sum_j r_ij ln r_ij with r from scipy.stats.norm (independent of ours)."""
    log_joint = np.log(mixture.weights) + norm.logpdf(
        x[:, None], loc=mixture.means, scale=mixture.sds
    )
    log_r = log_joint - logsumexp(log_joint, axis=1, keepdims=True)
    return float(-np.sum(np.exp(log_r) * log_r))


def test_ranking_is_sorted_by_bic_with_consistent_criteria(values, both_scan):
    rows = both_scan.ranking
    n = values.size
    bics = np.array([row.bic for row in rows])
    assert np.all(np.diff(bics) >= 0)
    assert [row.rank for row in rows] == list(range(1, len(rows) + 1))
    assert rows[0].delta_bic == 0.0
    np.testing.assert_allclose([row.delta_bic for row in rows], bics - bics[0], rtol=0, atol=1e-9)
    weights = np.array([row.bic_weight for row in rows])
    assert weights.sum() == pytest.approx(1.0, abs=1e-12)
    expected_weights = np.exp(-0.5 * (bics - bics.min()))
    np.testing.assert_allclose(weights, expected_weights / expected_weights.sum(), rtol=1e-9, atol=1e-300)

    for row in rows:
        # Parameter counts: k-1 weights + k means + k (separate) or 1 (shared) variances.
        expected_p = 3 * row.k - 1 if row.widths == "separate" else 2 * row.k
        assert row.n_params == expected_p
        assert row.bic == pytest.approx(-2 * row.loglik + expected_p * math.log(n), rel=1e-12)
        assert row.aic == pytest.approx(-2 * row.loglik + 2 * expected_p, rel=1e-12)
        model = both_scan.model(row.k, row.widths)
        assert model.loglik == row.loglik and model.bic == row.bic
        entropy = posterior_entropy(values, model.mixture)
        assert model.entropy == pytest.approx(entropy, rel=1e-6, abs=1e-9)
        assert row.icl == pytest.approx(row.bic + 2 * entropy, rel=1e-9)
        assert model.n == n and model.n_params == expected_p

    # The three generating groups are well separated: BIC picks three components.
    assert rows[0].k == 3
    assert both_scan.best.k == rows[0].k and both_scan.best.widths == rows[0].widths
    assert both_scan.evidence == kass_raftery_wording(rows[1].delta_bic)


def test_both_widths_gives_every_variant_and_model_lookup(both_scan):
    expected = {(k, widths) for k in range(1, 5) for widths in ("separate", "shared")}
    assert {(row.k, row.widths) for row in both_scan.ranking} == expected
    assert len(both_scan.ranking) == len(expected)
    assert {(m.k, m.widths) for m in both_scan.models} == expected
    for k, widths in expected:
        model = both_scan.model(k, widths)
        assert (model.k, model.widths) == (k, widths)
        assert model.mixture.k == k
        if widths == "shared":
            assert np.all(model.mixture.sds == model.mixture.sds[0])
    assert both_scan.model(3).widths == "separate"  # the documented default
    with pytest.raises(InputError):
        both_scan.model(5, "separate")  # never scanned


@pytest.mark.parametrize("treatment", ["exact", "intervals"])
def test_counts_equal_repeated_values(treatment):
    # A value/count table must fit exactly as the same values written out
    # (np.repeat is the reference); definition of a frequency-weighted likelihood.
    # Under "auto" a table is a tally of intervals, so both treatments are forced.
    rounded = np.round(three_groups(seed=8, n=900), 1)
    distinct, counts = np.unique(rounded, return_counts=True)
    assert counts.max() > 1  # the table really groups ties
    from_table = clusterdesk.scan(distinct, counts=counts, kmin=1, kmax=3, widths="both", seed=4,
                                  treatment=treatment)
    from_rows = clusterdesk.scan(np.repeat(distinct, counts), kmin=1, kmax=3, widths="both", seed=4,
                                 treatment=treatment)
    assert from_table.treatment.used == from_rows.treatment.used == treatment
    for row in from_rows.ranking:
        a = from_table.model(row.k, row.widths)
        b = from_rows.model(row.k, row.widths)
        assert a.n == b.n == rounded.size
        assert a.loglik == pytest.approx(b.loglik, rel=1e-10)
        assert a.bic == pytest.approx(b.bic, rel=1e-10)
        for name in ("weights", "means", "sds"):
            np.testing.assert_allclose(
                getattr(a.mixture, name), getattr(b.mixture, name), rtol=1e-5, err_msg=name
            )
    assert [(r.k, r.widths) for r in from_table.ranking] == [
        (r.k, r.widths) for r in from_rows.ranking
    ]


def test_same_seed_gives_bit_identical_results(values):
    first = clusterdesk.scan(values, kmin=1, kmax=3, widths="both", restarts=4, seed=11)
    second = clusterdesk.scan(values, kmin=1, kmax=3, widths="both", restarts=4, seed=11)
    # repr of a float is exact, so equal reprs mean bit-identical rows.
    assert [repr(row) for row in first.ranking] == [repr(row) for row in second.ranking]
    for a, b in zip(first.models, second.models, strict=True):
        for name in ("weights", "means", "sds"):
            assert np.array_equal(getattr(a.mixture, name), getattr(b.mixture, name))
        assert (a.loglik, a.iterations, a.restarts_agreeing) == (
            b.loglik, b.iterations, b.restarts_agreeing
        )


def test_progress_reports_every_model(values):
    calls = []
    result = clusterdesk.scan(
        values, kmin=1, kmax=3, widths="both", restarts=3, seed=0,
        progress=lambda done, total: calls.append((done, total)),
    )
    total = len(result.models)
    assert total == 6
    assert calls[-1] == (total, total)
    assert all(t == total for _, t in calls)
    done = [d for d, _ in calls]
    assert done == sorted(done) and done[0] >= 1 and len(set(done)) == len(done)


def test_cancel_before_start_raises_cancelled(values):
    stop = threading.Event()
    stop.set()
    with pytest.raises(Cancelled):
        clusterdesk.scan(values, kmin=1, kmax=4, cancel=stop)


def test_cancel_from_progress_stops_the_scan(values):
    stop = threading.Event()
    calls = []

    def progress(done, total):
        calls.append((done, total))
        stop.set()

    with pytest.raises(Cancelled):
        clusterdesk.scan(values, kmin=1, kmax=4, widths="both", progress=progress, cancel=stop)
    assert calls[0][0] == 1 and len(calls) < calls[0][1]


@pytest.mark.parametrize("widths", ["separate", "shared"])
def test_fit_reaches_the_scan_optimum(values, both_scan, widths):
    fitted = clusterdesk.fit(values, 3, widths=widths, restarts=5, seed=0)
    scanned = both_scan.model(3, widths)
    assert (fitted.k, fitted.widths, fitted.n) == (3, widths, values.size)
    assert abs(fitted.loglik - scanned.loglik) <= 1e-7 * values.size
    assert fitted.mixture.loglik(values) == pytest.approx(fitted.loglik, rel=1e-10)
    assert fitted.converged and not fitted.collapsed
    assert isinstance(fitted.notes, tuple)


# ---------------------------------------------------------------- bad input

def assert_sentence(error: pytest.ExceptionInfo) -> None:
    message = str(error.value)
    # A sentence: several words, ending in a full stop (it may open with a
    # lower-case parameter name such as "kmin").
    assert len(message.split()) >= 5, message
    assert message.rstrip().endswith((".", "!", "?")), message
    assert "Traceback" not in message and "array(" not in message, message


def test_input_error_is_a_value_error():
    assert issubclass(InputError, ValueError)


GOOD = three_groups(seed=2, n=200)

BAD_INPUT = [
    # (description, call, pattern the message must contain)
    ("no values", lambda: clusterdesk.scan([]), r"value|empty"),
    ("no values (array)", lambda: clusterdesk.fit(np.array([]), 1), r"value|empty"),
    ("fewer values than k", lambda: clusterdesk.fit([1.0, 2.0], 3), r"value|component"),
    ("NaN", lambda: clusterdesk.scan(np.r_[GOOD, np.nan]), r"finite|nan|missing|number"),
    ("inf", lambda: clusterdesk.fit(np.r_[GOOD, np.inf], 2), r"finite|inf"),
    ("-inf", lambda: clusterdesk.scan(np.r_[-np.inf, GOOD]), r"finite|inf"),
    ("all equal", lambda: clusterdesk.scan(np.full(50, 3.7)), r"equal|same|identical|distinct|spread|vary|constant"),
    ("negative count", lambda: clusterdesk.scan([1.0, 2.0, 3.0, 4.0], counts=[3, -1, 2, 5], kmax=1), r"count"),
    ("fractional count", lambda: clusterdesk.scan([1.0, 2.0, 3.0, 4.0], counts=[3, 1.5, 2, 5], kmax=1), r"count"),
    ("NaN count", lambda: clusterdesk.fit([1.0, 2.0, 3.0, 4.0], 1, counts=[3, np.nan, 2, 5]), r"count"),
    ("counts length", lambda: clusterdesk.fit([1.0, 2.0, 3.0, 4.0], 1, counts=[3, 1, 2]), r"count"),
    ("kmax above distinct values", lambda: clusterdesk.scan(np.repeat([1.0, 2.0, 3.0], 40), kmax=6), r"distinct|different|component"),
    ("k above distinct values", lambda: clusterdesk.fit(np.repeat([1.0, 2.0], 40), 5), r"distinct|different|component"),
    ("kmin > kmax", lambda: clusterdesk.scan(GOOD, kmin=4, kmax=2), r"kmin|kmax|smallest|largest|range|component"),
    ("k = 0", lambda: clusterdesk.fit(GOOD, 0), r"component|k\b|at least"),
    ("unknown widths", lambda: clusterdesk.scan(GOOD, widths="wide"), r"width|separate|shared"),
    ("unknown widths in fit", lambda: clusterdesk.fit(GOOD, 2, widths="both-ish"), r"width|separate|shared"),
]


@pytest.mark.parametrize(("description", "call", "pattern"), BAD_INPUT, ids=[c[0] for c in BAD_INPUT])
def test_bad_input_raises_readable_input_error(description, call, pattern):
    # Source: the engine contract (bad input -> InputError with a sentence).
    with pytest.raises(InputError, match=f"(?i){pattern}") as error:
        call()
    assert_sentence(error)
