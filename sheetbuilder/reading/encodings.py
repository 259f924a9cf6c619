"""Decoding a text export strictly: one encoding for the whole file, chosen by rule, never guessed.

The rule (a file is never decoded one way for some rows and another way for others):

1. A byte-order mark names the encoding: UTF-32, UTF-16 or UTF-8.
2. Otherwise UTF-8 when every byte sequence in the file is valid UTF-8.
3. Otherwise cp1252 (Windows Western), but only when the file decodes fully as cp1252 and
   holds no sequence that would be valid multi-byte UTF-8: a file mixing valid UTF-8
   (``café`` as C3 A9) with an invalid byte is a damaged UTF-8 file, and reading it as
   cp1252 would garble every accented term in it (``cafÃ©``).
4. Otherwise the file is refused, naming the row and byte offset of the first invalid sequence.

A NUL character in the decoded text is refused too, naming its row: it means UTF-16
without a byte-order mark, or a binary file.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

UTF8 = "utf-8"
CP1252 = "cp1252"

_BOMS = ((b"\xff\xfe\x00\x00", "utf-32"), (b"\x00\x00\xfe\xff", "utf-32"),
         (b"\xef\xbb\xbf", "utf-8-sig"), (b"\xff\xfe", "utf-16"), (b"\xfe\xff", "utf-16"))
_NAMES = {"utf-32": "UTF-32 (with byte-order mark)", "utf-16": "UTF-16 (with byte-order mark)",
          "utf-8-sig": "UTF-8 (with byte-order mark)", UTF8: "UTF-8", CP1252: "cp1252 (Windows Western)"}

# A well-formed multi-byte UTF-8 sequence (The Unicode Standard, chapter 3.9, table 3-7).
_UTF8_MULTI = re.compile(rb"[\xc2-\xdf][\x80-\xbf]|\xe0[\xa0-\xbf][\x80-\xbf]|[\xe1-\xec\xee\xef][\x80-\xbf]{2}"
                         rb"|\xed[\x80-\x9f][\x80-\xbf]|\xf0[\x90-\xbf][\x80-\xbf]{2}|[\xf1-\xf3][\x80-\xbf]{3}"
                         rb"|\xf4[\x80-\x8f][\x80-\xbf]{2}")


class NotText(ValueError):
    """A text export that cannot be decoded by the rule, or that holds a NUL character.

    Args:
        message: what is wrong and what to do.
        row: the 1-based line of the file where the problem is (None for the whole file).
    """

    def __init__(self, message: str, row: int | None = None):
        super().__init__(message)
        self.row = row


@dataclass(frozen=True)
class Decoded:
    """A decoded text file and the encoding used (its plain name, for the build record)."""

    text: str
    encoding: str


def _row_at(data: bytes, offset: int) -> int:
    """The 1-based line holding byte offset (of a file in an encoding where LF is one byte)."""
    return data.count(b"\n", 0, offset) + 1


def decode(data: bytes) -> Decoded:
    """The text of a CSV export, decoded by the module's rule.

    Raises:
        NotText: not decodable by the rule, or a NUL character (with the row).
    """
    for bom, codec in _BOMS:
        if data.startswith(bom):
            try:
                text = data.decode(codec)  # the codec reads and drops its byte-order mark
            except UnicodeDecodeError as exc:
                raise NotText(f"starts with a {_NAMES[codec].split(' ')[0]} byte-order mark but byte offset "
                              f"{exc.start} is not valid {codec.split('-sig')[0].upper()}; save it again as UTF-8",
                              data[:exc.start].decode(codec, errors="replace").count("\n") + 1) from None
            return _checked(Decoded(text, _NAMES[codec]))
    try:
        return _checked(Decoded(data.decode(UTF8), _NAMES[UTF8]))
    except UnicodeDecodeError as exc:
        bad = exc.start
    multi = _UTF8_MULTI.search(data)
    if multi is not None:
        raise NotText(f"is not valid UTF-8 at byte offset {bad} (bytes {data[bad:bad + 4].hex(' ')}), yet holds "
                      f"valid UTF-8 elsewhere (byte offset {multi.start()}), so no single encoding reads it; "
                      "the file is damaged or was pasted together from two encodings. Save it again as UTF-8",
                      _row_at(data, bad))
    try:
        text = data.decode(CP1252)
    except UnicodeDecodeError as exc:
        raise NotText(f"is neither UTF-8 (byte offset {bad}) nor cp1252 (byte offset {exc.start}, byte "
                      f"{data[exc.start:exc.start + 1].hex()}); save it as a UTF-8 CSV", _row_at(data, exc.start)) from None
    return _checked(Decoded(text, _NAMES[CP1252]))


def _checked(decoded: Decoded) -> Decoded:
    """decoded, or NotText naming the row of its first NUL character."""
    at = decoded.text.find("\x00")
    if at >= 0:
        raise NotText("holds NUL characters, so it is not a text export (UTF-16 without a byte-order mark, or "
                      "a binary file); save it as a UTF-8 CSV", decoded.text.count("\n", 0, at) + 1)
    return decoded


def is_legacy(encoding: str) -> bool:
    """Whether the encoding name is the cp1252 fallback (worth a note to the user)."""
    return encoding == _NAMES[CP1252]
