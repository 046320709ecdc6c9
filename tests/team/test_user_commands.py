"""whyfired user add/remove/reset/list on a team store."""

from __future__ import annotations

from webapp.cli import cli
from webapp.store import audit, db, users

PASSWORD = "correct horse battery"  # invented


def run(runner, *args, input=None):
    return runner.invoke(cli, list(args), input=input)


def test_add_reset_list_and_remove_an_account(db_url, runner):
    twice = f"{PASSWORD}\n{PASSWORD}\n"
    added = run(runner, "user", "add", "ana", "--role", "admin", "--db", db_url, input=twice)
    assert added.exit_code == 0, added.output
    assert "Added ana (admin)." in added.output
    reset = run(
        runner, "user", "reset", "ana", "--role", "viewer", "--keep-password", "--db", db_url
    )
    assert reset.exit_code == 0 and "Reset ana (viewer)." in reset.output
    listed = run(runner, "user", "list", "--db", db_url)
    assert "ana\tviewer" in listed.output
    engine = db.make_engine(db_url)
    try:
        with db.session_scope(engine) as s:
            assert users.sign_in(s, "ana", PASSWORD).user is not None
            trail = audit.entries(s, "users")
        assert [e.action for e in trail][:2] == ["insert", "update"]
        assert all(e.user_name.endswith("(command line)") for e in trail)
        assert "password_hash" not in trail[0].changes
        removed = run(runner, "user", "remove", "ana", "--db", db_url)
        assert removed.exit_code == 0
        with db.session_scope(engine) as s:
            assert users.find_user(s, "ana") is None
    finally:
        engine.dispose()


def test_a_short_password_or_unknown_name_gets_one_line(db_url, runner):
    short = run(runner, "user", "add", "ana", "--db", db_url, input="short\nshort\n")
    assert short.exit_code == 1 and "at least 12 characters" in short.output
    assert "Traceback" not in short.output
    missing = run(runner, "user", "remove", "nobody", "--db", db_url)
    assert missing.exit_code == 1 and "no user named 'nobody'" in missing.output


def test_accounts_need_a_team_store(runner, tmp_path):
    url = f"sqlite:///{tmp_path / 'local.sqlite'}"
    result = run(runner, "user", "list", "--db", url)
    assert result.exit_code == 1 and "needs a PostgreSQL store" in result.output
