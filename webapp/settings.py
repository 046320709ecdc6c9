"""Settings are data: one table feeds the app defaults, the CLI help and the docs."""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import platformdirs


@dataclass(frozen=True)
class Setting:
    name: str
    default: Any
    help: str


def data_dir() -> Path:
    """The user's data directory for whyfired (created on first use)."""
    path = Path(platformdirs.user_data_dir("whyfired", appauthor=False))
    path.mkdir(parents=True, exist_ok=True)
    return path


def default_database_url() -> str:
    """The SQLite file in the user's data directory."""
    return f"sqlite:///{data_dir() / 'whyfired.sqlite'}"


def instance_path(test_config: dict[str, Any] | None = None) -> str:
    """The instance folder: INSTANCE_PATH (test config or WHYFIRED_INSTANCE_PATH), else
    the user's data directory. Flask needs it before any config is read."""
    chosen = (test_config or {}).get("INSTANCE_PATH") or os.environ.get("WHYFIRED_INSTANCE_PATH")
    return str(chosen or data_dir())


SETTINGS: tuple[Setting, ...] = (
    Setting(
        "DATABASE_URL",
        None,
        "SQLAlchemy URL of the store; from --db, else WHYFIRED_DATABASE_URL, "
        "else a SQLite file in the user's data directory.",
    ),
    Setting(
        "TEAM_MODE",
        False,
        "Serve a shared PostgreSQL store to a team: sign-in, roles and an audit trail; the "
        "schema must be current (whyfired db upgrade). `whyfired serve --team` sets it.",
    ),
    Setting(
        "INSTANCE_PATH",
        None,
        "Folder for what a local instance keeps, such as its secret_key file; "
        "default: the user's data directory.",
    ),
    Setting(
        "SECRET_KEY",
        None,
        "Key that signs browser sessions; default: created once and kept in the instance "
        "folder (local mode) or the store (team mode).",
    ),
    Setting("MAX_IMPORT_MB", 200, "Largest metric file accepted, in megabytes."),
    Setting(
        "DEFAULT_TOLERANCE",
        3.0,
        "Band width as a normal-equivalent level: 3 holds 99.73% of normal samples.",
    ),
    Setting("DEFAULT_HISTORY_WEEKS", 6, "Weeks of history the expected band is rebuilt from."),
    Setting("MAX_WINDOW_WEEKS", 4, "Longest window the Explain screen explains, in weeks."),
    Setting("MAX_SWEEP_LEVELS", 40, "Most thresholds (or tolerances) one what-if sweep may try."),
    Setting("MAX_SWEEP_HOLDS", 12, "Most holds one what-if sweep may try."),
    Setting(
        "ALLOWED_HOSTS",
        "",
        "Host names the server answers to besides the loopback ones (localhost, 127.0.0.1, "
        "::1), comma-separated; any other Host header is refused with 400.",
    ),
    Setting(
        "ALLOW_REMOTE",
        False,
        "Let serve and demo listen on an address other people can reach; whyfired has no "
        "sign-in, so anyone who reaches it can read and change every review.",
    ),
    Setting(
        "SERVER_THREADS",
        32,
        "Threads of the web server; analyses may hold all but a quarter of them.",
    ),
    Setting(
        "HEAVY_WORKERS",
        2,
        "Analyses (Explain, peers, replay, export) that run at once; the rest wait their "
        "turn, so light pages keep answering.",
    ),
)


def database_url(cli_value: str | None = None) -> str:
    """Resolve the database URL: --db, then WHYFIRED_DATABASE_URL, then the default file."""
    return cli_value or os.environ.get("WHYFIRED_DATABASE_URL") or default_database_url()


def defaults() -> dict[str, Any]:
    return {s.name: s.default for s in SETTINGS}
