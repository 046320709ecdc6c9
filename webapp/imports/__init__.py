"""Importers: a metric export in, a normalised long table out.

No database code here: the store takes a ParsedImport and writes it in one transaction.
"""

from webapp._lazy import lazy_exports

_EXPORTS = {
    "._api": ("parse_bytes", "parse_file"),
    "._detect": ("detect_format",),
    ".formats": ("EXAMPLE_FILES", "FORMATS"),
    "._types": ("ImportRejected", "ParsedImport", "Problem", "SeriesMeta"),
    ".keys": ("parse_series_key", "series_key"),
}

__all__, __getattr__, __dir__ = lazy_exports(globals(), _EXPORTS)
