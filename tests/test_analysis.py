"""The analysis object: the same numbers as the engine, save and reopen, bad files."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pytest

import clusterdesk
from clusterdesk.analysis import ANALYSIS_SUFFIX, Analysis, DataChoice, ScanSettings, SourceChangedError
from clusterdesk.errors import FileFormatError, InputError

SAMPLES = Path(__file__).resolve().parents[1] / "sample_data"
SETTINGS = ScanSettings(kmin=1, kmax=4, widths="both", restarts=6, seed=3)


@pytest.fixture
def lake(tmp_path):
    path = tmp_path / "lake.csv"
    shutil.copy(SAMPLES / "lake_net_lengths.csv", path)
    return path


def test_scan_equals_the_engine_on_the_kept_values(lake):
    analysis = Analysis.from_file(lake, DataChoice(column="length_mm"), SETTINGS)
    analysis.run_scan()
    direct = clusterdesk.scan(analysis.measurements.values, kmin=1, kmax=4, widths="both",
                              restarts=6, seed=3)
    assert [r.bic for r in analysis.scan.ranking] == [r.bic for r in direct.ranking]
    assert analysis.chosen.k == direct.best.k


def test_intervals_equal_the_api_bootstrap_on_the_kept_values(lake):
    # The analysis prepares its sample once and hands it to the scan and the
    # bootstrap; the numbers must be those of the public functions given the values.
    analysis = Analysis.from_file(lake, DataChoice(column="length_mm"), SETTINGS)
    analysis.run_scan()
    got = analysis.compute_intervals(replicates=40, seed=5)
    direct = clusterdesk.bootstrap(analysis.measurements.values, analysis.chosen, replicates=40, seed=5)
    np.testing.assert_array_equal(got.means, direct.means)
    np.testing.assert_array_equal(got.mean_interval, direct.mean_interval)


def test_prepared_sample_is_reused_until_the_treatment_changes(lake):
    analysis = Analysis.from_file(lake, DataChoice(column="length_mm"), SETTINGS)
    first = analysis.prepared_sample()
    assert analysis.prepared_sample() is first
    exact = analysis.prepared_sample(ScanSettings(treatment="exact"))
    assert exact is not first and exact[1].used == "exact"
    analysis.load_file(lake)  # new measurements: prepared again
    assert analysis.prepared_sample() is not first


def test_compute_does_not_change_the_analysis_until_applied(lake):
    analysis = Analysis.from_file(lake, settings=SETTINGS)
    result = analysis.compute_scan()
    assert analysis.scan is None
    analysis.apply_scan(result)
    assert analysis.scan is result


def test_choice_drives_the_chosen_model_and_assignments(lake):
    analysis = Analysis.from_file(lake, settings=SETTINGS)
    analysis.run_scan()
    model = analysis.choose(2, "shared")
    assert analysis.chosen is model
    table = analysis.assignments()
    assert table["posterior"].shape == (len(analysis.measurements.rows), 2)
    kept = table["kept"]
    expected = model.mixture.classify(analysis.measurements.values) + 1
    assert np.array_equal(table["component"][kept], expected)


@pytest.mark.parametrize("treatment", ["exact", "intervals"])
def test_posteriors_and_summary_by_distinct_value_are_those_of_the_rows(lake, treatment):
    # Reference: the same analysis row by row (every kept value's posterior, every row in the summary).
    analysis = Analysis.from_file(lake, DataChoice(column="length_mm"),
                                  ScanSettings(kmin=2, kmax=2, restarts=3, seed=3, treatment=treatment))
    analysis.run_scan()
    every = analysis.posterior()
    rows = np.array([5, 0, 17, 5])
    np.testing.assert_array_equal(analysis.posterior(rows=rows), every[rows])
    groups = analysis.value_groups()
    values = analysis.measurements.values
    assert groups.size == np.unique(values).size < values.size  # lengths recorded to 1 mm repeat
    np.testing.assert_array_equal(every, every[groups.first][groups.index])
    by_value, by_row = analysis.classification(groups=groups), analysis.classification()
    np.testing.assert_array_equal(by_value.assigned_counts, by_row.assigned_counts)
    np.testing.assert_array_equal(by_value.confident_share_by_component, by_row.confident_share_by_component)
    assert by_value.confident_share == by_row.confident_share


def test_save_and_reopen_reproduces_the_numbers(lake, tmp_path):
    analysis = Analysis.from_file(lake, settings=SETTINGS)
    analysis.run_scan()
    analysis.choose(4, "separate")
    saved = analysis.save(tmp_path / "study")
    assert saved.name == "study" + ANALYSIS_SUFFIX
    opened = Analysis.open(saved)
    assert not opened.source_changed
    again = opened.analysis
    assert again.choice == (4, "separate")
    assert again.chosen.loglik == analysis.chosen.loglik
    assert np.array_equal(again.chosen.mixture.means, analysis.chosen.mixture.means)


def test_reopen_reports_a_changed_source(lake, tmp_path):
    analysis = Analysis.from_file(lake, settings=SETTINGS)
    analysis.run_scan()
    saved = analysis.save(tmp_path / "study.cdesk")
    with open(lake, "a", encoding="utf-8") as handle:
        handle.write("F9999,N1,150\n")
    with pytest.raises(SourceChangedError, match="changed since"):
        Analysis.open(saved)
    assert Analysis.open(saved, accept_changed_source=True).source_changed


@pytest.mark.parametrize("content", ["", "{", "[1, 2]", '{"format": "something else"}',
                                     '{"format": "clusterdesk-analysis", "format_version": 1}'])
def test_malformed_analysis_files_give_a_clear_error(tmp_path, content):
    path = tmp_path / "bad.cdesk"
    path.write_text(content, encoding="utf-8")
    with pytest.raises(FileFormatError, match="analysis"):
        Analysis.open(path)
    assert path.read_text(encoding="utf-8") == content  # nothing overwritten


def test_newer_version_and_missing_source(lake, tmp_path):
    analysis = Analysis.from_file(lake, settings=SETTINGS)
    saved = json.loads(json.dumps(analysis.to_dict()))
    newer = dict(saved, format_version=99)
    (tmp_path / "new.cdesk").write_text(json.dumps(newer), encoding="utf-8")
    with pytest.raises(FileFormatError, match="newer"):
        Analysis.open(tmp_path / "new.cdesk")
    gone = dict(saved, source=dict(saved["source"], path=str(tmp_path / "gone.csv")))
    (tmp_path / "gone.cdesk").write_text(json.dumps(gone), encoding="utf-8")
    with pytest.raises(InputError, match="missing"):
        Analysis.open(tmp_path / "gone.cdesk")


def test_questions_before_data_get_clear_errors():
    analysis = Analysis()
    with pytest.raises(InputError, match="No measurements"):
        analysis.fit_input()
    with pytest.raises(InputError, match="run the scan"):
        analysis.chosen


@pytest.mark.parametrize("scale, wild", [("linear", 1e6), ("log10", 1e6), ("log10", 1e-6)])
def test_limits_leaving_out_the_named_far_values_keep_every_other_value(tmp_path, scale, wild):
    # Synthetic: two groups of 200 (lognormal, so both scales make sense)
    # and one recording error far above or far below them (common practice:
    # far beyond Tukey's far-out fences on the scale of the fit).
    rng = np.random.default_rng(12)
    clean = np.concatenate([rng.lognormal(3.0, 0.08, 200), rng.lognormal(3.4, 0.08, 200)])
    source = tmp_path / "levels.csv"
    source.write_text("level\n" + "\n".join(f"{v:.6g}" for v in np.append(clean, wild)) + "\n",
                      encoding="utf-8")
    analysis = Analysis.from_file(source, DataChoice(column="level", scale=scale),
                                  ScanSettings(kmax=3, widths="separate", restarts=5))
    analysis.run_scan()
    assert len(analysis.scan.suspect_values) == 1
    choice, dropped = analysis.data_leaving_out_far_values()
    recorded = np.array([float(f"{v:.6g}") for v in clean])
    assert dropped == 1
    if wild > 1:
        assert choice.low is None and choice.high == recorded.max()
    else:
        assert choice.low == recorded.min() and choice.high is None
    assert choice.scale == scale and choice.column == "level"

    analysis.load_file(source, choice)
    analysis.run_scan()
    assert analysis.scan.notes == () and analysis.scan.suspect_values == ()
    assert analysis.measurements.values.size == clean.size
    # Reference: scikit-learn's GaussianMixture on the clean values (on the
    # analysis scale), tight tolerance: the same best k, the same log-likelihood.
    from sklearn.mixture import GaussianMixture

    column = (np.log10(recorded) if scale == "log10" else recorded).reshape(-1, 1)
    best = analysis.scan.best
    assert best.k == 2
    reference = GaussianMixture(2, tol=1e-12, max_iter=5000, n_init=5, random_state=0).fit(column)
    assert best.loglik == pytest.approx(reference.score(column) * column.size, abs=1e-6 * column.size)


def test_leaving_out_far_values_needs_some(tmp_path):
    rng = np.random.default_rng(3)
    source = tmp_path / "plain.csv"
    source.write_text("x\n" + "\n".join(f"{v:.4f}" for v in rng.normal(10.0, 1.0, 300)) + "\n", encoding="utf-8")
    analysis = Analysis.from_file(source, DataChoice(column="x"), ScanSettings(kmax=2, restarts=2))
    analysis.run_scan()
    with pytest.raises(InputError, match="nothing to leave out"):
        analysis.data_leaving_out_far_values()


def test_fit_notes_explain_a_missing_cut_point():
    # The shoulder data of tests/engine/test_bootstrap.py (synthetic, seed 0): the
    # fitted pair does not cross between its means (checked with scipy.stats there).
    rng = np.random.default_rng(0)
    x = np.concatenate([rng.normal(0.0, 0.25, 120), rng.normal(1.5, 2.0, 1380)])
    analysis = Analysis.from_text("reading\n" + "\n".join(f"{v:.6f}" for v in x),
                                  settings=ScanSettings(kmin=2, kmax=2, widths="separate", seed=0))
    analysis.run_scan()
    assert np.isnan(analysis.chosen.mixture.cut_points()[0])
    assert analysis.chosen.mixture.cut_point_notes()[0] in analysis.fit_notes


def test_fit_check_of_the_serosurvey_counts_its_censored_readings():
    # sample_data/serosurvey_antibody.csv (synthetic): 75 of 800 readings are
    # "<0.5". Reference: the empirical distribution over all 800 readings, the
    # 75 placed below log10(0.5), against the chosen mixture's distribution
    # function written with scipy.stats.norm, at every kept value.
    from scipy import stats

    path = Path(__file__).resolve().parents[1] / "sample_data" / "serosurvey_antibody.csv"
    analysis = Analysis.from_file(path, DataChoice(column="antibody_au", scale="log10"),
                                  ScanSettings(kmin=2, kmax=2, widths="separate", seed=0))
    analysis.run_scan()
    check = analysis.fit_check()
    mix = analysis.chosen.mixture
    kept, _ = analysis.fit_input()
    u, c = np.unique(kept, return_counts=True)
    after = (75 + np.cumsum(c)) / 800
    before = after - c / 800
    cdf = sum(w * stats.norm.cdf(u, m, s) for w, m, s in zip(mix.weights, mix.means, mix.sds))
    expected = max(np.abs(after - cdf).max(), np.abs(before - cdf).max())
    assert check.censored == 75 and check.n == 800
    assert check.ks_distance == pytest.approx(expected, rel=1e-10)
    assert check.verdict.startswith("No clear sign of misfit")
