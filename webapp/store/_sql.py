"""Small helpers shared by the store modules."""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from typing import Any, TypeVar

from sqlalchemy import Connection
from sqlalchemy.exc import DBAPIError, IntegrityError
from sqlalchemy.orm import Session

T = TypeVar("T")
M = TypeVar("M")

IN_CHUNK = 500  # values per SQL ``IN (...)``, well under every backend's parameter limit


def chunks(items: Sequence[T], size: int = IN_CHUNK) -> Iterator[Sequence[T]]:
    for start in range(0, len(items), size):
        yield items[start : start + size]


def placeholder(paramstyle: str) -> str:
    """The positional parameter mark of a DB-API driver, for the hot paths that bypass
    SQLAlchemy's statement layer (bulk writes, series reads)."""
    marks = {"qmark": "?", "format": "%s", "pyformat": "%s"}
    if paramstyle not in marks:
        raise NotImplementedError(f"the store needs a qmark or format driver, not {paramstyle}")
    return marks[paramstyle]


def require(session: Session, model: type[M], row_id: int, what: str) -> M:
    """The row of ``model`` with ``row_id``; LookupError naming ``what`` when there is none."""
    row = session.get(model, row_id)
    if row is None:
        raise LookupError(f"there is no {what} #{row_id}")
    return row


def delete_by_id(session: Session, model: type[Any], row_id: int, what: str) -> None:
    session.delete(require(session, model, row_id, what))
    session.flush()


@contextmanager
def driver_cursor(connection: Connection, statement: str) -> Iterator[Any]:
    """A DB-API cursor on ``connection`` (inside its transaction) whose driver errors come
    out as SQLAlchemy's, like every other database error of the store."""
    dbapi_error = connection.dialect.loaded_dbapi.Error
    cursor = connection.connection.cursor()
    try:
        yield cursor
    except dbapi_error as err:
        raise DBAPIError.instance(statement, None, err, dbapi_error) from err
    finally:
        cursor.close()


class ReviewInvalid(ValueError):
    """Raised with ``errors``: field name -> what was wrong and what is expected."""

    def __init__(self, errors: Mapping[str, str]) -> None:
        self.errors = dict(errors)
        super().__init__("; ".join(f"{k}: {v}" for k, v in self.errors.items()))


def child_of(items: Iterable[Any], item_id: int, what: str) -> Any:
    """The item of a review's ``items`` with ``item_id``; ReviewInvalid when it has none."""
    for item in items:
        if item.id == int(item_id):
            return item
    raise ReviewInvalid({"id": f"This review has no {what} #{item_id}."})


def flush_unique(session: Session, errors: Mapping[str, str]) -> None:
    """Flush in a savepoint; ReviewInvalid(``errors``) when a unique constraint refuses the
    write (two hands adding the same thing at once), the rest of the transaction intact."""
    try:
        with session.begin_nested():
            session.flush()
    except IntegrityError as err:
        raise ReviewInvalid(errors) from err
