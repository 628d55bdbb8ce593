"""The command line end to end on the synthetic sample files."""

from __future__ import annotations

import csv
import os
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import clusterdesk
from clusterdesk.cli import main

SAMPLES = Path(__file__).resolve().parents[1] / "sample_data"


def read_csv(path):
    with open(path, encoding="utf-8", newline="") as handle:
        return list(csv.DictReader(handle))


def test_demo_subcommand_runs_the_demonstration(capsys):
    assert main(["demo"]) == 0
    out = capsys.readouterr().out
    assert "Synthetic sample: 600 invented fish lengths" in out
    assert "Best model: 3 components" in out  # the demonstration sample has three classes
    assert "Caution" in out


def test_version_and_help(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["--version"])
    assert stop.value.code == 0
    assert clusterdesk.__version__ in capsys.readouterr().out
    with pytest.raises(SystemExit) as stop:
        main(["fit", "--help"])
    assert stop.value.code == 0
    assert "examples:" in capsys.readouterr().out


def test_python_dash_m_entry_point():
    result = subprocess.run([sys.executable, "-m", "clusterdesk", "--version"],
                            capture_output=True, text=True, check=False)
    assert result.returncode == 0 and clusterdesk.__version__ in result.stdout


@pytest.mark.parametrize("argv", [["fit"], ["fit", "x.csv", "--kmax", "three"], ["nonsense"],
                                  ["fit", "x.csv", "--widths", "narrow"]])
def test_usage_errors_exit_2_with_one_line(argv, capsys):
    with pytest.raises(SystemExit) as stop:
        main(argv)
    assert stop.value.code == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and err.startswith("clusterdesk")


@pytest.mark.parametrize("argv", [
    ["fit", "no-such-file.csv"],
    ["fit", str(SAMPLES / "lake_net_lengths.csv"), "--column", "weight_g"],
    ["fit", str(SAMPLES / "lake_net_lengths.csv"), "--kmax", "400"],
    ["fit", str(SAMPLES / "lake_net_lengths.csv"), "--choose", "9"],
])
def test_unusable_input_exits_3_with_one_line(argv, capsys):
    assert main(argv) == 3
    err = capsys.readouterr().err.strip()
    assert err.startswith("clusterdesk: ") and "\n" not in err and "Traceback" not in err


def test_fit_writes_tables_with_every_input_row(tmp_path, capsys):
    source = SAMPLES / "messy_export.txt"
    assert main(["fit", str(source), "--kmax", "3", "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "Caution" in out
    assignments = read_csv(tmp_path / "assignments.csv")
    summary = json.loads((tmp_path / "summary.json").read_text(encoding="utf-8"))
    rows_read = summary["cleaning"]["rows_read"]
    # Rows in = rows out: every data row of the file has one line, excluded ones too.
    assert len(assignments) == rows_read
    excluded = [r for r in assignments if r["status"] != "kept"]
    assert len(excluded) == rows_read - summary["cleaning"]["rows_kept"]
    assert all(r["component"] == "" for r in excluded)
    assert {r["status"] for r in excluded} <= {"empty", "not a number"}
    ranking = read_csv(tmp_path / "ranking.csv")
    assert len(ranking) == 6  # k = 1..3, both width variants
    assert [float(r["bic"]) for r in ranking] == sorted(float(r["bic"]) for r in ranking)
    components = read_csv(tmp_path / "components.csv")
    assert len(components) == summary["chosen"]["components"]
    assert sum(float(r["weight"]) for r in components) == pytest.approx(1.0)
    assert sum(float(r["count_assigned"]) for r in components) == summary["cleaning"]["rows_kept"]
    assert all(r["count_assigned"].isdigit() for r in components)  # whole rows, written as whole numbers
    assert {r["likelihood"] for r in components} == {summary["treatment"]["used"]}  # the file stands alone
    assert summary["software"]["version"] == clusterdesk.__version__
    assert summary["settings"]["seed"] == 0
    # The numbers written are the engine's for the same values and settings.
    kept = np.array([float(r["value"]) for r in assignments if r["status"] == "kept"])
    direct = clusterdesk.scan(kept, kmin=1, kmax=3, widths="both", seed=0)
    assert float(ranking[0]["bic"]) == direct.ranking[0].bic


def test_fit_with_counts_and_json(capsys):
    assert main(["fit", str(SAMPLES / "length_tally.csv"), "--column", "length_cm",
                 "--counts", "count", "--kmax", "4", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["source"]["count_column"] == "count"
    assert summary["best"]["components"] == 3  # three cohorts generated (sample_data/README.md)


def test_fit_log_scale_reports_original_scale_columns(tmp_path, capsys):
    assert main(["fit", str(SAMPLES / "powder_diameters.csv"), "--column", "diameter_um",
                 "--scale", "ln", "--kmax", "3", "--widths", "separate", "--out", str(tmp_path)]) == 0
    components = read_csv(tmp_path / "components.csv")
    assert all(r["scale"] == "ln" for r in components)
    for r in components:
        assert float(r["geometric_mean"]) == pytest.approx(np.exp(float(r["mean"])))
        assert float(r["multiplicative_spread"]) == pytest.approx(np.exp(float(r["sd"])))


def test_choose_reports_a_non_best_model(capsys):
    assert main(["fit", str(SAMPLES / "lake_net_lengths.csv"), "--kmax", "4",
                 "--choose", "2:shared", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["chosen"]["components"] == 2 and summary["chosen"]["widths"] == "shared"
    assert summary["best"]["components"] != 2 or summary["best"]["widths"] != "shared"


def test_columns_lists_the_sheet(capsys):
    assert main(["columns", str(SAMPLES / "shaft_diameters.xlsx")]) == 0
    out = capsys.readouterr().out
    assert "diameter_mm" in out and "part_id" in out


def test_fit_with_intervals_report_and_lr_test(tmp_path, capsys):
    report = tmp_path / "lake.html"
    assert main(["fit", str(SAMPLES / "lake_net_lengths.csv"), "--kmax", "4", "--widths", "separate",
                 "--intervals", "30", "--test-next", "19", "--report", str(report),
                 "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "percentile intervals from" in out and "likelihood ratio" in out
    assert report.is_file() and "Bootstrap intervals" in report.read_text(encoding="utf-8")
    components = read_csv(tmp_path / "components.csv")
    summary = json.loads((tmp_path / "summary.json").read_text(encoding="utf-8"))
    assert summary["intervals"]["replicates"] == 30
    for j, row in enumerate(components):
        lower, upper = float(row["mean_lower"]), float(row["mean_upper"])
        assert lower <= float(row["mean"]) <= upper
        assert [lower, upper] == summary["intervals"]["mean"][j]  # CSV re-reads exactly
        assert 0.0 <= float(row["expected_misclassification"]) <= 1.0
        assert row["interval_level"] == "0.95" and row["interval_method"] == "bootstrap, resampling the values"


def test_screen_subcommand_summarises_every_column(tmp_path, capsys):
    assert main(["screen", str(SAMPLES / "lake_net_lengths.csv"), "--kmax", "4",
                 "--workers", "1", "--out", str(tmp_path)]) == 0
    rows = read_csv(tmp_path / "summary.csv")
    assert [r["column"] for r in rows] == ["fish_id", "station", "length_mm"]
    length = rows[2]
    assert length["status"] == "ok"
    # The engine on the same column is the reference for the summary's best k.
    values = np.loadtxt(SAMPLES / "lake_net_lengths.csv", delimiter=",", skiprows=1, usecols=2)
    direct = clusterdesk.scan(values, kmin=1, kmax=4, widths="both")
    assert int(length["best_k"]) == direct.best.k
    assert (tmp_path / "overview.html").is_file()


def test_fit_names_a_wild_value_and_a_range_limit_clears_it(tmp_path, capsys):
    # Synthetic: two groups of 150 values, N(20, 1) and N(26, 1), and one
    # recording error of 1000000 (common practice: far beyond Tukey's far-out fences).
    rng = np.random.default_rng(8)
    values = np.concatenate([rng.normal(20.0, 1.0, 150), rng.normal(26.0, 1.0, 150), [1e6]])
    source = tmp_path / "lengths.csv"
    source.write_text("length\n" + "\n".join(f"{v:.3f}" for v in values) + "\n", encoding="utf-8")
    assert main(["fit", str(source), "--kmax", "3", "--widths", "separate"]) == 0
    out = capsys.readouterr().out
    assert "note: 1 distinct value lies far outside the rest of the sample" in out
    assert "1000000" in out and "range limit" in out
    assert main(["fit", str(source), "--kmax", "3", "--widths", "separate", "--high", "1000"]) == 0
    out = capsys.readouterr().out
    assert "far outside" not in out
    assert "Best model: 2 components" in out


@pytest.mark.parametrize("scale", ["log10", "ln"])
def test_on_a_log_scale_the_wild_value_is_named_as_recorded(tmp_path, capsys, scale):
    # The same kind of synthetic data fitted on a log scale: the note names
    # the value as it was recorded (1000000, not its log10 of 6), since the
    # range limits that clear it are set on the original scale.
    rng = np.random.default_rng(8)
    values = np.concatenate([rng.lognormal(3.0, 0.1, 150), rng.lognormal(3.5, 0.1, 150), [1e6]])
    source = tmp_path / "levels.csv"
    source.write_text("level\n" + "\n".join(f"{v:.3f}" for v in values) + "\n", encoding="utf-8")
    assert main(["fit", str(source), "--kmax", "3", "--scale", scale]) == 0
    out = capsys.readouterr().out
    note = next(line for line in out.splitlines() if "far outside" in line)
    assert ": 1000000 (as recorded; the models are fitted on the " + scale + " scale)" in note
    assert main(["fit", str(source), "--kmax", "3", "--scale", scale, "--high", "1000"]) == 0
    assert "far outside" not in capsys.readouterr().out


def test_window_without_a_display_says_what_to_do_instead_of_aborting():
    # Qt aborts the whole process when no platform plugin can start; on a
    # Linux machine with no display named the command explains itself first.
    # Run in a child process with a clean environment, as a user would.
    if not sys.platform.startswith("linux"):
        pytest.skip("the check applies to Linux, where a display server must be named")
    env = {key: value for key, value in os.environ.items()
           if key not in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")}
    done = subprocess.run([sys.executable, "-m", "clusterdesk"], env=env, capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 3
    assert "no display" in done.stderr and "QT_QPA_PLATFORM=offscreen" in done.stderr
    assert "clusterdesk fit" in done.stderr


def test_display_check_reads_the_environment():
    from clusterdesk.cli import display_missing

    assert display_missing({}, "linux")
    assert not display_missing({"DISPLAY": ":0"}, "linux")
    assert not display_missing({"WAYLAND_DISPLAY": "wayland-0"}, "linux")
    assert not display_missing({"QT_QPA_PLATFORM": "offscreen"}, "linux")
    assert not display_missing({}, "darwin")
    assert not display_missing({}, "win32")


def test_a_missing_cut_point_prints_as_none_not_nan():
    # A narrow small component dominated at its own mean by a wide one: the
    # two weighted densities do not cross between the means, so there is no
    # cut point (checked here by evaluating both with scipy.stats.norm).
    from types import SimpleNamespace

    from scipy import stats

    from clusterdesk.cli import format_components
    from clusterdesk.engine.mixture import Mixture

    mixture = Mixture(np.array([0.08, 0.92]), np.array([0.0, 1.5]), np.array([0.26, 2.0]))
    grid = np.linspace(0.0, 1.5, 301)
    assert np.all(0.08 * stats.norm.pdf(grid, 0.0, 0.26) < 0.92 * stats.norm.pdf(grid, 1.5, 2.0))
    text = format_components(SimpleNamespace(mixture=mixture))
    first = text.splitlines()[1].split()
    assert first[0] == "1" and first[-1] == "none" and "nan" not in text


def test_log_scale_components_are_also_printed_back_on_the_original_scale():
    # Back-transform of a log-normal component: geometric mean exp(mu) (10**mu on
    # log10), multiplicative spread exp(sigma); common practice, no source.
    from types import SimpleNamespace

    from clusterdesk.cli import format_components
    from clusterdesk.engine.mixture import Mixture

    mixture = Mixture(np.array([0.6, 0.4]), np.array([1.2757, 2.4350]), np.array([0.3935, 0.2864]))
    text = format_components(SimpleNamespace(mixture=mixture), "ln")
    header, first, second = text.splitlines()
    assert "mean (ln)" in header and "geom. mean" in header and "cut, original" in header
    cells = first.split()
    assert float(cells[5]) == pytest.approx(np.exp(1.2757), rel=1e-3)
    assert float(cells[6]) == pytest.approx(np.exp(0.3935), rel=1e-3)
    assert float(cells[7]) == pytest.approx(np.exp(mixture.cut_points()[0]), rel=1e-3)
    assert float(second.split()[4]) == pytest.approx(np.exp(2.4350), rel=1e-3)
    ten = format_components(SimpleNamespace(mixture=mixture), "log10").splitlines()[1].split()
    assert float(ten[5]) == pytest.approx(10 ** 1.2757, rel=1e-3)
