"""A review's incident window becomes an excluded period of its series' later baselines,
unless the review switches that off (``excluded.periods_for`` reads the switch)."""

from __future__ import annotations

import pandas as pd

from webapp.store import attachments as store_attachments
from webapp.store import excluded, reviews
from webapp.web.forms import reviews as review_forms

WINDOW = {"incident_start": "2026-11-30T14:00", "incident_end": "2026-11-30T16:00"}
SPAN = (pd.Timestamp("2026-11-30 14:00", tz="UTC"), pd.Timestamp("2026-11-30 16:00", tz="UTC"))


def test_on_by_default_through_the_page(session, make_series, make_page) -> None:
    series = make_series()
    page = make_page(series)
    reviews.create_review(session, {"title": "t", "page_id": str(page.id), **WINDOW,
                                    "exclude_from_baselines": "on"})  # fmt: skip
    assert excluded.periods_for(session, series.id) == [SPAN]


def test_code_callers_get_the_default_on(session, make_series, make_explanation) -> None:
    series = make_series()
    review = reviews.create_review(session, {"title": "t", **WINDOW})
    store_attachments.attach_explanation(session, review, make_explanation(series).id)
    assert review.exclude_from_baselines is True
    assert excluded.periods_for(session, series.id) == [SPAN]


def test_switching_off_and_on_again(session, make_series, make_explanation) -> None:
    series, other = make_series("a"), make_series("b")
    review = reviews.create_review(
        session, {"title": "t", **WINDOW, "exclude_from_baselines": "on"}
    )
    store_attachments.attach_explanation(session, review, make_explanation(series).id)
    session.commit()
    assert excluded.periods_for(session, series.id) == [SPAN]
    assert excluded.periods_for(session, other.id) == []  # only the series it is tied to

    # the box unticked: a browser sends no value for it, only the form's marker
    form = {"title": "t", **WINDOW, review_forms.CHECKBOX_SHOWN: "1"}
    reviews.update_review(session, review, review_forms.review_data(form))
    session.commit()
    assert excluded.periods_for(session, series.id) == []

    reviews.autosave_review(
        session, review, review_forms.review_data(form | {"exclude_from_baselines": "on"})
    )
    session.commit()
    assert excluded.periods_for(session, series.id) == [SPAN]


def test_moving_the_window_moves_the_exclusion(session, make_series, make_page) -> None:
    series = make_series()
    page = make_page(series)
    review = reviews.create_review(session, {"title": "t", "page_id": str(page.id), **WINDOW})
    reviews.update_review(
        session,
        review,
        {"title": "t", "page_id": str(page.id), "exclude_from_baselines": "on",
         "incident_start": "2026-11-30T13:30", "incident_end": "2026-11-30T15:00"},
    )  # fmt: skip
    assert excluded.periods_for(session, series.id) == [
        (pd.Timestamp("2026-11-30 13:30", tz="UTC"), pd.Timestamp("2026-11-30 15:00", tz="UTC"))
    ]
