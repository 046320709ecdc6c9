"""whyfired's analysis core: pure functions over pandas series (no web, no database, no I/O).

    from webapp.analysis import explain
    exp = explain(series, window=(start, end), history=pd.Timedelta(weeks=6), tolerance=3.0)

To fit on one history and forecast on another grid without the facts and sentences:
`expected_band(history, grid_index, tolerance=3.0, tz="UTC")`, or `fit_baseline(baseline)`
then `.band(grid_index, tolerance)` (see `webapp.analysis._band`).
"""

from ._band import expected_band, fit_baseline
from ._explain import ENGINE_VERSION, Explanation, explain
from ._grid import infer_step, regularize
from ._overlay import past_weeks_overlay
from ._peers import PeerComparison, PeerResult, compare_peers
from ._replay import BandGrid, BandRule, ThresholdRule, band_grid, replay, rule_from_fields
from ._report import ReplayReport, replay_report
from ._robust import robust_scale
from ._screen import ScreenResult, screen
from ._verdict import VerdictDraft, draft_verdict
from ._whatif import band_sweep, sweep_grid, whatif_sweep

__all__ = [
    "ENGINE_VERSION",
    "Explanation",
    "expected_band",
    "explain",
    "fit_baseline",
    "infer_step",
    "past_weeks_overlay",
    "PeerComparison",
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
    "whatif_sweep",
]
