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
