"""The journal of a screening run: one JSON object per line, appended and flushed as work finishes.

The journal sits beside the summary in the output folder. Its lines:

* ``{"kind": "start", ...}``: the format, the software version and the settings;
* ``{"kind": "listing", "path", "sha256", "listing"}``: a file's sheets and columns;
* ``{"kind": "row", "key", "sha256", "settings", "row"}``: one finished column;
* ``{"kind": "end", ...}``: the run finished and wrote its summary.

Each line is written whole and flushed to disk before the next piece of work
is handed out, so an interrupted run loses at most the columns that were being
fitted. On resume, a finished column is reused when its file still has the
same SHA-256 and the settings are the same (:func:`settings_fingerprint`); a
last line cut short by the interruption is ignored.
"""

from __future__ import annotations

import json
import os
from dataclasses import asdict, dataclass, field
from pathlib import Path

from .._version import __version__
from ..errors import InputError
from .filecache import ColumnInfo, FileListing, SheetListing
from .tasks import ScreenRow, TREATMENT_EXACT

__all__ = ["JOURNAL_NAME", "JOURNAL_FORMAT", "Journal", "JournalContents", "read_journal",
           "settings_fingerprint", "row_to_dict", "row_from_dict"]

#: File name of the journal inside the output folder.
JOURNAL_NAME = "screen-journal.jsonl"
JOURNAL_FORMAT = "clusterdesk-screen-journal"
_VERSION = 1
_TUPLE_FIELDS = ("weights", "means", "sds", "notes", "histogram")
#: Raised whenever a column's row could change with the same settings and version (2: censored
#: readings in the fit, scan notes kept), so a resumed run does not reuse rows of the old rule.
_COLUMN_TASK = 2


def settings_fingerprint(settings) -> str:
    """Text that changes whenever a column's row could change: settings, treatment, software version."""
    return json.dumps({"settings": asdict(settings), "treatment": TREATMENT_EXACT,
                       "software": __version__, "column_task": _COLUMN_TASK}, sort_keys=True)


def row_to_dict(row: ScreenRow) -> dict:
    """A row as JSON types."""
    return asdict(row)


def row_from_dict(data: dict) -> ScreenRow:
    """The row written by :func:`row_to_dict`."""
    known = {k: v for k, v in data.items() if k in ScreenRow.__dataclass_fields__}
    for name in _TUPLE_FIELDS:
        if name in known:
            known[name] = tuple(known[name])
    return ScreenRow(**known)


def _listing_from_dict(data: dict) -> FileListing:
    sheets = tuple(SheetListing(name=s["name"], error=s.get("error", ""),
                                columns=tuple(ColumnInfo(**{**c, "first_values": tuple(c["first_values"])})
                                              for c in s["columns"]))
                   for s in data["sheets"])
    return FileListing(path=data["path"], sha256=data["sha256"], sheets=sheets, error=data.get("error", ""))


@dataclass
class JournalContents:
    """What a journal holds.

    Attributes
    ----------
    listings : dict of (path, sha256) to FileListing
    rows : dict of (key, sha256, settings fingerprint) to ScreenRow
    finished : bool
        The last run that wrote to it finished.
    unreadable_lines : int
        Lines that could not be read (a line cut short by an interruption).
    """

    listings: dict = field(default_factory=dict)
    rows: dict = field(default_factory=dict)
    finished: bool = False
    unreadable_lines: int = 0

    def row_count(self) -> int:
        """Finished columns recorded."""
        return len(self.rows)

    @property
    def unfinished(self) -> bool:
        """The last run stopped before its end after finishing some columns (it can be resumed)."""
        return not self.finished and bool(self.rows)


def read_journal(path) -> JournalContents:
    """Read a journal; a missing file gives an empty one.

    Raises
    ------
    InputError
        The file is not a screening journal.
    """
    path = Path(path)
    contents = JournalContents()
    if not path.exists():
        return contents
    with open(path, encoding="utf-8", errors="replace") as handle:
        for number, line in enumerate(handle, start=1):
            try:
                entry = json.loads(line)
                kind = entry["kind"]
            except (ValueError, KeyError, TypeError):
                entry = kind = None
            if number == 1 and (kind != "start" or entry.get("format") != JOURNAL_FORMAT):
                # A file of someone else's (or not text at all) is never overwritten.
                raise InputError(f"{path} is not a ClusterDesk screening journal; choose another output "
                                 "folder (--out) or remove the file.")
            if kind is None:
                contents.unreadable_lines += 1
                continue
            try:
                if kind == "listing":
                    listing = _listing_from_dict(entry["listing"])
                    contents.listings[(listing.path, listing.sha256)] = listing
                elif kind == "row":
                    contents.rows[(entry["key"], entry["sha256"], entry["settings"])] = row_from_dict(entry["row"])
                contents.finished = kind == "end"
            except (KeyError, TypeError, ValueError):
                contents.unreadable_lines += 1
    return contents


class Journal:
    """An open journal, appended to line by line.

    Parameters
    ----------
    path : str or Path
    fingerprint : str
        From :func:`settings_fingerprint`.
    settings : ScanSettings
    fresh : bool
        Start a new journal (the old one, if any, is replaced) rather than append.
    """

    def __init__(self, path, fingerprint: str, settings, *, fresh: bool):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.fingerprint = fingerprint
        starting = fresh or not self.path.exists() or self.path.stat().st_size == 0
        if not starting:
            self._mend_last_line()
        self._handle = open(self.path, "w" if starting else "a", encoding="utf-8")
        self._write({"kind": "start", "format": JOURNAL_FORMAT, "format_version": _VERSION,
                     "software_version": __version__, "settings": asdict(settings),
                     "resumed": not starting})

    def _mend_last_line(self) -> None:
        """End a last line cut short by an interruption, so the next line starts clean."""
        with open(self.path, "rb+") as handle:
            handle.seek(-1, os.SEEK_END)
            if handle.read(1) != b"\n":
                handle.write(b"\n")

    def _write(self, entry: dict) -> None:
        self._handle.write(json.dumps(entry, separators=(",", ":")) + "\n")
        self._handle.flush()
        os.fsync(self._handle.fileno())

    def add_listing(self, listing: FileListing) -> None:
        """Record a file's listing."""
        self._write({"kind": "listing", "listing": asdict(listing)})

    def add_row(self, key: str, sha256: str, row: ScreenRow) -> None:
        """Record one finished column."""
        self._write({"kind": "row", "key": key, "sha256": sha256, "settings": self.fingerprint,
                     "row": row_to_dict(row)})

    def finish(self, counts: dict) -> None:
        """Record that the run finished, with its counts by status."""
        self._write({"kind": "end", "counts": counts})

    def close(self) -> None:
        """Close the file (everything written is already on disk)."""
        if not self._handle.closed:
            self._handle.close()
