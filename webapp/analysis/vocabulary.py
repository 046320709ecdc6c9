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
    "BAND_WIDTH",
    "BAND_WIDTH_HELP",
    "level_words",
    "band_width_text",
    "FACT_LABELS",
    "fact_label",
]

#: An alert rule compares the value with a fixed threshold or with the expected band.
RULE_KINDS = ("threshold", "band")

#: Which side of its limit a rule is raised on, per kind; the first is the form's default.
DIRECTIONS = {"threshold": ("above", "below"), "band": ("both", "above", "below")}

#: What a what-if sweep varies besides the hold, per kind.
SWEEP_LEVEL = {"threshold": "threshold", "band": "tolerance"}

#: What the band-width setting (stored and passed as ``tolerance``) is called on screen:
#: the distance from the expected value to each edge, in robust standard deviations. The
#: band's sides are calibrated so that a width of 3 holds about 99.7% of normal samples.
BAND_WIDTH = "band width (σ)"
BAND_WIDTH_HELP = "robust standard deviations each side; 3 ≈ 99.7% of normal samples inside"


def level_words(level: str) -> str:
    """A sweep level's name for people: "threshold", or "band width (σ)" for "tolerance"."""
    return BAND_WIDTH if level == "tolerance" else level


def band_width_text(width: float) -> str:
    """A band width in words, e.g. "band width 3σ"."""
    return f"band width {width:g}σ"


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
