"""Every output says which likelihood was used: CLI text, ranking.csv, summary.json, report, .cdesk.

The samples are synthetic (sample_data/make_samples.py). The lake lengths are
recorded to whole millimetres, so the automatic treatment takes them as
intervals of width 1; `--values-as exact` overrides it. For the interval
ends on a log scale the reference is numpy's log of x -/+ h/2 (definition).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest

from clusterdesk.analysis import Analysis, DataChoice, ScanSettings
from clusterdesk.cli import main

SAMPLES = Path(__file__).resolve().parents[1] / "sample_data"
LAKE = ["fit", str(SAMPLES / "lake_net_lengths.csv"), "--column", "length_mm", "--kmax", "3",
        "--restarts", "3"]


def _rows(path):
    with open(path, encoding="utf-8", newline="") as handle:
        return list(csv.DictReader(handle))


def test_cli_states_the_automatic_treatment_everywhere(tmp_path, capsys):
    report = tmp_path / "lake.html"
    assert main(LAKE + ["--out", str(tmp_path / "out"), "--report", str(report)]) == 0
    out = capsys.readouterr().out
    assert ("Values treated as: Likelihood of intervals of width 1, each value in the middle of its "
            "interval (chosen automatically)") in out
    assert {row["likelihood"] for row in _rows(tmp_path / "out" / "ranking.csv")} == {"intervals"}
    summary = json.loads((tmp_path / "out" / "summary.json").read_text(encoding="utf-8"))
    assert summary["treatment"]["used"] == "intervals" and summary["treatment"]["resolution"] == 1.0
    assert summary["treatment"]["value_at"] == "middle" and summary["settings"]["value_at"] == "middle"
    assert summary["settings"]["treatment"] == "auto"
    assert "Likelihood of intervals of width 1" in report.read_text(encoding="utf-8")


def test_cli_override_to_exact_values(tmp_path, capsys):
    assert main(LAKE + ["--values-as", "exact", "--out", str(tmp_path)]) == 0
    assert "Values treated as: Likelihood of exact values (as requested)" in capsys.readouterr().out
    assert {row["likelihood"] for row in _rows(tmp_path / "ranking.csv")} == {"exact"}
    summary = json.loads((tmp_path / "summary.json").read_text(encoding="utf-8"))
    assert summary["treatment"]["used"] == "exact" and summary["settings"]["treatment"] == "exact"


def test_cli_rejects_an_unknown_treatment(capsys):
    with pytest.raises(SystemExit) as stop:
        main(LAKE + ["--values-as", "rounded"])
    assert stop.value.code == 2
    assert "--values-as" in capsys.readouterr().err


def test_log_scale_intervals_are_the_transformed_ends(tmp_path):
    data = DataChoice(column="diameter_um", scale="ln")
    settings = ScanSettings(kmax=2, restarts=2, widths="separate", treatment="intervals")
    analysis = Analysis.from_file(SAMPLES / "powder_diameters.csv", data, settings)
    given = analysis.interval_input()
    m = analysis.measurements
    assert given["resolution"] is None
    np.testing.assert_allclose(given["bounds"][0], np.log(m.values - 0.005))
    np.testing.assert_allclose(given["bounds"][1], np.log(m.values + 0.005))
    analysis.run_scan()
    assert analysis.scan.treatment.used == "intervals"
    boot = analysis.run_intervals(replicates=20)
    assert boot.path == "intervals"
    path = analysis.save(tmp_path / "powder")
    saved = json.loads(path.read_text(encoding="utf-8"))
    assert saved["settings"]["treatment"] == "intervals"
    reopened = Analysis.open(path).analysis  # same settings, same seed: the same numbers
    assert reopened.settings.treatment == "intervals"
    assert reopened.scan.treatment.used == "intervals"
    assert [(r.k, r.widths, r.loglik) for r in reopened.scan.ranking] == \
        [(r.k, r.widths, r.loglik) for r in analysis.scan.ranking]


def test_below_detection_rows_enter_the_serosurvey_fit_as_censored_intervals():
    # Source of the truth: sample_data/README.md (synthetic generator): on
    # log10, negatives w 0.78, mean 0.0, sd 0.25; positives w 0.22, mean 1.2,
    # sd 0.35; 75 readings below the detection limit 0.5 written as "<0.5".
    data = DataChoice(column="antibody_au", scale="log10")
    settings = ScanSettings(kmax=4, restarts=5, widths="separate")
    analysis = Analysis.from_file(SAMPLES / "serosurvey_antibody.csv", data, settings)
    analysis.run_scan()
    scan = analysis.scan
    assert scan.treatment.used == "intervals" and scan.treatment.censored == 75
    assert scan.n == 800
    best = scan.best
    assert best.k == 2 and best.likelihood == "intervals"
    np.testing.assert_allclose(best.mixture.means, [0.0, 1.2], atol=0.1)
    np.testing.assert_allclose(best.mixture.sds, [0.25, 0.35], atol=0.05)
    np.testing.assert_allclose(best.mixture.weights, [0.78, 0.22], atol=0.05)
    # Dropping the censored rows (values taken as exact) shifts the negative
    # group up: the censored fit is closer to the generating mean.
    dropped = Analysis.from_file(SAMPLES / "serosurvey_antibody.csv", data,
                                 ScanSettings(kmax=2, kmin=2, restarts=5, widths="separate",
                                              treatment="exact"))
    dropped.run_scan()
    assert dropped.scan.n == 725
    assert abs(best.mixture.means[0]) < abs(dropped.scan.best.mixture.means[0])
    boot = analysis.run_intervals(replicates=20)
    assert boot.path == "intervals" and boot.mean_interval.shape == (2, 2)


def test_labels_of_an_interval_fit_use_interval_posteriors():
    # Reference: the posterior given that each length lies in [x - 1/2, x + 1/2),
    # written here with scipy.stats.norm.cdf differences (Bayes' rule).
    from scipy import stats

    analysis = Analysis.from_file(SAMPLES / "lake_net_lengths.csv", DataChoice(column="length_mm"),
                                  ScanSettings(kmax=3, restarts=3, widths="separate"))
    analysis.run_scan()
    model = analysis.chosen
    assert model.likelihood == "intervals"
    x = analysis.measurements.fit_values
    mix = model.mixture
    joint = mix.weights * (stats.norm.cdf(x[:, None] + 0.5, mix.means, mix.sds)
                           - stats.norm.cdf(x[:, None] - 0.5, mix.means, mix.sds))
    reference = joint / joint.sum(axis=1, keepdims=True)
    np.testing.assert_allclose(analysis.posterior(), reference, rtol=1e-9, atol=1e-12)
    assert np.abs(reference - mix.posterior(x)).max() > 1e-6  # the density posterior differs
    rows = analysis.assignments()
    np.testing.assert_allclose(rows["posterior"][rows["kept"]], reference[analysis.measurements.rows.position[rows["kept"]]],
                               rtol=1e-9, atol=1e-12)
    summary = analysis.classification()
    np.testing.assert_array_equal(summary.assigned, np.argmax(reference, axis=1))
