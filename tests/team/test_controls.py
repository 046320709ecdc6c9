"""Team mode: a screen shows no control the server would refuse.

Every screen reachable by links from the demo's home page (and a few seeded ones) is read as
a viewer, an editor, an admin and without team mode, and every control that would change
something is collected from the HTML: each form posting, each ``formaction`` posting, each
``hx-post``/``hx-put``/``hx-patch``/``hx-delete``, and each link to a new or edit form (a
URL that also takes a POST). A new form on any screen is caught without naming it here.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator
from html.parser import HTMLParser
from urllib.parse import quote, unquote, urlsplit

import pandas as pd
import pytest
from flask import Flask
from flask.testing import FlaskClient
from werkzeug.exceptions import HTTPException

from webapp import create_app
from webapp.demo import build_demo
from webapp.services.demo import load_demo
from webapp.store import db, users
from webapp.store.models import AlertRule, Page, Review
from webapp.web.auth import ADMIN_ENDPOINTS

HX_CHANGES = ("hx-post", "hx-put", "hx-patch", "hx-delete")
SIGN_OUT = "auth.sign_out"
# What an editor must find on the demo's screens: without it a viewer's empty scan proves little.
EDITOR_SEES = {
    "reviews.new", "reviews.edit", "reviews.add_entry", "reviews.delete_entry",
    "reviews.add_fact_entry", "reviews.update_action", "reviews.delete_action",
    "reviews.add_action", "reviews.verdict", "reviews.delete_verdict", "reviews.caption",
    "reviews.move", "reviews.detach", "reviews.attach", "reviews.delete", "rules.new",
    "rules.edit", "rules.carry_verdict", "imports.upload", "incidents.import_list",
    "incidents.delete", "incidents.mark_page", "pages.create", "pages.delete", "explain.save",
    "explain.keep_exclusion", "explain.remove_exclusion", "explain.delete_saved",
}  # fmt: skip


class Controls(HTMLParser):
    """The URLs a page's controls send a change to, and the URLs it links or loads (GET)."""

    def __init__(self) -> None:
        super().__init__()
        self.changes: list[str] = []
        self.links: list[str] = []
        self._form_posts: list[bool] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = {name: value or "" for name, value in attrs}
        if tag == "form":
            posts = a.get("method", "get").lower() == "post"
            self._form_posts.append(posts)
            if posts:
                self.changes.append(a.get("action", ""))
        if "formaction" in a:
            inherited = "post" if self._form_posts and self._form_posts[-1] else "get"
            if a.get("formmethod", inherited).lower() == "post":
                self.changes.append(a["formaction"])
        self.changes += [a[name] for name in HX_CHANGES if name in a]
        if tag == "a" and "href" in a:
            self.links.append(a["href"])
        if "hx-get" in a:
            self.links.append(a["hx-get"])

    def handle_endtag(self, tag: str) -> None:
        if tag == "form" and self._form_posts:
            self._form_posts.pop()


def read_controls(html: str) -> Controls:
    parser = Controls()
    parser.feed(html)
    parser.close()
    return parser


def endpoint_of(app: Flask, url: str, method: str) -> tuple[str, set[str]]:
    """The endpoint a same-site URL reaches, and every method its rule takes."""
    rule, _ = app.url_map.bind("localhost").match(urlsplit(url).path, method, return_rule=True)
    return rule.endpoint, set(rule.methods or ())


def is_screen(app: Flask, url: str) -> bool:
    """A page of this site, not a file, a download or a figure's data."""
    if not url.startswith("/") or url.startswith("//"):
        return False
    try:
        rule, _ = app.url_map.bind("localhost").match(urlsplit(url).path, "GET", return_rule=True)
    except HTTPException:
        return False
    return not (
        rule.endpoint in ("static", "assets.plotly_js")
        or "<fmt>" in rule.rule
        or rule.endpoint.endswith(("_figure", "_facts"))
    )


def scan(client: FlaskClient, seeds: list[str]) -> dict[str, set[str]]:
    """Read every seed and one page of each further screen linked from them; return each
    page's changing endpoints. Every page read must open (200): a link to a refused page
    would be a control the server refuses too."""
    app = client.application
    found: dict[str, set[str]] = {}
    queue = list(seeds)
    seen_endpoints = {endpoint_of(app, url, "GET")[0] for url in seeds}
    while queue:
        url = queue.pop(0)
        response = client.get(url, follow_redirects=True)
        assert response.status_code == 200, (url, response.status_code)
        controls = read_controls(response.text)
        changes = set()
        for target in controls.changes:
            changes.add(endpoint_of(app, target, "POST")[0])
        for link in controls.links:
            if not is_screen(app, link):
                continue
            endpoint, methods = endpoint_of(app, link, "GET")
            if methods & {"POST", "PUT", "PATCH", "DELETE"}:
                changes.add(endpoint)  # the form of a change: new or edit
            elif endpoint not in seen_endpoints:
                seen_endpoints.add(endpoint)
                queue.append(link)
        found[url] = changes
    return found


def everything(found: dict[str, set[str]]) -> set[str]:
    return set().union(*found.values())


@pytest.fixture(scope="module")
def team_demo_template(postgres_server) -> Iterator[str]:
    """The demo scenario in a PostgreSQL database of this module's own (the shared demo
    fixtures follow the two-store parameter, which team mode replaces)."""
    name = postgres_server.create()
    engine = db.make_engine(postgres_server.url_of(name))
    try:
        db.upgrade(engine)
        with db.session_scope(engine) as session:
            load_demo(session, build_demo(seed=7))
    finally:
        engine.dispose()
    yield name
    postgres_server.drop(name)


@pytest.fixture
def demo_url(postgres_server, team_demo_template: str) -> Iterator[str]:
    name = postgres_server.create(template=team_demo_template)
    yield postgres_server.url_of(name)
    postgres_server.drop(name)


@pytest.fixture
def demo_team(demo_url: str) -> Iterator[Flask]:
    """The demo scenario served in team mode."""
    app = create_app({"TESTING": True, "DATABASE_URL": demo_url, "TEAM_MODE": True})
    yield app
    db.get_engine(app).dispose()


@pytest.fixture
def as_role(demo_team: Flask, sign_in, password) -> Callable[[str], FlaskClient]:
    def make(role: str) -> FlaskClient:
        with db.session_scope(db.get_engine(demo_team)) as session:
            users.add_user(session, role, password, role)
        client = demo_team.test_client()
        assert sign_in(client, role).status_code == 302
        return client

    return make


@pytest.fixture
def seeds(demo_team: Flask) -> list[str]:
    """Home, plus the screens that need an id or a query to hold all their controls: a review
    with a verdict and an action item, a threshold rule's replay, an explanation with an
    excluded period typed in."""
    with db.session_scope(db.get_engine(demo_team), write=False) as session:
        review = session.query(Review).filter(Review.page_id.is_not(None)).order_by(Review.id)[0]
        page = session.get(Page, review.page_id)
        rule = session.query(AlertRule).filter_by(kind="threshold").order_by(AlertRule.id)[0]
        urls = [
            "/",
            f"/reviews/{review.id}",
            f"/rules/{rule.id}",
            f"/rules/{rule.id}/replay?series_id={page.series_id}",
            f"/pages/{page.id}/explain",
            "/explanations",
        ]
    return urls


def add_verdict_and_action(client: FlaskClient, csrf_of, seeds: list[str]) -> None:
    """Give the seeded review a verdict and an action item, so their controls show."""
    review_url, rule_id = seeds[1], seeds[2].rsplit("/", 1)[1]
    token = csrf_of(client, review_url)
    verdict = {"csrf_token": token, "alert_rule_id": rule_id, "verdict": "keep"}
    assert client.post(f"{review_url}/verdict", data=verdict).status_code in (302, 303)
    action = {"csrf_token": token, "text": "Raise the pool size", "owner": "ana"}
    assert client.post(f"{review_url}/actions", data=action).status_code in (302, 303)
    seeds.append(with_exclusion(client, seeds[4]))


def with_exclusion(client: FlaskClient, page_url: str) -> str:
    """The Explain URL a page opens, with one hour typed in as excluded, a day before."""
    location = client.get(page_url).headers["Location"]
    start = pd.Timestamp(unquote(re.search(r"start=([^&]+)", location).group(1)))
    first = (start - pd.Timedelta(days=1)).floor("h")
    span = f"{first.isoformat()}/{(first + pd.Timedelta(hours=1)).isoformat()}"
    return f"{location}&exclude={quote(span)}"


def test_the_scan_finds_every_kind_of_changing_control():
    html = """<form method="post" action="/reviews/1/delete">
      <button formaction="/x/1">A</button></form>
    <form method="get" action="/explain"><button formaction="/y" formmethod="post">B</button>
      <button formaction="/z">read only</button></form>
    <button hx-post="/explain/exclusions">C</button><a hx-delete="/pages/2">D</a>
    <a href="/reviews/new">New</a><div hx-get="/rules/3/replay"></div>"""
    controls = read_controls(html)
    expected = ["/reviews/1/delete", "/x/1", "/y", "/explain/exclusions", "/pages/2"]
    assert controls.changes == expected
    assert controls.links == ["/reviews/new", "/rules/3/replay"]


def test_a_viewer_sees_no_control_the_server_would_refuse(as_role, csrf_of, seeds):
    add_verdict_and_action(as_role("editor"), csrf_of, seeds)
    review_url = seeds[1]

    viewer = as_role("viewer")
    found = scan(viewer, seeds)
    assert len(found) > 15, sorted(found)  # the crawl reached the screens
    refused = {url: changes - {SIGN_OUT} for url, changes in found.items() if changes - {SIGN_OUT}}
    assert not refused, refused
    assert SIGN_OUT in found["/"]  # signed in, and signing out stays

    line = "Your account can read but not change this (role: viewer)."
    for url in (review_url, "/imports", "/pages", "/incidents", seeds[3], seeds[-1]):
        assert line in viewer.get(url, follow_redirects=True).text, url
    review = viewer.get(review_url).text
    assert "Raise the pool size" in review and "keep" in review  # still read in full


def test_an_editor_sees_every_change_but_no_admin_control(as_role, csrf_of, seeds):
    editor = as_role("editor")
    add_verdict_and_action(editor, csrf_of, seeds)
    review_url = seeds[1]

    seen = everything(scan(editor, seeds))
    assert seen >= EDITOR_SEES, sorted(EDITOR_SEES - seen)
    assert not seen & ADMIN_ENDPOINTS
    assert "read but not change" not in editor.get(review_url).text

    admin_seen = everything(scan(as_role("admin"), seeds))
    assert admin_seen >= ADMIN_ENDPOINTS
    assert admin_seen == seen | ADMIN_ENDPOINTS


def test_without_team_mode_every_control_is_there(demo_url, csrf_of, seeds):
    local = create_app({"TESTING": True, "DATABASE_URL": demo_url})
    try:
        client = local.test_client()
        add_verdict_and_action(client, csrf_of, seeds)
        seen = everything(scan(client, seeds))
    finally:
        db.get_engine(local).dispose()
    assert seen == EDITOR_SEES | ADMIN_ENDPOINTS


@pytest.mark.parametrize("url", ["/reviews/new", "/rules/new", "/reviews/1/edit", "/rules/1/edit"])
def test_a_viewer_opening_the_form_of_a_change_is_refused(signed_in, url):
    viewer, _ = signed_in("viewer")
    response = viewer.get(url)
    assert response.status_code == 403
    assert "can read but not change this (role: viewer)" in response.text
    if url.endswith("/new"):
        assert signed_in("editor")[0].get(url).status_code == 200
