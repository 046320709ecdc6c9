"""Whether a store's schema is already at the latest revision, known without Alembic.

Loading Alembic and running every migration file to find the head costs a command about a
quarter of a second, even when there is nothing to migrate. The head is read here from the
migration files' own ``revision`` and ``down_revision`` lines instead (read, not run),
and the store's revision from its ``alembic_version`` table. Anything unusual (a value that
is not a plain literal, more than one head, no table) answers "not current", so the caller
migrates through Alembic as before: this check can only skip work, never a migration.
``tests/store/test_revisions.py`` checks the head against Alembic's own.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from sqlalchemy import Engine


# ``revision = "x"`` or ``down_revision: str | None = "y"`` at the start of a line; a
# parenthesised value (a merge's tuple) may span lines.
_ASSIGNMENT = re.compile(
    r"^(revision|down_revision)\b[ \t]*(?::[^=\n]*)?=[ \t]*(\([^)]*\)|[^\n#]*)", re.MULTILINE
)


def _literal_assignments(path: Path) -> dict[str, object] | None:
    """The module-level ``revision`` and ``down_revision`` of one migration file; None when
    either is missing, given twice or not a literal. (A regular expression, not ``ast``:
    parsing every migration whole would cost a tenth of what the check saves.)"""
    found: dict[str, object] = {}
    for match in _ASSIGNMENT.finditer(path.read_text(encoding="utf-8")):
        name, value = match.groups()
        if name in found:
            return None
        try:
            found[name] = ast.literal_eval(value.strip())
        except (ValueError, SyntaxError):
            return None
    return found if {"revision", "down_revision"} <= found.keys() else None


def head_revision(versions: Path | None = None) -> str | None:
    """The one revision no migration builds on, or None when that is not plain to see."""
    if versions is None:
        from webapp import resource_dir

        versions = resource_dir("migrations") / "versions"
    revisions: set[object] = set()
    below: set[object] = set()
    for path in versions.glob("*.py"):
        if path.name.startswith(("__init__", ".#")):
            continue  # files Alembic does not read as migrations
        found = _literal_assignments(path)
        if found is None or not isinstance(found["revision"], str):
            return None
        revisions.add(found["revision"])
        down = found["down_revision"]
        below.update(down if isinstance(down, tuple | list) else [down])
    heads = revisions - below
    return heads.pop() if len(heads) == 1 else None


def is_current(engine: Engine) -> bool:
    """True when the store records exactly the latest revision (read only, no lock)."""
    from sqlalchemy import text
    from sqlalchemy.exc import SQLAlchemyError

    from webapp.store.db import reading

    head = head_revision()
    if head is None:
        return False
    try:
        with reading(engine).connect() as connection:
            stored = list(connection.scalars(text("SELECT version_num FROM alembic_version")))
    except SQLAlchemyError:  # no table yet: a new store
        return False
    return stored == [head]
