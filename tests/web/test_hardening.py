"""Host allow-list (DNS rebinding), security headers on every response type, cookies."""

from __future__ import annotations

import html

import pytest
from sqlalchemy import func, select

from webapp import create_app
from webapp.store import db
from webapp.store.models import Review
from webapp.web.security import HEADERS, allowed_hosts, host_name

REVIEW = {"title": "Queue backlog after the deploy", "status": "draft", "severity": "minor"}


def review_count(app) -> int:
    with db.session_scope(db.get_engine(app), write=False) as session:
        return session.scalar(select(func.count()).select_from(Review))


def test_a_foreign_host_is_refused_and_changes_nothing(client, csrf):
    before = review_count(client.application)
    response = client.post(
        "/reviews/new",
        data={"csrf_token": csrf, **REVIEW},
        headers={"Host": "rebound.example:5000"},
    )
    assert response.status_code == 400
    assert "'rebound.example' is not one of them" in html.unescape(response.get_data(as_text=True))
    assert review_count(client.application) == before
    assert client.get("/reviews", headers={"Host": "rebound.example"}).status_code == 400
    # The same request under a loopback name goes through.
    assert client.post("/reviews/new", data={"csrf_token": csrf, **REVIEW}).status_code == 302
    assert review_count(client.application) == before + 1


@pytest.mark.parametrize("host", ["localhost:5000", "127.0.0.1", "[::1]:8080", "LOCALHOST"])
def test_loopback_names_are_answered(client, host):
    assert client.get("/", headers={"Host": host}).status_code == 200


def test_allowed_hosts_extends_the_loopback_names(db_url):
    app = create_app(
        {"TESTING": True, "DATABASE_URL": db_url, "ALLOWED_HOSTS": "whyfired.lan, ops-box"}
    )
    try:
        client = app.test_client()
        assert client.get("/", headers={"Host": "whyfired.lan:5000"}).status_code == 200
        assert client.get("/", headers={"Host": "ops-box"}).status_code == 200
        assert client.get("/", headers={"Host": "elsewhere.lan"}).status_code == 400
    finally:
        db.get_engine(app).dispose()


def test_host_names_are_read_without_port_or_brackets():
    assert host_name("[::1]:5000") == "::1"
    assert host_name("Example.LAN:80") == "example.lan"
    assert allowed_hosts(["a.lan"]) >= {"a.lan", "localhost", "127.0.0.1", "::1"}


def assert_hardened(response) -> None:
    for name, value in HEADERS.items():
        assert response.headers.get(name) == value, name
    policy = response.headers["Content-Security-Policy"]
    assert "frame-ancestors 'none'" in policy
    assert "script-src 'self';" in policy  # no inline script, no eval


def test_every_response_type_carries_the_headers(client, csrf, stored, url_for_explain):
    page = client.get(url_for_explain(stored))
    assert page.status_code == 200 and page.mimetype == "text/html"
    partial = client.get(url_for_explain(stored), headers={"HX-Request": "true"})
    assert partial.status_code == 200 and "<html" not in partial.get_data(as_text=True)
    figure = client.get(url_for_explain(stored).replace("/explain?", "/explain/figure/band?"))
    assert figure.status_code == 200 and figure.mimetype == "application/json"
    created = client.post("/reviews/new", data={"csrf_token": csrf, **REVIEW})
    review_id = created.location.rstrip("/").split("/")[-1]
    export = client.get(f"/reviews/{review_id}/export.html")
    assert export.status_code == 200 and "attachment" in export.headers["Content-Disposition"]
    static = client.get("/static/whyfired.css")
    missing = client.get("/no/such/screen")
    refused = client.post("/pages", data={})
    foreign = client.get("/", headers={"Host": "rebound.example"})
    for response in (page, partial, figure, created, export, static, missing, refused, foreign):
        assert_hardened(response)
    static.close()


def test_the_session_cookie_is_same_site_lax_and_http_only(client):
    response = client.get("/reviews/new")
    cookie = response.headers["Set-Cookie"]
    assert "SameSite=Lax" in cookie and "HttpOnly" in cookie
