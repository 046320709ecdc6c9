"""Entry points: a file or bytes in, a ParsedImport out, or ImportRejected with problems."""

from __future__ import annotations

import hashlib
import os
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pyarrow as pa

from webapp.imports._csv import parse_csv_long, parse_csv_wide
from webapp.imports._detect import PARQUET_MAGIC, UnknownFormat, check_override, detect_format
from webapp.imports._json import parse_json_records, parse_json_series
from webapp.imports._openmetrics import parse_openmetrics
from webapp.imports._parquet import parse_parquet
from webapp.imports._problems import ProblemLog
from webapp.imports._text import reject_utf16, without_bom
from webapp.imports._timestamps import NaiveTimes
from webapp.imports._types import ImportRejected, ParsedImport
from webapp.imports._units import check_unit, give_unit

DEFAULT_MAX_BYTES = 200 * 1024**2

Parser = Callable[[bytes | memoryview, str, NaiveTimes, ProblemLog], ParsedImport]


PARSERS: dict[str, Parser] = {
    "csv-long": parse_csv_long,
    "csv-wide": parse_csv_wide,
    "json-records": parse_json_records,
    "json-series": parse_json_series,
    "openmetrics": parse_openmetrics,
    "parquet": parse_parquet,
}


def _size(n: int) -> str:
    if n >= 1024**2:
        return f"{n / 1024**2:.1f} MB"
    return f"{n / 1024:.1f} KB" if n >= 1024 else f"{n} bytes"


def _too_big(size: int, max_bytes: int, log: ProblemLog) -> None:
    if size > max_bytes:
        log.reject(
            f"the file is {_size(size)}, over the {_size(max_bytes)} limit "
            "(raise MAX_IMPORT_MB to accept larger files)"
        )


def _check_zone(tz: str | None, log: ProblemLog) -> None:
    if tz is None:
        return
    import zoneinfo

    try:
        zoneinfo.ZoneInfo(tz)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        log.reject(f"unknown time zone {tz!r}; expected an IANA name such as Europe/Berlin")


def parse_bytes(
    data: bytes | memoryview,
    file_name: str,
    format: str | None = None,
    tz: str | None = None,
    max_bytes: int = DEFAULT_MAX_BYTES,
    unit: str | None = None,
    day_first: bool | None = None,
) -> ParsedImport:
    """Parse one file's bytes. ``format`` overrides detection; ``tz`` names the zone of
    naive times (UTC when None); ``unit`` is the unit of every series in the file (the
    file's own units when None); ``day_first`` says how dates like 31/12/2026 are read
    (True: day first, False: month first, None: refused as ambiguous). Raises
    ImportRejected naming file, line and column."""
    log = ProblemLog(file_name)
    _too_big(len(data), max_bytes, log)
    _check_zone(tz, log)
    unit = check_unit(unit, log)
    if not bytes(without_bom(data[:65536])).strip():
        log.reject("the file is empty")
    if data[:4] != PARQUET_MAGIC:
        reject_utf16(data, log)
    if format is None:
        try:
            format = detect_format(data, file_name)
        except UnknownFormat as exc:
            log.reject(str(exc), line=exc.line)
    else:
        check_override(format, data, file_name, log)
    parser = PARSERS[format]
    with ThreadPoolExecutor(max_workers=1) as pool:
        digest = pool.submit(lambda: hashlib.sha256(data).hexdigest())  # releases the GIL
        try:
            parsed = parser(data, file_name, NaiveTimes(tz, day_first), log)
        except ImportRejected:
            raise
        except Exception as exc:  # noqa: BLE001 - a reader's own error must not surface raw
            log.reject(f"could not be read as {format}: {exc}")
        parsed.sha256 = digest.result()
    give_unit(parsed, unit, log)
    return parsed


def parse_file(
    path: str | os.PathLike[str],
    format: str | None = None,
    tz: str | None = None,
    max_bytes: int = DEFAULT_MAX_BYTES,
    unit: str | None = None,
    day_first: bool | None = None,
) -> ParsedImport:
    """Parse a file on disk (options as for ``parse_bytes``); its size is checked first."""
    path = Path(path)
    log = ProblemLog(path.name)
    try:
        size = path.stat().st_size
    except OSError as exc:
        log.reject(f"cannot read the file: {exc.strerror or exc}")
    _too_big(size, max_bytes, log)
    try:
        data = _mapped(path) if size else b""
    except OSError as exc:
        log.reject(f"cannot read the file: {exc.strerror or exc}")
    return parse_bytes(
        data, path.name, format=format, tz=tz, max_bytes=max_bytes, unit=unit, day_first=day_first
    )


def _mapped(path: Path) -> memoryview:
    """The file's bytes without copying them: an Arrow memory map, which stays mapped for
    as long as anything still refers to it."""
    try:
        source = pa.memory_map(str(path))
    except pa.ArrowIOError as exc:
        raise OSError(str(exc)) from exc
    return memoryview(source.read_buffer())
