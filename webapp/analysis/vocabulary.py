"""whyfired's domain words, written once: rule kinds and directions, verdicts, the stored
fields of an alert rule, and the caution that the service owner decides.

Pure data: every layer imports it (the core, the store's checks, the forms, the screens).
"""

from __future__ import annotations

__all__ = [
    "RULE_KINDS",
    "DIRECTIONS",
    "RULE_FIELDS",
    "VERDICTS",
    "OWNER_DECIDES",
    "SWEEP_LEVEL",
    "KIND_NAMES",
    "FACT_LABELS",
    "fact_label",
]

#: An alert rule compares the value with a fixed threshold or with the expected band, or
#: (burn_rate) how fast an objective's error budget is spent with burn-rate factors.
RULE_KINDS = ("threshold", "band", "burn_rate")

#: Which side of its limit a rule is raised on, per kind; the first is the form's default.
DIRECTIONS = {
    "threshold": ("above", "below"),
    "band": ("both", "above", "below"),
    "burn_rate": ("above",),
}

#: What a what-if sweep varies besides the hold (for a burn-rate rule: the window pair).
SWEEP_LEVEL = {"threshold": "threshold", "band": "tolerance", "burn_rate": "factor"}

#: Words for each rule kind in tables and sentences.
KIND_NAMES = {"threshold": "threshold", "band": "band", "burn_rate": "burn-rate"}

#: The stored fields of an alert rule (``webapp.store.models.AlertRule``), in form order.
#: ``hold_seconds``: how long the condition must hold before the rule is raised;
#: ``check_every_seconds``: how often it is checked (None: the series' own step).
#: A burn-rate rule: ``objective`` (0.999 for 99.9%), ``period_seconds`` (the compliance
#: period), ``burn_windows`` (window pairs: long_seconds, short_seconds, factor, severity),
#: ``severity`` (the conditions it raises on: page or ticket); it watches ``series_id``,
#: an error-ratio series, or with ``good_series_id`` a good/total pair of event counts per
#: sample (``series_id`` then counts all events).
RULE_FIELDS = (
    "name",
    "series_id",
    "metric",
    "label_filter",
    "kind",
    "direction",
    "threshold",
    "tolerance",
    "hold_seconds",
    "check_every_seconds",
    "description",
    "objective",
    "period_seconds",
    "burn_windows",
    "severity",
    "good_series_id",
)

#: What a drafted (and a recorded) verdict on an alert rule may say.
VERDICTS = ("keep", "tune", "retire")

#: Ends every drafted verdict and stands beside every verdict shown or exported.
OWNER_DECIDES = (
    "whyfired only drafts this verdict from the replay's numbers; it does not decide. "
    "Retiring an alert can hide a real failure that did not happen to occur in these weeks: "
    "the service owner and the team's own paging policy decide whether the alert is kept, "
    "tuned or retired."
)

#: The explainer's time facts a review's timeline most often wants, in that order.
FACT_LABELS = {
    "first_outside": "First outside the expected band",
    "peak_time": "Peak value",
    "strongest_time": "Furthest from the expected value",
    "last_outside": "Last outside the expected band",
    "window_start": "Explained window starts",
    "window_end": "Explained window ends",
}


def fact_label(name: str) -> str:
    """The label of a time fact (an explanation's facts, a timeline entry's source)."""
    return FACT_LABELS.get(name) or name.replace("_", " ").strip().capitalize()
