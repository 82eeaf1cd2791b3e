"""The service's lead on a real SQLite folder and a real PostgreSQL: one holder at a time, handed on when released,
and on PostgreSQL one lead per schema (two services sharing a database each get theirs)."""

from __future__ import annotations

from pathlib import Path

import sqlalchemy

from wakeyard.core.lead import Lead


def test_one_holder_at_a_time_and_the_lead_passes_on(tmp_path: Path, blank_store_url: str) -> None:
    first, second = Lead(blank_store_url, tmp_path), Lead(blank_store_url, tmp_path)
    try:
        assert first.hold() and not second.hold()
        assert first.hold() and not second.hold()  # kept while held
        first.release()
        assert second.hold() and not first.hold()
    finally:
        first.close()
        second.close()


def test_each_postgresql_schema_has_its_own_lead(tmp_path: Path, postgres_url: str) -> None:
    admin = sqlalchemy.create_engine(postgres_url)
    schemas = ["wakeyard_lead_a", "wakeyard_lead_b"]
    with admin.begin() as conn:
        for schema in schemas:
            conn.execute(sqlalchemy.text(f"CREATE SCHEMA {schema}"))
    leads = [Lead(f"{postgres_url}?options=-csearch_path%3D{s}", tmp_path) for s in schemas]
    try:
        assert all(lead.hold() for lead in leads)
    finally:
        for lead in leads:
            lead.close()
        with admin.begin() as conn:
            for schema in schemas:
                conn.execute(sqlalchemy.text(f"DROP SCHEMA {schema} CASCADE"))
        admin.dispose()
