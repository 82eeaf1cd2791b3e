"""Schema migrations of the job store (Alembic, scripts in ``core/migrations``): run once by ``wakeyard serve``
and ``wakeyard migrate`` (and ``wakeyard token create``, which may come first on a new store), never when a
connection or a ``Store`` is made."""

from __future__ import annotations

from importlib import resources

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import text
from sqlalchemy.engine import Connection

from .store.engine import make_engine

# any fixed number: PostgreSQL's advisory lock that lets one process at a time migrate a shared database
_LOCK = 0x77616B65


def _config() -> Config:
    config = Config()
    config.set_main_option("script_location", str(resources.files(__package__) / "migrations"))
    return config


def head() -> str:
    """The newest revision the installed code knows."""
    return ScriptDirectory.from_config(_config()).get_current_head() or ""


def current(connection: Connection) -> str | None:
    """The store's revision (None: not migrated yet, or made before migrations began)."""
    return MigrationContext.configure(connection).get_current_revision()


def revision(url: str) -> str | None:
    engine = make_engine(url)
    try:
        with engine.connect() as conn:
            return current(conn)
    finally:
        engine.dispose()


def migrate(url: str, target: str = "head") -> tuple[str | None, str]:
    """Bring the store at ``url`` to the newest revision (or ``target``, for tests of a later revision's upgrade);
    returns (revision before, revision after)."""
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            if conn.dialect.name == "postgresql":  # held until this transaction ends
                conn.execute(text("SELECT pg_advisory_xact_lock(:key)"), {"key": _LOCK})
            before = current(conn)
            config = _config()
            config.attributes["connection"] = conn
            command.upgrade(config, target)
            return before, current(conn) or ""
    finally:
        engine.dispose()
