"""Which line of a CSV file each record starts on.

A quoted field may hold line breaks, so a record can span several lines; a problem names
the line its record starts on. Files without a quote character, the usual case, need only
the count of non-empty lines. With quotes, the breaks inside quoted fields are told apart
by counting quotes; where the quotes do not follow the usual pattern (a quote in the middle
of an unquoted field), the records are counted by Python's csv reader, which reads quotes
as Arrow's reader does. All of this happens only when a problem needs a line number.
"""

from __future__ import annotations

import csv
from functools import cached_property

import numpy as np

from webapp.imports._text import non_empty_lines

_QUOTE, _LF, _CR = ord('"'), ord("\n"), ord("\r")


class CsvLines:
    """Row positions (0-based, below the header) to 1-based line numbers."""

    def __init__(self, data: memoryview, delimiter: str):
        self.data = data
        self.delimiter = delimiter

    @cached_property
    def _starts(self) -> np.ndarray:
        return record_lines(self.data, self.delimiter)

    def __call__(self, rows: np.ndarray) -> np.ndarray:
        starts = self._starts
        return starts[np.minimum(rows + 1, len(starts) - 1)]


def record_lines(data: bytes | memoryview, delimiter: str) -> np.ndarray:
    """The line each non-empty record (the header included) starts on, in order."""
    raw = np.frombuffer(data, dtype=np.uint8)
    quotes = np.flatnonzero(raw == _QUOTE)
    if quotes.size == 0:
        return non_empty_lines(data)
    if not _quotes_pair_up(raw, quotes, ord(delimiter)):
        return _lines_by_reader(data, delimiter)
    breaks = np.flatnonzero(raw == _LF)
    outside = np.searchsorted(quotes, breaks) % 2 == 0  # an even count of quotes before it
    ends = np.append(breaks[outside], len(raw))
    starts = np.concatenate(([0], ends[:-1] + 1))
    length = ends - starts
    has_cr = (length > 0) & (raw[np.maximum(ends - 1, 0)] == _CR)
    filled = (length - has_cr) > 0
    return np.searchsorted(breaks, starts[filled]) + 1


def _quotes_pair_up(raw: np.ndarray, quotes: np.ndarray, delimiter: int) -> bool:
    """True when every quote opens a field, closes one, or is doubled inside one: then the
    line breaks outside quoted fields are those with an even count of quotes before them."""
    if quotes.size % 2:
        return False
    bound = np.zeros(256, dtype=bool)
    bound[[delimiter, _LF, _CR, _QUOTE]] = True  # bytes a quote may sit next to
    opening, closing = quotes[0::2], quotes[1::2]
    opens_field = (opening == 0) | bound[raw[np.maximum(opening - 1, 0)]]
    closes_field = (closing == len(raw) - 1) | bound[raw[np.minimum(closing + 1, len(raw) - 1)]]
    return bool(opens_field.all() and closes_field.all())


def _lines_by_reader(data: bytes | memoryview, delimiter: str) -> np.ndarray:
    text = bytes(data).decode("utf-8", errors="replace").split("\n")
    reader = csv.reader((line + "\n" for line in text), delimiter=delimiter)
    starts, consumed = [], 0
    try:
        for record in reader:
            if record:
                starts.append(consumed + 1)
            consumed = reader.line_num
    except csv.Error:
        return non_empty_lines(data)
    return np.array(starts, dtype=np.int64)
