"""The Imports screen: what was understood, problems with their lines, undo."""

from __future__ import annotations


def test_imports_screen_lists_formats_and_examples(client):
    body = client.get("/imports").get_data(as_text=True)
    assert 'type="file"' in body and "multiple" in body
    for fmt in ("csv-long", "csv-wide", "openmetrics", "parquet"):
        assert f'<option value="{fmt}">' in body
    assert "Example files" in body


def test_upload_reports_series_range_step_and_missing_slots(upload_files, make_csv):
    response = upload_files([(make_csv(weeks=1), "latency.csv")])
    assert response.status_code == 200
    body = response.get_data(as_text=True)
    assert "latency.csv: imported as #1" in body
    assert "checkout.latency_p95{host=api-3}" in body
    assert "2026-11-23 18:00" in body and "2026-11-30 18:00" in body
    assert "<td>5 min</td>" in body
    assert "imported" in body and "Undo" in body
    assert "Values it overwrote are not brought back" in body  # what undo does, said before


def test_several_files_at_once(upload_files, make_csv):
    response = upload_files(
        [(make_csv(weeks=1, host="api-1"), "one.csv"), (make_csv(weeks=1, host="api-2"), "two.csv")]
    )
    body = response.get_data(as_text=True)
    assert "one.csv: imported as #1" in body and "two.csv: imported as #2" in body


def test_bad_file_shows_its_problem_with_the_line(upload_files):
    bad = b"timestamp,metric,value\n2026-11-30T00:00:00Z,m,1\nnot a time,m,2\n"
    response = upload_files([(bad, "bad.csv")])
    assert response.status_code == 400
    body = response.get_data(as_text=True)
    assert "bad.csv: not imported" in body
    assert "line 3" in body
    assert "Nothing from this file reached the store" in body


def test_bad_parquet_names_the_row(upload_files):
    import io

    import pandas as pd

    frame = pd.DataFrame(
        {
            "timestamp": ["2026-11-30T00:00:00Z", "2026-11-30T00:01:00Z", "yesterday"],
            "metric": ["m", "m", "m"],
            "value": [1.0, 2.0, 3.0],
        }
    )
    buffer = io.BytesIO()
    frame.to_parquet(buffer)
    response = upload_files([(buffer.getvalue(), "bad.parquet")])
    assert response.status_code == 400
    body = response.get_data(as_text=True)
    assert "row 3" in body and "line 3" not in body


def test_wrong_file_type_is_refused(upload_files):
    response = upload_files([(b"MZ\x90\x00", "tool.exe")])
    assert response.status_code == 400
    assert "files of this type are not accepted" in response.get_data(as_text=True)


def test_unknown_format_choice_is_a_400(upload_files, make_csv):
    response = upload_files([(make_csv(weeks=1), "a.csv")], format="spreadsheet")
    assert response.status_code == 400
    assert "Unknown format &#39;spreadsheet&#39;" in response.get_data(as_text=True)


def test_unknown_time_zone_is_a_400(upload_files, make_csv):
    response = upload_files([(make_csv(weeks=1), "a.csv")], tz="Mars/Olympus")
    assert response.status_code == 400
    assert "Unknown time zone" in response.get_data(as_text=True)


def test_htmx_upload_answers_with_the_results_fragment(client, csrf, make_csv):
    import io

    response = client.post(
        "/imports",
        data={"csrf_token": csrf, "files": (io.BytesIO(make_csv(weeks=1)), "a.csv")},
        headers={"HX-Request": "true"},
        content_type="multipart/form-data",
    )
    body = response.get_data(as_text=True)
    assert response.status_code == 200
    assert "<html" not in body
    assert 'id="import-list"' in body and 'hx-swap-oob="true"' in body


def test_undo_removes_the_import_and_its_points(client, csrf, stored):
    response = client.post("/imports/1/delete", data={"csrf_token": csrf})
    assert response.status_code == 303
    page = client.get("/imports").get_data(as_text=True)
    assert "undone" in page and "points removed" in page
    assert "Nothing imported yet" in page
    again = client.post("/imports/1/delete", data={"csrf_token": csrf})
    assert again.status_code == 404
    assert "There is no import #1" in again.get_data(as_text=True)


DAY_FIRST = b"timestamp,metric,host,value\n31/12/2026 23:00,checkout.latency_p95,api-1,183\n"


def test_the_form_offers_a_date_order_and_a_unit(client):
    body = client.get("/imports").get_data(as_text=True)
    assert '<select id="date-order" name="date_order">' in body
    assert '<option value="day-first">day first: 31/12/2026</option>' in body
    assert '<input type="text" id="import-unit" name="unit"' in body


def test_day_first_dates_and_a_unit_are_taken_from_the_form(client, upload_files):
    from webapp.store import db
    from webapp.store import series as store_series

    refused = upload_files([(DAY_FIRST, "d.csv")])
    assert refused.status_code == 400
    assert "could be day first or month first" in refused.get_data(as_text=True)
    response = upload_files([(DAY_FIRST, "d.csv")], date_order="day-first", unit="ms")
    assert response.status_code == 200, response.get_data(as_text=True)
    assert "<td>2026-12-31 23:00" in response.get_data(as_text=True)
    with client.application.app_context():
        series = store_series.find_series(db.get_session(), "checkout.latency_p95{host=api-1}")
        assert series.unit == "ms"


def test_unknown_date_order_is_a_400(upload_files):
    response = upload_files([(DAY_FIRST, "d.csv")], date_order="sideways")
    assert response.status_code == 400
    assert "Unknown date order &#39;sideways&#39;" in response.get_data(as_text=True)


def test_a_refused_file_counts_the_problems_not_listed(upload_files):
    rows = b"".join(b"%d,m,oops\n" % (1796025600 + 60 * i) for i in range(3000))
    response = upload_files([(b"timestamp,metric,value\n" + rows, "bad.csv")])
    assert response.status_code == 400
    body = response.get_data(as_text=True)
    assert body.count("is not a number") == 20
    assert "<li>… and 2,980 more problems not listed</li>" in body
