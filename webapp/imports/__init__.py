"""Importers: a metric export in, a normalised long table out.

No database code here: the store takes a ParsedImport and writes it in one transaction.
"""

from webapp.imports._api import parse_bytes, parse_file
from webapp.imports._detect import EXAMPLE_FILES, FORMATS, detect_format
from webapp.imports._types import ImportRejected, ParsedImport, Problem, SeriesMeta
from webapp.imports.keys import parse_series_key, series_key

__all__ = [
    "EXAMPLE_FILES",
    "FORMATS",
    "ImportRejected",
    "ParsedImport",
    "Problem",
    "SeriesMeta",
    "detect_format",
    "parse_bytes",
    "parse_file",
    "parse_series_key",
    "series_key",
]
