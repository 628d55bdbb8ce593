"""From the inputs of a screening run to the files, and from a file's listing to column tasks.

Inputs are files, folders and glob patterns:

* a file is taken whatever its name ends with;
* a folder is searched recursively for files ending in one of
  :data:`DATA_SUFFIXES` (hidden files and folders, and the run's output
  folder, are passed over);
* a pattern with ``*``, ``?`` or ``[...]`` is expanded by :mod:`glob`
  (``**`` matches folders at any depth); the files it matches are taken, the
  folders it matches are searched as above.

Files come in the order of the inputs, each folder's and pattern's files
sorted by path; a file reached twice keeps its first place.

Column patterns (``--columns``) are shell-style wildcards (:mod:`fnmatch`:
``*``, ``?``, ``[seq]``) matched against the whole column name, ignoring case;
a pattern that starts with ``re:`` is a Python regular expression searched in
the name, ignoring case. A column is screened when any pattern matches it.
Without patterns every mostly-numeric column is screened, except a running
row number (1, 2, 3, ...); the other columns get a row with status "skipped"
and the reason.
"""

from __future__ import annotations

import fnmatch
import glob
import os
import re
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError
from .filecache import FileListing
from .tasks import TREATMENT_EXACT, ColumnTask, ScreenRow, column_seed

__all__ = ["DATA_SUFFIXES", "FileRef", "expand_inputs", "column_matcher", "plan_file"]

#: File name endings searched for in folders.
DATA_SUFFIXES = (".csv", ".tsv", ".txt", ".tab", ".dat", ".xlsx", ".xlsm", ".ods")

_GLOB_CHARS = ("*", "?", "[")


@dataclass(frozen=True)
class FileRef:
    """One input file, or an input that gave no file.

    Attributes
    ----------
    file : str
        The file as shown in the summary (the input as typed, joined with the
        path inside a folder).
    path : str
        Absolute path ("" when ``problem`` is set).
    problem : str
        Why the input gave no file ("" for a file).
    """

    file: str
    path: str = ""
    problem: str = ""


def _is_pattern(text: str) -> bool:
    return any(c in text for c in _GLOB_CHARS)


def _inside(path: Path, folders) -> bool:
    return any(path == f or f in path.parents for f in folders)


def _folder_files(folder: str, exclude) -> list[str]:
    found = []
    for root, dirs, files in os.walk(folder):
        root_path = Path(root).resolve()
        dirs[:] = sorted(d for d in dirs if not d.startswith(".")
                         and not _inside(root_path / d, exclude))
        for name in files:
            if not name.startswith(".") and name.lower().endswith(DATA_SUFFIXES):
                found.append(os.path.join(root, name))
    return sorted(found)


def expand_inputs(inputs, *, exclude=()) -> list[FileRef]:
    """Turn files, folders and glob patterns into a list of files.

    Parameters
    ----------
    inputs : sequence of str or Path
    exclude : sequence of str or Path, optional
        Folders whose files are never taken (e.g. the output folder).

    Returns
    -------
    list of FileRef
        Files in input order; an input that gives no file (missing, a pattern
        that matches nothing, a folder with no data file) is a FileRef with
        ``problem`` set, in its place.
    """
    exclude = [Path(e).resolve() for e in exclude]
    refs: list[FileRef] = []
    seen: set[str] = set()

    def take(shown: str) -> None:
        path = str(Path(shown).resolve())
        if path not in seen and not _inside(Path(path), exclude):
            seen.add(path)
            refs.append(FileRef(file=os.path.normpath(shown), path=path))

    for item in inputs:
        text = os.fspath(item)
        before = len(refs)
        if os.path.isdir(text):
            for name in _folder_files(text, exclude):
                take(name)
            if len(refs) == before:
                refs.append(FileRef(file=text, problem=(
                    f"The folder {text!r} holds no data file (names ending in "
                    f"{', '.join(DATA_SUFFIXES)}); name the files themselves to screen others.")))
        elif os.path.lexists(text) or not _is_pattern(text):
            if not os.path.lexists(text):
                refs.append(FileRef(file=text, problem=f"There is no file or folder {text!r}; check the name."))
            else:
                take(text)
        else:
            matches = sorted(glob.glob(text, recursive=True))
            for match in matches:
                if os.path.isdir(match):
                    for name in _folder_files(match, exclude):
                        take(name)
                else:
                    take(match)
            if len(refs) == before:
                refs.append(FileRef(file=text, problem=(
                    f"The pattern {text!r} matches no file; check it (quote it so that the "
                    "shell passes it on unchanged).")))
    return refs


def column_matcher(patterns):
    """A test of column names from ``--columns`` patterns (None: no pattern given).

    Parameters
    ----------
    patterns : sequence of str or None
        Shell-style wildcards, or ``re:`` followed by a regular expression.

    Returns
    -------
    callable(str) -> bool, or None

    Raises
    ------
    InputError
        An empty pattern or a regular expression that does not compile.
    """
    if not patterns:
        return None
    tests = []
    for pattern in patterns:
        if not pattern or pattern == "re:":
            raise InputError("An empty column pattern was given; use e.g. --columns 'length*' "
                             "or --columns 're:^dia'.")
        if pattern.startswith("re:"):
            try:
                tests.append(re.compile(pattern[3:], re.IGNORECASE).search)
            except re.error as exc:
                raise InputError(f"The column pattern {pattern!r} is not a valid regular expression "
                                 f"({exc}); check it, or drop 're:' to use wildcards.") from None
        else:
            folded = pattern.casefold()
            tests.append(lambda name, p=folded: fnmatch.fnmatchcase(name.casefold(), p))
    return lambda name: any(test(name) for test in tests)


def _row(ref_file, sheet, column, position, status, reason, sha256="") -> ScreenRow:
    return ScreenRow(file=ref_file, sheet=sheet or "", column=column, position=position, status=status,
                     reason=reason, treatment=TREATMENT_EXACT if column else "", sha256=sha256)


def _not_screened(info) -> str:
    if info.numeric_count == 0:
        shown = ", ".join(info.first_values) or "none"
        return f"Holds no numbers (first values: {shown})."
    if info.row_numbers:
        return "A running row number (1, 2, 3, ...); name it with --columns to screen it."
    return (f"Mostly text ({info.numeric_count} numbers among "
            f"{info.numeric_count + info.non_numeric_count} filled cells); name it with --columns "
            "to screen its numbers.")


def plan_file(ref: FileRef, listing: FileListing, matcher, seed: int) -> list:
    """The entries of one file, in order: column tasks, and rows for what gives no task.

    Parameters
    ----------
    ref : FileRef
    listing : FileListing
    matcher : callable(str) -> bool, or None
        From :func:`column_matcher`.
    seed : int
        The user's seed.

    Returns
    -------
    list of ColumnTask or ScreenRow
        A failed row for an unreadable file or sheet; a skipped row for each
        column not screened by default (or one for a sheet where no column
        matches the patterns); a failed row for a column named by a pattern
        that holds no numbers; a task for each column to screen.
    """
    if listing.error:
        return [_row(ref.file, "", "", None, "failed", listing.error)]
    entries: list = []
    for sheet in listing.sheets:
        if sheet.error:
            entries.append(_row(ref.file, sheet.name, "", None, "failed", sheet.error, listing.sha256))
            continue
        chosen = []
        for info in sheet.columns:
            if matcher is not None:
                if not matcher(info.name):
                    continue
                if info.numeric_count == 0:
                    shown = ", ".join(info.first_values) or "none"
                    entries.append(_row(ref.file, sheet.name, info.name, info.position, "failed",
                                        f"Column {info.name!r} matches the column patterns but holds "
                                        f"no numbers (first values: {shown}).", listing.sha256))
                    continue
            elif not info.mostly_numeric or info.row_numbers:
                entries.append(_row(ref.file, sheet.name, info.name, info.position, "skipped",
                                    _not_screened(info), listing.sha256))
                continue
            chosen.append(info)
            entries.append(ColumnTask(file=ref.file, path=ref.path, sha256=listing.sha256, sheet=sheet.name,
                                      position=info.position, column=info.name,
                                      seed=column_seed(seed, listing.sha256, sheet.name, info.position,
                                                       info.name)))
        if matcher is not None and not chosen and not any(
                isinstance(e, ScreenRow) and e.sheet == (sheet.name or "") and e.column for e in entries):
            entries.append(_row(ref.file, sheet.name, "", None, "skipped",
                                "No column matches the column patterns.", listing.sha256))
    return entries
