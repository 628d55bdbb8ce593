"""Scans of large samples in worker processes: same numbers, cancelling, the automatic choice.

Sources:
- scikit-learn's GaussianMixture (covariance "full", tight tolerance) as the
  reference fit of the two-component model.
- That a process pool started by a fork server first runs the caller's main
  script again (hence the ``if __name__ == "__main__":`` rule) is the Python
  documentation's "Safe importing of main module" (multiprocessing,
  programming guidelines), from memory.
"""

from __future__ import annotations

import sys
import threading
import types

import numpy as np
import pytest
from sklearn.mixture import GaussianMixture

from clusterdesk.engine import parallel
from clusterdesk.engine.fitting import FitSettings
from clusterdesk.engine.scan import scan_models
from clusterdesk.errors import Cancelled


@pytest.fixture(scope="module")
def large_sample():
    """6,000 synthetic readings to 0.0001 from two normal groups: more distinct values
    than FitSettings.bin_above (4,000), so the scan takes the histogram path."""
    rng = np.random.default_rng(20261202)
    values = np.concatenate([rng.normal(10.0, 1.0, 3600), rng.normal(14.0, 1.5, 2400)])
    values = np.round(values, 4)
    assert np.unique(values).size > FitSettings().bin_above
    return values


def test_two_workers_give_the_same_models_bit_for_bit(large_sample):
    one = scan_models(large_sample, kmin=1, kmax=3, widths="both", restarts=4, seed=3, workers=1)
    two = scan_models(large_sample, kmin=1, kmax=3, widths="both", restarts=4, seed=3, workers=2)
    assert [(m.k, m.widths) for m in one.models] == [(m.k, m.widths) for m in two.models]
    for a, b in zip(one.models, two.models):
        assert a.loglik == b.loglik
        np.testing.assert_array_equal(a.mixture.means, b.mixture.means)
        np.testing.assert_array_equal(a.mixture.sds, b.mixture.sds)
        np.testing.assert_array_equal(a.mixture.weights, b.mixture.weights)
    assert [r.k for r in one.ranking] == [r.k for r in two.ranking]

    # Reference: scikit-learn's EM for the two-group model reaches no higher a
    # log-likelihood than the model fitted in a worker process.
    reference = GaussianMixture(2, covariance_type="full", tol=1e-10, max_iter=2000, n_init=4,
                                random_state=0).fit(large_sample.reshape(-1, 1))
    reference_loglik = reference.score(large_sample.reshape(-1, 1)) * large_sample.size
    assert two.model(2, "separate").loglik >= reference_loglik - 1e-6 * large_sample.size


def test_progress_counts_every_model_in_the_calling_thread(large_sample):
    seen = []
    caller = threading.get_ident()
    scan_models(large_sample, kmin=1, kmax=3, widths="separate", restarts=2, seed=0, workers=2,
                progress=lambda done, total: seen.append((done, total, threading.get_ident())))
    assert [(d, t) for d, t, _ in seen] == [(1, 3), (2, 3), (3, 3)]
    assert {ident for _, _, ident in seen} == {caller}


def test_cancel_stops_the_workers_and_keeps_nothing(large_sample):
    token = threading.Event()

    def progress(done, total):
        token.set()  # cancel as soon as the first model is in

    with pytest.raises(Cancelled):
        scan_models(large_sample, kmin=1, kmax=6, widths="both", restarts=10, seed=0, workers=2,
                    progress=progress, cancel=token)


def test_worker_token_is_none_outside_workers():
    assert parallel.worker_cancel_token() is None


@pytest.mark.parametrize("main_file, spec_name, expected", [
    (None, None, "auto"),                            # interactive session or python -c
    ("/usr/bin/clusterdesk", None, "auto"),          # our own command
    ("/x/clusterdesk/__main__.py", "clusterdesk.__main__", "auto"),  # python -m clusterdesk
    ("/home/someone/analyse.py", None, 1),           # a user's script: may not be guarded
])
def test_automatic_process_count_is_one_in_a_script(monkeypatch, main_file, spec_name, expected):
    main = types.ModuleType("__main__")
    if main_file is not None:
        main.__file__ = main_file
    main.__spec__ = None if spec_name is None else types.SimpleNamespace(name=spec_name)
    monkeypatch.setitem(sys.modules, "__main__", main)
    want = parallel.check_workers(None) if expected == "auto" else expected
    assert parallel.process_workers(None) == want
    assert parallel.process_workers(2) == 2  # an explicit number is taken as given
