"""One unit per series: a series whose rows name two units is refused, at the first row
where its unit changes; a unit given for the whole import fills every series."""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np

from webapp.imports._problems import LineMap, ProblemLog
from webapp.imports._types import ParsedImport, SeriesMeta

MAX_UNIT_LENGTH = 32


def check_unit(unit: str | None, log: ProblemLog) -> str | None:
    """The unit given for an import, trimmed (None when blank), or a rejection."""
    unit = (unit or "").strip()
    if len(unit) > MAX_UNIT_LENGTH:
        log.reject(
            f"the unit {unit[:40]!r}… is {len(unit)} characters long; expected a short unit "
            f"of at most {MAX_UNIT_LENGTH} characters, such as ms, s, bytes or %"
        )
    if not unit.isprintable():
        log.reject(f"the unit {unit!r} holds a control character; expected a unit such as ms")
    return unit or None


def give_unit(parsed: ParsedImport, unit: str | None, log: ProblemLog) -> None:
    """Give every series of the import ``unit``; a series whose file names another unit
    is refused rather than relabelled."""
    if unit is None:
        return
    for key, meta in parsed.series.items():
        if meta.unit is not None and meta.unit != unit:
            log.error(
                f"the file gives {key} the unit {meta.unit!r}, but the import's unit is "
                f"{unit!r}; leave the unit out to keep the file's units, or give the same one"
            )
    log.check()
    parsed.series = {k: dataclasses.replace(m, unit=unit) for k, m in parsed.series.items()}


def report_unit_changes(
    codes: np.ndarray,
    metas: Sequence[SeriesMeta],
    keys: Sequence[str | None],
    log: ProblemLog,
    line_of: LineMap,
    column: str | None,
) -> None:
    """``codes[i]`` indexes ``metas`` for row i and ``keys`` gives each meta's series key
    (None for metas already refused). One error per series whose metas disagree on the
    unit; the check costs one pass over the metas unless such a series exists."""
    present = np.bincount(codes, minlength=len(metas)) > 0
    units_of: dict[str, set[str | None]] = {}
    for key, meta, used in zip(keys, metas, present.tolist(), strict=True):
        if key is not None and used:
            units_of.setdefault(key, set()).add(meta.unit)
    mixed = [key for key, units in units_of.items() if len(units) > 1]
    if not mixed:
        return
    group = {key: number for number, key in enumerate(mixed)}
    group_of_meta = np.array([group.get(key, -1) for key in keys], dtype=np.int64)
    unit_names = list(dict.fromkeys(meta.unit for meta in metas))
    unit_number = {unit: number for number, unit in enumerate(unit_names)}
    unit_of_meta = np.array([unit_number[meta.unit] for meta in metas], dtype=np.int64)

    rows = np.flatnonzero(group_of_meta[codes] >= 0)  # the rows of mixed series, in order
    groups = group_of_meta[codes[rows]]
    units = unit_of_meta[codes[rows]]
    first = np.zeros(len(mixed), dtype=np.int64)
    present_groups, first_at = np.unique(groups, return_index=True)
    first[present_groups] = first_at  # every mixed series has rows, as both units are used
    changed = units != units[first][groups]
    changed_groups, first_change = np.unique(groups[changed], return_index=True)
    change_rows = rows[changed][first_change]
    since_lines = line_of(rows[first[changed_groups]])
    change_lines = line_of(change_rows)
    for number, row, since, at in zip(
        changed_groups.tolist(),
        change_rows.tolist(),
        since_lines.tolist(),
        change_lines.tolist(),
        strict=True,
    ):
        before = unit_names[units[first[number]]]
        after = unit_names[unit_of_meta[codes[row]]]
        log.error(
            f"the unit of {mixed[number]} changes here from {_told(before)} "
            f"({log.place} {since}) to {_told(after)}; a series has one unit, so give the "
            "same unit on all of its rows (an empty cell means no unit)",
            line=int(at),
            column=column,
        )


def _told(unit: str | None) -> str:
    return repr(unit) if unit else "no unit"
