"""The shapes every importer returns: a normalised long table plus what was understood."""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd


@dataclass(frozen=True)
class Problem:
    """Something wrong (``error``) or worth saying (``warning``) about one place in a file."""

    file: str
    message: str
    line: int | None = None  # 1-based line (text formats) or row (Parquet)
    column: str | None = None
    severity: str = "error"  # error | warning
    place: str = "line"  # what ``line`` counts: "line" in text files, "row" in Parquet

    def __str__(self) -> str:
        where = self.file
        if self.line is not None:
            where += f", {self.place} {self.line}"
        if self.column:
            where += f", column {self.column!r}"
        return f"{where}: {self.message}"


class ImportRejected(ValueError):
    """The file cannot be imported; nothing from it may reach the store."""

    def __init__(self, problems: list[Problem], not_listed: int = 0):
        self.problems = problems  # the first problems, in file order
        self.not_listed = not_listed  # how many more were found but not kept
        first = problems[0] if problems else "unknown problem"
        others = len(problems) - 1 + not_listed
        super().__init__(f"{first} (and {others:,} more)" if others > 0 else str(first))

    @property
    def more(self) -> str | None:
        """The line that closes a list of the problems, counting those not listed."""
        return f"… and {self.not_listed:,} more problems not listed" if self.not_listed else None


@dataclass(frozen=True)
class SeriesMeta:
    metric: str
    labels: dict[str, str]
    unit: str | None = None


@dataclass
class ParsedImport:
    """A file understood.

    ``table`` has one row per point: ``series_key`` (str), ``ts_utc`` (int64, UTC epoch
    milliseconds) and ``value`` (float64, finite); gaps are dropped and counted, duplicate
    (series, timestamp) pairs are resolved last-wins and counted. ``series`` maps every
    key in the table to its metric, labels and unit.
    """

    file_name: str
    format: str
    sha256: str
    size_bytes: int
    table: pd.DataFrame
    series: dict[str, SeriesMeta]
    timestamp_unit: str
    naive_tz: str = "UTC"
    rows_read: int = 0
    gap_count: int = 0
    duplicate_count: int = 0
    problems: list[Problem] = field(default_factory=list)  # warnings only
