"""Control characters in text: refused with a message naming the field, on both stores."""

from __future__ import annotations

from html import unescape

import pytest

from webapp.store import db
from webapp.store.models import Review, Series


def count(app, model) -> int:
    with app.app_context():
        return db.get_session().query(model).count()


@pytest.mark.parametrize("char", ["\x00", "\x1b", "\x7f"])
def test_a_review_field_with_a_control_character_is_refused_naming_it(client, csrf, char):
    form = {"csrf_token": csrf, "title": "Checkout slowdown", "summary": f"before{char}after"}
    response = client.post("/reviews/new", data=form)
    assert response.status_code == 400
    assert "summary" in response.text and f"U+{ord(char):04X}" in response.text
    assert count(client.application, Review) == 0


def test_tab_newline_and_carriage_return_are_ordinary_text(client, csrf):
    form = {"csrf_token": csrf, "title": "Checkout slowdown", "summary": "a\tb\r\nc"}
    response = client.post("/reviews/new", data=form)
    assert response.status_code in (200, 302, 303)
    assert count(client.application, Review) == 1


def test_a_search_with_nul_gets_a_message_not_an_error_page(client):
    response = client.get("/series?q=api%00")
    assert response.status_code == 400
    assert "'q'" in unescape(response.text) and "U+0000" in response.text


def test_an_imported_label_with_nul_is_refused_with_its_line(client, upload_files):
    body = b"timestamp,metric,host,value\n2026-11-30T00:00:00Z,cpu,api\x003,1.5\n"
    response = upload_files([(body, "labels.csv")])
    text = unescape(response.text)
    assert "labels.csv: not imported" in text and "line 2" in text
    assert "label 'host'" in text and "U+0000" in text
    assert count(client.application, Series) == 0


def test_the_store_refuses_text_that_no_edge_checked(session):
    session.add(Series(key="cpu", metric="cpu", labels={}, unit="m\x00s"))
    with pytest.raises(ValueError, match=r"series\.unit contains a control character \(U\+0000\)"):
        session.flush()
