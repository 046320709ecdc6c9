"""People who sign in to a team-mode instance, their roles, and checking their passwords.

Passwords are kept as scrypt hashes (Werkzeug's helper). After a few wrong passwords in a
row an account makes the next try wait, doubling each time up to a cap, wherever the try
comes from: the store keeps the count, so every instance serving it agrees.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from functools import cache

from sqlalchemy import select
from sqlalchemy.orm import Session
from werkzeug.security import check_password_hash, generate_password_hash

from webapp.imports.control import check_text
from webapp.store.models import User, utcnow

ROLES = ("viewer", "editor", "admin")
MIN_PASSWORD_LENGTH = 12  # common practice for passwords people choose
FREE_TRIES = 5
FIRST_WAIT = dt.timedelta(seconds=30)
LONGEST_WAIT = dt.timedelta(minutes=15)


@dataclass(frozen=True)
class SignIn:
    """The outcome of a sign-in: the user, or why not (and how long to wait, if locked)."""

    user: User | None
    wait: dt.timedelta | None = None


def find_user(session: Session, name: str) -> User | None:
    return session.scalar(select(User).where(User.name == name))


def list_users(session: Session) -> list[User]:
    return list(session.scalars(select(User).order_by(User.name)))


def add_user(session: Session, name: str, password: str, role: str) -> User:
    """A new account; ValueError says what is wrong with the name, password or role."""
    name = name.strip()
    if not name or len(name) > 100:
        raise ValueError("a user name must have 1 to 100 characters")
    check_text("the user name", name)
    _check_role(role)
    if find_user(session, name) is not None:
        raise ValueError(f"there is already a user named {name!r}")
    user = User(name=name, password_hash=_hash(password), role=role, failed_sign_ins=0)
    session.add(user)
    session.flush()
    return user


def remove_user(session: Session, name: str) -> None:
    session.delete(_require(session, name))
    session.flush()


def reset_user(
    session: Session, name: str, password: str | None = None, role: str | None = None
) -> User:
    """Set a new password and/or role; clears the count of wrong passwords."""
    user = _require(session, name)
    if password is not None:
        user.password_hash = _hash(password)
    if role is not None:
        _check_role(role)
        user.role = role
    user.failed_sign_ins = 0
    user.last_failed_at = None
    session.flush()
    return user


def sign_in(session: Session, name: str, password: str, now: dt.datetime | None = None) -> SignIn:
    """Check a name and password; counts wrong passwords and refuses tries made too soon."""
    now = now or utcnow()
    user = session.scalar(select(User).where(User.name == name.strip()).with_for_update())
    if user is None:
        check_password_hash(_unknown_hash(), password)  # as slow as a known name
        return SignIn(None)
    wait = _wait(user, now)
    if wait is not None:
        return SignIn(None, wait)
    if not check_password_hash(user.password_hash, password):
        user.failed_sign_ins += 1
        user.last_failed_at = now
        session.flush()
        return SignIn(None, _wait(user, now))
    if user.failed_sign_ins:
        user.failed_sign_ins = 0
        user.last_failed_at = None
        session.flush()
    return SignIn(user)


def session_stamp(user: User) -> str:
    """A token that changes with the password: sessions signed in before a reset end."""
    return user.password_hash[-16:]


def _wait(user: User, now: dt.datetime) -> dt.timedelta | None:
    extra = user.failed_sign_ins - FREE_TRIES
    if extra < 0 or user.last_failed_at is None:
        return None
    until = user.last_failed_at + min(FIRST_WAIT * 2**extra, LONGEST_WAIT)
    return until - now if until > now else None


@cache
def _unknown_hash() -> str:
    return generate_password_hash("whyfired: no such person", method="scrypt")


def _hash(password: str) -> str:
    if len(password) < MIN_PASSWORD_LENGTH:
        raise ValueError(f"a password must have at least {MIN_PASSWORD_LENGTH} characters")
    return generate_password_hash(password, method="scrypt")


def _check_role(role: str) -> None:
    if role not in ROLES:
        raise ValueError(f"the role must be one of {', '.join(ROLES)}, not {role!r}")


def _require(session: Session, name: str) -> User:
    user = find_user(session, name)
    if user is None:
        raise LookupError(f"there is no user named {name!r}")
    return user
