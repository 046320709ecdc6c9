"""The Reviews screen through Flask's test client, against a real migrated SQLite file."""

from __future__ import annotations

import datetime as dt
import html

import pytest

from webapp.store import attachments as store_attachments
from webapp.store import reviews
from webapp.store import rules as store_rules
from webapp.store import timeline as store_timeline
from webapp.store.models import Review
from webapp.web.forms import reviews as review_forms

FORM = {
    "title": "Checkout latency over the lunch peak",
    "status": "draft",
    "severity": "major",
    "incident_start": "2026-11-30T14:00",
    "incident_end": "2026-11-30T16:00",
    "exclude_from_baselines": "on",
    "summary": "p95 latency **tripled**.",
    "impact": "",
    "trigger": "",
    "root_cause": "A cold cache after the deploy.",
    "detection": "",
    "resolution": "",
    "lessons": "",
}


def post(client, url: str, csrf: str, **data: str):
    return client.post(url, data={"csrf_token": csrf, **data})


@pytest.fixture
def review(session) -> Review:
    row = reviews.create_review(session, FORM)
    session.commit()
    return row


def test_create_lands_on_the_review_with_its_evidence(client, csrf, session) -> None:
    response = post(client, "/reviews/new", csrf, **FORM)
    assert response.status_code == 302
    created = session.query(Review).one()
    assert response.location.endswith(f"/reviews/{created.id}")
    assert created.root_cause == "A cold cache after the deploy."
    landed = client.get(response.location).text
    assert '<section id="evidence">' in landed and "Edit the text" in landed


def test_invalid_create_keeps_every_typed_word(client, csrf, session) -> None:
    typed = FORM | {
        "title": "",
        "incident_end": "2026-11-30T13:00",
        "summary": "A long paragraph <with markup> & ampersands I must not lose.",
    }
    response = post(client, "/reviews/new", csrf, **typed)
    assert response.status_code == 422
    text = html.unescape(response.text)
    assert "A review needs a title." in text
    assert "The incident must end after it starts." in text
    assert "A long paragraph <with markup> & ampersands I must not lose." in text
    assert 'value="2026-11-30T13:00"' in text
    assert "A cold cache after the deploy." in text
    assert session.query(Review).count() == 0


def test_edit_with_an_error_keeps_the_text_and_stores_nothing(client, csrf, review, session):
    typed = FORM | {"summary": "rewritten summary", "incident_start": "not a time"}
    response = post(client, f"/reviews/{review.id}/edit", csrf, **typed)
    assert response.status_code == 422
    assert "rewritten summary" in response.text
    assert "is not a date and time" in html.unescape(response.text)
    session.rollback()
    session.expire_all()
    assert session.get(Review, review.id).summary == "p95 latency **tripled**."


def test_edit_saves(client, csrf, review, session) -> None:
    response = post(client, f"/reviews/{review.id}/edit", csrf, **(FORM | {"lessons": "Warm it"}))
    assert response.status_code == 302
    session.rollback()
    session.expire_all()
    assert session.get(Review, review.id).lessons == "Warm it"


def test_edit_form_has_autosave_wired(client, review) -> None:
    text = client.get(f"/reviews/{review.id}/edit").text
    assert f'hx-post="/reviews/{review.id}/autosave"' in text
    assert 'hx-trigger="keyup changed delay:2s, paste delay:2s, change delay:2s"' in text


def test_autosave_stores_the_draft(client, csrf, review, session) -> None:
    response = post(client, f"/reviews/{review.id}/autosave", csrf, **(FORM | {"impact": "Slow"}))
    assert response.status_code == 200
    assert "Draft saved" in response.text and "impact" in response.text
    session.rollback()
    session.expire_all()
    assert session.get(Review, review.id).impact == "Slow"


def test_autosave_reports_a_bad_field_beside_it_and_keeps_the_rest(
    client, csrf, review, session
) -> None:
    typed = FORM | {"title": "", "impact": "typed during an outage of patience"}
    response = post(client, f"/reviews/{review.id}/autosave", csrf, **typed)
    assert response.status_code == 200
    assert 'id="err-title"' in response.text and 'hx-swap-oob="true"' in response.text
    assert "A review needs a title." in response.text
    session.rollback()
    session.expire_all()
    stored = session.get(Review, review.id)
    assert stored.title == FORM["title"]
    assert stored.impact == "typed during an outage of patience"


def test_show_renders_sanitised_markdown(client, session, review) -> None:
    review.summary = "**bold** <script>alert(1)</script> [x](javascript:alert(1))"
    session.commit()
    text = client.get(f"/reviews/{review.id}").text
    assert "<strong>bold</strong>" in text
    assert "<script>alert(1)</script>" not in text
    assert 'href="javascript:' not in text


def test_unknown_review_is_a_readable_404(client) -> None:
    response = client.get("/reviews/999")
    assert response.status_code == 404
    assert "There is no review #999" in response.text


def test_list_and_search(client, session) -> None:
    reviews.create_review(session, FORM | {"title": "Checkout slowdown"})
    reviews.create_review(
        session, FORM | {"title": "Queue backlog", "root_cause": "stuck consumer"}
    )
    session.commit()
    full = client.get("/reviews")
    assert "Checkout slowdown" in full.text and "Queue backlog" in full.text
    found = client.get("/reviews?q=consumer", headers={"HX-Request": "true"})
    assert "Queue backlog" in found.text and "Checkout slowdown" not in found.text
    assert "<html" not in found.text  # the htmx answer is the list fragment alone
    assert "No review matches" in client.get("/reviews?q=nothing-like-this").text


def test_timeline_entry_errors_keep_the_text(client, csrf, review) -> None:
    response = post(client, f"/reviews/{review.id}/timeline", csrf, at="", text="Rolled back")
    assert response.status_code == 422
    assert "needs a time" in response.text
    assert 'value="Rolled back"' in response.text


def test_timeline_entry_and_one_from_a_fact(client, csrf, review, make_explanation, session):
    exp = make_explanation()
    store_attachments.attach_explanation(session, review, exp.id)
    session.commit()
    exp_id = exp.id
    ok = post(client, f"/reviews/{review.id}/timeline", csrf, at="2026-11-30T14:20", text="Paged")
    assert ok.status_code == 302
    page = client.get(f"/reviews/{review.id}").text
    assert "First outside the expected band" in page  # the fact is offered
    fact = post(
        client,
        f"/reviews/{review.id}/timeline/fact",
        csrf,
        explanation_id=str(exp.id),
        fact="first_outside",
    )
    assert fact.status_code == 302
    session.rollback()
    session.expire_all()
    entries = session.get(Review, review.id).timeline
    assert [e.fact for e in entries] == ["first_outside", None]
    session.commit()  # end the read: the app's next write needs the lock
    bad = post(
        client, f"/reviews/{review.id}/timeline/fact", csrf, explanation_id=str(exp_id), fact="x"
    )
    assert bad.status_code == 422 and "no time fact" in html.unescape(bad.text)


def test_attach_caption_move_detach(client, csrf, review, make_explanation, session) -> None:
    first, second = make_explanation(title="first"), make_explanation(title="second")
    session.commit()
    for exp in (first, second):
        r = post(client, f"/reviews/{review.id}/attachments", csrf, explanation_id=str(exp.id))
        assert r.status_code == 302
    again = post(client, f"/reviews/{review.id}/attachments", csrf, explanation_id=str(first.id))
    assert again.status_code == 422 and "already attached" in again.text
    session.rollback()
    session.expire_all()
    attachments = session.get(Review, review.id).attachments
    second_id = attachments[1].id
    session.commit()  # end the read: the app's next write needs the lock
    assert post(client, f"/reviews/{review.id}/attachments/{second_id}/move", csrf,
                direction="up").status_code == 302  # fmt: skip
    post(client, f"/reviews/{review.id}/attachments/{second_id}/caption", csrf, caption="Band")
    session.rollback()
    session.expire_all()
    attachments = session.get(Review, review.id).attachments
    assert [(a.explanation.title, a.caption) for a in attachments] == [
        ("second", "Band"),
        ("first", ""),
    ]
    session.commit()  # end the read: the app's next write needs the lock
    text = client.get(f"/reviews/{review.id}").text
    assert text.index("2. first") > text.index("1. Band")
    assert text.count('class="js-plotly-plot"') == 0 and text.count('data-figure="band"') == 2
    post(client, f"/reviews/{review.id}/attachments/{second_id}/delete", csrf)
    session.rollback()
    session.expire_all()
    assert [a.explanation.title for a in session.get(Review, review.id).attachments] == ["first"]


def test_action_items(client, csrf, review, session) -> None:
    bad = post(
        client, f"/reviews/{review.id}/actions", csrf, text="Warm the cache", due_date="soon"
    )
    assert bad.status_code == 422
    assert "is not a date" in html.unescape(bad.text) and ">Warm the cache</textarea>" in bad.text
    ok = post(client, f"/reviews/{review.id}/actions", csrf, text="Warm the cache",
              owner="Dana", due_date="2026-12-15")  # fmt: skip
    assert ok.status_code == 302
    session.rollback()
    session.expire_all()
    item = session.get(Review, review.id).action_items[0]
    assert item.due_date == dt.date(2026, 12, 15)
    session.commit()  # end the read: the app's next write needs the lock
    post(client, f"/reviews/{review.id}/actions/{item.id}", csrf, text="Warm it", state="done")
    session.rollback()
    session.expire_all()
    assert session.get(Review, review.id).action_items[0].state == "done"


def test_verdicts_on_two_rules_are_recorded_edited_and_removed(
    client, csrf, review, session, make_series
) -> None:
    series = make_series()
    noisy = store_rules.create_rule(session, name="Noisy p95", series_id=series.id, threshold=5.0)
    quiet = store_rules.create_rule(session, name="Quiet queue", series_id=series.id, threshold=9.0)
    session.commit()
    rid, noisy_id, quiet_id = review.id, noisy.id, quiet.id
    session.commit()  # the ids read above started a transaction: end it
    text = html.unescape(client.get(f"/reviews/{rid}").text)
    assert text.count("Retiring an alert can hide a real failure") == 1
    assert "the service owner and the team's own paging policy decide" in text
    bad = post(client, f"/reviews/{rid}/verdict", csrf, alert_rule_id=str(noisy_id),
               verdict="tune", verdict_parameters="", verdict_rationale="fewer pages")  # fmt: skip
    assert bad.status_code == 422 and "needs its new parameters" in bad.text
    assert "fewer pages" in bad.text
    tuned = {"verdict_parameters": "threshold: 650\nhold: 10min", "verdict_rationale": "r",
             "verdict_evidence": "pages per week: 3.5\nincidents caught: 2"}  # fmt: skip
    ok = post(client, f"/reviews/{rid}/verdict", csrf, alert_rule_id=str(noisy_id),
              verdict="tune", **tuned)  # fmt: skip
    assert ok.status_code == 302
    retired = post(client, f"/reviews/{rid}/verdict", csrf, alert_rule_id=str(quiet_id),
                   verdict="retire", verdict_rationale="never real")  # fmt: skip
    assert retired.status_code == 302
    session.rollback()
    session.expire_all()
    stored = session.get(Review, rid).verdicts
    assert [(v.rule_name, v.decision) for v in stored] == [
        ("Noisy p95", "tune"),
        ("Quiet queue", "retire"),
    ]
    assert stored[0].parameters == {"threshold": 650.0, "hold": "10min"}
    assert stored[0].evidence == {"pages per week": 3.5, "incidents caught": 2.0}
    first, second = stored[0].id, stored[1].id
    session.commit()  # end the read: the app's next write needs the lock
    page = html.unescape(client.get(f"/reviews/{rid}?edit_verdict={first}").text)
    assert f'name="verdict_id" value="{first}"' in page and "pages per week: 3.5" in page
    assert page.count("Retiring an alert can hide a real failure") == 1  # once for every verdict
    edited = post(client, f"/reviews/{rid}/verdict", csrf, verdict_id=str(first),
                  alert_rule_id=str(noisy_id), verdict="keep")  # fmt: skip
    assert edited.status_code == 302
    gone = post(client, f"/reviews/{rid}/verdicts/{second}/delete", csrf)
    assert gone.status_code == 302
    session.rollback()
    session.expire_all()
    stored = session.get(Review, rid).verdicts
    assert [(v.id, v.decision, v.parameters) for v in stored] == [(first, "keep", {})]


def test_exclusion_switch_is_on_the_form(client, review) -> None:
    text = client.get(f"/reviews/{review.id}/edit").text
    assert 'name="exclude_from_baselines" value="on" checked' in text


def test_delete(client, csrf, review, session) -> None:
    review_id = review.id
    assert post(client, f"/reviews/{review_id}/delete", csrf).status_code == 302
    session.rollback()
    session.expire_all()
    assert session.get(Review, review_id) is None


def test_post_without_token_is_refused(client, review) -> None:
    response = client.post(f"/reviews/{review.id}/autosave", data=FORM)
    assert response.status_code == 400


def test_unticking_the_exclusion_box_switches_it_off(client, csrf, review, session) -> None:
    form = {k: v for k, v in FORM.items() if k != "exclude_from_baselines"}
    form[review_forms.CHECKBOX_SHOWN] = "1"  # what the browser sends for an unticked box
    assert post(client, f"/reviews/{review.id}/edit", csrf, **form).status_code == 302
    session.rollback()
    session.expire_all()
    assert session.get(Review, review.id).exclude_from_baselines is False
    assert "kept in later baselines" in client.get(f"/reviews/{review.id}").text


def test_hostile_names_stay_text_on_the_page_and_in_the_export(
    client, review, make_series, make_explanation, session
) -> None:
    hostile = "</script><script>alert(2)</script>"
    exp = make_explanation(make_series(f"queue.depth{{host={hostile}}}"), title=hostile)
    store_attachments.attach_explanation(session, review, exp.id, caption=hostile)
    store_timeline.add_timeline_entry(session, review, "2026-11-30 14:05", hostile)
    session.commit()
    for url in (f"/reviews/{review.id}", f"/reviews/{review.id}/export.html"):
        body = client.get(url).get_data(as_text=True)
        assert "<script>alert(2)" not in body, url
        assert "&lt;script&gt;alert(2)" in body  # shown, as text


def test_new_review_starts_from_a_page_or_an_explanation(
    client, csrf, session, make_series, make_page, make_explanation
) -> None:
    series = make_series()
    page, exp = make_page(series), make_explanation(series)
    session.commit()
    from_page = client.get(f"/reviews/new?page_id={page.id}").text
    assert f'<option value="{page.id}" selected>' in from_page
    assert 'value="2026-11-30 14:00"' in from_page and 'value="2026-11-30 15:00"' in from_page
    from_exp = client.get(f"/reviews/new?explanation_id={exp.id}").text
    assert f'name="explanation_id" value="{exp.id}"' in from_exp
    created = post(client, "/reviews/new", csrf, **(FORM | {"explanation_id": str(exp.id)}))
    assert created.status_code == 302
    session.rollback()
    session.expire_all()
    review = session.query(Review).one()
    assert [a.explanation_id for a in review.attachments] == [exp.id]
