"""An alert rule replayed over one series, as a model and its result.

``RuleReplay(series, rule, incidents, exclude, grid)`` checks everything it is given and
raises a ValueError that says what is wrong; ``.fit()`` replays the rule and returns a
frozen ``RuleReplayResult``: the firings and the report against the incidents, the what-if
sweep around the rule, the drafted verdict, and the points of the sweep a figure marks (the
rule's own setting and, when the draft says tune, the drafted one). A band rule's daily
bands are fitted once and shared by the report and the sweep.

    from webapp.analysis import RuleReplay, ThresholdRule
    result = RuleReplay(series, ThresholdRule(above=800, hold="10min"), incidents).fit()
    result.report.pages_per_week, result.draft.suggestion
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import pandas as pd

from webapp.analysis._incidents import incident_windows
from webapp.analysis._replay import BandGrid, BandRule, Rule, ThresholdRule, band_grid
from webapp.analysis._report import ReplayReport, replay_report
from webapp.analysis._verdict import VerdictDraft, draft_verdict
from webapp.analysis._whatif import band_sweep, sweep_grid, whatif_sweep
from webapp.analysis.vocabulary import SWEEP_LEVEL

__all__ = ["RuleReplay", "RuleReplayResult", "SweepGrid"]

#: What a what-if sweep varies: levels (thresholds, or a band rule's tolerances) and holds.
SweepGrid = tuple[list[float], list[pd.Timedelta]]
#: One setting of a rule: (level, hold).
Setting = tuple[float, pd.Timedelta]


@dataclass(frozen=True)
class RuleReplayResult:
    """What ``RuleReplay.fit`` found; nothing in it is recomputed on reading."""

    rule: Rule
    report: ReplayReport
    incidents: list[tuple[pd.Timestamp, pd.Timestamp | None]]
    sweep: pd.DataFrame  # whatif_sweep, or band_sweep for a band rule
    grid: SweepGrid  # what the sweep varied, the rule's own setting included
    draft: VerdictDraft
    bands: BandGrid | None  # a band rule's daily bands; None for a threshold rule

    @property
    def firings(self) -> pd.DataFrame:
        return self.report.firings

    @property
    def level(self) -> str:
        """What the sweep varies besides the hold: "threshold" or "tolerance"."""
        return SWEEP_LEVEL["band" if isinstance(self.rule, BandRule) else "threshold"]

    @property
    def current(self) -> Setting:
        return (_level_of(self.rule), self.rule.hold)

    @property
    def drafted(self) -> Setting | None:
        """The drafted setting when the draft says tune, else None."""
        if self.draft.suggestion != "tune":
            return None
        hold = pd.Timedelta(seconds=self.draft.parameters["hold_seconds"])
        return (float(self.draft.parameters[self.level]), hold)


class RuleReplay:
    """An alert rule to replay over ``series`` against recorded ``incidents``.

    ``exclude``: (start, end) spans left out of a band rule's baselines, so past incidents
    do not teach the band what is expected. ``grid``: levels and holds for the what-if
    sweep (None: ``sweep_grid``'s default around the rule); the rule's own setting is
    always added to it. ``bands``: a band rule's ``band_grid`` fitted before on the same
    series, history and exclusions (the fit does not depend on tolerance, hold or
    direction, so a caller may keep it across replays).
    """

    def __init__(
        self,
        series: pd.Series,
        rule: Rule,
        incidents: Iterable[object] | None = None,
        exclude: Iterable[object] = (),
        grid: tuple[Sequence[float], Sequence[object]] | None = None,
        bands: BandGrid | None = None,
    ) -> None:
        if not isinstance(rule, ThresholdRule | BandRule):
            raise ValueError(f"a replay needs a ThresholdRule or a BandRule, got {rule!r}")
        if not isinstance(series, pd.Series):
            raise ValueError(f"a replay needs a pandas Series, got {type(series).__name__}")
        values = series.dropna()
        if values.empty:
            raise ValueError("the series has no points to replay over")
        self.series = values
        self.rule = rule
        self.incidents = incident_windows(incidents)
        self.exclude = list(exclude)
        self.grid = None if grid is None else _check_grid(grid)
        self.bands = bands

    def fit(self) -> RuleReplayResult:
        rule, values, exclude = self.rule, self.series, self.exclude
        bands = None
        if isinstance(rule, BandRule):
            bands = self.bands if self.bands is not None else band_grid(values, rule, exclude)
        report = replay_report(values, rule, self.incidents, exclude=exclude, bands=bands)
        levels, holds = self.grid or sweep_grid(values, rule)
        used = (sorted({*levels, _level_of(rule)}), sorted({*holds, rule.hold}))
        if isinstance(rule, BandRule):
            sweep = band_sweep(values, rule, *used, self.incidents, exclude, bands=bands)
        else:
            sweep = whatif_sweep(
                values,
                *used,
                self.incidents,
                direction=rule.direction,
                check_every=rule.check_every,
            )
        draft = draft_verdict(report, sweep, rule)
        return RuleReplayResult(rule, report, self.incidents, sweep, used, draft, bands)


def _level_of(rule: Rule) -> float:
    return rule.threshold if isinstance(rule, ThresholdRule) else float(rule.tolerance)


def _check_grid(grid: tuple[Sequence[float], Sequence[object]]) -> SweepGrid:
    try:
        levels, holds = grid
    except (TypeError, ValueError) as err:
        raise ValueError(f"a sweep grid is (levels, holds), got {grid!r}") from err
    if not len(levels) or not len(holds):
        raise ValueError("a sweep grid needs at least one level and one hold")
    return [float(v) for v in levels], [pd.Timedelta(h) for h in holds]
