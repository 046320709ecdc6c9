"""Checks every flush makes, whatever wrote the rows: no control characters in text.

The edges refuse such text first with a message naming the form field or the file's line;
this is the backstop that keeps SQLite and PostgreSQL holding the same text.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import String, event, inspect
from sqlalchemy.orm import Session

from webapp.imports.control import check_text


@event.listens_for(Session, "before_flush")
def _refuse_control_characters(session: Session, _context: Any, _instances: Any) -> None:
    for row in (*session.new, *session.dirty):
        mapper = inspect(row).mapper
        for prop in mapper.column_attrs:
            column = prop.columns[0]
            if not isinstance(column.type, String):
                continue
            value = getattr(row, prop.key)
            if isinstance(value, str):
                check_text(f"{mapper.local_table.name}.{column.name}", value)
