"""The formats whyfired reads, and one example file of each: plain constants, so the
command line can offer them without loading the parsers."""

from __future__ import annotations

FORMATS: tuple[str, ...] = (
    "csv-long",
    "csv-wide",
    "json-records",
    "json-series",
    "openmetrics",
    "parquet",
)
EXAMPLE_FILES: dict[str, str] = {
    "csv-long": "example-csv-long.csv",
    "csv-wide": "example-csv-wide.csv",
    "json-records": "example-json-records.json",
    "json-series": "example-json-series.json",
    "openmetrics": "example-openmetrics.txt",
    "parquet": "example-parquet.parquet",
}
"""One small file per format in static/examples/ (described in its README.md)."""
