"""The ``whyfired`` command: a thin adapter that opens the store and builds the app.

It imports the store, pandas and Flask only inside the commands that use them, so that
``whyfired --help`` answers at once.

Every command names the database it uses first. The URL comes from ``--db``, else
``WHYFIRED_DATABASE_URL``, else the SQLite file in the user's data directory (the demo
keeps its own file there instead, rebuilt on every run).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click
import platformdirs

from webapp import settings
from webapp.imports.formats import FORMATS

if TYPE_CHECKING:
    from sqlalchemy import Engine

    from webapp.imports import ImportRejected


def _setting_help(name: str) -> str:
    return next(s.help for s in settings.SETTINGS if s.name == name)


db_option = click.option(
    "--db", "db_url", metavar="URL", default=None, help=_setting_help("DATABASE_URL")
)
host_option = click.option(
    "--host", default="127.0.0.1", show_default=True, help="Address to listen on."
)
port_option = click.option(
    "--port", default=5000, show_default=True, type=int, help="Port to listen on."
)


def describe(url: str) -> str:
    """Where a database lives, for people: a SQLite file's path, else the URL (no password)."""
    from sqlalchemy.engine import make_url

    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        if parsed.database in (None, "", ":memory:"):
            return "SQLite in memory (nothing is kept)"
        return str(Path(parsed.database).expanduser().resolve())
    return parsed.render_as_string(hide_password=True)


def counted(n: int, noun: str) -> str:
    """``1 review``, ``2 reviews``; nouns ending in "series" or "s" keep their form for many."""
    noun = noun.replace("_", " ")
    if n == 1 and noun.endswith("s") and not noun.endswith("series"):
        noun = noun[:-1]
    return f"{n:,} {noun}"


def _announce(url: str) -> str:
    click.echo(f"Database: {describe(url)}")
    return url


@contextmanager
def _database_errors(url: str) -> Iterator[None]:
    """Turn a database failure into one readable line instead of a traceback."""
    from sqlalchemy.exc import SQLAlchemyError

    try:
        yield
    except SQLAlchemyError as err:
        reason = getattr(err, "orig", None) or err
        raise click.ClickException(
            f"could not use the database at {describe(url)}: {reason}"
        ) from None


@contextmanager
def _cycle_collector_paused() -> Iterator[None]:
    """Keep Python's cycle collector off one short command's objects. Loading pandas,
    pyarrow and SQLAlchemy makes a few hundred thousand long-lived objects; passes over
    them while the command runs, and the full one at the end of the process, took a third
    of an export's time and found next to nothing to free. Afterwards everything then alive
    is frozen (``gc.freeze``): never scanned again, freed as usual when no longer used; a
    long-lived caller (a test) keeps at most the few reference cycles the command made."""
    import gc

    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        gc.freeze()
        if was_enabled:
            gc.enable()


def _open(url: str) -> Engine:
    """An engine on ``url`` whose schema is at the latest revision: migrated through
    Alembic only when the store is behind (loading Alembic costs a quick command, such as
    an export, a quarter of a second)."""
    from webapp.store import db, revisions

    engine = db.make_engine(url)
    if not revisions.is_current(engine):
        db.upgrade(engine)
    return engine


def _max_bytes() -> int:
    megabytes = os.environ.get("WHYFIRED_MAX_IMPORT_MB") or settings.defaults()["MAX_IMPORT_MB"]
    try:
        return int(float(megabytes) * 1024 * 1024)
    except ValueError:
        raise click.ClickException(
            f"WHYFIRED_MAX_IMPORT_MB must be a number of megabytes, got {megabytes!r}"
        ) from None


def _serve(url: str, host: str, port: int, team: bool = False) -> None:
    from webapp import create_app
    from webapp.serve import RemoteAddressRefused, address_for_people, make_server
    from webapp.store import db
    from webapp.warmup import warm_in_background

    with _database_errors(url), _store_not_ready():
        app = create_app(
            {"DATABASE_URL": url, "TEAM_MODE": team} if team else {"DATABASE_URL": url}
        )
    if team:
        _say_who_can_sign_in(db.get_engine(app))
    try:
        server = make_server(app, host, port)
    except RemoteAddressRefused as refusal:
        raise click.ClickException(str(refusal)) from None
    except OSError as err:
        raise _cannot_listen(host, port, err) from None
    warm_in_background(app)
    click.echo(f"whyfired is at {address_for_people(host, port)} (press Ctrl+C to stop)")
    try:
        server.run()
    except KeyboardInterrupt:
        pass
    finally:
        server.close()


def _refuse_early(host: str, port: int) -> None:
    """Refuse a non-loopback address, or a port already taken, before minutes of work,
    with the same rule and message as serving."""
    from flask import Config

    from webapp.serve import RemoteAddressRefused, check_address, check_port_free

    config = Config(".")
    config.update(settings.defaults())
    config.from_prefixed_env("WHYFIRED")
    try:
        check_address(host, bool(config["ALLOW_REMOTE"]))
    except RemoteAddressRefused as refusal:
        raise click.ClickException(str(refusal)) from None
    try:
        check_port_free(host, port)
    except OSError as err:
        raise _cannot_listen(host, port, err) from None


def _cannot_listen(host: str, port: int, err: OSError) -> click.ClickException:
    return click.ClickException(
        f"cannot listen on {host}:{port} ({err.strerror or err}); choose another --port"
    )


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
def cli() -> None:
    """whyfired: explain why a page fired, replay its alert rule, write the review.

    \b
    Examples:
      whyfired demo                          the invented demo, served on port 5000
      whyfired import export.csv --tz Europe/Lisbon
      whyfired serve --db sqlite:///incident.sqlite
    """


@cli.command()
@host_option
@port_option
@db_option
@click.option("--team", is_flag=True, help=_setting_help("TEAM_MODE"))
def serve(host: str, port: int, db_url: str | None, team: bool) -> None:
    """Serve the app (with --team: to a team, from a PostgreSQL store)."""
    _serve(_announce(settings.database_url(db_url)), host, port, team)


@cli.command("import")
@click.argument("files", nargs=-1, required=True, type=click.Path(path_type=Path))
@click.option(
    "--format",
    "format_",
    type=click.Choice(FORMATS),
    default=None,
    help="The files' format; detected from each file when left out.",
)
@click.option(
    "--tz",
    default=None,
    metavar="ZONE",
    help="Time zone of timestamps written without an offset (IANA name); UTC by default.",
)
@click.option(
    "--day-first/--month-first",
    "day_first",
    default=None,
    help="How dates like 31/12/2026 are written; such dates are refused unless one is given.",
)
@click.option(
    "--unit",
    default=None,
    metavar="UNIT",
    help="The unit of every series in the files (ms, s, bytes, %); the files' own otherwise.",
)
@db_option
@click.pass_context
def import_files(
    ctx: click.Context,
    files: tuple[Path, ...],
    format_: str | None,
    tz: str | None,
    day_first: bool | None,
    unit: str | None,
    db_url: str | None,
) -> None:
    """Import metric files. Each file is stored whole or not at all."""
    url = _announce(settings.database_url(db_url))
    max_bytes = _max_bytes()
    rejected = 0
    from webapp.store.audit import acting_as

    with _database_errors(url), acting_as(_terminal_user()):
        engine = _open(url)
        options = {"tz": tz, "day_first": day_first, "unit": unit}
        try:
            for path in files:
                rejected += not _import_one(engine, path, format_, options, max_bytes)
        finally:
            engine.dispose()
    if rejected:
        click.echo(f"{rejected} of {len(files)} file(s) rejected; nothing from them was stored.")
        ctx.exit(1)


def _import_one(
    engine: Engine, path: Path, format_: str | None, options: dict[str, Any], limit: int
) -> bool:
    from webapp.imports import ImportRejected, parse_file
    from webapp.store import db
    from webapp.store.imports import record_import

    if not path.is_file():
        what = "is a folder, not a file" if path.is_dir() else "does not exist"
        click.echo(f"{path}: {what}; nothing stored.", err=True)
        return False
    try:
        parsed = parse_file(path, format=format_, max_bytes=limit, **options)
    except ImportRejected as rejection:
        _report_rejection(path, rejection)
        return False
    except OSError as err:
        click.echo(f"{path}: cannot be read ({err.strerror or err}); nothing stored.", err=True)
        return False
    with db.session_scope(engine) as session:
        summary = record_import(session, parsed)
    for line in summary.lines():
        click.echo(line)
    return True


def _report_rejection(path: Path, rejection: ImportRejected) -> None:
    click.echo(f"{path}: rejected, nothing stored:", err=True)
    for problem in rejection.problems:  # the importer keeps the first few
        click.echo(f"  - {problem}", err=True)
    if rejection.more:
        click.echo(f"  {rejection.more}", err=True)


def demo_database_url() -> str:
    """The demo's own SQLite file, beside the default database."""
    folder = Path(platformdirs.user_data_dir("whyfired", appauthor=False))
    return f"sqlite:///{folder / 'demo.sqlite'}"


def _stored_rows(engine: Engine) -> dict[str, int]:
    from sqlalchemy import func, select

    from webapp.store import db
    from webapp.store.models import AlertRule, Import, Page, Review, Series

    with db.session_scope(engine) as session:
        counts = {
            name: session.scalar(select(func.count()).select_from(model))
            for name, model in (
                ("imports", Import),
                ("series", Series),
                ("alert rules", AlertRule),
                ("pages", Page),
                ("reviews", Review),
            )
        }
    return {name: n for name, n in counts.items() if n}


def _remove_sqlite_file(url: str) -> None:
    from sqlalchemy.engine import make_url

    database = make_url(url).database
    if database and database != ":memory:":
        for suffix in ("", "-wal", "-shm"):
            try:
                Path(f"{database}{suffix}").unlink(missing_ok=True)
            except OSError as err:
                raise click.ClickException(
                    f"cannot rebuild the demo database at {describe(url)} "
                    f"({err.strerror or err}); is another whyfired still using it?"
                ) from None


def _prepare_demo_target(url: str, own_file: bool, replace: bool) -> Engine:
    if own_file:
        _remove_sqlite_file(url)
        return _open(url)
    engine = _open(url)
    held = _stored_rows(engine)
    if held and not replace:
        engine.dispose()
        listing = ", ".join(counted(n, name) for name, n in held.items())
        raise click.ClickException(
            f"{describe(url)} already holds data ({listing}). Use --replace to empty it first, "
            "or leave out --db (and WHYFIRED_DATABASE_URL) to use the demo's own file."
        )
    if held:
        from webapp.store import db

        click.echo("Emptying it first (--replace).")
        accounts = _read_accounts(engine)
        db.downgrade(engine, "base")
        db.upgrade(engine)
        if accounts:
            _restore_accounts(engine, accounts)
            click.echo(f"Kept its {counted(len(accounts), 'account')}: their passwords still work.")
    return engine


def _read_accounts(engine: Engine) -> list[dict]:
    """The team's accounts, so that emptying a shared store does not lock its admins out."""
    from sqlalchemy import select

    from webapp.store import db
    from webapp.store.models import User

    columns = ("name", "password_hash", "role", "created_at")
    with db.session_scope(engine) as session:
        return [{c: getattr(u, c) for c in columns} for u in session.scalars(select(User))]


def _restore_accounts(engine: Engine, accounts: list[dict]) -> None:
    from webapp.store import db
    from webapp.store.models import User

    with db.session_scope(engine) as session:
        session.add_all(User(**account) for account in accounts)


@cli.command()
@click.option("--no-serve", is_flag=True, help="Load the demo and stop, without serving it.")
@click.option(
    "--replace",
    is_flag=True,
    help="Empty a database named by --db that holds data (its accounts are kept).",
)
@click.option("--seed", default=7, show_default=True, type=int, help="Seed of the generator.")
@host_option
@port_option
@click.option(
    "--db",
    "db_url",
    metavar="URL",
    default=None,
    help="Load the demo into this database (else WHYFIRED_DATABASE_URL); without either, "
    "into the demo's own SQLite file in the user's data directory, rebuilt on every run.",
)
def demo(
    no_serve: bool, replace: bool, seed: int, host: str, port: int, db_url: str | None
) -> None:
    """Load the invented demo scenario into a fresh database and serve it."""
    from webapp.demo import build_demo
    from webapp.services.demo import load_demo
    from webapp.store import db

    if not no_serve:
        _refuse_early(host, port)
    chosen = db_url or os.environ.get("WHYFIRED_DATABASE_URL")
    url = _announce(chosen or demo_database_url())
    with _database_errors(url):
        engine = _prepare_demo_target(url, own_file=chosen is None, replace=replace)
        try:
            click.echo(f"Building the demo scenario (seed {seed}) ...")
            scenario = build_demo(seed=seed)
            with db.session_scope(engine) as session:
                counts = load_demo(session, scenario)
        finally:
            engine.dispose()
    click.echo("Loaded: " + ", ".join(counted(n, name) for name, n in counts.items()))
    if not no_serve:
        _serve(url, host, port)


@cli.group("db")
def db_group() -> None:
    """Manage the database schema."""


@db_group.command("upgrade")
@db_option
def db_upgrade(db_url: str | None) -> None:
    """Bring the database schema to the latest revision."""
    from webapp.store import db

    url = _announce(settings.database_url(db_url))
    with _database_errors(url):
        engine = _open(url)
        try:
            revision = db.current_revision(engine)
        finally:
            engine.dispose()
    click.echo(f"Schema at revision {revision} (the latest).")


@db_group.command("revision")
@click.option("-m", "--message", required=True, help="What the migration changes.")
def db_revision(message: str) -> None:
    """Write a migration for what models.py changed (for developers, in a source checkout).

    The difference is taken against a temporary SQLite file at the latest revision; read and
    tidy the generated file before committing it.
    """
    import tempfile

    from alembic import command
    from alembic.autogenerate import compare_metadata
    from alembic.runtime.migration import MigrationContext

    from webapp.store import db
    from webapp.store.models import Base

    with tempfile.TemporaryDirectory(prefix="whyfired-revision-") as folder:
        engine = _open(f"sqlite:///{Path(folder) / 'head.sqlite'}")
        try:
            with engine.begin() as connection:
                if not compare_metadata(MigrationContext.configure(connection), Base.metadata):
                    click.echo("The models and the migrations agree: nothing to write.")
                    return
                script = command.revision(
                    db.alembic_config(connection), message=message, autogenerate=True
                )
        finally:
            engine.dispose()
    click.echo(f"Wrote {script.path}")


@contextmanager
def _store_not_ready() -> Iterator[None]:
    from webapp.store import db

    try:
        yield
    except db.StoreNotReady as err:
        raise click.ClickException(str(err)) from None


def _say_who_can_sign_in(engine: Engine) -> None:
    from webapp.store import db
    from webapp.store.users import list_users

    with db.session_scope(engine) as session:
        admins = [u.name for u in list_users(session) if u.role == "admin"]
    if not admins:
        click.echo("No admin account yet: add one with `whyfired user add NAME --role admin`.")


def _terminal_user() -> str:
    """Who the audit trail names for a change made here."""
    import getpass

    return f"{getpass.getuser()} (command line)"


@contextmanager
def _accounts(db_url: str | None) -> Iterator[Any]:
    """A session on a team store, as the person at this terminal (for the audit trail)."""
    from webapp.store import db
    from webapp.store.audit import acting_as

    url = _announce(settings.database_url(db_url))
    with _database_errors(url), _store_not_ready():
        engine = db.make_engine(url)
        try:
            db.require_team_store(engine)
            with acting_as(_terminal_user()), db.session_scope(engine) as s:
                yield s
        except (ValueError, LookupError) as err:
            raise click.ClickException(str(err)) from None
        finally:
            engine.dispose()


def _new_password() -> str:
    return click.prompt("Password", hide_input=True, confirmation_prompt=True)


@cli.group("user")
def user_group() -> None:
    """Manage the accounts of a team store (team mode)."""


role_option = click.option(
    "--role",
    type=click.Choice(["viewer", "editor", "admin"]),
    help="viewer reads; editor also writes; admin also undoes imports and manages accounts.",
)


@user_group.command("add")
@click.argument("name")
@role_option
@db_option
def user_add(name: str, role: str | None, db_url: str | None) -> None:
    """Add an account (asks for its password)."""
    from webapp.store import users

    with _accounts(db_url) as session:
        users.add_user(session, name, _new_password(), role or "editor")
    click.echo(f"Added {name} ({role or 'editor'}).")


@user_group.command("remove")
@click.argument("name")
@db_option
def user_remove(name: str, db_url: str | None) -> None:
    """Remove an account; what it wrote stays, under its name."""
    from webapp.store import users

    with _accounts(db_url) as session:
        users.remove_user(session, name)
    click.echo(f"Removed {name}; they are signed out everywhere.")


@user_group.command("reset")
@click.argument("name")
@role_option
@click.option("--keep-password", is_flag=True, help="Change only the role.")
@db_option
def user_reset(name: str, role: str | None, keep_password: bool, db_url: str | None) -> None:
    """Set a new password (and role); ends the account's sessions and its sign-in wait."""
    from webapp.store import users

    with _accounts(db_url) as session:
        password = None if keep_password else _new_password()
        user = users.reset_user(session, name, password=password, role=role)
        click.echo(f"Reset {user.name} ({user.role}).")


@user_group.command("list")
@db_option
def user_list(db_url: str | None) -> None:
    """List the accounts and their roles."""
    from webapp.store import users

    with _accounts(db_url) as session:
        for user in users.list_users(session):
            click.echo(f"{user.name}\t{user.role}")


@cli.group("export")
def export_group() -> None:
    """Write things out to share."""


@export_group.command("review")
@click.argument("review_id", type=int)
@click.option(
    "--format",
    "fmt",
    type=click.Choice(["md", "html"]),
    default="md",
    show_default=True,
    help="Markdown, or one self-contained HTML file.",
)
@click.option(
    "-o",
    "--output",
    "out_path",
    required=True,
    type=click.Path(),
    help="File to write; a folder (an existing one, or a path ending in /, created when "
    "missing) gets review-ID.md or .html. Markdown figures go beside it as SVG files.",
)
@db_option
def export_review_cmd(review_id: int, fmt: str, out_path: str, db_url: str | None) -> None:
    """Export one review."""
    with _cycle_collector_paused():
        _export_review(review_id, fmt, out_path, db_url)


def _export_review(review_id: int, fmt: str, out_path: str, db_url: str | None) -> None:
    from webapp.services.review_export import ExportError
    from webapp.store import db
    from webapp.web.export import export_review

    url = _announce(settings.database_url(db_url))
    with _database_errors(url):
        engine = _open(url)
        try:
            with db.session_scope(engine, write=False) as session:
                written = export_review(session, review_id, fmt, out_path)
        except ExportError as err:
            raise click.ClickException(str(err)) from None
        except OSError as err:
            raise click.ClickException(f"cannot write {out_path}: {err.strerror or err}") from None
        finally:
            engine.dispose()
    for path in written:
        click.echo(f"Wrote {path}")


def main(args: Any = None) -> None:
    """The console script ``whyfired``."""
    cli.main(args=args, prog_name="whyfired")
