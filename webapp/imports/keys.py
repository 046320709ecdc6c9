"""Series keys: ``metric{k1=v1,k2=v2}`` with labels sorted by name.

A series without labels is just ``metric``. A label value is written between double quotes
when it contains ``,``, ``}``, ``=``, ``"`` or ``\\``, is empty, or starts or ends with
whitespace; inside quotes ``"`` and ``\\`` are escaped with a backslash. So every key
round-trips: ``parse_series_key(series_key(m, labels)) == (m, labels)``.
"""

from __future__ import annotations

from webapp.imports.control import check_text

_NEEDS_QUOTES = frozenset(',}="\\')
_NAME_FORBIDDEN = frozenset('{},="\\')


def _check_metric(metric: str) -> None:
    if not metric or not metric.strip():
        raise ValueError("a metric name must not be empty")
    if any(ch in "{}" for ch in metric):
        raise ValueError(f"metric name {metric!r} must not contain '{{' or '}}'")
    check_text(f"metric name {metric!r}", metric)


def _check_label_name(name: str) -> None:
    if not name or name != name.strip() or any(ch in _NAME_FORBIDDEN for ch in name):
        raise ValueError(
            f"label name {name!r} must be non-empty, without surrounding spaces "
            'and without any of { } , = " \\'
        )
    check_text(f"label name {name!r}", name)


def _format_value(value: str) -> str:
    if value and value == value.strip() and not any(ch in _NEEDS_QUOTES for ch in value):
        return value
    escaped = value.replace("\\", "\\\\").replace('"', '\\"')
    return f'"{escaped}"'


def series_key(metric: str, labels: dict[str, str]) -> str:
    """The canonical key of one series (see the module docstring for the rules)."""
    _check_metric(metric)
    if not labels:
        return metric
    parts = []
    for name in sorted(labels):
        _check_label_name(name)
        value = str(labels[name])
        check_text(f"the value of label {name!r}", value)
        parts.append(f"{name}={_format_value(value)}")
    return f"{metric}{{{','.join(parts)}}}"


def parse_series_key(key: str) -> tuple[str, dict[str, str]]:
    """Split a key into metric and labels; raises ValueError saying where a key is malformed.

    Accepts the canonical form and a little more: spaces after commas and around names,
    and quoted values anywhere.
    """
    text = key.strip()
    brace = text.find("{")
    if brace < 0:
        _check_metric(text)
        return text, {}
    metric = text[:brace].strip()
    _check_metric(metric)
    if not text.endswith("}"):
        raise ValueError(f"series key {key!r}: expected '}}' at the end")
    labels: dict[str, str] = {}
    body = text[brace + 1 : -1]
    pos = 0
    while pos < len(body):
        eq = body.find("=", pos)
        if eq < 0:
            if body[pos:].strip():
                raise ValueError(f"series key {key!r}: expected name=value after {body[:pos]!r}")
            break
        name = body[pos:eq].strip()
        _check_label_name(name)
        value, pos = _read_value(key, body, eq + 1)
        if name in labels:
            raise ValueError(f"series key {key!r}: label {name!r} appears twice")
        labels[name] = value
        rest = body[pos:].lstrip()
        if rest and not rest.startswith(","):
            raise ValueError(f"series key {key!r}: expected ',' or '}}' after label {name!r}")
        pos = len(body) - len(rest) + 1
    return metric, labels


def _read_value(key: str, body: str, pos: int) -> tuple[str, int]:
    """Read one label value starting at ``pos``; return it and the position after it."""
    while pos < len(body) and body[pos] == " ":
        pos += 1
    if pos < len(body) and body[pos] == '"':
        out = []
        pos += 1
        while pos < len(body):
            ch = body[pos]
            if ch == "\\" and pos + 1 < len(body):
                out.append(body[pos + 1])
                pos += 2
            elif ch == '"':
                return "".join(out), pos + 1
            else:
                out.append(ch)
                pos += 1
        raise ValueError(f"series key {key!r}: a quoted label value is not closed")
    end = body.find(",", pos)
    end = len(body) if end < 0 else end
    value = body[pos:end].strip()
    if any(ch in '}="' for ch in value):
        raise ValueError(
            f"series key {key!r}: label value {value!r} must be quoted because it "
            "contains '}', '=' or '\"'"
        )
    return value, end
