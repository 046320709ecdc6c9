"""Team mode: nobody gets in without signing in, viewers only read, admins alone undo."""

from __future__ import annotations

import re
from html import unescape

from werkzeug.routing import Rule

from webapp.store import db
from webapp.store.models import Import, Review


def changing_routes(app) -> list[str]:
    """A URL for every route that accepts a state-changing method (ids filled with 1)."""
    urls = []
    for rule in app.url_map.iter_rules():
        if not (rule.methods or set()) & {"POST", "PUT", "PATCH", "DELETE"}:
            continue
        urls.append(_url(rule))
    return urls


def _url(rule: Rule) -> str:
    return re.sub(r"<(?:[^:>]+:)?[^>]+>", "1", rule.rule)


def count(app, model) -> int:
    with db.session_scope(db.get_engine(app)) as s:
        return s.query(model).count()


def test_every_changing_route_refuses_an_anonymous_request(team_app):
    client = team_app.test_client()
    urls = [u for u in changing_routes(team_app) if u not in ("/sign-in", "/sign-out")]
    assert "/reviews/new" in urls and "/imports/1/delete" in urls and len(urls) > 20
    for url in urls:
        response = client.post(url, data={"title": "anonymous"})
        assert response.status_code == 401, (url, response.status_code)
    assert count(team_app, Review) == 0


def test_pages_send_an_anonymous_reader_to_sign_in_and_back(team_app, add_user, sign_in):
    client = team_app.test_client()
    response = client.get("/reviews?q=x")
    assert response.status_code == 302
    assert response.headers["Location"].startswith("/sign-in?next=")
    assert client.get("/static/whyfired.css").status_code == 200
    add_user("ana", "viewer")
    token_page = client.get(response.headers["Location"])
    assert 'name="next" value="/reviews?q=x"' in token_page.text
    signed = sign_in(client, "ana")
    assert signed.status_code == 302
    assert client.get("/reviews").status_code == 200


def test_a_viewer_reads_but_cannot_change_anything(signed_in):
    client, token = signed_in("viewer")
    assert client.get("/reviews").status_code == 200
    for url in changing_routes(client.application):
        if url in ("/sign-in", "/sign-out"):
            continue
        response = client.post(url, data={"csrf_token": token, "title": "by a viewer"})
        assert response.status_code == 403, (url, response.status_code)
    assert "role: viewer" in unescape(response.text)
    assert count(client.application, Review) == 0


def test_an_editor_writes_but_only_an_admin_undoes_an_import(signed_in, small_csv):
    import io

    editor, token = signed_in("editor")
    body = {"csrf_token": token, "format": "auto", "tz": "UTC"}
    body["files"] = [(io.BytesIO(small_csv), "latency.csv")]
    assert editor.post("/imports", data=body, content_type="multipart/form-data").status_code == 200
    assert count(editor.application, Import) == 1
    listing = editor.get("/imports").text
    assert "an admin can undo" in listing and "by editor" in listing
    assert 'action="/imports/1/delete"' not in listing
    assert editor.post("/imports/1/delete", data={"csrf_token": token}).status_code == 403
    assert count(editor.application, Import) == 1
    admin, admin_token = signed_in("admin")
    assert 'action="/imports/1/delete"' in admin.get("/imports").text
    assert admin.post("/imports/1/delete", data={"csrf_token": admin_token}).status_code == 303
    assert count(editor.application, Import) == 0


def test_signing_out_ends_the_session(signed_in):
    client, token = signed_in("editor")
    assert client.post("/sign-out", data={"csrf_token": token}).status_code == 302
    assert client.get("/reviews").status_code == 302
