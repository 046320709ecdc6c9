"""Team mode: every write records who made it; reviews show their author and last editor."""

from __future__ import annotations

from html import unescape

from webapp.store import audit, db
from webapp.store.models import Import, Review


def test_an_edit_lands_in_the_audit_trail_with_its_author(signed_in, csrf_of):
    ana, token = signed_in("editor")
    form = {"csrf_token": token, "title": "Checkout slowdown", "summary": "First draft."}
    assert ana.post("/reviews/new", data=form).status_code in (302, 303)
    bo, bo_token = signed_in("admin")
    edit = {**form, "csrf_token": bo_token, "summary": "Payment provider slowed down."}
    assert bo.post("/reviews/1/edit", data=edit).status_code in (302, 303)

    with db.session_scope(db.get_engine(ana.application)) as s:
        review = s.get(Review, 1)
        assert (review.created_by, review.updated_by) == ("editor", "admin")
        trail = [e for e in audit.entries(s, "reviews", 1)]
    assert [(e.user_name, e.action) for e in trail][:2] == [
        ("editor", "insert"),
        ("admin", "update"),
    ]
    assert trail[0].changes["summary"] == {"old": None, "new": "First draft."}
    assert trail[1].changes["summary"] == {
        "old": "First draft.",
        "new": "Payment provider slowed down.",
    }
    page = unescape(bo.get("/reviews/1").text)
    assert "Written by editor · last edited by admin" in page


def test_an_import_records_who_made_it(signed_in, small_csv):
    import io

    client, token = signed_in("editor")
    body = {"csrf_token": token, "format": "auto", "tz": "UTC"}
    body["files"] = [(io.BytesIO(small_csv), "latency.csv")]
    assert client.post("/imports", data=body, content_type="multipart/form-data").status_code == 200
    with db.session_scope(db.get_engine(client.application)) as s:
        assert s.get(Import, 1).created_by == "editor"
        entry = audit.entries(s, "imports")[0]
    assert (entry.user_name, entry.action, entry.record_id) == ("editor", "insert", "1")
    assert entry.changes["file_name"] == {"old": None, "new": "latency.csv"}
