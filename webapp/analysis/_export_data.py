"""Data out: any result of the core as CSV text or JSON text, with its parameters.

    from webapp.analysis import to_csv, to_json
    text = to_json(explanation)          # also a ScreenResult, a PeerComparison,
    text = to_csv(screening)             # a ReplayReport, or a replay's DataFrame
    text = to_csv(firings, parameters={"rule": "latency above 500 ms for 10 min"})

JSON is one object: ``kind``, the parameters, facts and sentences where the result has them,
and ``rows`` (the computed frame, one object per row). CSV is the same frame, preceded by
lines that start with ``#`` and carry the kind, versions and parameters as
``# name: JSON value``; skip those lines to read the table (``pd.read_csv(io, skiprows=n)``,
or ``comment="#"`` when no value holds a ``#``). Times are ISO 8601 in UTC, durations are
seconds (their columns end in ``_seconds``), missing values are empty (CSV) or null (JSON).
"""

from __future__ import annotations

import json
from typing import Any

import numpy as np
import pandas as pd

from ._explain import Explanation
from ._peers import PeerComparison
from ._report import ReplayReport
from ._screen import ScreenResult

Result = Explanation | ScreenResult | PeerComparison | ReplayReport | pd.DataFrame


def to_json(result: Result, parameters: dict[str, Any] | None = None) -> str:
    """`result` as JSON text; `parameters` adds to (or, for a bare frame, gives) its
    parameters."""
    head, frame = parts(result, parameters)
    rows = json.loads(plain(frame).to_json(orient="records", date_format="iso", date_unit="s"))
    return json.dumps({**jsonable(head), "rows": rows}, indent=1, allow_nan=False)


def to_csv(result: Result, parameters: dict[str, Any] | None = None) -> str:
    """`result` as CSV text: `#` lines with the parameters, then the frame."""
    head, frame = parts(result, parameters)
    lines = [
        f"# {name}: {json.dumps(value, allow_nan=False)}"
        for name, value in jsonable(head).items()
        if name not in ("facts", "summary")
    ]
    table = plain(frame).to_csv(index=False, date_format="%Y-%m-%dT%H:%M:%SZ", lineterminator="\n")
    return "\n".join(lines) + "\n" + table


def parts(result: Result, parameters: dict[str, Any] | None) -> tuple[dict[str, Any], pd.DataFrame]:
    """The header (kind, versions, parameters, facts, sentences) and the frame."""
    extra = dict(parameters or {})
    if isinstance(result, Explanation):
        head = {
            "kind": "explanation",
            "engine_version": result.engine_version,
            "parameters": {**result.parameters, **extra},
            "periods_seconds": [p.total_seconds() for p in result.periods],
            "facts": result.facts,
            "summary": result.summary,
        }
        return head, result.frame.rename_axis("time")
    if isinstance(result, ScreenResult):
        head = {
            "kind": "screening",
            "engine_version": result.engine_version,
            "screen_version": result.screen_version,
            "parameters": {**result.parameters, **extra},
            "skipped": result.skipped,
            "facts": result.facts,
            "summary": result.summary,
        }
        return head, result.table
    if isinstance(result, PeerComparison):
        head = {
            "kind": "peers",
            "parameters": {"window": [t.isoformat() for t in result.window], **extra},
            "facts": result.facts,
            "summary": result.summary,
        }
        return head, peer_table(result)
    if isinstance(result, ReplayReport):
        report = result.to_dict()
        report.pop("firings", None)
        return {"kind": "replay", "parameters": {**report, **extra}}, result.firings
    if isinstance(result, pd.DataFrame):
        return {"kind": "frame", "parameters": extra}, result
    raise ValueError(
        "to_csv and to_json take an explanation, a screening, a peer comparison, a replay "
        f"report or a DataFrame; got {type(result).__name__}"
    )


def peer_table(comparison: PeerComparison) -> pd.DataFrame:
    return pd.DataFrame(
        [
            {
                "key": r.key,
                "name": r.name,
                "is_target": r.is_target,
                "status": r.status,
                "minutes_outside": r.minutes_outside,
                "first_outside": r.first_outside,
                "peak_sd": r.peak_deviation_sd,
                "stood_out_minutes": r.stood_out_minutes,
                "stood_out_from": r.stood_out_from,
                "group": r.group,
                "note": r.error,
            }
            for r in comparison.results
        ]
    )


def plain(frame: pd.DataFrame) -> pd.DataFrame:
    """The frame with its time index as a column, times in UTC, durations in seconds."""
    out = frame.reset_index() if isinstance(frame.index, pd.DatetimeIndex) else frame.copy()
    for column in list(out.columns):
        values = out[column]
        if isinstance(values.dtype, pd.DatetimeTZDtype):
            out[column] = values.dt.tz_convert("UTC")
        elif pd.api.types.is_timedelta64_dtype(values.dtype):
            out[f"{column}_seconds"] = values.dt.total_seconds()
            out = out.drop(columns=column)
        elif values.dtype == object and values.map(lambda v: isinstance(v, pd.Timestamp)).any():
            out[column] = pd.to_datetime(values, utc=True)
    return out


def jsonable(value: Any) -> Any:
    """Plain JSON values: timestamps ISO, durations seconds, numpy scalars Python, NaN None."""
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [jsonable(v) for v in value]
    if isinstance(value, pd.Timestamp):
        return None if pd.isna(value) else value.isoformat()
    if isinstance(value, pd.Timedelta):
        return None if pd.isna(value) else value.total_seconds()
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not np.isfinite(value):
        return None
    return value
