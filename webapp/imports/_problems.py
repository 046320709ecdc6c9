"""Collecting problems while a file is read, with a cap so a bad file stays readable."""

from __future__ import annotations

from collections.abc import Callable
from typing import NoReturn

import numpy as np

from webapp.imports._types import ImportRejected, Problem

MAX_REPORTED = 20

LineMap = Callable[[np.ndarray], np.ndarray]
"""Turns 0-based row positions into the 1-based line (or row) numbers a reader sees."""


class ProblemLog:
    """Errors and warnings about one file; ``check()`` raises once errors were seen."""

    def __init__(self, file: str, limit: int = MAX_REPORTED, place: str = "line"):
        self.file = file
        self.place = place
        self.limit = limit
        self.errors: list[Problem] = []
        self.warnings: list[Problem] = []
        self.error_total = 0

    def error(self, message: str, line: int | None = None, column: str | None = None) -> None:
        self.error_total += 1
        if len(self.errors) < self.limit:
            self.errors.append(Problem(self.file, message, line, column, place=self.place))

    def warning(self, message: str, line: int | None = None, column: str | None = None) -> None:
        self.warnings.append(
            Problem(self.file, message, line, column, severity="warning", place=self.place)
        )

    def rows(
        self,
        mask: np.ndarray,
        column: str | None,
        message: Callable[[int], str],
        line_of: LineMap,
    ) -> int:
        """Record one error per row where ``mask`` is true; ``message(row)`` words it.

        Only the rows that can still be reported are formatted, so a million bad rows cost
        one vectorised pass. Returns how many rows were bad.
        """
        positions = np.flatnonzero(mask)
        if positions.size == 0:
            return 0
        room = max(self.limit - len(self.errors), 0)
        shown = positions[:room]
        for row, line in zip(shown.tolist(), line_of(shown).tolist(), strict=True):
            self.errors.append(
                Problem(self.file, message(row), int(line), column, place=self.place)
            )
        self.error_total += int(positions.size)
        return int(positions.size)

    def check(self) -> None:
        """Raise ImportRejected with the first errors and a count of the rest."""
        if not self.error_total:
            return
        problems = sorted(self.errors, key=lambda p: (p.line is None, p.line or 0))
        raise ImportRejected(problems, not_listed=self.error_total - len(problems))

    def reject(self, message: str, line: int | None = None, column: str | None = None) -> NoReturn:
        """Record one error and raise at once (for problems that stop reading)."""
        self.error(message, line, column)
        self.check()
        raise AssertionError("check() raises once an error is recorded")
