"""Saving an analysis as a small JSON file, and opening it again.

A saved analysis (``.cdesk``) holds what is needed to reproduce it, not its
numbers: the source file's path and SHA-256, the cleaning choices, the scan
settings and the chosen model. Opening re-reads the source, checks that it
is unchanged and redoes the (deterministic) scan.
"""

from __future__ import annotations

import json
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from ._version import __version__
from .atomic import write_text_atomic
from .errors import FileFormatError, InputError
from .saved_layout import check_analysis_file, data_problem, settings_problem, whole_number

if TYPE_CHECKING:  # the analysis module imports this one
    from .analysis import Analysis

__all__ = ["ANALYSIS_SUFFIX", "FORMAT_VERSION", "SourceChangedError", "OpenedAnalysis",
           "analysis_to_dict", "save_analysis", "open_analysis"]

#: File name ending of saved analyses (JSON inside).
ANALYSIS_SUFFIX = ".cdesk"
#: Version of the saved-analysis layout; bumped when the layout changes.
FORMAT_VERSION = 1


class SourceChangedError(InputError):
    """The source file of a saved analysis is not the one it was saved with (its SHA-256 differs).

    Attributes
    ----------
    path : Path
        The analysis file.
    source : str
        The source file it points at.
    """

    def __init__(self, message: str, path, source: str):
        super().__init__(message)
        self.path, self.source = Path(path), source


@dataclass(frozen=True)
class OpenedAnalysis:
    """A reopened analysis, and whether its source changed since it was saved."""

    analysis: Analysis
    source_changed: bool


def analysis_to_dict(analysis) -> dict:
    """Everything needed to reproduce ``analysis``, as plain JSON types."""
    m = analysis._need_measurements()
    return {
        "format": "clusterdesk-analysis",
        "format_version": FORMAT_VERSION,
        "software_version": __version__,
        "source": {"path": analysis.source_path, "sha256": m.sha256, "label": m.source},
        "data": asdict(analysis.data),
        "settings": asdict(analysis.settings),
        "choice": list(analysis.choice) if analysis.choice else None,
    }


def save_analysis(analysis, path) -> Path:
    """Write ``analysis`` as JSON (atomically); the suffix is added when missing."""
    path = Path(path)
    if not path.name.endswith(ANALYSIS_SUFFIX):
        path = path.with_name(path.name + ANALYSIS_SUFFIX)
    write_text_atomic(path, json.dumps(analysis_to_dict(analysis), indent=2) + "\n")
    return path


def open_analysis(path, *, rescan: bool = True, accept_changed_source: bool = False, progress=None,
                  cancel=None) -> OpenedAnalysis:
    """Reopen a saved analysis: re-read its source, redo its scan, restore the choice.

    The scan is deterministic for a given seed, so the numbers are the same
    as when the analysis was saved, provided the source is unchanged.
    Opening never writes anything.

    Parameters
    ----------
    path : str or Path
        The ``.cdesk`` file.
    rescan : bool, default True
        Redo the scan and restore the chosen model.
    accept_changed_source : bool, default False
        Read a source whose contents changed since the analysis was saved
        (the result says so) instead of refusing.
    progress, cancel
        As for :meth:`clusterdesk.analysis.Analysis.compute_scan`.

    Raises
    ------
    FileFormatError
        The file is not a saved analysis (truncated, malformed, or from a
        newer version of ClusterDesk), or its settings or chosen model
        cannot be used.
    SourceChangedError
        Its source file changed since it was saved (and
        ``accept_changed_source`` is False).
    InputError
        Its source file is missing.
    """
    from .analysis import Analysis, DataChoice, ScanSettings

    path = Path(path)
    try:
        check_analysis_file(path)
        raw = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"There is no analysis file {path}; check the name and folder.") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise FileFormatError(f"{path.name} is not a readable ClusterDesk analysis ({exc}): it may be "
                              "truncated or not an analysis file; open the data file itself, or an "
                              "earlier copy of the analysis.") from None
    saved = _parse_saved(raw, path)
    source = saved["source"]["path"]
    if not source or not Path(source).is_file():
        raise InputError(f"The source file of {path.name} ({source}) is missing; "
                         "put it back in place or open the data file itself.")
    analysis = Analysis.from_file(source, DataChoice(**saved["data"]), ScanSettings(**saved["settings"]))
    changed = analysis.measurements.sha256 != saved["source"]["sha256"]
    if changed and not accept_changed_source:
        raise SourceChangedError(
            f"The source file {Path(source).name} changed since {path.name} was saved (its contents "
            "differ), so the saved results cannot be reproduced; put the original file back, or "
            "open it anyway to analyse the file as it is now.", path, source)
    if rescan:
        analysis.run_scan(progress=progress, cancel=cancel)
        if saved["choice"]:
            k, widths = saved["choice"]
            try:
                analysis.choose(k, widths)
            except InputError:
                raise FileFormatError(
                    f"The chosen model of {path.name} ({k} components, {widths} widths) is not among the "
                    "models its settings fit; the file was edited or damaged, so open the data file "
                    "itself instead.") from None
    return OpenedAnalysis(analysis=analysis, source_changed=changed)


def _parse_saved(raw, path) -> dict:
    """Check the layout of a saved analysis and return it."""
    from .analysis import DataChoice, ScanSettings

    bad = FileFormatError(f"{path.name} is not a ClusterDesk analysis file (its contents do not "
                          "have the expected fields); open the data file itself instead.")
    if not isinstance(raw, dict) or raw.get("format") != "clusterdesk-analysis":
        raise bad
    version = raw.get("format_version")
    if not isinstance(version, int):
        raise bad
    if version > FORMAT_VERSION:
        raise FileFormatError(f"{path.name} was saved by a newer ClusterDesk "
                              f"({raw.get('software_version', 'unknown version')}, layout {version}) than this "
                              f"one ({__version__}, which reads layout {FORMAT_VERSION}); update ClusterDesk "
                              "to open it.")
    if not isinstance(raw.get("data"), dict) or not isinstance(raw.get("settings"), dict):
        raise bad
    try:
        source = raw["source"]
        data = {key: raw["data"][key] for key in DataChoice.__dataclass_fields__ if key in raw["data"]}
        settings = {key: raw["settings"][key] for key in ScanSettings.__dataclass_fields__
                    if key in raw["settings"]}
        choice = raw.get("choice")
        if not isinstance(source, dict) or not isinstance(source.get("path"), str) or "sha256" not in source:
            raise bad
        if choice is not None and (not isinstance(choice, list) or len(choice) != 2
                                   or not whole_number(choice[0], 1) or choice[1] not in ("separate", "shared")):
            raise bad
    except (KeyError, TypeError):
        raise bad from None
    problem = settings_problem(settings, ScanSettings.kmax) or data_problem(data)
    if problem:
        raise FileFormatError(f"{path.name} holds settings that cannot be used ({problem}); the file was "
                              "edited or damaged, so open the data file itself instead.")
    return {"source": source, "data": data, "settings": settings, "choice": choice}

