"""The Imports screen in a browser: drag and drop, the size check before sending, the
keyboard, and undo. The file is a few invented rows written in the test."""

from __future__ import annotations

import pytest

pytestmark = pytest.mark.browser

CSV = "timestamp,metric,host,value\n" + "".join(
    f"2026-11-30T10:{m:02d}:00Z,queue.depth,q-1,{10 + m % 7}\n" for m in range(60)
)

DROP = """(text) => {
    const transfer = new DataTransfer();
    transfer.items.add(new File([text], 'dropped.csv', {type: 'text/csv'}));
    const zone = document.getElementById('dropzone');
    zone.dispatchEvent(new DragEvent('dragover', {dataTransfer: transfer, bubbles: true}));
    zone.dispatchEvent(new DragEvent('drop', {dataTransfer: transfer, bubbles: true}));
    return document.getElementById('files').files.length;
}"""


def test_drop_a_file_then_undo_it(live_server, page, screenshot):
    page.goto(live_server.at("/imports"))
    assert page.evaluate(DROP, CSV) == 1
    page.click("button:text('Import')")
    page.wait_for_selector("#import-results h2:has-text('dropped.csv: imported as #1')")
    assert page.locator("#import-results td.key").inner_text() == "queue.depth{host=q-1}"
    screenshot(page, "dropped")
    page.click("button[aria-label='Undo import 1 (dropped.csv)']")
    page.wait_for_selector("text=Import #1 (dropped.csv) undone: 60 points removed.")
    assert page.locator("#import-list").inner_text().count("Nothing imported yet") == 1


def test_too_large_upload_is_refused_before_sending(live_server, page):
    page.goto(live_server.at("/imports"))
    page.evaluate("() => { document.getElementById('upload-form').dataset.maxBytes = '100'; }")
    page.evaluate(DROP, CSV)
    page.click("button:text('Import')")
    note = page.locator("#import-results .notice-error")
    note.wait_for()
    assert "uploads of up to" in note.inner_text()


def test_keyboard_reaches_the_picker_and_the_button(
    live_server, page, keyboard_reaches, unlabelled
):
    page.goto(live_server.at("/imports"))
    page.focus("body")
    assert keyboard_reaches(page, "#files")
    assert keyboard_reaches(page, "#format")
    assert keyboard_reaches(page, "#upload-form button[type=submit]")
    assert unlabelled(page) == []
