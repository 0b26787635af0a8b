"""Text files of the input: UTF-8 (with or without a byte-order mark), nothing else.

Accounts files, benchmarks files and ``valvol.toml`` are decoded here. A file in another
encoding is not guessed into data: it is refused with the line of its first byte that is
not UTF-8, the encoding it most likely has (UTF-16, UTF-32, Latin-1 or Windows-1252) and
the fix (save it as UTF-8). Only the standard library's codecs are used: byte-order marks
identify UTF-16 and UTF-32, a NUL in every other byte identifies UTF-16 without one, and
bytes that are not UTF-8 are most often Latin-1 or its Windows superset.
"""

from __future__ import annotations

import codecs

FIX = "save it as UTF-8 (in a spreadsheet: CSV UTF-8)"

_BOMS = (  # longest first: the UTF-32 LE mark begins with the UTF-16 LE one
    (codecs.BOM_UTF32_LE, "UTF-32"),
    (codecs.BOM_UTF32_BE, "UTF-32"),
    (codecs.BOM_UTF16_LE, "UTF-16"),
    (codecs.BOM_UTF16_BE, "UTF-16"),
)


class NotUTF8(ValueError):
    """Bytes that are not UTF-8 text; ``line`` is the line of the first undecodable byte."""

    def __init__(self, reason: str, line: int) -> None:
        self.reason = reason
        self.line = line
        super().__init__(reason)


def decode_utf8(data: bytes) -> str:
    """UTF-8 text of ``data`` (a leading byte-order mark dropped); `NotUTF8` otherwise.

    >>> decode_utf8(codecs.BOM_UTF8 + b"economy")
    'economy'
    >>> decode_utf8("millión".encode("latin-1"))
    Traceback (most recent call last):
    ...
    valvol.io.text.NotUTF8: not UTF-8 text: byte 0xF3 on line 1 (likely Latin-1 or Windows-1252); save it as UTF-8 (in a spreadsheet: CSV UTF-8)
    """
    for bom, name in _BOMS:
        if data.startswith(bom):
            raise NotUTF8(f"{name} text (byte-order mark at the start), not UTF-8; {FIX}", 1)
    if data.startswith(codecs.BOM_UTF8):
        data = data[len(codecs.BOM_UTF8):]
    if _looks_utf16(data):
        raise NotUTF8(f"likely UTF-16 text without a byte-order mark (every other byte is 0), not UTF-8; {FIX}", 1)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise NotUTF8(f"not UTF-8 text: byte 0x{data[exc.start]:02X} on line {line} (likely "
                      f"{_likely_8bit(data)}); {FIX}", line) from None


def _looks_utf16(data: bytes) -> bool:
    """Mostly ASCII text in UTF-16: a NUL in (nearly) every other byte of the first kilobytes."""
    head = data[:4096]
    if len(head) < 4:
        return False
    even, odd = head[0::2].count(0), head[1::2].count(0)
    return max(even, odd) >= 0.4 * (len(head) // 2)


def _likely_8bit(data: bytes) -> str:
    """The usual suspects for bytes that are not UTF-8."""
    try:
        data.decode("cp1252")
    except UnicodeDecodeError:  # bytes 0x81, 0x8D, 0x8F, 0x90, 0x9D are not Windows-1252
        return "Latin-1"
    return "Latin-1 or Windows-1252"
