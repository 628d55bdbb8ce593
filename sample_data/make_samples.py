"""Generate ClusterDesk's synthetic sample files.

Every file written here is invented: the scenarios, the instruments, the
identifiers and the generating parameters were made up for ClusterDesk's
demos and tests.  None of it is a real measurement.

Reproducibility
---------------
One master seed (:data:`SEED`) feeds ``numpy.random.SeedSequence``; each
scenario draws from its own child stream ``SeedSequence(SEED).spawn(...)[i]``,
where ``i`` is the scenario's position in :data:`SCENARIOS`.  A child depends
only on the master seed and its position, so a scenario appended to the end of
:data:`SCENARIOS` leaves every existing file unchanged.  Never reorder or remove
entries; append new ones.

Usage::

    python sample_data/make_samples.py [OUT_DIR]

``OUT_DIR`` defaults to the folder holding this script.  The true generating
parameters of each scenario are in :data:`TRUE_PARAMETERS` and in
``sample_data/README.md``.
"""

import csv
import datetime
import io
import sys
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

SEED = 20260314
"""Master seed of every sample file."""

FIXED_TIMESTAMP = datetime.datetime(2026, 1, 1, 0, 0, 0)
"""Creation/modification time written into the XLSX file (document properties
and every zip member), so reruns give identical bytes."""


@dataclass(frozen=True)
class TrueMixture:
    """Generating parameters of one scenario.

    Parameters
    ----------
    weights, means, sds : tuple of float, each of length K
        Component weights (summing to 1), means and standard deviations.  For a
        log-scale scenario, ``means`` and ``sds`` describe the natural
        logarithm (``log_base='e'``) or the base-10 logarithm
        (``log_base='10'``) of the value.
    n : int
        Number of items drawn (before any are blanked or censored).
    unit : str
        Unit of the recorded value.
    log_base : str or None, default None
        ``None`` for a mixture on the raw scale.
    """

    weights: tuple[float, ...]
    means: tuple[float, ...]
    sds: tuple[float, ...]
    n: int
    unit: str
    log_base: str | None = None


TRUE_PARAMETERS: dict[str, TrueMixture] = {
    # Three age classes of one lake fish species caught in survey gill nets.
    "lake_net_lengths.csv": TrueMixture(
        weights=(0.50, 0.32, 0.18),
        means=(92.0, 148.0, 196.0),
        sds=(9.0, 13.0, 17.0),
        n=600,
        unit="mm",
    ),
    # Fine and coarse modes of a milled powder; natural log of diameter.
    "powder_diameters.csv": TrueMixture(
        weights=(0.65, 0.35),
        means=(float(np.log(3.5)), float(np.log(11.0))),
        sds=(0.38, 0.30),
        n=1200,
        unit="um",
        log_base="e",
    ),
    # Seronegative and seropositive panel members; base-10 log of reading.
    "serosurvey_antibody.csv": TrueMixture(
        weights=(0.78, 0.22),
        means=(0.0, 1.2),
        sds=(0.25, 0.35),
        n=800,
        unit="AU",
        log_base="10",
    ),
    # Three lathes feeding one inspection gauge; lathe not recorded.
    "shaft_diameters.xlsx": TrueMixture(
        weights=(0.40, 0.35, 0.25),
        means=(24.990, 25.000, 25.011),
        sds=(0.0030, 0.0035, 0.0040),
        n=900,
        unit="mm",
    ),
    # Coating thickness from two spray booths; booth not recorded.
    "messy_export.txt": TrueMixture(
        weights=(0.55, 0.45),
        means=(42.0, 51.0),
        sds=(2.5, 3.0),
        n=320,
        unit="um",
    ),
    # Length-frequency tally of three cohorts of a coastal fish.
    "length_tally.csv": TrueMixture(
        weights=(0.55, 0.30, 0.15),
        means=(12.3, 21.5, 29.8),
        sds=(1.6, 2.4, 3.0),
        n=2500,
        unit="cm",
    ),
}

SERO_DETECTION_LIMIT = 0.5
"""Readings below this (AU) are written as ``"<0.5"``."""

SHAFT_LENGTH_MEAN_MM, SHAFT_LENGTH_SD_MM = 120.00, 0.04
"""Shaft lengths (independent of lathe), recorded to 0.01 mm."""


def _draw(rng: np.random.Generator, truth: TrueMixture) -> tuple[np.ndarray, np.ndarray]:
    """Draw component labels and values on the mixture's own scale.

    Returns
    -------
    labels : ndarray of int, shape (n,)
    values : ndarray of float, shape (n,)
        On the log scale for a log-scale scenario.
    """
    labels = rng.choice(len(truth.weights), size=truth.n, p=truth.weights)
    values = rng.normal(np.asarray(truth.means)[labels], np.asarray(truth.sds)[labels])
    return labels, values


def _write_text(path: Path, lines: list[str], encoding: str) -> None:
    """Write ``lines`` (without terminators) with ``\\n`` line ends."""
    with open(path, "w", encoding=encoding, newline="\n") as handle:
        handle.write("\n".join(lines) + "\n")


def _write_csv(path: Path, header: list[str], rows: list[list[str]]) -> None:
    """Write a comma-separated UTF-8 file (no BOM) with ``\\n`` line ends."""
    with open(path, "w", encoding="utf-8", newline="\n") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(header)
        writer.writerows(rows)


def make_lake_net_lengths(rng: np.random.Generator, path: Path) -> None:
    """Fish lengths (mm, whole millimetres) with net station and fish id."""
    truth = TRUE_PARAMETERS[path.name]
    _, lengths = _draw(rng, truth)
    stations = rng.choice(["N1", "N2", "N3", "N4", "N5"], size=truth.n)
    rows = [
        [f"F{i + 1:04d}", str(station), str(int(np.rint(length)))]
        for i, (station, length) in enumerate(zip(stations, lengths))
    ]
    _write_csv(path, ["fish_id", "station", "length_mm"], rows)


def make_powder_diameters(rng: np.random.Generator, path: Path) -> None:
    """Particle diameters (micrometres, 2 decimals), lognormal mixture."""
    truth = TRUE_PARAMETERS[path.name]
    _, log_diameters = _draw(rng, truth)
    diameters = np.exp(log_diameters)
    rows = [[str(i + 1), f"{d:.2f}"] for i, d in enumerate(diameters)]
    _write_csv(path, ["particle", "diameter_um"], rows)


def make_serosurvey_antibody(rng: np.random.Generator, path: Path) -> None:
    """Antibody readings (AU, 2 decimals) with a lower detection limit."""
    truth = TRUE_PARAMETERS[path.name]
    _, log10_readings = _draw(rng, truth)
    readings = 10.0**log10_readings
    plates = 1 + np.arange(truth.n) // 96
    rows = []
    for i, (plate, reading) in enumerate(zip(plates, readings)):
        text = f"<{SERO_DETECTION_LIMIT:g}" if reading < SERO_DETECTION_LIMIT else f"{reading:.2f}"
        rows.append([f"SR-{i + 1:04d}", f"P{plate:02d}", text])
    _write_csv(path, ["sample_id", "plate", "antibody_au"], rows)


def make_shaft_diameters(rng: np.random.Generator, path: Path) -> None:
    """Shaft inspection workbook: data sheet plus a notes sheet."""
    from openpyxl import Workbook
    from openpyxl.styles import Font

    truth = TRUE_PARAMETERS[path.name]
    _, diameters = _draw(rng, truth)
    lengths = rng.normal(SHAFT_LENGTH_MEAN_MM, SHAFT_LENGTH_SD_MM, size=truth.n)
    shifts = ("early", "late", "night")

    workbook = Workbook()
    sheet = workbook.active
    sheet.title = "inspection"
    sheet.append(["part_id", "shift", "diameter_mm", "length_mm"])
    for cell in sheet[1]:
        cell.font = Font(bold=True)
    for i, (diameter, length) in enumerate(zip(diameters, lengths)):
        shift = shifts[(i // 60) % 3]  # 60 parts a shift, shifts in turn
        sheet.append([f"SH-{i + 1:05d}", shift, round(float(diameter), 3), round(float(length), 2)])
        sheet.cell(row=i + 2, column=3).number_format = "0.000"
        sheet.cell(row=i + 2, column=4).number_format = "0.00"
    sheet.freeze_panes = "A2"

    notes = workbook.create_sheet("notes")
    notes.append(["Synthetic data generated by sample_data/make_samples.py "
                  f"(seed {SEED}); not real measurements."])
    notes.append(["Diameters in mm from one inspection gauge (resolution 0.001 mm)."])

    props = workbook.properties
    props.creator = "ClusterDesk sample_data/make_samples.py"
    props.lastModifiedBy = props.creator
    props.title = "Synthetic shaft inspection data"
    props.created = FIXED_TIMESTAMP
    props.modified = FIXED_TIMESTAMP
    path.write_bytes(_stable_xlsx_bytes(workbook))


def _stable_xlsx_bytes(workbook) -> bytes:
    """Serialise an openpyxl workbook with fixed timestamps.

    ``Workbook.save`` stamps the current time into the document properties and
    into every zip member, so two runs differ.  We let openpyxl write the
    package into memory (its ExcelWriter leaves ``workbook.properties`` alone),
    then copy the members into a new archive whose entries carry
    :data:`FIXED_TIMESTAMP` and fixed attributes.
    """
    from openpyxl.writer.excel import ExcelWriter

    raw = io.BytesIO()
    with zipfile.ZipFile(raw, "w", zipfile.ZIP_DEFLATED) as archive:
        ExcelWriter(workbook, archive).save()

    stable = io.BytesIO()
    with zipfile.ZipFile(raw) as source, zipfile.ZipFile(stable, "w") as target:
        for member in source.infolist():
            info = zipfile.ZipInfo(member.filename, date_time=FIXED_TIMESTAMP.timetuple()[:6])
            info.compress_type = zipfile.ZIP_DEFLATED
            info.create_system = 3
            info.external_attr = 0o644 << 16
            target.writestr(info, source.read(member.filename))
    return stable.getvalue()


def make_messy_export(rng: np.random.Generator, path: Path) -> None:
    """Semicolon export with preamble, decimal commas, gaps, BOM."""
    truth = TRUE_PARAMETERS[path.name]
    _, thickness = _draw(rng, truth)
    temperature = rng.normal(21.5, 0.4, size=truth.n)
    # Per reading: 0 = good, 1 = blank, 2 = "n/a", 3 = "ERR".
    problem = rng.choice(4, size=truth.n, p=[0.93, 0.03, 0.025, 0.015])
    temperature_blank = rng.random(truth.n) < 0.02
    seconds = 9 * 3600 + 2 * 60 + np.cumsum(rng.integers(8, 30, size=truth.n))

    lines = [
        "Instrument;FilmCheck 30 coating thickness gauge (fictional)",
        "Serial number;FC30-0417",
        "Exported;2026-03-14 16:22:05",
        "Probe;magnetic induction, 2 mm tip",
        "Note;synthetic example data from ClusterDesk make_samples.py",
        "",
        "Reading;Time;Thickness (µm);Temperature (°C);Remark",
    ]
    for i in range(truth.n):
        clock = f"{seconds[i] // 3600:02d}:{seconds[i] // 60 % 60:02d}:{seconds[i] % 60:02d}"
        value = ("{:.1f}".format(thickness[i]).replace(".", ","), "", "n/a", "ERR")[problem[i]]
        remark = "probe lifted" if problem[i] == 3 else ""
        temp = "" if temperature_blank[i] else f"{temperature[i]:.1f}".replace(".", ",")
        lines.append(f"{i + 1};{clock};{value};{temp};{remark}")
    lines += ["", ""]  # two trailing blank lines
    _write_text(path, lines, encoding="utf-8-sig")


def make_length_tally(rng: np.random.Generator, path: Path) -> None:
    """Value/count table: 1 cm length classes (lower bound) and fish counts."""
    truth = TRUE_PARAMETERS[path.name]
    _, lengths = _draw(rng, truth)
    classes, counts = np.unique(np.floor(lengths).astype(int), return_counts=True)
    rows = [[str(c), str(k)] for c, k in zip(classes, counts)]
    _write_csv(path, ["length_cm", "count"], rows)


SCENARIOS: list[tuple[str, Callable[[np.random.Generator, Path], None]]] = [
    ("lake_net_lengths.csv", make_lake_net_lengths),
    ("powder_diameters.csv", make_powder_diameters),
    ("serosurvey_antibody.csv", make_serosurvey_antibody),
    ("shaft_diameters.xlsx", make_shaft_diameters),
    ("messy_export.txt", make_messy_export),
    ("length_tally.csv", make_length_tally),
]
"""File name and writer of each scenario, in seed-stream order (append only)."""


def generate(out_dir: str | Path, only: list[str] | None = None) -> list[Path]:
    """Write the sample files.

    Parameters
    ----------
    out_dir : str or Path
        Folder to write into; created if missing.
    only : list of str, optional
        File names to write; default all of :data:`SCENARIOS`.  A file's
        content does not depend on which others are written.

    Returns
    -------
    list of Path
        The written paths, in :data:`SCENARIOS` order.
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    known = [name for name, _ in SCENARIOS]
    unknown = sorted(set(only or []) - set(known))
    if unknown:
        raise ValueError(f"unknown sample file(s) {unknown}; choose from {known}")
    streams = np.random.SeedSequence(SEED).spawn(len(SCENARIOS))
    written = []
    for (name, writer), stream in zip(SCENARIOS, streams):
        if only is not None and name not in only:
            continue
        path = out_dir / name
        writer(np.random.default_rng(stream), path)
        written.append(path)
    return written


def main(argv: list[str] | None = None) -> int:
    """Command-line entry: ``make_samples.py [OUT_DIR]``."""
    argv = sys.argv[1:] if argv is None else argv
    if len(argv) > 1:
        print("usage: make_samples.py [OUT_DIR]", file=sys.stderr)
        return 2
    out_dir = Path(argv[0]) if argv else Path(__file__).resolve().parent
    for path in generate(out_dir):
        print(f"wrote {path} ({path.stat().st_size} bytes)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
