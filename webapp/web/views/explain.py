"""The Explain screen: one series around one window, live; and saved explanations, frozen."""

from __future__ import annotations

import contextlib
from dataclasses import dataclass, replace
from typing import Any

import pandas as pd
from flask import Blueprint, Response, abort, current_app, jsonify, redirect, request, url_for
from werkzeug.wrappers import Response as WerkzeugResponse

from webapp.services import explain as ev
from webapp.store import db
from webapp.web.charts import evidence as panels
from webapp.web.charts.explain import from_wall_clock
from webapp.web.downloads import check_format, download
from webapp.web.forms.params import (
    ExplainQuery,
    Span,
    bad_request,
    parse_int,
    parse_spans,
    parse_tz,
    read_query,
)
from webapp.web.htmx import is_htmx, render

bp = Blueprint("explain", __name__)

DEFAULT_WINDOW = pd.Timedelta(days=1)


def load_series(series_id: int | None) -> Any:
    """The series row, or 404 saying which series is unknown."""
    from webapp.store import series as store_series

    row = store_series.get_series(db.get_session(), series_id) if series_id is not None else None
    if row is None:
        abort(404, description=f"There is no series #{series_id}. Pick one from the Series list.")
    return row


def default_window(series: Any) -> Span | None:
    """The last day of the series' data."""
    if series.last_ts is None:
        return None
    end = pd.Timestamp(int(series.last_ts), unit="ms", tz="UTC")
    return end - DEFAULT_WINDOW, end


def stored_exclusions(series_id: int) -> list[Span]:
    from webapp.store import excluded

    return [
        (pd.Timestamp(s), pd.Timestamp(e))
        for s, e in excluded.periods_for(db.get_session(), series_id)
    ]


@dataclass(frozen=True)
class StoredExclusion:
    """One line of the Exclusions panel's stored list: an excluded_periods row (which the
    panel can remove) or a review's incident window (which only that review switches off)."""

    span: Span
    excluded_id: int | None = None
    every_series: bool = False
    reason: str = ""
    review_id: int | None = None


def stored_list(series_id: int) -> list[StoredExclusion]:
    """The stored spans left out of this series' baselines, unmerged, by start."""
    from webapp.analysis.times import to_utc
    from webapp.store import excluded

    session = db.get_session()
    rows = [
        StoredExclusion(
            span=(to_utc(row.start), to_utc(row.end)),
            excluded_id=row.id,
            every_series=row.series_id is None,
            reason=row.reason or "",
        )
        for row in excluded.list_excluded(session, series_id)
    ]
    rows.extend(
        StoredExclusion(span=span, review_id=review_id)
        for review_id, span in excluded.review_windows(session, series_id)
    )
    return sorted(rows, key=lambda item: (item.span, item.review_id or 0))


def page_marks(page_id: int | None) -> list[tuple[pd.Timestamp, str]]:
    if page_id is None:
        return []
    from webapp.store import pages

    page = pages.get_page(db.get_session(), page_id)
    if page is None:
        return []
    marks = [(pd.Timestamp(page.fired_at), "page fired")]
    if page.resolved_at is not None:
        marks.append((pd.Timestamp(page.resolved_at), "resolved"))
    return marks


def peers_panel_url(series: Any, query: ExplainQuery) -> str | None:
    """Where the Explain screen loads the Peers panel from; None when there are no peers."""
    if ev.find_peers(db.get_session(), series) is None:
        return None
    return url_for("peers.panel", **query.args())


SECOND_CHOICES = 500


def second_choices() -> list[Any]:
    """The stored series offered as a second series over the band (the first so many)."""
    from webapp.store import series as store_series

    return store_series.list_series(db.get_session(), limit=SECOND_CHOICES)


def screening_url(query: ExplainQuery) -> str:
    """The Screening screen over the same window and parameters."""
    args = {k: v for k, v in query.args().items() if k not in ("series", "exclude")}
    return url_for("screening.index", **args)


def current_query(args: Any) -> tuple[Any, ExplainQuery]:
    series = load_series(parse_int(args.get("series"), "series number"))
    if series.last_ts is None:
        bad_request(f"The series {series.key} has no points yet; import some data first.")
    query = read_query(args, series.id, default_window(series), current_app.config)
    return series, query


def live(series: Any, query: ExplainQuery) -> ev.Evidence:
    evidence = ev.live_evidence(db.get_session(), series, query, stored_exclusions(series.id))
    evidence.marks = page_marks(query.page_id)
    return evidence


def chooser() -> str:
    from webapp.store import pages
    from webapp.store import series as store_series

    session = db.get_session()
    series_list = store_series.list_series(session)
    from webapp.services.aggregates import HOW, metrics_with_fleets

    return render(
        "explain/choose.html",
        "explain/choose.html",
        metrics=metrics_with_fleets(session),
        hows=HOW,
        series_list=series_list,
        keys={s.id: s.key for s in series_list},
        pages=pages.list_pages(session)[:20],
        tz=parse_tz(request.args.get("tz")),
    )


@bp.get("/explain")
def index() -> str | Response:
    if not request.args.get("series"):
        return chooser()
    series, query = current_query(request.args)
    return explain_page(series, query)


def explain_page(series: Any, query: ExplainQuery) -> Response:
    """The live Explain page, or for htmx its results with the Exclusions panel out of band."""
    evidence = live(series, query)
    html = render(
        "explain/index.html",
        "explain/_results.html",
        series=series,
        query=query,
        evidence=evidence,
        panels=panels.build_panels(evidence),
        stored=stored_list(series.id),
        fine=lambda name: url_for("explain.live_figure", name=name, **query.args()),
        facts_url=url_for("explain.live_facts", **query.args()),
        peers_url=peers_panel_url(series, query),
        screening_url=screening_url(query),
        second_choices=second_choices(),
    )
    # The address bar shows the canonical query (a period just added appears as exclude=).
    return Response(html, headers={"HX-Push-Url": url_for("explain.index", **query.args())})


def view_from_args(tz: str) -> Span | None:
    """The zoomed range the browser asks for (plotly's wall-clock strings in ``tz``)."""
    start, end = request.args.get("from"), request.args.get("to")
    if not start or not end:
        return None
    try:
        view = from_wall_clock(start, tz), from_wall_clock(end, tz)
    except ValueError:
        bad_request(f"The range {start!r} to {end!r} is not a pair of times.")
    if view[0] >= view[1]:
        bad_request("The range must start before it ends.")
    return view


def figure_response(evidence: ev.Evidence, name: str) -> Response:
    if name not in panels.PANELS:
        abort(404, description=f"There is no figure called {name!r}.")
    view = view_from_args(evidence.tz)
    try:
        fig = panels.build_figure(evidence, name, view=view)
    except ValueError as error:
        return jsonify(error=str(error)), 422
    return Response(panels.figure_json(fig), mimetype="application/json")


@bp.get("/explain/figure/<name>")
def live_figure(name: str) -> Response:
    series, query = current_query(request.args)
    return figure_response(live(series, query), name)


def aggregate_request() -> tuple[str, str, ExplainQuery, ev.Evidence]:
    """The aggregate the request asks for and its evidence; 400 with a message when it
    cannot be made."""
    from webapp.services import aggregates
    from webapp.services.screening import everywhere_excluded

    metric = (request.args.get("metric") or "").strip()
    how = (request.args.get("how") or "p95").strip()
    if not metric:
        bad_request("Choose the metric whose series to combine.")
    query = read_query(request.args, 0, None, current_app.config)
    exclude = [*query.exclude, *everywhere_excluded(db.get_session())]
    try:
        evidence = aggregates.aggregate_evidence(db.get_session(), metric, how, query, exclude)
    except ValueError as error:
        bad_request(str(error))
    return metric, how, query, evidence


@bp.get("/explain/aggregate")
def aggregate_page() -> str:
    """A fleet aggregate (sum, mean, p50, p95 or max of a metric's series) explained like
    any series, computed on the fly."""
    from webapp.services import aggregates

    metric, how, query, evidence = aggregate_request()
    return render(
        "explain/aggregate.html",
        "explain/aggregate.html",
        metric=metric,
        how=how,
        hows=aggregates.HOW,
        metrics=aggregates.metrics_with_fleets(db.get_session()),
        query=query,
        evidence=evidence,
        panels=panels.build_panels(evidence),
        fine=None,
        data_args={**query.args(), "metric": metric, "how": how},
    )


@bp.get("/explain/aggregate/data.<fmt>")
def aggregate_data(fmt: str) -> Response:
    """The aggregate's explanation frame with its parameters, as CSV or JSON."""
    check_format(fmt)
    metric, how, _, evidence = aggregate_request()
    if evidence.explanation is None:
        bad_request(evidence.errors.get("explain", "There is nothing to download."))
    extra = {"aggregate": how, "metric": metric}
    return download(evidence.explanation, fmt, f"aggregate-{how}", extra)


@bp.get("/explain/data.<fmt>")
def live_data(fmt: str) -> Response:
    """The live explanation's frame with its parameters, as CSV or JSON."""
    check_format(fmt)
    series, query = current_query(request.args)
    evidence = live(series, query)
    if evidence.explanation is None:
        bad_request(evidence.errors.get("explain", "There is nothing to download."))
    return download(evidence.explanation, fmt, f"explanation-{series.id}")


def facts_download(evidence: ev.Evidence, name: str) -> Response:
    """The facts with their raw keys, as a JSON file."""
    response = jsonify(evidence.facts or {})
    response.headers["Content-Disposition"] = f'attachment; filename="{name}.json"'
    return response


@bp.get("/explain/facts.json")
def live_facts() -> Response:
    series, query = current_query(request.args)
    return facts_download(live(series, query), f"facts-series-{series.id}")


@bp.post("/explain/save")
def save() -> WerkzeugResponse:
    from webapp.services.screening import extras_to_freeze
    from webapp.store import explanations

    with db.reading_phase():  # the analysis runs without holding the write lock
        series, query = current_query(request.form)
        evidence = live(series, query)
        if evidence.explanation is None:
            bad_request(evidence.errors.get("explain", "There is nothing to save."))
        extras = extras_to_freeze(
            db.get_session(),
            series,
            query,
            [*query.exclude, *stored_exclusions(series.id)],
            screen_too=request.form.get("with_screening") == "on",
        )
    title = (request.form.get("title") or "").strip()[:300] or f"{series.key} around the window"
    session = db.get_session()
    row = explanations.save_explanation(
        session,
        evidence.explanation,
        series.id,
        overlay=evidence.overlay,
        title=title,
        page_id=query.page_id,
        peers=extras.peers,
        screening=extras.screening,
    )
    session.commit()
    target = url_for("explain.saved", explanation_id=row.id)
    if is_htmx():
        return Response(status=204, headers={"HX-Redirect": target})
    return redirect(target, code=303)


@bp.post("/explain/exclusions")
def keep_exclusion() -> WerkzeugResponse:
    """Store one of the view's ad-hoc excluded periods, so every baseline leaves it out."""
    from webapp.store import excluded

    series, query = current_query(request.form)
    spans = parse_spans([request.form.get("keep") or ""], query.tz)
    if not spans:
        bad_request("Say which excluded period to keep, written START/END.")
    span = spans[0]
    reason = (request.form.get("reason") or "").strip()[:500] or "left out from the Explain screen"
    session = db.get_session()
    excluded.add_excluded(session, series.id, span[0], span[1], reason)
    session.commit()
    remaining = tuple(s for s in query.exclude if s != span)
    target = url_for("explain.index", **replace(query, exclude=remaining).args())
    if is_htmx():
        return Response(status=204, headers={"HX-Redirect": target})
    return redirect(target, code=303)


@bp.post("/explain/exclusions/<int:excluded_id>/remove")
def remove_exclusion(excluded_id: int) -> WerkzeugResponse:
    """Delete one stored excluded period of this series (or of every series), so that span
    teaches the band again; htmx gets the recomputed results in place."""
    from webapp.store import excluded

    series, query = current_query(request.form)
    session = db.get_session()
    row = next((r for r in excluded.list_excluded(session, series.id) if r.id == excluded_id), None)
    if row is None:
        abort(
            404,
            description=f"There is no stored excluded period #{excluded_id} for {series.key}; "
            "it may have been removed already. Reload the page to see the current list.",
        )
    excluded.delete_excluded(session, row.id)
    session.commit()
    if is_htmx():
        return explain_page(series, query)
    return redirect(url_for("explain.index", **query.args()), code=303)


def load_saved(explanation_id: int) -> Any:
    from webapp.store import explanations

    row = explanations.get_explanation(db.get_session(), explanation_id)
    if row is None:
        abort(404, description=f"There is no saved explanation #{explanation_id}.")
    return row


def frozen(row: Any) -> ev.Evidence:
    from webapp.store import series as store_series

    series = store_series.get_series(db.get_session(), row.series_id) if row.series_id else None
    unit = row.parameters.get("unit") or (series.unit if series is not None else None)
    evidence = ev.frozen_evidence(row, unit)
    evidence.marks = page_marks(row.page_id)
    return evidence


@bp.get("/explanations")
def saved_list() -> str:
    from webapp.store import explanations

    series_id = parse_int(request.args.get("series"), "series number")
    rows = explanations.list_explanations(db.get_session(), series_id=series_id)
    return render("explain/saved_list.html", "explain/saved_list.html", rows=rows)


@bp.get("/explanations/<int:explanation_id>")
def saved(explanation_id: int) -> str:
    row = load_saved(explanation_id)
    evidence = frozen(row)
    return render(
        "explain/saved.html",
        "explain/saved.html",
        row=row,
        again=again_args(row, evidence.tz),
        evidence=evidence,
        panels=panels.build_panels(evidence),
        fine=lambda name: url_for("explain.saved_figure", explanation_id=row.id, name=name),
        facts_url=url_for("explain.saved_facts", explanation_id=row.id),
    )


def again_args(row: Any, tz: str) -> dict[str, Any] | None:
    """The live Explain query closest to a saved explanation's parameters."""
    if row.series_id is None:
        return None
    params = row.parameters or {}
    args: dict[str, Any] = {
        "series": row.series_id,
        "start": row.window_start.isoformat(),
        "end": row.window_end.isoformat(),
        "tz": tz,
    }
    if params.get("tolerance") is not None:
        args["tolerance"] = params["tolerance"]
    with contextlib.suppress(KeyError, ValueError, TypeError):
        weeks = float(params["history_seconds"]) / (7 * 86400)
        args["weeks"] = max(1, min(8, round(weeks)))
    with contextlib.suppress(KeyError, ValueError, TypeError):
        args["exclude"] = [f"{start}/{end}" for start, end in params["exclude"]]
    if row.page_id is not None:
        args["page"] = row.page_id
    return args


@bp.get("/explanations/<int:explanation_id>/figure/<name>")
def saved_figure(explanation_id: int, name: str) -> Response:
    return figure_response(frozen(load_saved(explanation_id)), name)


@bp.get("/explanations/<int:explanation_id>/data.<fmt>")
def saved_data(explanation_id: int, fmt: str) -> Response:
    """A saved explanation's stored frame with everything saved beside it, as CSV or JSON."""
    check_format(fmt)
    row = load_saved(explanation_id)
    evidence = frozen(row)
    if evidence.frame is None:
        bad_request(evidence.errors.get("explain", "The stored frame cannot be read."))
    frame = evidence.frame.rename_axis("time")
    return download(frame, fmt, f"explanation-{row.id}", ev.saved_header(row))


@bp.get("/explanations/<int:explanation_id>/facts.json")
def saved_facts(explanation_id: int) -> Response:
    return facts_download(frozen(load_saved(explanation_id)), f"facts-explanation-{explanation_id}")


@bp.post("/explanations/<int:explanation_id>/delete")
def delete_saved(explanation_id: int) -> WerkzeugResponse:
    from webapp.store import explanations

    row = load_saved(explanation_id)
    session = db.get_session()
    explanations.delete_explanation(session, row.id)
    session.commit()
    return redirect(url_for("explain.saved_list"), code=303)
