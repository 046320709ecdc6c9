"""Accounts: hashed passwords, roles, and the wait after repeated wrong passwords."""

from __future__ import annotations

import datetime as dt

import pytest

from webapp.store import users

PASSWORD = "correct horse battery"  # invented
NOW = dt.datetime(2026, 12, 1, 9, 0, tzinfo=dt.UTC)


def test_a_password_is_kept_only_as_a_scrypt_hash(session):
    user = users.add_user(session, "ana", PASSWORD, "editor")
    assert user.password_hash.startswith("scrypt:") and PASSWORD not in user.password_hash
    assert users.sign_in(session, "ana", PASSWORD, NOW).user is user
    assert users.sign_in(session, "ana", "wrong password!!", NOW).user is None
    assert users.sign_in(session, "nobody", PASSWORD, NOW).user is None


@pytest.mark.parametrize(
    "name, password, role, message",
    [
        ("", PASSWORD, "editor", "1 to 100 characters"),
        ("ana", "short", "editor", "at least 12 characters"),
        ("ana", PASSWORD, "owner", "one of viewer, editor, admin"),
        ("a\x00na", PASSWORD, "editor", r"control character \(U\+0000\)"),
    ],
)
def test_bad_accounts_are_refused_saying_why(session, name, password, role, message):
    with pytest.raises(ValueError, match=message):
        users.add_user(session, name, password, role)


def test_a_second_account_with_the_same_name_is_refused(session):
    users.add_user(session, "ana", PASSWORD, "viewer")
    with pytest.raises(ValueError, match="already a user named 'ana'"):
        users.add_user(session, "ana", PASSWORD, "admin")


def test_after_five_wrong_passwords_even_the_right_one_waits(session):
    users.add_user(session, "ana", PASSWORD, "editor")
    for _ in range(users.FREE_TRIES):
        assert users.sign_in(session, "ana", "wrong password!!", NOW).user is None
    refused = users.sign_in(session, "ana", PASSWORD, NOW + dt.timedelta(seconds=10))
    assert refused.user is None and refused.wait == dt.timedelta(seconds=20)
    later = NOW + users.FIRST_WAIT + dt.timedelta(seconds=1)
    assert users.sign_in(session, "ana", PASSWORD, later).user is not None
    assert users.find_user(session, "ana").failed_sign_ins == 0


def test_the_wait_doubles_and_stops_at_its_cap(session):
    user = users.add_user(session, "ana", PASSWORD, "editor")
    user.last_failed_at = NOW
    waits = []
    for failures in (5, 6, 7, 30):
        user.failed_sign_ins = failures
        waits.append(users.sign_in(session, "ana", PASSWORD, NOW).wait)
    seconds = [w.total_seconds() for w in waits]
    assert seconds == [30, 60, 120, users.LONGEST_WAIT.total_seconds()]


def test_a_reset_sets_a_new_password_and_role_and_clears_the_wait(session):
    user = users.add_user(session, "ana", PASSWORD, "viewer")
    user.failed_sign_ins, user.last_failed_at = 9, NOW
    stamp = users.session_stamp(user)
    users.reset_user(session, "ana", password="another long password", role="admin")
    assert (user.role, user.failed_sign_ins) == ("admin", 0)
    assert users.session_stamp(user) != stamp
    assert users.sign_in(session, "ana", "another long password", NOW).user is user
    with pytest.raises(LookupError, match="no user named 'bo'"):
        users.reset_user(session, "bo", role="viewer")
