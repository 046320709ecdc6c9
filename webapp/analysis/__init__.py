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

from ._aggregate import aggregate
from ._alert_replay import RuleReplay, RuleReplayResult
from ._band import expected_band, fit_baseline
from ._burn import (
    WORKBOOK_WINDOWS,
    BurnRateRule,
    BurnWindow,
    EventGrid,
    budget_consumed,
    budget_spent,
    burn_rates,
    detection_time,
    event_grid,
    replay_burn,
)
from ._burn_sweep import BURN_SWEEP_COLUMNS, burn_sweep, burn_sweep_grid
from ._explain import ENGINE_VERSION, Explanation, explain
from ._export_data import to_csv, to_json
from ._grid import infer_step, regularize
from ._incidents import merge_incidents
from ._overlay import past_weeks_overlay
from ._peers import PeerComparison, PeerGroup, PeerResult, compare_peers
from ._replay import BandGrid, BandRule, ThresholdRule, band_grid, replay, rule_from_fields
from ._report import ReplayReport, replay_report
from ._robust import robust_scale
from ._screen import ScreenResult, screen
from ._verdict import VerdictDraft, draft_verdict
from ._whatif import band_sweep, sweep_grid, whatif_sweep

__all__ = [
    "aggregate",
    "ENGINE_VERSION",
    "RuleReplay",
    "RuleReplayResult",
    "Explanation",
    "expected_band",
    "explain",
    "fit_baseline",
    "infer_step",
    "merge_incidents",
    "past_weeks_overlay",
    "PeerComparison",
    "PeerGroup",
    "PeerResult",
    "compare_peers",
    "regularize",
    "robust_scale",
    "ScreenResult",
    "screen",
    "BandGrid",
    "BandRule",
    "band_grid",
    "band_sweep",
    "ReplayReport",
    "ThresholdRule",
    "VerdictDraft",
    "draft_verdict",
    "replay",
    "replay_report",
    "rule_from_fields",
    "sweep_grid",
    "to_csv",
    "to_json",
    "whatif_sweep",
    "BurnRateRule",
    "BurnWindow",
    "EventGrid",
    "WORKBOOK_WINDOWS",
    "budget_consumed",
    "budget_spent",
    "burn_rates",
    "detection_time",
    "event_grid",
    "replay_burn",
    "BURN_SWEEP_COLUMNS",
    "burn_sweep",
    "burn_sweep_grid",
]
