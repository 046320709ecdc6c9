"""Warm start: pay, in the background right after ``serve`` binds its port, what the first
analysis request would otherwise pay — importing the analysis stack and the figure library,
compiling every template, and one small fit — so the first Explain answers as fast as the
later ones while the server already answers light pages."""

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
