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
    "INCIDENT_SOURCES",
    "OWNER_DECIDES",
    "SWEEP_LEVEL",
    "FACT_LABELS",
    "fact_label",
]

#: An alert rule compares the value with a fixed threshold or with the expected band.
RULE_KINDS = ("threshold", "band")

#: Which side of its limit a rule is raised on, per kind; the first is the form's default.
DIRECTIONS = {"threshold": ("above", "below"), "band": ("both", "above", "below")}

#: What a what-if sweep varies besides the hold, per kind.
SWEEP_LEVEL = {"threshold": "threshold", "band": "tolerance"}

#: The stored fields of an alert rule (``webapp.store.models.AlertRule``), in form order.
#: ``hold_seconds``: how long the condition must hold before the rule is raised;
#: ``check_every_seconds``: how often it is checked (None: the series' own step).
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
)

#: What a recorded verdict on an alert rule may say (a draft says keep, tune or retire):
#: replace means "swap it for a rule of another kind", its parameters describing that rule.
VERDICTS = ("keep", "tune", "replace", "retire")

#: Where a recorded incident came from: a review's incident window, a page marked as a real
#: incident, or a line of an imported list.
INCIDENT_SOURCES = ("review", "page", "list")

#: Ends every drafted verdict and stands beside every verdict shown or exported.
OWNER_DECIDES = (
    "whyfired only drafts this verdict from the replay's numbers; it does not decide. "
    "Retiring an alert can hide a real failure that did not happen to occur in these weeks: "
    "the service owner and the team's own paging policy decide whether the alert is kept, "
    "tuned, replaced or retired."
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
