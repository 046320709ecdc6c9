"""Secrets the store keeps for the instance (team mode): created once, then read back."""

from __future__ import annotations

import secrets

from sqlalchemy import Engine, select
from sqlalchemy.exc import IntegrityError

from webapp.store import db
from webapp.store.models import AppKey


def kept_key(engine: Engine, name: str) -> str:
    """The key ``name``, created on first use. Instances starting together agree: the
    first insert wins and the others read it."""
    with db.session_scope(engine) as session:
        found = session.scalar(select(AppKey.value).where(AppKey.name == name))
        if found is not None:
            return found
        try:
            with session.begin_nested():
                session.add(AppKey(name=name, value=secrets.token_hex(32)))
        except IntegrityError:
            pass
        return session.scalar(select(AppKey.value).where(AppKey.name == name))
