"""The versions migration removes the duplicates concurrent saves could leave in an existing
store before it adds the unique constraints, and starts every edited record at version 1."""

from __future__ import annotations

import pytest
from sqlalchemy import text
from sqlalchemy.exc import IntegrityError

from webapp.store import db

EXPLANATION = (
    "INSERT INTO explanations (id, series_key, title, window_start, window_end, parameters,"
    " engine_version, frame, facts, summary, created_at) VALUES (:id, 'q.lag', '',"
    " '2026-11-30 14:00:00', '2026-11-30 16:00:00', '{}', '1', x'00', '{}', '[]',"
    " '2026-12-01 00:00:00')"
)
REVIEW = (
    "INSERT INTO reviews (id, title, status, severity, summary, impact, trigger, root_cause,"
    " detection, resolution, lessons, verdict_parameters, verdict_rationale,"
    " exclude_from_baselines, created_at, updated_at) VALUES (:id, 'r', 'draft', '', '', '',"
    " '', '', '', '', '', '{}', '', 1, '2026-12-01 00:00:00', '2026-12-01 00:00:00')"
)


def test_upgrade_drops_repeated_attachments_renumbers_actions_and_adds_constraints(tmp_path):
    eng = db.make_engine(f"sqlite:///{tmp_path / 'old.sqlite'}")
    try:
        db.upgrade(eng, "0003_compact_store")
        with eng.begin() as conn:
            for review_id in (1, 2):
                conn.execute(text(REVIEW), {"id": review_id})
            conn.execute(text(EXPLANATION), {"id": 7})
            for row_id, caption in ((1, "first"), (2, "again"), (3, "third time")):
                conn.execute(
                    text(
                        "INSERT INTO review_explanations (id, review_id, explanation_id,"
                        " caption, position) VALUES (:id, 1, 7, :caption, :id)"
                    ),
                    {"id": row_id, "caption": caption},
                )
            for row_id, review_id, position in ((1, 1, 0), (2, 1, 0), (3, 1, 1), (4, 2, 5)):
                conn.execute(
                    text(
                        "INSERT INTO action_items (id, review_id, text, owner, state,"
                        " position) VALUES (:id, :review, 'do', '', 'open', :position)"
                    ),
                    {"id": row_id, "review": review_id, "position": position},
                )
        db.upgrade(eng)
        with eng.begin() as conn:
            kept = conn.execute(text("SELECT id, caption FROM review_explanations")).all()
            assert kept == [(1, "first")]
            actions = conn.execute(
                text("SELECT id, review_id, position, version FROM action_items ORDER BY id")
            ).all()
            assert actions == [(1, 1, 0, 1), (2, 1, 1, 1), (3, 1, 2, 1), (4, 2, 0, 1)]
            assert conn.execute(text("SELECT version FROM reviews")).scalars().all() == [1, 1]
        with pytest.raises(IntegrityError), eng.begin() as conn:
            conn.execute(
                text(
                    "INSERT INTO review_explanations (review_id, explanation_id, caption,"
                    " position) VALUES (1, 7, '', 9)"
                )
            )
        db.downgrade(eng, "0003_compact_store")
        with eng.begin() as conn:
            columns = [row[1] for row in conn.execute(text("PRAGMA table_info(reviews)"))]
            assert "version" not in columns
    finally:
        eng.dispose()
