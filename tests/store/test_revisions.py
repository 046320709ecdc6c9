"""The schema check that lets a command skip Alembic: it names the same head as Alembic,
answers "current" only for a store at that head, and "not current" whenever in doubt."""

from __future__ import annotations

from pathlib import Path

import pytest
from alembic.script import ScriptDirectory

from webapp.store import db, revisions


def test_the_head_is_the_one_alembic_finds() -> None:
    alembic_head = ScriptDirectory.from_config(db.alembic_config()).get_current_head()
    assert revisions.head_revision() == alembic_head


def test_a_store_is_current_only_at_the_head(empty_db_url: str) -> None:
    engine = db.make_engine(empty_db_url)
    try:
        assert not revisions.is_current(engine)  # no schema at all
        db.upgrade(engine)
        assert revisions.is_current(engine)
        script = ScriptDirectory.from_config(db.alembic_config())
        db.downgrade(engine, script.get_revision(script.get_current_head()).down_revision)
        assert not revisions.is_current(engine)
    finally:
        engine.dispose()


def write_migrations(folder: Path, *pairs: tuple[str, str]) -> Path:
    folder.mkdir()
    for number, (revision, down) in enumerate(pairs):
        (folder / f"{number:04d}_step.py").write_text(
            f'"""A step."""\nrevision = {revision}\ndown_revision: str | None = {down}\n',
            encoding="utf-8",
        )
    (folder / "__init__.py").write_text("revision = 'not a migration'\n", encoding="utf-8")
    return folder


def test_the_head_follows_the_chain_not_the_file_names(tmp_path: Path) -> None:
    folder = write_migrations(tmp_path / "v", ('"b"', '"c"'), ('"a"', "None"), ('"c"', '"a"'))
    assert revisions.head_revision(folder) == "b"


def test_a_merge_revision_is_the_head_over_both_branches(tmp_path: Path) -> None:
    merge = '(\n    "b",\n    "c",\n)  # the two branches'
    pairs = (('"a"', "None"), ('"b"', '"a"  # first'), ('"c"', '"a"'), ('"m"', merge))
    assert revisions.head_revision(write_migrations(tmp_path / "v", *pairs)) == "m"


@pytest.mark.parametrize(
    "pairs",
    [
        (('"a"', "None"), ('"b"', '"a"'), ('"c"', '"a"')),  # two heads
        (('"a"', "None"), ('"b"', 'f"{1}"')),  # not a literal
        (('"a"', "None"), ("make()", '"a"')),  # not a literal
        (('"a"', "None"), ('"b"\nrevision = "c"', '"a"')),  # said twice
    ],
    ids=["two heads", "computed down_revision", "computed revision", "twice"],
)
def test_anything_unclear_answers_no_head(tmp_path: Path, pairs) -> None:
    assert revisions.head_revision(write_migrations(tmp_path / "v", *pairs)) is None


def test_with_no_head_every_store_is_migrated(engine, monkeypatch) -> None:
    assert revisions.is_current(engine)
    monkeypatch.setattr(revisions, "head_revision", lambda: None)
    assert not revisions.is_current(engine)
