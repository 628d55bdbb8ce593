"""One column -> one row: checked against the engine's scan and against scikit-learn."""

from __future__ import annotations

import math
import threading
import warnings
from pathlib import Path

import numpy as np
import pytest
from threadpoolctl import threadpool_limits

import clusterdesk
from clusterdesk.analysis import ScanSettings
from clusterdesk.errors import Cancelled
from clusterdesk.io import read_measurements
from clusterdesk.screen import tasks
from clusterdesk.screen.filecache import list_file
from clusterdesk.screen.tasks import ColumnTask, column_seed, screen_column

from screen_helpers import SETTINGS


def _kass_raftery(gap):
    # Kass & Raftery (1995), JASA 90:773-795, bands on the 2 ln B scale: 0-2 weak, 2-6 positive,
    # 6-10 strong, >10 very strong.
    return "weak" if gap <= 2 else "positive" if gap <= 6 else "strong" if gap <= 10 else "very strong"


def test_every_ok_row_matches_the_engine_scan_of_the_same_column(reference_run):
    result, _ = reference_run
    ok = [r for r in result.rows if r.status == "ok"]
    assert len(ok) >= 7
    for row in ok:
        # Independent route: the public reader and clusterdesk.scan with the row's own seed.
        # The same thread limit as the screen's workers (one BLAS thread): the
        # Newton endgame's BLAS dot products may round differently on more threads.
        m = read_measurements(row.file, column=row.position, sheet=row.sheet or None)
        with threadpool_limits(1):
            scan = clusterdesk.scan(m.fit_values, kmin=row.kmin, kmax=row.kmax, widths=SETTINGS.widths,
                                    restarts=SETTINGS.restarts, seed=row.seed)
        assert row.best_k == scan.best.k and row.best_widths == scan.best.widths
        np.testing.assert_array_equal(row.means, scan.best.mixture.means)
        np.testing.assert_array_equal(row.weights, scan.best.mixture.weights)
        assert row.rows_kept == m.summary.rows_kept and row.rows_read == m.summary.rows_read
        others = [r for r in scan.ranking[1:] if not r.collapsed and not (r.k == 1 and scan.best.k == 1)]
        if others:
            assert row.bic_gap == pytest.approx(others[0].bic - scan.best.bic, abs=1e-9)
            assert row.evidence == _kass_raftery(row.bic_gap)
        else:
            assert row.evidence == "" and row.bic_gap is None


def test_one_component_best_is_not_compared_with_its_own_twin(reference_run):
    result, _ = reference_run
    weight = next(r for r in result.rows if r.column == "weight_g")
    # One component with separate widths and with a shared width is the same model (common practice):
    # the runner-up must be a model with more components.
    assert weight.best_k == 1 and weight.runner_up.startswith("2 components") and weight.bic_gap > 0


def test_best_k_agrees_with_scikit_learn_on_well_separated_columns(inputs, reference_run):
    from sklearn.mixture import GaussianMixture
    from threadpoolctl import threadpool_limits

    result, _ = reference_run
    _, files = inputs
    for name in ("diameter_mm", "weight_g", "length_mm"):
        row = next(r for r in result.rows if r.column == name)
        x = read_measurements(files["good.csv"], column=name).values[:, None]
        # Reference library: scikit-learn's GaussianMixture BIC (-2 log L + p ln n, separate widths);
        # one thread, as its OpenMP k-means start crawls when oversubscribed on a busy machine.
        with threadpool_limits(1):
            bics = [GaussianMixture(k, n_init=3, tol=1e-6, max_iter=2000, random_state=0).fit(x).bic(x)
                    for k in (1, 2, 3)]
        assert row.best_k == int(np.argmin(bics)) + 1, (name, bics)


def test_excluded_rows_and_resolution_are_reported(reference_run):
    result, _ = reference_run
    weight = next(r for r in result.rows if r.column == "weight_g")
    assert weight.rows_excluded == 6 and weight.excluded_reasons == "6 not a number"
    assert weight.rows_read == weight.rows_kept + weight.rows_excluded == 300
    diameter = next(r for r in result.rows if r.column == "diameter_mm")
    assert diameter.resolution == pytest.approx(0.01)
    assert diameter.treatment == "exact values"


def _task(path, position=0, sheet=None, column="value"):
    listing = list_file(str(path))
    return ColumnTask(file=str(path), path=str(Path(path).resolve()), sha256=listing.sha256, sheet=sheet,
                      position=position, column=column, seed=column_seed(0, listing.sha256, sheet, position, column))


def test_too_few_values_lower_kmax_with_a_note_or_fail_with_the_reason(inputs):
    _, files = inputs
    task = _task(files["tiny.csv"])
    row = screen_column(task, SETTINGS)
    assert row.status == "ok" and row.kmax == 1 and any("kmax lowered" in n for n in row.notes)
    failed = screen_column(task, ScanSettings(kmin=2, kmax=3))
    assert failed.status == "failed" and "too few distinct values" in failed.reason


def test_screen_column_never_raises_for_an_engine_error(inputs, monkeypatch):
    _, files = inputs

    def broken(*args, **kwargs):
        raise RuntimeError("boom")

    monkeypatch.setattr(tasks, "scan", broken)
    row = screen_column(_task(files["good.csv"], 1, column="length_mm"), SETTINGS)
    assert row.status == "failed" and "RuntimeError: boom" in row.reason


def test_warnings_become_notes_and_cancel_still_stops(inputs, monkeypatch):
    _, files = inputs
    real_scan = tasks.scan

    def warning_scan(*args, **kwargs):
        warnings.warn("EM stopped at its iteration cap", clusterdesk.ClusterDeskWarning)
        return real_scan(*args, **kwargs)

    monkeypatch.setattr(tasks, "scan", warning_scan)
    task = _task(files["good.csv"], 2, column="weight_g")
    assert "EM stopped at its iteration cap" in screen_column(task, SETTINGS).notes
    stop = threading.Event()
    stop.set()
    with pytest.raises(Cancelled):
        screen_column(task, SETTINGS, cancel=stop)


def test_column_seed_is_stable_and_tells_columns_apart():
    base = column_seed(5, "a" * 64, "s", 2, "x")
    assert base == column_seed(5, "a" * 64, "s", 2, "x")
    variants = {column_seed(6, "a" * 64, "s", 2, "x"), column_seed(5, "b" * 64, "s", 2, "x"),
                column_seed(5, "a" * 64, "t", 2, "x"), column_seed(5, "a" * 64, "s", 3, "x"),
                column_seed(5, "a" * 64, "s", 2, "y"), column_seed(5, "a" * 64, None, 2, "x")}
    assert base not in variants and len(variants) == 6
    assert all(0 <= s < 2 ** 63 for s in variants | {base})
    assert math.isfinite(float(base))


def test_a_column_with_censored_readings_gets_the_fit_of_its_analysis(tmp_path):
    # Readings written "<0.1" enter the fit as censored, as in the analysis (the
    # reference: clusterdesk.analysis.Analysis on the same file), and the scan's
    # note on a far-out value reaches the row. Synthetic, seeded.
    import numpy as np

    from clusterdesk.analysis import Analysis, DataChoice, ScanSettings as Settings
    from clusterdesk.screen import screen

    rng = np.random.default_rng(77)
    values = np.round(np.concatenate([rng.normal(0.3, 0.1, 300), rng.normal(0.9, 0.15, 200)]), 2)
    text = ["<0.1" if v < 0.1 else f"{v:.2f}" for v in values]
    bores = [f"{v:.6f}" for v in rng.normal(50.0, 0.02, values.size - 1)] + ["99999"]
    (tmp_path / "assay.csv").write_text("level,bore\n" + "\n".join(f"{a},{b}" for a, b in zip(text, bores))
                                        + "\n", encoding="utf-8")
    settings = Settings(kmin=1, kmax=3, widths="separate", restarts=3, seed=0)
    rows = {r.column: r for r in screen([tmp_path / "assay.csv"], settings=settings, workers=1).rows}
    row = rows["level"]
    analysis = Analysis.from_file(tmp_path / "assay.csv", DataChoice(column="level"),
                                  Settings(kmin=1, kmax=3, widths="separate", restarts=3, seed=row.seed))
    analysis.run_scan()
    censored = int(np.sum(values < 0.1))
    assert censored > 0 and analysis.scan.treatment.censored == censored
    assert row.best_k == analysis.scan.best.k
    np.testing.assert_allclose(row.means, analysis.scan.best.mixture.means, rtol=1e-6)
    assert any(f"{censored} readings at a detection or reporting limit are in the fit" in n for n in row.notes)
    assert any("far outside the rest" in n and "99999" in n for n in rows["bore"].notes)
