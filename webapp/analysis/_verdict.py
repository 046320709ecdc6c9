"""A drafted verdict on an alert rule: keep, tune (with new parameters) or retire.

The draft is built from a replay report and a what-if sweep (thresholds, or for a band rule
tolerances, by holds):
- *tune* when some setting in the sweep catches every incident the current rule caught
  with fewer firings (the setting with the fewest pages wins; ties go to the shorter median
  delay, then to the setting closest to the current one). "Fewer" means at least one page
  less and at least ``TUNE_MIN_SAVING`` of them.
- *retire* when the rule caught none of the incidents recorded within the replayed data
  and paged for nothing at least ``RETIRE_MIN_FALSE`` times. With no incident recorded in
  those weeks the replay cannot tell real firings from noise, so it never drafts retire.
- *keep* otherwise (it catches what it should at the least noise the sweep found, or it is
  quiet, or there is too little to judge).
When the rule missed incidents, the rationale also names the quietest setting in the sweep
that catches the most of them, and its pages per week.
The rationale is plain sentences built from the numbers. It always ends by saying that the
tool only drafts, that retiring an alert can hide a real failure, and that the service owner
and the team's own paging policy decide.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal

import pandas as pd

from webapp.analysis._replay import BandRule, Rule, ThresholdRule
from webapp.analysis._report import ReplayReport
from webapp.analysis.times import rough_duration, short_duration
from webapp.analysis.vocabulary import OWNER_DECIDES, band_width_text

TUNE_MIN_SAVING = 0.2
RETIRE_MIN_FALSE = 2
ON_CALL_LOAD = (
    "Common practice (the Site Reliability Engineering book, 2016, chapter 11) is to allow "
    "at most two incidents per 12-hour on-call shift, and every alert of the team shares "
    "that budget."
)


@dataclass(frozen=True)
class VerdictDraft:
    suggestion: Literal["keep", "tune", "retire"]
    parameters: dict[str, Any]
    rationale: str
    sentences: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "suggestion": self.suggestion,
            "parameters": dict(self.parameters),
            "rationale": self.rationale,
        }


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def rule_parameters(rule: Rule) -> dict[str, Any]:
    """A rule's parameters in the stored alert-rule field names."""
    common = {
        "hold_seconds": int(rule.hold.total_seconds()),
        "check_every_seconds": None
        if rule.check_every is None
        else int(rule.check_every.total_seconds()),
    }
    if isinstance(rule, ThresholdRule):
        return {
            "kind": "threshold",
            "direction": rule.direction,
            "threshold": rule.threshold,
            **common,
        }
    return {"kind": "band", "direction": rule.direction, "tolerance": rule.tolerance, **common}


def _knob(rule: Rule) -> tuple[str, float]:
    """The swept setting's column and its current value: threshold, or band tolerance."""
    if isinstance(rule, ThresholdRule):
        return "threshold", rule.threshold
    return "tolerance", float(rule.tolerance)


def _quietest(candidates: pd.DataFrame, rule: Rule) -> pd.Series:
    """The setting with the fewest pages; ties go to the shorter median delay, then to the
    setting closest to the current one."""
    column, current = _knob(rule)
    closeness = (candidates[column] - current).abs() / max(abs(current), 1e-12)
    closeness += (candidates["hold"] - rule.hold).abs() / pd.Timedelta(hours=1)
    ranked = candidates.assign(
        _delay=candidates["median_delay"].fillna(pd.Timedelta.max),
        _close=closeness,
    ).sort_values(["pages_per_week", "_delay", "_close"], kind="stable")
    return ranked.iloc[0]


def _best_setting(report: ReplayReport, sweep: pd.DataFrame, rule: Rule) -> pd.Series | None:
    """The quietest setting that still catches every incident the current rule caught."""
    column, _ = _knob(rule)
    if column not in sweep.columns:
        raise ValueError(f"the sweep has no {column!r} column: it was made for another rule kind")
    needed = set(report.caught)
    candidates = sweep[sweep["caught"].map(lambda got: needed.issubset(got))]
    return None if candidates.empty else _quietest(candidates, rule)


def _overlap_words(inside: int, outside: int) -> str:
    if outside == 0:
        return (
            "it overlapped a recorded incident"
            if inside == 1
            else (f"all {inside} overlapped a recorded incident")
        )
    if inside == 0:
        return (
            "it overlapped no recorded incident"
            if outside == 1
            else ("none of them overlapped a recorded incident")
        )
    return f"{inside} overlapped a recorded incident and {outside} did not"


def _facts(report: ReplayReport) -> list[str]:
    in_range = [i for i in report.incidents if i["in_range"]]
    out = [
        f"Replayed over {report.weeks:.1f} weeks of data, the rule ({report.rule_text}) would "
        f"have fired {_plural(report.n_firings, 'time')}, {report.pages_per_week:.1f} per week."
    ]
    if report.n_firings:
        out.append(
            f"The median firing lasted {rough_duration(report.median_duration)}; "
            f"{_overlap_words(report.inside, report.outside)}."
        )
    if report.flapping:
        out.append(
            f"{_plural(report.flapping, 'firing')} started within "
            f"{rough_duration(report.flap_gap)} of the previous one ending (flapping)."
        )
    if in_range:
        caught = [i for i in in_range if i["caught"]]
        text = f"It caught {len(caught)} of {_plural(len(in_range), 'recorded incident')}"
        if caught:
            delays = ", ".join(rough_duration(i["delay"]) for i in caught)
            text += f" (delay after the incident began: {delays})"
        out.append(text + ".")
        if len(caught) < len(in_range):
            out.append(f"It missed {_plural(len(in_range) - len(caught), 'incident')}.")
    else:
        out.append("No recorded incident falls within the replayed data.")
    if report.outside:
        out.append(
            f"At its busiest it fired {_plural(report.busiest_12h, 'time')} within 12 hours. "
            + ON_CALL_LOAD
        )
    return out


def draft_verdict(report: ReplayReport, sweep: pd.DataFrame | None, rule: Rule) -> VerdictDraft:
    """Draft keep / tune / retire for ``rule`` from its replay ``report`` and its what-if
    ``sweep`` (``whatif_sweep`` for a threshold rule, ``band_sweep`` for a band rule; None
    drafts without a tuning suggestion). See the module docstring for the decision."""
    if not isinstance(rule, ThresholdRule | BandRule):
        raise ValueError(
            f"draft_verdict needs a ThresholdRule or a BandRule, got {type(rule).__name__}"
        )
    sentences = _facts(report)
    current = rule_parameters(rule)
    suggestion: Literal["keep", "tune", "retire"] = "keep"
    parameters = current
    best = None
    if sweep is not None and len(sweep):
        best = _best_setting(report, sweep, rule)
    recorded = any(i["in_range"] for i in report.incidents)
    if recorded and not report.caught and report.outside >= RETIRE_MIN_FALSE:
        suggestion, parameters = "retire", {}
        sentences.append(
            "None of its firings matched a recorded incident, so every page it sent woke "
            "someone for nothing that was written down."
        )
    elif (
        best is not None and report.caught and _saves_enough(report.n_firings, int(best["firings"]))
    ):
        suggestion = "tune"
        column, _ = _knob(rule)
        parameters = {
            **current,
            column: float(best[column]),
            "hold_seconds": int(best["hold"].total_seconds()),
        }
        sentences.append(
            f"With {_setting(column, best[column])} and a hold of "
            f"{short_duration(best['hold'])}, it would have fired "
            f"{_plural(int(best['firings']), 'time')} ({best['pages_per_week']:.1f} per week) "
            f"and still caught every incident the current rule caught "
            f"(median delay {rough_duration(best['median_delay'])})."
        )
    elif report.caught:
        sentences.append(
            "No setting in the what-if sweep catches the same incidents with clearly fewer pages."
            if best is not None
            else "It caught what it was meant to catch."
        )
    elif not report.n_firings:
        sentences.append("A rule that never fired cost the team no pages in these weeks.")
    elif not recorded:
        sentences.append(
            "No incident is recorded within these weeks, so the replay cannot tell which "
            "firings were real: record the incidents (their reviews) and replay again "
            "before deciding."
        )
    else:
        sentences.append("It fired too rarely to judge from these weeks alone.")
    if sweep is not None and len(sweep) and report.missed:
        sentences.extend(_catches_more(report, sweep, rule))
    sentences.append(OWNER_DECIDES)
    return VerdictDraft(
        suggestion=suggestion,
        parameters=parameters,
        rationale=" ".join(sentences),
        sentences=sentences,
    )


def _catches_more(report: ReplayReport, sweep: pd.DataFrame, rule: Rule) -> list[str]:
    """A sentence on the quietest of the settings that catch the most incidents."""
    column, _ = _knob(rule)
    more = sweep[sweep["incidents_caught"] > len(report.caught)]
    if more.empty:
        return ["No setting in the what-if sweep would have caught the incidents it missed."]
    best = _quietest(more[more["incidents_caught"] == more["incidents_caught"].max()], rule)
    in_range = sum(1 for i in report.incidents if i["in_range"])
    return [
        f"Of the what-if settings that catch the most incidents, the quietest ({column} "
        f"{best[column]:g}, hold {short_duration(best['hold'])}) catches "
        f"{best['incidents_caught']} of the {in_range} recorded incidents at "
        f"{best['pages_per_week']:.1f} pages per week."
    ]


def _saves_enough(current: int, proposed: int) -> bool:
    return proposed < current and (current - proposed) >= TUNE_MIN_SAVING * current


def _setting(column: str, value: float) -> str:
    """A sweep's level in words: "threshold 650" or "band width 3σ"."""
    return band_width_text(value) if column == "tolerance" else f"{column} {value:g}"
