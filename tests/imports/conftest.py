from pathlib import Path

import pytest

from webapp.imports import ImportRejected, parse_bytes

EXAMPLES = Path(__file__).resolve().parents[2] / "static" / "examples"


@pytest.fixture(scope="session")
def examples() -> Path:
    return EXAMPLES


def _rejected(text: str | bytes, name: str = "upload.csv", **options) -> list[str]:
    data = text.encode() if isinstance(text, str) else text
    with pytest.raises(ImportRejected) as caught:
        parse_bytes(data, name, **options)
    more = [caught.value.more] if caught.value.more else []
    return [str(p) for p in caught.value.problems] + more


def _points(parsed) -> dict[tuple[str, int], float]:
    table = parsed.table
    keys = zip(table["series_key"].tolist(), table["ts_utc"].tolist(), strict=True)
    return dict(zip(keys, table["value"].tolist(), strict=True))


@pytest.fixture(scope="session")
def rejected():
    """Parse bytes that must be refused; returns the problems as the user reads them."""
    return _rejected


@pytest.fixture(scope="session")
def points():
    """A ParsedImport's points as {(series_key, ts_utc): value}."""
    return _points
