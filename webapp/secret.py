"""The key that signs browser sessions: the same across restarts and instances.

Set ``SECRET_KEY`` to choose it. Otherwise it is created once and kept: in team mode in
the store (every instance serving it agrees), else in the file ``secret_key`` of the
instance folder (readable by its owner only).
"""

from __future__ import annotations

import os
import secrets
import tempfile
from pathlib import Path

from flask import Flask

KEY_FILE = "secret_key"
STORE_KEY = "session"


def secret_key(app: Flask) -> str:
    if app.config.get("SECRET_KEY"):
        return str(app.config["SECRET_KEY"])
    if app.config.get("TEAM_MODE"):
        from webapp.store import db, keys

        return keys.kept_key(db.get_engine(app), STORE_KEY)
    return file_key(Path(app.instance_path) / KEY_FILE)


def file_key(path: Path) -> str:
    """The key in ``path``, written there first if the file does not exist. Two processes
    starting together agree: the file appears whole (a hard link) or not at all."""
    if not path.exists():
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, draft = tempfile.mkstemp(dir=path.parent, prefix=".secret-")  # mode 0600
        try:
            with os.fdopen(fd, "w") as f:
                f.write(secrets.token_hex(32))
            os.link(draft, path)
        except FileExistsError:
            pass
        finally:
            os.unlink(draft)
    return path.read_text().strip()
