"""The bundled synthetic sample data sets, offered on the window's first screen.

They live in ``sample_data/`` of the repository checkout (next to the
``clusterdesk`` package folder). An installed copy without the checkout has
none, and the first screen then simply offers no samples.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ..analysis import DataChoice

__all__ = ["Sample", "sample_folder", "bundled_samples"]

_SUFFIXES = (".csv", ".txt", ".xlsx")


@dataclass(frozen=True)
class Sample:
    """One sample file and how to read it.

    Attributes
    ----------
    path : Path
    title : str
        A few words for the list.
    description : str
        One sentence; every sample says it is synthetic.
    data : DataChoice
        Column, count column and scale that suit the scenario.
    value_at : {"middle", "lower", "upper"}, default "middle"
        Where each recorded value sits in its interval (a tally naming its
        classes by their lower end is "lower").
    """

    path: Path
    title: str
    description: str
    data: DataChoice
    value_at: str = "middle"


#: What each known sample holds (all invented; see sample_data/README.md).
_KNOWN = {
    "lake_net_lengths.csv": (
        "Fish lengths from a net survey",
        "Synthetic: 600 invented fish lengths (mm) from three age classes.",
        DataChoice(column="length_mm")),
    "length_tally.csv": (
        "Length tally (value and count)",
        "Synthetic: an invented length-frequency table of 2500 fish in 1 cm classes, each named by its "
        "lower end (Value at: lower end).",
        DataChoice(column="length_cm", counts="count"), "lower"),
    "powder_diameters.csv": (
        "Particle diameters of a milled powder",
        "Synthetic: 1200 invented diameters (µm) with a fine and a coarse mode; fitted on ln.",
        DataChoice(column="diameter_um", scale="ln")),
    "serosurvey_antibody.csv": (
        "Antibody readings of a serosurvey panel",
        "Synthetic: 800 invented readings (AU), some below the detection limit; fitted on log10.",
        DataChoice(column="antibody_au", scale="log10")),
    "shaft_diameters.xlsx": (
        "Shaft diameters from an inspection gauge",
        "Synthetic: 900 invented diameters (mm) from three lathes, in a workbook.",
        DataChoice(column="diameter_mm", sheet="inspection")),
    "messy_export.txt": (
        "Coating thickness from a gauge export",
        "Synthetic: an invented instrument export with decimal commas, blanks and error codes.",
        DataChoice()),
}


def sample_folder() -> Path | None:
    """The ``sample_data`` folder of the checkout, or None when there is none."""
    folder = Path(__file__).resolve().parents[2] / "sample_data"
    return folder if folder.is_dir() else None


def bundled_samples() -> list[Sample]:
    """Every sample file found, known ones first in a fixed order.

    Returns
    -------
    list of Sample
        Empty when the checkout's ``sample_data`` folder is absent.
    """
    folder = sample_folder()
    if folder is None:
        return []
    found = sorted(p for p in folder.iterdir() if p.suffix.lower() in _SUFFIXES and p.is_file())
    known = [p for name in _KNOWN for p in found if p.name == name]
    others = [p for p in found if p.name not in _KNOWN]
    samples = [Sample(p, *_KNOWN[p.name]) for p in known]
    samples += [Sample(p, p.stem.replace("_", " "), "Synthetic sample data shipped with ClusterDesk.",
                       DataChoice()) for p in others]
    return samples
