"""The committed sample files are what sample_data/make_samples.py writes.

Checks: regeneration reproduces the committed bytes; each scenario's stream
is independent of the others; each file has the format quirks the README
promises (read here with the standard library and openpyxl, not with
clusterdesk.io); and the stated generating parameters are consistent with the
data, judged with scikit-learn and scipy as outside references.
"""

import csv
import importlib.util
import re
import sys
import warnings
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from scipy.stats import binom, norm
from sklearn.exceptions import ConvergenceWarning
from sklearn.mixture import GaussianMixture

SAMPLE_DIR = Path(__file__).resolve().parents[1] / "sample_data"


def _load_maker():
    """Import make_samples.py from its path (recipe: Python docs, importlib,
    "Importing a source file directly")."""
    name = "clusterdesk_sample_maker"
    if name in sys.modules:
        return sys.modules[name]
    spec = importlib.util.spec_from_file_location(name, SAMPLE_DIR / "make_samples.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    return module


maker = _load_maker()
FILE_NAMES = [name for name, _ in maker.SCENARIOS]


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory):
    out_dir = tmp_path_factory.mktemp("samples")
    paths = maker.generate(out_dir)
    assert [p.name for p in paths] == FILE_NAMES
    return out_dir


def _csv_rows(name):
    with open(SAMPLE_DIR / name, encoding="utf-8", newline="") as handle:
        return list(csv.reader(handle))


def _xlsx_cells(path):
    workbook = openpyxl.load_workbook(path)
    return {
        sheet.title: [list(row) for row in sheet.iter_rows(values_only=True)]
        for sheet in workbook.worksheets
    }


# ---------------------------------------------------------------- regeneration

@pytest.mark.parametrize("name", FILE_NAMES)
def test_regeneration_reproduces_the_committed_bytes(regenerated, name):
    committed = (SAMPLE_DIR / name).read_bytes()
    fresh = (regenerated / name).read_bytes()
    assert fresh == committed, (
        f"{name} differs from what make_samples.py writes now; "
        "rerun `python sample_data/make_samples.py` if the change is intended"
    )


def test_regenerated_workbook_has_the_committed_cell_values(regenerated):
    # Separate from the byte check: if an openpyxl upgrade changes the XML
    # bytes, this still tells whether the data themselves changed.
    name = "shaft_diameters.xlsx"
    assert _xlsx_cells(regenerated / name) == _xlsx_cells(SAMPLE_DIR / name)


def test_workbook_bytes_do_not_depend_on_the_clock(tmp_path, monkeypatch):
    # zipfile stamps archive members with time.time(); move that clock 400
    # days on between two runs and expect identical bytes.
    import time

    first = maker.generate(tmp_path / "a", only=["shaft_diameters.xlsx"])[0].read_bytes()
    real_time = time.time
    monkeypatch.setattr(time, "time", lambda: real_time() + 86400 * 400)
    second = maker.generate(tmp_path / "b", only=["shaft_diameters.xlsx"])[0].read_bytes()
    assert first == second


@pytest.mark.parametrize("name", [FILE_NAMES[0], FILE_NAMES[3], FILE_NAMES[-1]])
def test_each_scenario_is_independent_of_the_others(regenerated, tmp_path, name):
    # One child SeedSequence per scenario: writing one file alone gives the
    # same bytes as writing all of them.
    alone = maker.generate(tmp_path, only=[name])
    assert [p.name for p in alone] == [name]
    assert alone[0].read_bytes() == (regenerated / name).read_bytes()


def test_child_streams_do_not_change_when_a_scenario_is_appended():
    # numpy documents spawn() children as SeedSequence(entropy,
    # spawn_key=(i,)), independent of how many are spawned.
    now = np.random.SeedSequence(maker.SEED).spawn(len(FILE_NAMES))
    more = np.random.SeedSequence(maker.SEED).spawn(len(FILE_NAMES) + 1)
    for a, b in zip(now, more):
        assert np.array_equal(a.generate_state(4), b.generate_state(4))


def test_generate_rejects_an_unknown_file_name(tmp_path):
    with pytest.raises(ValueError, match="unknown sample file"):
        maker.generate(tmp_path, only=["no_such_file.csv"])


def test_command_line_writes_into_the_given_folder(tmp_path, capsys):
    assert maker.main([str(tmp_path)]) == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(FILE_NAMES)
    assert "lake_net_lengths.csv" in capsys.readouterr().out


def test_sample_files_are_small():
    total = sum((SAMPLE_DIR / name).stat().st_size for name in FILE_NAMES)
    assert total < 1_000_000


# ---------------------------------------------------------------- format facts

def test_lake_net_lengths_are_whole_millimetres():
    rows = _csv_rows("lake_net_lengths.csv")
    assert rows[0] == ["fish_id", "station", "length_mm"]
    body = rows[1:]
    assert len(body) == maker.TRUE_PARAMETERS["lake_net_lengths.csv"].n
    assert all(re.fullmatch(r"[0-9]+", r[2]) for r in body)
    assert len({r[0] for r in body}) == len(body)
    assert {r[1] for r in body} == {"N1", "N2", "N3", "N4", "N5"}


def test_powder_diameters_are_positive_and_right_skewed():
    body = _csv_rows("powder_diameters.csv")[1:]
    assert all(re.fullmatch(r"[0-9]+\.[0-9]{2}", r[1]) for r in body)
    d = np.array([float(r[1]) for r in body])
    assert d.min() > 0
    # Right skew: the mean exceeds the median, and the logs are far less
    # skewed than the raw values (common practice for size distributions).
    assert d.mean() > np.median(d)
    skew = lambda x: np.mean((x - x.mean()) ** 3) / x.std() ** 3  # noqa: E731
    assert skew(d) > 1.0 > abs(skew(np.log(d)))


def test_serosurvey_has_sample_ids_and_below_limit_entries():
    rows = _csv_rows("serosurvey_antibody.csv")
    assert rows[0] == ["sample_id", "plate", "antibody_au"]
    body = rows[1:]
    assert len({r[0] for r in body}) == len(body)
    censored = [r[2] for r in body if r[2].startswith("<")]
    assert censored and set(censored) == {"<0.5"}
    numeric = [float(r[2]) for r in body if not r[2].startswith("<")]
    assert min(numeric) >= maker.SERO_DETECTION_LIMIT


def test_serosurvey_censored_share_matches_the_stated_parameters():
    # Expected share below the limit = sum_k w_k Phi((log10 L - mu_k)/sd_k)
    # (normal cdf, scipy.stats.norm); the count is binomial (scipy.stats.binom).
    truth = maker.TRUE_PARAMETERS["serosurvey_antibody.csv"]
    p = sum(w * norm.cdf((np.log10(maker.SERO_DETECTION_LIMIT) - m) / s)
            for w, m, s in zip(truth.weights, truth.means, truth.sds))
    body = _csv_rows("serosurvey_antibody.csv")[1:]
    count = sum(r[2].startswith("<") for r in body)
    low, high = binom.ppf([0.0005, 0.9995], truth.n, p)
    assert low <= count <= high


def test_shaft_workbook_layout():
    cells = _xlsx_cells(SAMPLE_DIR / "shaft_diameters.xlsx")
    assert list(cells) == ["inspection", "notes"]
    header, *body = cells["inspection"]
    assert header == ["part_id", "shift", "diameter_mm", "length_mm"]
    assert len(body) == maker.TRUE_PARAMETERS["shaft_diameters.xlsx"].n
    assert {row[1] for row in body} == {"early", "late", "night"}
    diameters = np.array([row[2] for row in body], dtype=float)
    assert np.allclose(diameters, np.round(diameters, 3), rtol=0, atol=1e-12)
    assert 24.9 < diameters.min() and diameters.max() < 25.1
    assert "Synthetic" in cells["notes"][0][0]


def test_messy_export_quirks():
    raw = (SAMPLE_DIR / "messy_export.txt").read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf")  # UTF-8 byte order mark
    assert b"\r" not in raw
    assert raw.endswith(b"\n\n\n")  # two trailing blank lines
    lines = raw.decode("utf-8-sig").split("\n")
    assert lines[0].startswith("Instrument;")
    assert any(line.startswith("Exported;2026-") for line in lines[:6])
    header_at = next(i for i, line in enumerate(lines) if line.startswith("Reading;"))
    assert lines[header_at - 1] == ""  # blank line between preamble and header
    assert lines[header_at].split(";")[2] == "Thickness (µm)"
    records = [line.split(";") for line in lines[header_at + 1:] if line]
    assert len(records) == maker.TRUE_PARAMETERS["messy_export.txt"].n
    assert all(len(r) == 5 for r in records)
    thickness = [r[2] for r in records]
    numeric = [t for t in thickness if re.fullmatch(r"[0-9]+,[0-9]", t)]
    assert len(numeric) > 0.85 * len(records)  # decimal commas
    assert {"", "n/a", "ERR"} <= set(thickness)
    assert set(thickness) - set(numeric) == {"", "n/a", "ERR"}


def test_length_tally_counts_are_positive_integers():
    rows = _csv_rows("length_tally.csv")
    assert rows[0] == ["length_cm", "count"]
    classes = [int(r[0]) for r in rows[1:]]
    counts = [r[1] for r in rows[1:]]
    assert all(re.fullmatch(r"[1-9][0-9]*", c) for c in counts)
    assert classes == sorted(set(classes))  # one row per 1 cm class, ascending
    assert sum(map(int, counts)) == maker.TRUE_PARAMETERS["length_tally.csv"].n


def test_readme_describes_every_file_and_the_seed():
    readme = (SAMPLE_DIR / "README.md").read_text(encoding="utf-8")
    assert "synthetic" in readme.lower()
    assert str(maker.SEED) in readme
    for name in FILE_NAMES:
        assert f"`{name}`" in readme


# ------------------------------------------- the groups can be found again

def _values_for_fit(name):
    """Uncensored values of a scenario, on the scale its mixture lives on."""
    if name == "lake_net_lengths.csv":
        return np.array([int(r[2]) for r in _csv_rows(name)[1:]], dtype=float)
    if name == "powder_diameters.csv":
        return np.log([float(r[1]) for r in _csv_rows(name)[1:]])
    if name == "shaft_diameters.xlsx":
        body = _xlsx_cells(SAMPLE_DIR / name)["inspection"][1:]
        return np.array([row[2] for row in body], dtype=float)
    if name == "messy_export.txt":
        text = (SAMPLE_DIR / name).read_text(encoding="utf-8-sig")
        cells = [line.split(";")[2] for line in text.split("\n") if re.match(r"[0-9]+;", line)]
        return np.array([float(c.replace(",", ".")) for c in cells if re.fullmatch(r"[0-9]+,[0-9]", c)])
    if name == "length_tally.csv":
        rows = _csv_rows(name)[1:]
        # Class midpoints: class L holds lengths in [L, L + 1).
        return np.repeat([int(r[0]) + 0.5 for r in rows], [int(r[1]) for r in rows])
    raise KeyError(name)


@pytest.mark.parametrize("name", [
    "lake_net_lengths.csv",
    "powder_diameters.csv",
    "shaft_diameters.xlsx",
    "messy_export.txt",
    "length_tally.csv",
])
def test_reference_library_recovers_the_true_groups(name):
    # Reference: scikit-learn GaussianMixture (EM) and its BIC (Schwarz 1978).
    # The serosurvey is left out: dropping its "<0.5" entries truncates the
    # negative group, which is exactly what ClusterDesk must handle itself.
    truth = maker.TRUE_PARAMETERS[name]
    x = _values_for_fit(name).reshape(-1, 1)
    fits = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        for k in range(1, 6):
            fits[k] = GaussianMixture(k, n_init=5, max_iter=1000, random_state=0).fit(x)
    bic = {k: fit.bic(x) for k, fit in fits.items()}
    assert min(bic, key=bic.get) == len(truth.weights)
    fit = fits[len(truth.weights)]
    means = np.sort(fit.means_.ravel())
    # Each fitted mean lies within half a true standard deviation of its
    # true mean (tolerance chosen here, not from a source).
    assert np.all(np.abs(means - np.array(truth.means)) < 0.5 * np.array(truth.sds))
