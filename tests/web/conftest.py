"""Web fixtures: a store holding synthetic series, filled through the Imports screen (the
CSRF token fixture is the shared one in tests/conftest.py)."""

from __future__ import annotations

import io
from collections.abc import Callable

import numpy as np
import pandas as pd
import pytest
from flask.testing import FlaskClient

SERIES_KEY = "checkout.latency_p95{host=api-3}"
END = pd.Timestamp("2026-11-30 18:00", tz="UTC")
WINDOW = (END - pd.Timedelta(hours=6), END)


def synthetic_csv(
    weeks: int = 3, step: str = "5min", host: str = "api-3", spike: float = 80.0, seed: int = 3
) -> bytes:
    """Invented latency with a daily cycle, noise, and a jump in the last three hours."""
    rng = np.random.default_rng(seed)
    index = pd.date_range(END - pd.Timedelta(weeks=weeks), END, freq=step)
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    value = 120 + 25 * np.sin(2 * np.pi * hours / 24) + rng.normal(0, 3, len(index))
    value[index > END - pd.Timedelta(hours=3)] += spike
    frame = pd.DataFrame(
        {
            "timestamp": index.strftime("%Y-%m-%dT%H:%M:%SZ"),
            "metric": "checkout.latency_p95",
            "host": host,
            "value": value.round(3),
        }
    )
    return frame.to_csv(index=False).encode()


def upload(client: FlaskClient, token: str, files: list[tuple[bytes, str]], **form: str):
    data = {"csrf_token": form.pop("csrf_token", token), "format": "auto", "tz": "UTC", **form}
    data["files"] = [(io.BytesIO(body), name) for body, name in files]
    return client.post("/imports", data=data, content_type="multipart/form-data")


@pytest.fixture
def upload_files(client: FlaskClient, csrf: str) -> Callable:
    return lambda files, **form: upload(client, csrf, files, **form)


@pytest.fixture
def stored(client: FlaskClient, csrf: str) -> int:
    """Three weeks of 5-minute synthetic latency imported through the Imports screen;
    returns the series id."""
    response = upload(client, csrf, [(synthetic_csv(), "latency.csv")])
    assert response.status_code == 200, response.get_data(as_text=True)
    from webapp.store import db
    from webapp.store import series as store_series

    with client.application.app_context():
        return store_series.find_series(db.get_session(), SERIES_KEY).id


def explain_url(series_id: int, **extra: object) -> str:
    from urllib.parse import urlencode

    args = {
        "series": series_id,
        "start": WINDOW[0].isoformat(),
        "end": WINDOW[1].isoformat(),
        **extra,
    }
    return "/explain?" + urlencode(args, doseq=True)


@pytest.fixture
def make_csv() -> Callable[..., bytes]:
    return synthetic_csv


@pytest.fixture
def url_for_explain() -> Callable[..., str]:
    return explain_url


@pytest.fixture
def window() -> tuple[pd.Timestamp, pd.Timestamp]:
    return WINDOW
