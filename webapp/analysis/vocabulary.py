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
    "KIND_NAMES",
    "BAND_WIDTH",
    "BAND_WIDTH_HELP",
    "level_words",
    "band_width_text",
    "FACT_LABELS",
    "FACT_GROUPS",
    "FACT_WORDS",
    "PARAMETER_LABELS",
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


#: The Facts panel in words: groups of rows, each (label, how to show it, the fact keys it
#: shows). Kinds: time, span (two times), minutes, days, seconds, share, count, value (in
#: the series' unit), range (two values), sd (robust standard deviations), yes/no, words
#: (one of FACT_WORDS), periods, strengths, list, outside (total, above, below), rank
#: (rank and weeks). Keys no row names are shown under "Other facts"; the series, its unit
#: and time zone are on the screen already. The JSON download keeps every raw key.
FACT_GROUPS: tuple[tuple[str, tuple[tuple[str, str, tuple[str, ...]], ...]], ...] = (
    (
        "The window",
        (
            ("Window", "span", ("window_start", "window_end")),
            ("Length", "minutes", ("window_minutes",)),
            ("Samples with a value", "count", ("window_samples",)),
            (
                "Time outside the band",
                "outside",
                ("minutes_outside", "minutes_above", "minutes_below"),
            ),
            ("Separate stretches outside", "count", ("outside_stretches",)),
            ("First outside the band", "time", ("first_outside",)),
            ("Last outside the band", "time", ("last_outside",)),
            ("Peak", "time", ("peak_time",)),
            ("Peak value", "value", ("peak_value",)),
            ("Expected at the peak", "value", ("peak_expected",)),
            ("Band at the peak", "range", ("peak_lower", "peak_upper")),
            ("Peak's distance from expected", "sd", ("peak_deviation_sd",)),
            ("Furthest from expected", "time", ("strongest_time",)),
            ("Value there", "value", ("strongest_value",)),
            ("Expected there", "value", ("strongest_expected",)),
            ("Its distance from expected", "sd", ("strongest_deviation_sd",)),
        ),
    ),
    (
        "The band",
        (
            ("Width setting", "number", ("tolerance",)),
            ("Sides set by", "words", ("band_sides",)),
            ("Days forecast to set the sides", "days", ("band_backtest_days",)),
            ("Share the band is built to hold", "share", ("band_coverage_nominal",)),
            ("Share it held on those days", "share", ("band_coverage",)),
            ("Hours a daily habit widens it", "list", ("band_habit_hours",)),
            ("Recent spread it allows for", "value", ("band_recent_spread",)),
            ("Seasonal periods used", "periods", ("periods",)),
            ("Strength of each period tried", "strengths", ("period_strengths",)),
            ("Robust spread of what is left", "value", ("scale",)),
            ("Spread changes with the hour of day", "yes/no", ("scale_varies_by_hour",)),
            ("Confidence", "words", ("confidence",)),
            ("Why not higher", "list", ("confidence_reasons",)),
        ),
    ),
    (
        "History and data",
        (
            ("History asked for", "days", ("history_requested_days",)),
            ("History usable", "days", ("history_usable_days",)),
            ("Sample step", "seconds", ("step_seconds",)),
            ("History with a value", "share", ("coverage_history",)),
            ("Window with a value", "share", ("coverage_window",)),
            ("Gaps", "count", ("gap_count",)),
            ("Time in gaps", "minutes", ("gap_minutes",)),
            ("Left out of the history", "minutes", ("excluded_minutes",)),
        ),
    ),
    (
        "The past weeks",
        (
            ("Hour compared", "span", ("same_hour_start", "same_hour_end")),
            ("This week's value in that hour", "value", ("same_hour_value",)),
            ("Rank of this week", "rank", ("same_hour_rank", "same_hour_weeks", "same_hour_side")),
            ("Median of the earlier weeks", "value", ("same_hour_past_median",)),
            ("Most extreme earlier week", "value", ("same_hour_past_extreme",)),
        ),
    ),
)

#: Fact values that are codes, in words.
FACT_WORDS = {
    "band_sides": {
        "backtest": "its own forecast errors over the last days of history",
        "scale": "the robust spread (too little history to calibrate)",
    },
}

#: A saved explanation's parameters in words (the window is shown on its own).
PARAMETER_LABELS = {
    "history_seconds": "History",
    "tolerance": "Width setting",
    "exclude": "Left out of the history",
    "tz": "Time zone",
    "agg": "Samples combined by",
    "unit": "Unit",
    "step_seconds": "Sample step",
}
