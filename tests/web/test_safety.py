"""CSRF, upload limits, readable errors and escaping."""

from __future__ import annotations

import io

import pytest

from webapp import create_app


def test_post_without_csrf_token_is_refused(client):
    response = client.post("/pages", data={"series": "1", "fired_at": "2026-11-30T10:00"})
    assert response.status_code == 400
    body = response.get_data(as_text=True)
    assert "security token is missing or out of date" in body
    assert "Traceback" not in body


def test_post_with_a_wrong_csrf_token_is_refused(client, csrf):
    response = client.post("/pages", data={"csrf_token": "not-the-token", "series": "1"})
    assert response.status_code == 400
    assert "security token" in response.get_data(as_text=True)


def test_htmx_request_may_send_the_token_as_a_header(client, csrf):
    response = client.post(
        "/imports", headers={"X-CSRF-Token": csrf, "HX-Request": "true"}, data={}
    )
    # Past the CSRF check: refused for having no file, as a fragment (no page layout).
    assert response.status_code == 400
    body = response.get_data(as_text=True)
    assert "Choose at least one file" in body
    assert "<html" not in body


def test_the_page_layout_sets_the_htmx_csrf_header(client, csrf):
    body = client.get("/").get_data(as_text=True)
    assert f'hx-headers=\'{{"X-CSRF-Token": "{csrf}"}}\'' in body


def test_unknown_address_gets_a_readable_404(client):
    response = client.get("/no/such/screen")
    assert response.status_code == 404
    body = response.get_data(as_text=True)
    assert "Not found" in body and "Back to the start" in body


@pytest.fixture
def small_limit_app(db_url):
    return create_app({"TESTING": True, "DATABASE_URL": db_url, "MAX_IMPORT_MB": 1})


def test_oversized_upload_gets_a_readable_413(small_limit_app):
    client = small_limit_app.test_client()
    with client.session_transaction() as session:
        session["csrf_token"] = "t"
    big = io.BytesIO(b"timestamp,metric,value\n" + b"2026-11-30T00:00:00Z,m,1\n" * 60_000)
    response = client.post(
        "/imports",
        data={"csrf_token": "t", "files": (big, "big.csv")},
        content_type="multipart/form-data",
    )
    assert response.status_code == 413
    body = response.get_data(as_text=True)
    assert "Uploads of up to 1 MB are accepted" in body


def test_user_strings_are_escaped(client, csrf, upload_files, make_csv):
    hostile = "<script>alert(1)</script>"
    response = upload_files([(make_csv(weeks=1, host=hostile), f"{hostile}.csv")])
    assert response.status_code == 200
    for body in (response.get_data(as_text=True), client.get("/series").get_data(as_text=True)):
        assert hostile not in body
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in body


def test_unexpected_error_is_a_readable_500(app, client, monkeypatch):
    from webapp.web.views import home

    def broken(session):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(home, "store_counts", broken)
    app.config["PROPAGATE_EXCEPTIONS"] = False
    response = client.get("/")
    assert response.status_code == 500
    body = response.get_data(as_text=True)
    assert "unexpected error" in body
    assert "disk on fire" not in body and "Traceback" not in body


def test_plotly_js_is_served_locally_and_cached(client):
    from webapp.web.assets import plotly_version

    response = client.get(f"/assets/plotly-{plotly_version()}.min.js")
    assert response.status_code == 200
    assert response.mimetype == "text/javascript"
    assert "max-age=604800" in response.headers["Cache-Control"]
    assert len(response.data) > 1_000_000


def test_vendored_htmx_is_pinned_with_its_licence(client):
    js = client.get("/static/vendor/htmx/htmx.min.js")
    licence = client.get("/static/vendor/htmx/LICENSE")
    assert js.status_code == 200 and b"htmx" in js.data
    assert licence.status_code == 200 and b"Permission" in licence.data


def test_hostile_series_key_cannot_break_out_of_the_figure_json(
    client, csrf, upload_files, make_csv, url_for_explain
):
    hostile = "</script><script>alert(2)</script>"
    assert upload_files([(make_csv(weeks=2, host=hostile), "h.csv")]).status_code == 200
    body = client.get(url_for_explain(1)).get_data(as_text=True)
    assert "<script>alert(2)" not in body
    assert "\\u003cscript\\u003ealert(2)" in body  # escaped inside the figure JSON
