"""Alembic migrations of the job store: the baseline equals the models, a store made before migrations (and before
studies) is brought up to date, and nothing migrates when a connection or a Store is made."""

from __future__ import annotations

import subprocess
from pathlib import Path

import sqlalchemy
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext

from tests.api.test_studies import steady
from tests.cli.test_cli import WAKEYARD
from wakeyard.api.submission import spec_hash
from wakeyard.core.migrate import head, migrate, revision
from wakeyard.core.store import Base, Job, OverCap, Provenance, Store, utcnow


def test_the_migrations_make_exactly_the_models_tables(blank_store_url: str) -> None:
    assert migrate(blank_store_url) == (None, head())
    engine = sqlalchemy.create_engine(blank_store_url)
    try:
        with engine.connect() as conn:
            assert compare_metadata(MigrationContext.configure(conn), Base.metadata) == []
    finally:
        engine.dispose()
    assert migrate(blank_store_url) == (head(), head())  # a second run changes nothing


def test_a_store_is_never_migrated_by_connecting(blank_store_url: str) -> None:
    store = Store(blank_store_url)
    store.ping()
    assert sqlalchemy.inspect(store.engine).get_table_names() == [] and revision(blank_store_url) is None
    store.engine.dispose()


def test_a_job_store_from_before_migrations_and_studies_is_upgraded(blank_store_url: str) -> None:
    """The jobs table as the first release made it (no reuse or study columns, no other tables, no version)."""
    new = {"spec_hash", "reused_from", "study_id", "study_values", "disk_bytes", "trimmed_at", "slot"}
    old = sqlalchemy.MetaData()
    sqlalchemy.Table(
        "jobs",
        old,
        *[
            sqlalchemy.Column(c.name, c.type, primary_key=c.primary_key)
            for c in Job.__table__.columns
            if c.name not in new
        ],
    )
    engine = sqlalchemy.create_engine(blank_store_url)
    old.create_all(engine)
    engine.dispose()
    assert migrate(blank_store_url) == (None, head())
    store = Store(blank_store_url)
    spec = steady("upgrade")
    job = store.create("ana", spec, [], Provenance(spec_hash(spec), "upgrade"))
    claimed = store.claim_next("w")
    store.finish(claimed.id, claimed.claim, "succeeded", {"bodies": []})
    assert store.find_result(spec_hash(spec)).id == job.id
    inspector = sqlalchemy.inspect(store.engine)
    assert {"ix_jobs_spec_hash", "ix_jobs_study_id"} <= {i["name"] for i in inspector.get_indexes("jobs")}
    assert {"studies", "tokens", "workers", "job_tags"} <= set(inspector.get_table_names())
    store.engine.dispose()


def test_wakeyard_migrate_says_what_it_did_and_the_api_refuses_an_old_store(tmp_path: Path) -> None:
    from wakeyard.api.app import create_app
    from wakeyard.core.settings import Settings

    settings = Settings(data_dir=tmp_path, workers=0)
    try:
        create_app(settings)
        raise AssertionError("an unmigrated store was accepted")
    except RuntimeError as err:
        assert "run `wakeyard migrate`" in str(err)
    run = [*WAKEYARD, "migrate", "--data", str(tmp_path)]
    first = subprocess.run(run, capture_output=True, text=True, timeout=60)
    assert first.returncode == 0 and f"migrated from revision None to {head()}" in first.stderr, first.stderr
    again = subprocess.run(run, capture_output=True, text=True, timeout=60)
    assert again.returncode == 0 and f"at revision {head()} already" in again.stderr


def test_jobs_queued_or_running_before_the_cap_slots_count_against_the_cap(blank_store_url: str) -> None:
    """Revision 0005 gives the jobs already queued or running their owner's first slots: the cap still counts
    them, and a finished job takes none."""
    assert migrate(blank_store_url, "0003") == (None, "0003")
    engine = sqlalchemy.create_engine(blank_store_url)
    jobs = sqlalchemy.Table("jobs", sqlalchemy.MetaData(), autoload_with=engine)  # as revision 0003 made it
    base = {"owner": "ana", "title": "", "spec": {}, "tags": [], "created_at": utcnow(), "attempts": 0}
    base |= {"cancel_requested": False, "progress_fraction": 0.0, "progress_step": 0, "progress_time": 0.0}
    with engine.begin() as conn:
        for i, state in enumerate(["succeeded", "running", "queued", "queued"]):
            conn.execute(sqlalchemy.insert(jobs), {**base, "id": f"{i:032x}", "state": state})
    engine.dispose()
    assert migrate(blank_store_url) == ("0003", head())
    store = Store(blank_store_url)
    try:
        assert store.active_count("ana") == 3
        store.create("ana", steady("new"), [], cap=4)
        try:
            store.create("ana", steady("one too many"), [], cap=4)
            raise AssertionError("a fifth active job was created under a cap of 4")
        except OverCap as over:
            assert (over.active, over.cap) == (4, 4)
        assert store.create("bo", steady("another owner"), [], cap=1).owner == "bo"
    finally:
        store.engine.dispose()
