"""Byte-level checks shared by the text formats: BOM, encoding, line numbers."""

from __future__ import annotations

import numpy as np

from webapp.imports._problems import ProblemLog

UTF8_BOM = b"\xef\xbb\xbf"


def without_bom(data: bytes | memoryview) -> memoryview:
    view = memoryview(data)
    return view[len(UTF8_BOM) :] if bytes(view[:3]) == UTF8_BOM else view


def first_line(data: bytes | memoryview) -> bytes:
    """The bytes of line 1 without its line break, however long it is: the search widens
    until a line break or the end of the file is found."""
    view = memoryview(data)
    size = 65536
    while True:
        head = bytes(view[:size])
        end = head.find(b"\n")
        if end >= 0:
            return head[:end].rstrip(b"\r")
        if size >= len(view):
            return head.rstrip(b"\r")
        size *= 8


def reject_utf16(data: bytes | memoryview, log: ProblemLog) -> None:
    head = bytes(data[:2])
    if head in (b"\xff\xfe", b"\xfe\xff"):
        log.reject("the file is UTF-16 text; expected UTF-8 (save or export it as UTF-8)")


def reject_bad_encoding(data: bytes | memoryview, log: ProblemLog) -> None:
    """Say where the first byte that is not UTF-8 sits, and stop."""
    reject_utf16(data, log)
    raw = bytes(data)
    try:
        raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        log.reject(
            f"byte 0x{raw[exc.start]:02X} at character {column} is not UTF-8; "
            "expected a UTF-8 file (save or export it as UTF-8)",
            line=line,
        )


def decode_utf8(data: bytes | memoryview, log: ProblemLog) -> str:
    view = without_bom(data)
    try:
        return bytes(view).decode("utf-8")
    except UnicodeDecodeError:
        reject_bad_encoding(view, log)
        raise AssertionError("a decode error always has a bad byte to name") from None


def non_empty_lines(data: bytes | memoryview) -> np.ndarray:
    """1-based numbers of the lines that hold something other than a line break."""
    raw = np.frombuffer(data, dtype=np.uint8)
    breaks = np.flatnonzero(raw == 10)
    starts = np.concatenate(([0], breaks + 1))
    ends = np.concatenate((breaks, [len(raw)]))
    length = ends - starts
    has_cr = (length > 0) & (raw[np.maximum(ends - 1, 0)] == 13)
    filled = (length - has_cr) > 0
    return np.flatnonzero(filled) + 1
