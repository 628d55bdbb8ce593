"""Delimited text: lines, comment lines, the delimiter, and the records.

The delimiter is chosen among the comma, the semicolon, the tab, the pipe and
runs of spaces, or none at all (one value per line).  Each candidate splits a
sample of lines; the one whose consistent lines hold the most numbers wins
(ties: the one that also explains the header line, then the comma, semicolon,
tab, pipe, one column, runs of spaces).  ``csv.Sniffer`` is not used: it fails
on one-column files and guesses letters as delimiters.

Quoting follows RFC 4180 (double quotes; a doubled quote inside a quoted
field; delimiters and line breaks inside quotes), except for runs of spaces,
where a field may be wrapped in double quotes but not span lines.
"""

from __future__ import annotations

import csv
import re
from collections import Counter
from typing import Iterator, Sequence

from ..errors import FileFormatError
from .numbers import grouped_decimal_comma, looks_numeric

__all__ = ["DELIMITER_NAMES", "split_lines", "is_comment", "sniff_delimiter", "iter_records", "split_line"]

#: Words for each delimiter, as reported in the detected format.
DELIMITER_NAMES = {",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe", " ": "spaces", None: "none (one column)"}
_CANDIDATES: tuple[str | None, ...] = (",", ";", "\t", "|", None, " ")
_PREFERENCE = {d: len(_CANDIDATES) - i for i, d in enumerate(_CANDIDATES)}
_SPACE_TOKEN = re.compile(r'"((?:[^"]|"")*)"|([^ ]+)')
SAMPLE_LINES = 250


def split_lines(text: str) -> list[str]:
    """Split text into physical lines (``\\r\\n``, ``\\n`` and a lone ``\\r`` end a line).

    Parameters
    ----------
    text : str

    Returns
    -------
    list of str
        Without line terminators; line ``k`` (1-based) is item ``k - 1``.
    """
    if text.startswith("\ufeff"):
        text = text[1:]
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return lines


def is_comment(line: str) -> bool:
    """Tell whether a line is a comment (its first non-blank character is ``#``)."""
    return line.lstrip(" \t\ufeff").startswith("#")


def split_line(line: str, delimiter: str | None) -> list[str]:
    """Split one line into cells (quotes as in :func:`iter_records`, no line breaks inside)."""
    if delimiter is None:
        stripped = line.strip()
        if len(stripped) >= 2 and stripped[0] == stripped[-1] == '"':
            return [stripped[1:-1].replace('""', '"')]
        return [line]
    if delimiter == " ":
        return [q.replace('""', '"') if q is not None and t == "" else t for q, t in _SPACE_TOKEN.findall(line)]
    try:
        return next(csv.reader([line], delimiter=delimiter, skipinitialspace=True, strict=False), [])
    except csv.Error:  # a field longer than the csv module allows: split plainly
        return line.split(delimiter)


def _trimmed_width(cells: Sequence[str]) -> int:
    n = len(cells)
    while n and not cells[n - 1].strip():
        n -= 1
    return n


def _score(lines: Sequence[str], delimiter: str | None) -> tuple[float, bool, int]:
    """Score one delimiter on sample lines: (numbers explained, header consistent, consistent lines)."""
    rows = [split_line(line, delimiter) for line in lines]
    widths = [_trimmed_width(r) for r in rows]
    if delimiter is None:
        width = 1
    else:
        counter = Counter(w for w in widths if w >= 2)
        if not counter:
            return -1.0, False, 0
        width = max(counter.items(), key=lambda kv: (kv[1], kv[0]))[0]
    score = 0.0
    consistent = 0
    first_numeric = None
    for i, (row, w) in enumerate(zip(rows, widths)):
        numeric = sum(1 for cell in row[:w] if looks_numeric(cell))
        if numeric and first_numeric is None:
            first_numeric = i
        score += min(numeric, width) / width
        consistent += w == width
    header_ok = True
    if first_numeric:
        header_ok = widths[first_numeric - 1] == width
    return score, header_ok, consistent


def sniff_delimiter(lines: Sequence[str]) -> str | None:
    """Choose the delimiter of a text table.

    Parameters
    ----------
    lines : sequence of str
        Physical lines; blank and comment lines are skipped, the first 250
        others are looked at.

    Returns
    -------
    str or None
        ``","``, ``";"``, ``"\\t"``, ``"|"``, ``" "`` (runs of spaces) or
        None (one value per line).
    """
    sample = []
    for line in lines:
        if line.strip() and not is_comment(line):
            sample.append(line)
            if len(sample) >= SAMPLE_LINES:
                break
    results = {d: _score(sample, d) for d in _CANDIDATES}
    best_score = max(r[0] for r in results.values())
    if best_score <= 0:
        # No numbers anywhere: keep the most regular table structure.
        structured = [(r[2], _PREFERENCE[d], d) for d, r in results.items() if d is not None and r[0] >= 0]
        if structured and max(structured)[0] >= max(2, len(sample) // 2):
            return max(structured)[2]
        return None
    ranked = sorted(
        results,
        key=lambda d: (round(results[d][0], 6), results[d][1], _PREFERENCE[d]),
        reverse=True,
    )
    best = ranked[0]
    if best in (",", " ") and _same(results[best], results[None]) and _european(sample):
        # "1 234,5" or "1.234,5" on every line: one number with thousands and a decimal comma.
        return None
    return best


def _same(a: tuple, b: tuple) -> bool:
    return round(a[0], 6) == round(b[0], 6) and a[1] == b[1]


def _european(lines: Sequence[str]) -> bool:
    numeric = [line for line in lines if looks_numeric(line)]
    return bool(numeric) and sum(1 for line in numeric if grouped_decimal_comma(line)) > len(numeric) / 2


def iter_records(
    lines: Sequence[str], delimiter: str | None, where: str, numbers: Sequence[int] | None = None
) -> Iterator[tuple[int, list[str]]]:
    """Yield the records of a text table with their physical line numbers.

    Comment lines are skipped; a blank line yields an empty list.  A quoted
    field may span lines (RFC 4180); the record's line number is then the
    line it starts on.

    Parameters
    ----------
    lines : sequence of str
        Physical lines, as from :func:`split_lines`.
    delimiter : str or None
        As from :func:`sniff_delimiter`.
    where : str
        The source's name, for messages.
    numbers : sequence of int, optional
        The physical line number of each item of ``lines``; default 1, 2, ...

    Yields
    ------
    line_number : int
        1-based physical line number.
    cells : list of str
        The record's cells (not stripped).

    Raises
    ------
    FileFormatError
        If a record cannot be split (for example an unterminated quoted field
        longer than the csv module allows).
    """
    numbered = zip(numbers, lines) if numbers is not None else enumerate(lines, 1)
    if delimiter is None or delimiter == " ":
        for number, line in numbered:
            if is_comment(line):
                continue
            if not line.strip():
                yield number, []
            else:
                yield number, split_line(line, delimiter)
        return
    fed: list[int] = []

    def source() -> Iterator[str]:
        for number, line in numbered:
            if is_comment(line):
                continue
            fed.append(number)
            yield line + "\n"

    reader = csv.reader(source(), delimiter=delimiter, skipinitialspace=True, strict=False)
    consumed = 0
    try:
        for cells in reader:
            number = fed[consumed]
            consumed = reader.line_num
            if not cells or (len(cells) == 1 and not cells[0].strip()):
                yield number, []
            else:
                yield number, cells
    except csv.Error as exc:
        line = fed[consumed] if consumed < len(fed) else (fed[-1] if fed else 1)
        raise FileFormatError(
            f"{where}, line {line}: the text cannot be split into fields ({exc}); "
            "check for an unclosed double quote or save the table again as CSV."
        ) from None
