"""Bytes to text: recognise what a file is, and decode it.

Text files are decoded as UTF-8 (with or without a byte-order mark) or UTF-16
(with a byte-order mark, or without one when the zero bytes say so).  Anything
else that is not valid UTF-8 is decoded as Windows-1252, or Latin-1 where
Windows-1252 has no character, and the fallback is reported.

Files that are not text at all (an image, a PDF, an old-style ``.xls``, a ZIP
archive, random bytes) are named in a :class:`~clusterdesk.errors.FileFormatError`
before any parsing is tried.
"""

from __future__ import annotations

import codecs
import re
from dataclasses import dataclass

from ..errors import FileFormatError

__all__ = ["Decoded", "decode", "binary_kind", "is_zip"]

_SIGNATURES: tuple[tuple[bytes, str], ...] = (
    (b"\x89PNG\r\n\x1a\n", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"GIF87a", "a GIF image"),
    (b"GIF89a", "a GIF image"),
    (b"%PDF", "a PDF document"),
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "an old-style Office file (for example an Excel .xls workbook)"),
    (b"\x1f\x8b", "a gzip-compressed file"),
    (b"BZh", "a bzip2-compressed file"),
    (b"\xfd7zXZ\x00", "an xz-compressed file"),
    (b"7z\xbc\xaf\x27\x1c", "a 7-Zip archive"),
    (b"Rar!\x1a\x07", "a RAR archive"),
    (b"SQLite format 3\x00", "an SQLite database"),
    (b"\x7fELF", "a program (ELF executable)"),
    (b"MZ", "a Windows program"),
    (b"II*\x00", "a TIFF image"),
    (b"MM\x00*", "a TIFF image"),
    (b"BM", None),  # bitmap only when followed by a plausible header; checked below
)
_ZIP_SIGNATURES = (b"PK\x03\x04", b"PK\x05\x06", b"PK\x07\x08")
_CONTROL_RE = re.compile("[\x00-\x08\x0b\x0e-\x1f\x7f-\x9f]")


@dataclass(frozen=True)
class Decoded:
    """Text decoded from a file.

    Attributes
    ----------
    text : str
        The decoded text, without a byte-order mark.
    encoding : str
        ``"utf-8"``, ``"utf-8-sig"`` (UTF-8 with a byte-order mark),
        ``"utf-16-le"``, ``"utf-16-be"``, ``"windows-1252"`` or ``"latin-1"``.
    fallback : bool
        True when the bytes were not valid UTF-8 (nor UTF-16) and a
        single-byte encoding was assumed.
    """

    text: str
    encoding: str
    fallback: bool


def is_zip(data: bytes) -> bool:
    """Tell whether ``data`` starts like a ZIP archive (XLSX files are ZIP archives)."""
    return data[:4] in _ZIP_SIGNATURES


def binary_kind(data: bytes) -> str | None:
    """Name the kind of a non-text file from its first bytes.

    Parameters
    ----------
    data : bytes
        The file's bytes (only the first few thousand are looked at).

    Returns
    -------
    str or None
        For example ``"a PNG image"``; None when the bytes may be text.
        ZIP archives are not named here (see :func:`is_zip`).
    """
    for signature, kind in _SIGNATURES:
        if data.startswith(signature):
            if kind is None:
                if len(data) > 26 and data[14] in (12, 40, 56, 108, 124) and data[15:18] == b"\x00\x00\x00":
                    return "a bitmap image"
                continue
            return kind
    return None


def _utf16_without_bom(sample: bytes) -> str | None:
    if len(sample) < 4:
        return None
    even, odd = sample[0::2], sample[1::2]
    zero_even, zero_odd = even.count(0) / len(even), odd.count(0) / len(odd)
    if zero_odd > 0.4 and zero_even < 0.05:
        return "utf-16-le"
    if zero_even > 0.4 and zero_odd < 0.05:
        return "utf-16-be"
    return None


def _looks_binary(text: str) -> bool:
    sample = text[:65536]
    if not sample:
        return False
    if "\x00" in sample:
        return True
    controls = len(_CONTROL_RE.findall(sample))
    return controls > max(2, len(sample) // 100)


def decode(data: bytes, where: str) -> Decoded:
    """Decode the bytes of a text table.

    Parameters
    ----------
    data : bytes
        The whole file.
    where : str
        The file's name, for messages.

    Returns
    -------
    Decoded

    Raises
    ------
    FileFormatError
        If the bytes are an image, an archive, a program or other binary data.
    """
    kind = binary_kind(data)
    if kind is not None:
        raise FileFormatError(
            f"{where} is {kind}, not a table of measurements; export the data as CSV, text or XLSX and open that."
        )
    if is_zip(data):
        raise FileFormatError(
            f"{where} is a ZIP archive, not a text table; if it is an Excel workbook give it the .xlsx extension, "
            "otherwise unpack it and open the table inside."
        )
    if data.startswith(codecs.BOM_UTF32_LE) or data.startswith(codecs.BOM_UTF32_BE):
        encodings = [("utf-32", "utf-32")]
    elif data.startswith(codecs.BOM_UTF8):
        encodings = [("utf-8-sig", "utf-8-sig")]
    elif data.startswith(codecs.BOM_UTF16_LE):
        encodings = [("utf-16", "utf-16-le")]
    elif data.startswith(codecs.BOM_UTF16_BE):
        encodings = [("utf-16", "utf-16-be")]
    else:
        guessed = _utf16_without_bom(data[:4096])
        encodings = [(guessed, guessed)] if guessed else [("utf-8", "utf-8")]
    for codec, name in encodings:
        try:
            text = data.decode(codec)
        except UnicodeDecodeError:
            if codec.startswith("utf-16") or codec.startswith("utf-32"):
                raise FileFormatError(
                    f"{where} starts like UTF-16/UTF-32 text but is not valid in that encoding; "
                    "save it again as UTF-8 CSV."
                ) from None
            break
        if _looks_binary(text):
            break
        return Decoded(text, name, False)
    else:  # pragma: no cover - the loop always returns or breaks
        pass
    if b"\x00" not in data[:65536]:
        for codec, name in (("cp1252", "windows-1252"), ("latin-1", "latin-1")):
            try:
                text = data.decode(codec)
            except UnicodeDecodeError:
                continue
            if not _looks_binary(text):
                return Decoded(text, name, True)
            break
    raise FileFormatError(
        f"{where} does not look like text (it holds binary data); export the data as CSV, text or XLSX and open that."
    )
