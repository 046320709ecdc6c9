"""Edit versions: a save names the version it started from and is refused when the stored
record is newer, so no one's typing is silently overwritten.

Reviews, action items, attached explanations (their captions) and alert rules carry a
``version`` number. :func:`claim` is called inside the writing transaction, before the
fields are set: one ``UPDATE … SET version = version + 1 WHERE id = ? AND version = ?``
whose row count says whether the editor saw the latest save. On SQLite the write lock is
already held (``BEGIN IMMEDIATE``); on other backends the row lock the UPDATE takes makes
a concurrent save wait and then find the version moved on. Either way one of two saves
started from the same version lands and the other gets :class:`EditConflict`.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select, update
from sqlalchemy.orm import Session
from sqlalchemy.orm.attributes import set_committed_value

from webapp.store._sql import ReviewInvalid

VERSION_FIELD = "version"


class EditConflict(ReviewInvalid):
    """The record was saved by someone else since the editor loaded ``sent`` (a newer
    version is stored). Roll back, then show both texts: the stored one and the typed one."""

    def __init__(self, what: str, sent: int) -> None:
        super().__init__(
            {
                VERSION_FIELD: (
                    f"Someone else saved this {what} after you opened it (you started from "
                    f"version {sent}). Nothing of yours was saved."
                )
            }
        )
        self.what = what
        self.sent = sent


def sent_version(value: Any) -> int | None:
    """The version a form sent: ``None`` when it sent none (a script, not a form of ours),
    which saves without the check. ReviewInvalid for anything that is not a number."""
    text = str(value if value is not None else "").strip()
    if not text:
        return None
    if not text.isdigit():
        raise ReviewInvalid({VERSION_FIELD: f"{text!r} is not a version number; reload the page."})
    return int(text)


def claim(session: Session, row: Any, sent: int | None, what: str) -> None:
    """Move ``row`` to its next version if it is still at ``sent``; EditConflict otherwise.

    Call it first in the save, inside the writing transaction, so nothing slow runs between
    the check and the write. ``sent=None`` bumps the version without checking.
    """
    model = type(row)
    stmt = update(model).where(model.id == row.id)
    if sent is not None:
        stmt = stmt.where(model.version == sent)
    result = session.execute(
        stmt.values(version=model.version + 1).execution_options(synchronize_session=False)
    )
    if result.rowcount != 1:
        raise EditConflict(what, sent if sent is not None else 0)
    stored = session.scalar(select(model.version).where(model.id == row.id))
    set_committed_value(row, VERSION_FIELD, stored)
