"""The replay of a burn-rate rule on the Alert rules screen: raises, pages per week,
incidents caught, the budget spent over time, the burn rates against the rule's factors
and the what-if sweep over factors x window pairs."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from flask import current_app, request

from webapp.analysis.times import short_duration
from webapp.analysis.vocabulary import OWNER_DECIDES
from webapp.services.burn import BurnReplay, run_burn_replay
from webapp.services.replay import TZ, firing_rows, rule_text
from webapp.store import db
from webapp.store.models import AlertRule
from webapp.store.series import SeriesInfo
from webapp.web.charts import rules as rule_charts
from webapp.web.charts.evidence import figure_embed
from webapp.web.forms.rules import parse_burn_sweep
from webapp.web.htmx import render


def show(rule: AlertRule, candidates: list[SeriesInfo], info: SeriesInfo | None, lazy: bool):
    """The rule's page (``lazy``: the replay follows through htmx) or its replay fragment."""
    replay, problem, sweep_errors = None, None, {}
    if info is None:
        problem = "No stored series matches this rule yet. Import its events, or edit the rule."
    elif not lazy:
        limits = (current_app.config["MAX_SWEEP_LEVELS"], current_app.config["MAX_SWEEP_HOLDS"])
        grid, sweep_errors = parse_burn_sweep(request.args, *limits)
        try:
            replay = run_burn_replay(db.get_session(), rule, info, grid)
        except ValueError as err:
            problem = f"This rule cannot be replayed: {err}."
    return render(
        "rules/show.html",
        "rules/_burn.html",
        lazy=lazy and info is not None,
        rule=rule,
        text=rule_text(rule),
        candidates=candidates,
        info=info,
        replay=replay,
        figures=_figures(replay) if replay else {},
        budget=budget_words(replay) if replay else {},
        problem=problem,
        firings=firing_rows(replay.report.firings) if replay else [],
        sweep_values=_sweep_values(replay, request.args),
        sweep_errors=sweep_errors,
        verdict_warning=OWNER_DECIDES,
        tz=TZ,
    )


def _figures(replay: BurnReplay) -> dict[str, str]:
    report = replay.report
    factors = [w.factor for w in replay.rule.windows]
    figures = {
        "replay": rule_charts.replay_figure(
            replay.values, report.firings, replay.incidents, None, "error ratio", TZ
        ),
        "budget": rule_charts.budget_figure(replay.budget, TZ),
        "rates": rule_charts.burn_rates_figure(replay.rates, factors, TZ),
        "sweep": rule_charts.sweep_figure(replay.sweep, replay.current),
    }
    return {name: figure_embed(fig, f"burn-{name}-figure") for name, fig in figures.items()}


def _sweep_values(replay: BurnReplay | None, args: Mapping[str, str]) -> dict[str, str]:
    """The reader's own text, else the grid the sweep used."""
    if "factors" in args or "pairs" in args:
        return {"factors": args.get("factors", ""), "pairs": args.get("pairs", "")}
    if replay is None:
        return {}
    factors, pairs = replay.grid
    return {
        "factors": ", ".join(f"{f:g}" for f in factors),
        "pairs": ", ".join(f"{short_duration(a)}/{short_duration(b)}" for a, b in pairs),
    }


def budget_words(replay: BurnReplay) -> dict[str, Any]:
    """The last and the highest share of the budget spent, in percent."""
    spent = replay.budget.dropna()
    if spent.empty:
        return {}
    return {"last": 100 * float(spent.iloc[-1]), "peak": 100 * float(spent.max())}
