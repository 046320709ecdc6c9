"""whyfired's analysis core: pure functions over pandas series (no web, no database, no I/O).

    from webapp.analysis import explain
    exp = explain(series, window=(start, end), history=pd.Timedelta(weeks=6), tolerance=3.0)

Across many series: `screen(series_by_key, window)` ranks them by how far and how long each
left its band and orders the onsets; `compare_peers(target_key, peers, ...)` compares one
series with its peers, up to a fleet; `aggregate(series_by_key, how="p95")` makes one series
of many. `to_csv(result)` and `to_json(result)` give any result as text with its parameters.

To fit on one history and forecast on another grid without the facts and sentences:
`expected_band(history, grid_index, tolerance=3.0, tz="UTC")`, or `fit_baseline(baseline)`
then `.band(grid_index, tolerance)` (see `webapp.analysis._band`).

To replay an alert rule with its report, what-if sweep and drafted verdict:
`RuleReplay(series, ThresholdRule(above=800, hold="10min"), incidents).fit()`.
"""

from webapp._lazy import lazy_exports

_EXPORTS = {
    "._aggregate": ("aggregate",),
    "._alert_replay": ("RuleReplay", "RuleReplayResult"),
    "._band": ("expected_band", "fit_baseline"),
    "._fitted_bands": ("band_fit_frame", "band_fit_parameters", "band_grid_from_frame"),
    "._burn": (
        "WORKBOOK_WINDOWS",
        "BurnRateRule",
        "BurnWindow",
        "EventGrid",
        "budget_consumed",
        "budget_spent",
        "burn_rates",
        "detection_time",
        "event_grid",
        "replay_burn",
        "burn_report",
        "burn_rule_from_fields",
        "window_fields",
    ),
    "._burn_sweep": ("BURN_SWEEP_COLUMNS", "burn_sweep", "burn_sweep_grid"),
    "._explain": ("ENGINE_VERSION", "Explanation", "explain"),
    "._export_data": ("to_csv", "to_json"),
    "._grid": ("infer_step", "regularize"),
    "._incidents": ("merge_incidents",),
    "._kinds": ("KindRow", "best_setting", "kind_row", "kinds_sentence", "row_from_sweep"),
    "._overlay": ("past_weeks_overlay",),
    "._peers": ("PeerComparison", "PeerGroup", "PeerResult", "compare_peers"),
    "._replay": (
        "BandGrid",
        "BandRule",
        "ThresholdRule",
        "band_grid",
        "replay",
        "rule_from_fields",
    ),
    "._report": ("ReplayReport", "replay_report"),
    "._robust": ("robust_scale",),
    "._screen": ("ScreenResult", "screen"),
    "._verdict": ("VerdictDraft", "draft_verdict"),
    "._whatif": ("band_sweep", "sweep_grid", "whatif_sweep"),
}

__all__, __getattr__, __dir__ = lazy_exports(globals(), _EXPORTS)
