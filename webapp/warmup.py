"""Warm start: pay, in the background right after ``serve`` binds its port, what the first
analysis request would otherwise pay — importing the analysis stack and the figure library,
compiling every template, and one small fit — so the first Explain answers as fast as the
later ones while the server already answers light pages. Then fit and keep in the store the
band fits that the most recently paged rules' pages will ask for, where none is kept yet
(``webapp.services.rule_kinds.fit_ahead``), so their first replay and rule kinds read them."""

from __future__ import annotations

import logging
import threading
from typing import Any

log = logging.getLogger(__name__)


def warm(app: Any) -> None:
    """Import, compile and fit once; safe to call more than once."""
    import numpy as np
    import pandas as pd
    import plotly.graph_objects as go

    from webapp.analysis import compare_peers, explain, replay_report  # noqa: F401

    for name in app.jinja_env.list_templates(filter_func=lambda n: n.endswith(".html")):
        app.jinja_env.get_template(name)
    times = pd.date_range("2026-01-05", periods=3 * 1440, freq="min", tz="UTC")
    values = pd.Series(10 + np.sin(np.arange(times.size) * 2 * np.pi / 1440), index=times)
    result = explain(values, window=(times[-120], times[-1]), history=pd.Timedelta(days=2))
    go.Figure(go.Scatter(x=result.frame.index[-10:], y=result.frame["value"].iloc[-10:])).to_json()
    fit_ahead(app)


def fit_ahead(app: Any) -> int:
    """Keep the band fits of the most recently paged rules; how many were fitted."""
    from webapp.services.rule_kinds import fit_ahead as fit_rules_ahead
    from webapp.store import db

    with db.session_scope(db.get_engine(app), write=False) as session:
        return fit_rules_ahead(session)


def warm_in_background(app: Any) -> threading.Thread:
    """Start :func:`warm` on a daemon thread; a failure is logged, never raised."""

    def run() -> None:
        try:
            warm(app)
        except Exception:  # warming is an optimisation: the server works without it
            log.exception("warm start failed; the first analysis will be slower")

    thread = threading.Thread(target=run, name="whyfired-warm-start", daemon=True)
    thread.start()
    return thread
