"""The Dask backend gives the same summary as the local worker processes."""

from __future__ import annotations

import pytest

from clusterdesk.screen import screen

from screen_helpers import SETTINGS

distributed = pytest.importorskip(
    "distributed", reason="dask.distributed is not installed (pip install 'clusterdesk[cluster]')")


@pytest.fixture
def restore_blas_threads():
    """The in-process workers limit BLAS to one thread for good; give this test process its setting back."""
    from clusterdesk.engine import parallel as pool

    yield
    for limiter in pool._LIMITER:
        if limiter is not None:
            limiter.restore_original_limits()
    pool._LIMITER.clear()


def test_dask_local_cluster_gives_the_same_summary_as_the_local_pool(inputs, reference_run, tmp_path,
                                                                     restore_blas_threads):
    folder, _ = inputs
    _, out_local = reference_run
    # A two-worker cluster over TCP on the loopback interface, one thread per worker, in this
    # process (starts in seconds; worker processes take about 20 s on this machine); no dashboard.
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp://",
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        result = screen([folder], settings=SETTINGS, out=tmp_path, scheduler=cluster.scheduler_address)
    assert result.workers == 2 and not result.cancelled
    assert (tmp_path / "summary.csv").read_bytes() == (out_local / "summary.csv").read_bytes()


def test_unreachable_scheduler_is_an_input_error(tmp_path):
    from clusterdesk.errors import InputError
    from clusterdesk.screen.dask_backend import DaskBackend

    with pytest.raises(InputError, match="could not be reached"):
        DaskBackend("tcp://127.0.0.1:9", timeout=1)
