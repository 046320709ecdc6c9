"""Store-wide locks that last until the end of the caller's transaction.

On PostgreSQL these are transaction-level advisory locks: two imports, or an import and the
undoing of one, never interleave, and two ``db upgrade`` runs take turns. SQLite needs none:
its single writer lock already serialises every writing transaction.
"""

from __future__ import annotations

from sqlalchemy import Connection, text
from sqlalchemy.orm import Session

# Advisory lock keys: any 64-bit integers, fixed for whyfired ("wf" + a small number).
IMPORTS = 0x7766_0001
MIGRATIONS = 0x7766_0002


def hold(target: Session | Connection, key: int) -> None:
    """Wait for the lock ``key`` and hold it until the current transaction ends."""
    connection = target.connection() if isinstance(target, Session) else target
    if connection.dialect.name == "postgresql":
        connection.execute(text("SELECT pg_advisory_xact_lock(:key)"), {"key": key})
