"""Numbers as people and instruments write them, read one column at a time.

A column is read in two passes.  The first pass looks at the shape of every
cell: a plain number (``-12.5``, ``3e-4``), a number with a decimal comma
(``12,5``), thousands separators (``1 234,5``, ``1,234.5``, ``1'234``), a
unit glued on (``12.5 mm``), a detection limit (``<0.5``) and so on.  Those
shapes decide the column's conventions (:class:`NumberStyle`): which mark is
the decimal mark, which unit (if every number carries the same one).  The
second pass turns each cell into a value under those conventions.

Ambiguous cells such as ``1,234`` (one thousand two hundred and thirty-four,
or one point two three four) follow the column's unambiguous cells; a column
with nothing but ambiguous cells reads the separator as the decimal mark and
says so in :attr:`NumberStyle.decimal_mark_basis`.

Values are converted with Python's ``float`` on a canonical ASCII spelling,
which rounds correctly; the vectorised reader in :mod:`.fastpath` rounds
correctly too, so both give identical values.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from . import reasons as R

__all__ = ["NumberStyle", "ParsedColumn", "parse_column", "finish_column", "looks_numeric", "plain_number_text", "clean_text", "grouped_decimal_comma", "point_kind"]

#: Characters stripped from both ends of a cell: spaces, tabs, no-break
#: spaces (U+00A0, U+202F, U+2007), thin space, zero-width space, BOM.
STRIP_CHARS = " \t\r\n\u00a0\u202f\u2007\u2009\u200b\ufeff"
_MINUS = str.maketrans({"\u2212": "-", "\ufe63": "-", "\uff0d": "-"})

_PLAIN = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_AMBIGUOUS_POINT = re.compile(r"[+-]?[1-9][0-9]{0,2}\.[0-9]{3}")
_GROUP_CHARS = " '\u2019\u00a0\u202f\u2009\u2007"
_NUMBER = re.compile(
    r"(?P<sign>[+-])?"
    r"(?P<body>[0-9][0-9.,'\u2019 \u00a0\u202f\u2009\u2007]*[0-9.,]|[0-9]|[.,][0-9]+)"
    r"(?P<exp>[eE][+-]?[0-9]+)?"
    r"(?:[ \u00a0\u202f\u2009]*(?P<unit>(?:[^\W\d_]|[%\u2030\u00b0\u00b5\"'])[\w%\u2030\u00b0\u00b5\u00b2\u00b3/^.\-\u00b7\"']*))?"
)
_LIMIT_PREFIXES = ("<=", ">=", "\u2264", "\u2265", "<", ">")
_NOT_FINITE_WORDS = frozenset({"nan", "inf", "infinity", "+nan", "-nan", "+inf", "-inf", "+infinity", "-infinity"})

# Shapes of a number's digits, as evidence for the decimal mark.
NEUTRAL, POINT, COMMA, AMBIGUOUS_POINT, AMBIGUOUS_COMMA = range(5)


@dataclass(frozen=True)
class NumberStyle:
    """How the numbers of one column are written.

    Attributes
    ----------
    decimal_mark : str
        ``"."`` or ``","``.
    decimal_mark_basis : str
        ``"detected"`` (only one mark is used), ``"mixed"`` (both are used;
        the majority won and cells written the other way are not numbers),
        ``"ambiguous"`` (only cells like ``1,234``; the separator was read as
        the decimal mark) or ``"no decimals"`` (whole numbers only).
    thousands_separator : str or None
        The grouping character seen in cells read as numbers, if any.
    unit : str or None
        The unit glued to every number of the column (e.g. ``"mm"``), else None.
    """

    decimal_mark: str = "."
    decimal_mark_basis: str = "no decimals"
    thousands_separator: str | None = None
    unit: str | None = None


@dataclass(frozen=True)
class ParsedColumn:
    """One column read as numbers.

    Attributes
    ----------
    values : ndarray of float64, shape (n_rows,)
        The number of each cell; the limit itself for detection-limit cells;
        ``inf``/``nan`` for non-finite cells; NaN when not a number or empty.
    status : ndarray of uint8, shape (n_rows,)
        :mod:`.reasons` code per cell: KEPT (a finite number), EMPTY,
        NOT_A_NUMBER, NOT_FINITE, BELOW_LIMIT or ABOVE_LIMIT.
    style : NumberStyle
        The conventions found for the column.
    """

    values: np.ndarray
    status: np.ndarray
    style: NumberStyle


@dataclass(frozen=True)
class _Scan:
    """The shape of one cell that is not a plain number."""

    kind: int
    if_point: str | None  # canonical float text when "." is the decimal mark
    if_comma: str | None  # canonical float text when "," is the decimal mark
    group_if_point: str | None
    group_if_comma: str | None
    unit: str | None
    limit: int  # KEPT, BELOW_LIMIT or ABOVE_LIMIT


def clean_text(text: str) -> str:
    """Strip spaces (also no-break and thin spaces) and map Unicode minus signs to ``-``.

    Parameters
    ----------
    text : str
        One cell.

    Returns
    -------
    str
    """
    return text.strip(STRIP_CHARS).translate(_MINUS)


def _interpret_body(body: str, has_exponent: bool):
    """Return (kind, if_point, if_comma, group_if_point, group_if_comma) or None."""
    if body.isdigit():
        return NEUTRAL, body, body, None, None
    groups = {ch for ch in body if ch in _GROUP_CHARS}
    if groups:
        if len(groups) > 1:
            return None
        g = groups.pop()
        m = re.fullmatch(r"([1-9][0-9]{0,2}(?:" + re.escape(g) + r"[0-9]{3})+)(?:([.,])([0-9]*))?", body)
        if m is None:
            return None
        whole = m.group(1).replace(g, "")
        if m.group(2) is None:
            return NEUTRAL, whole, whole, g, g
        text = f"{whole}.{m.group(3)}"
        return (POINT, text, None, g, None) if m.group(2) == "." else (COMMA, None, text, None, g)
    n_dot, n_comma = body.count("."), body.count(",")
    if n_comma == 0 and n_dot == 1:
        whole, frac = body.split(".")
        if not has_exponent and len(frac) == 3 and re.fullmatch(r"[1-9][0-9]{0,2}", whole):
            return AMBIGUOUS_POINT, body, whole + frac, None, "."
        return (POINT, body, None, None, None) if (whole or frac) else None
    if n_dot == 0 and n_comma == 1:
        whole, frac = body.split(",")
        if not has_exponent and len(frac) == 3 and re.fullmatch(r"[1-9][0-9]{0,2}", whole):
            return AMBIGUOUS_COMMA, whole + frac, f"{whole}.{frac}", ",", None
        return (COMMA, None, f"{whole}.{frac}", None, None) if (whole or frac) else None
    if n_comma == 0 and re.fullmatch(r"[1-9][0-9]{0,2}(?:\.[0-9]{3})+", body):
        return COMMA, None, body.replace(".", ""), None, "."
    if n_dot == 0 and re.fullmatch(r"[1-9][0-9]{0,2}(?:,[0-9]{3})+", body):
        return POINT, body.replace(",", ""), None, ",", None
    if n_dot and n_comma:
        if body.rfind(".") > body.rfind(",") and n_dot == 1:
            if re.fullmatch(r"[1-9][0-9]{0,2}(?:,[0-9]{3})+\.[0-9]*", body):
                return POINT, body.replace(",", ""), None, ",", None
        elif body.rfind(",") > body.rfind(".") and n_comma == 1:
            if re.fullmatch(r"[1-9][0-9]{0,2}(?:\.[0-9]{3})+,[0-9]*", body):
                return COMMA, None, body.replace(".", "").replace(",", "."), None, "."
    return None


def _scan(text: str) -> _Scan | int:
    """Scan a cleaned, non-empty cell that is not a plain number.

    Returns a :class:`_Scan`, or the status code NOT_FINITE / NOT_A_NUMBER.
    """
    limit = R.KEPT
    rest = text
    for prefix in _LIMIT_PREFIXES:
        if rest.startswith(prefix):
            limit = R.BELOW_LIMIT if prefix[0] in "<\u2264" else R.ABOVE_LIMIT
            rest = rest[len(prefix):].lstrip(STRIP_CHARS)
            break
    if rest.lower() in _NOT_FINITE_WORDS:
        return R.NOT_FINITE if limit == R.KEPT else R.NOT_A_NUMBER
    m = _NUMBER.fullmatch(rest)
    if m is None:
        return R.NOT_A_NUMBER
    exp = m.group("exp") or ""
    if m.group("unit") and not exp and m.group("body")[-1] in ".,":
        return R.NOT_A_NUMBER  # "0,Länge" is text, not "0," with a unit
    shape = _interpret_body(m.group("body"), bool(exp))
    if shape is None:
        return R.NOT_A_NUMBER
    kind, if_point, if_comma, g_point, g_comma = shape
    sign = m.group("sign") or ""
    return _Scan(
        kind=kind,
        if_point=None if if_point is None else sign + if_point + exp,
        if_comma=None if if_comma is None else sign + if_comma + exp,
        group_if_point=g_point,
        group_if_comma=g_comma,
        unit=m.group("unit"),
        limit=limit,
    )


_PLAIN_COMMA = re.compile(r"[+-]?[0-9]+,[0-9]+(?:[eE][+-]?[0-9]+)?")


def plain_number_text(text: str) -> bool:
    """Tell whether cleaned text is a bare number: digits with one decimal point or comma, an optional exponent.

    Parameters
    ----------
    text : str
        A cell after :func:`clean_text`.

    Returns
    -------
    bool
        False for units, thousands groups, detection limits and words.
    """
    return bool(_PLAIN.fullmatch(text) or _PLAIN_COMMA.fullmatch(text))


def looks_numeric(cell) -> bool:
    """Tell whether a cell reads as a number under some convention.

    Parameters
    ----------
    cell : str, float, int or None

    Returns
    -------
    bool
        True for plain numbers, decimal-comma numbers, numbers with units or
        thousands separators and detection-limit cells; False otherwise.
    """
    if isinstance(cell, bool) or cell is None:
        return False
    if isinstance(cell, (int, float)):
        return True
    if not isinstance(cell, str):
        return False
    text = clean_text(cell)
    if not text:
        return False
    if _PLAIN.fullmatch(text):
        return True
    return isinstance(_scan(text), _Scan)


def grouped_decimal_comma(cell: str) -> bool:
    """Tell whether a cell is a number with a thousands separator and a decimal comma ("1 234,5", "1.234,5").

    Parameters
    ----------
    cell : str

    Returns
    -------
    bool
    """
    scan = _scan(clean_text(cell)) if clean_text(cell) else None
    return isinstance(scan, _Scan) and scan.kind == COMMA and scan.group_if_comma is not None


def _plain_kind(text: str) -> int:
    if "." not in text:
        return NEUTRAL
    if _AMBIGUOUS_POINT.fullmatch(text):
        return AMBIGUOUS_POINT
    return POINT


def point_kind(text: str) -> int:
    """How the ``"."`` of a cleaned cell counts as evidence for the decimal mark, as :func:`parse_column` counts it.

    Parameters
    ----------
    text : str
        A stripped cell.

    Returns
    -------
    int
        ``POINT`` (a plain number whose point is surely a decimal point:
        ``0.5``, ``12.75``, ``1.5e3``), ``AMBIGUOUS_POINT`` (``1.234``) or
        ``NEUTRAL`` (no point, or not a plain number).
    """
    return _plain_kind(text) if _PLAIN.fullmatch(text) else NEUTRAL


def parse_column(cells: Sequence) -> ParsedColumn:
    """Read one column of cells as numbers.

    Parameters
    ----------
    cells : sequence of (str, float, int, None, other), length n_rows
        Text cells are parsed; ``float``/``int`` cells (from a spreadsheet)
        are taken as they are; ``None`` is an empty cell; anything else
        (a date, a boolean) is not a number.

    Returns
    -------
    ParsedColumn
    """
    n = len(cells)
    kinds = set(map(type, cells))
    if kinds and kinds <= {float, int}:  # numbers typed in a spreadsheet: no text to read
        values = np.fromiter(cells, dtype=np.float64, count=n)
        status = np.where(np.isfinite(values), R.KEPT, R.NOT_FINITE).astype(np.uint8)
        return ParsedColumn(values, status, NumberStyle())
    values = np.full(n, np.nan)
    status = np.full(n, R.EMPTY, dtype=np.uint8)
    plain_point = plain_ambiguous = 0
    point_cells: list[int] = []  # plain cells with a "." (reinterpreted under ",")
    odd_index: list[int] = []
    odd_text: list[str] = []
    plain_match = _PLAIN.fullmatch
    isfinite = math.isfinite
    for i, cell in enumerate(cells):
        kind = cell.__class__
        if kind is float:
            values[i] = cell
            status[i] = R.KEPT if isfinite(cell) else R.NOT_FINITE
        elif kind is str:
            text = cell.strip(STRIP_CHARS)
            if not text:
                continue
            if plain_match(text):
                value = float(text)
                values[i] = value
                status[i] = R.KEPT if isfinite(value) else R.NOT_FINITE
                if "." in text:
                    point_cells.append(i)
                    if "e" in text or "E" in text or not _AMBIGUOUS_POINT.fullmatch(text):
                        plain_point += 1
                    else:
                        plain_ambiguous += 1
            else:
                odd_index.append(i)
                odd_text.append(text)
        elif cell is None:
            continue
        elif isinstance(cell, (int, float)) and not isinstance(cell, bool):
            value = float(cell)
            values[i] = value
            status[i] = R.KEPT if isfinite(value) else R.NOT_FINITE
        else:
            status[i] = R.NOT_A_NUMBER
    n_unitless = int(np.count_nonzero(status == R.KEPT) + np.count_nonzero(status == R.NOT_FINITE))
    column = finish_column(values, status, n_unitless, plain_point, plain_ambiguous, odd_index, odd_text)
    if column.style.decimal_mark == ",":
        for i in point_cells:
            text = cells[i].strip(STRIP_CHARS)
            if _plain_kind(text) == AMBIGUOUS_POINT:
                values[i] = float(text.replace(".", ""))
                status[i] = R.KEPT
            else:
                values[i] = np.nan
                status[i] = R.NOT_A_NUMBER
    return column


def _decide_mark(point_side: int, comma_side: int, ambiguous_point: int, ambiguous_comma: int) -> tuple[str, str]:
    if point_side and comma_side:
        return ("," if comma_side > point_side else "."), "mixed"
    if comma_side:
        return ",", "detected"
    if point_side:
        return ".", "detected"
    if ambiguous_comma and not ambiguous_point:
        return ",", "ambiguous"
    if ambiguous_point or ambiguous_comma:
        return ".", "ambiguous"
    return ".", "no decimals"


def finish_column(
    values: np.ndarray,
    status: np.ndarray,
    n_unitless: int,
    plain_point: int,
    plain_ambiguous: int,
    odd_index: Sequence[int],
    odd_text: Sequence[str],
) -> ParsedColumn:
    """Decide a column's conventions and read the cells that are not plain numbers.

    Both readers (the per-cell one and the vectorised one) end here, so the
    conventions are decided the same way.

    Parameters
    ----------
    values, status : ndarray, shape (n_rows,)
        Filled for plain cells (read with ``"."`` as the decimal mark) and
        empty cells; updated in place for the odd cells.
    n_unitless : int
        How many cells are numbers without a unit (plain text or typed).
    plain_point : int
        Plain cells whose ``"."`` can only be a decimal point.
    plain_ambiguous : int
        Plain cells like ``1.234``.
    odd_index : sequence of int
        Positions of the cells that are not plain numbers.
    odd_text : sequence of str
        Their cleaned text (stripped, non-empty).

    Returns
    -------
    ParsedColumn
        With ``style.decimal_mark == ","`` the caller must still re-read
        the plain cells that contain a ``"."``.
    """
    scans: list[tuple[int, _Scan]] = []
    counts = [0, plain_point, 0, plain_ambiguous, 0]
    for i, text in zip(odd_index, odd_text):
        text = text.translate(_MINUS)
        result = _scan(text)
        if isinstance(result, _Scan):
            scans.append((i, result))
            counts[result.kind] += 1
        else:
            status[i] = result
            values[i] = np.nan if result == R.NOT_A_NUMBER else float(text.lower().replace("infinity", "inf"))
    mark, basis = _decide_mark(counts[POINT], counts[COMMA], counts[AMBIGUOUS_POINT], counts[AMBIGUOUS_COMMA])
    use_point = mark == "."
    usable = [(i, s) for i, s in scans if (s.if_point if use_point else s.if_comma) is not None]
    units = {s.unit for _, s in usable if s.limit == R.KEPT}
    unit = None
    if len(units) == 1 and n_unitless == 0:
        unit = next(iter(units))
    separators = set()
    for i, s in scans:
        text = s.if_point if use_point else s.if_comma
        if text is None or (s.unit is not None and s.unit != unit) or (s.unit is None and unit is not None and s.limit == R.KEPT):
            status[i] = R.NOT_A_NUMBER
            values[i] = np.nan
            continue
        value = float(text)
        values[i] = value
        group = s.group_if_point if use_point else s.group_if_comma
        if group is not None:
            separators.add(group)
        if s.limit != R.KEPT:
            status[i] = s.limit if math.isfinite(value) else R.NOT_A_NUMBER
        else:
            status[i] = R.KEPT if math.isfinite(value) else R.NOT_FINITE
    if not use_point and plain_ambiguous:
        separators.add(".")
    thousands = "".join(sorted(separators)) or None
    return ParsedColumn(values, status, NumberStyle(mark, basis, thousands, unit))
