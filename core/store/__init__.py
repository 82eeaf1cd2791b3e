"""The job store (SQLAlchemy 2): the single source of truth for job state; broker messages only wake workers.

One class, :class:`Store`, made of one part per concern: jobs, studies, tokens, leases (claims, heartbeats and
the worker processes' liveness), usage (disk use per job and the retention rule's trims).
"""

from __future__ import annotations

from sqlalchemy.orm import sessionmaker

from .engine import make_async_engine, make_engine
from .jobs import Jobs, OverCap, Provenance
from .leases import Claimed, Leases, remote_worker
from .models import Base, Job, JobTag, Study, Token, WorkerSeen
from .studies import Studies
from .tokens import TokenRefused, Tokens, TokenTaken, token_state
from .usage import Usage
from .values import finite, utcnow


class Store(Jobs, Studies, Tokens, Leases, Usage):
    """Job-store operations used by the API, the workers and the lease reaper."""

    def __init__(self, url: str):
        """Connect only: the schema is brought up to date once, by ``core.migrate`` (``wakeyard migrate``)."""
        self.engine = make_engine(url)
        self.single = self.engine.execution_options(isolation_level="AUTOCOMMIT")
        self.async_engine = make_async_engine(url)
        self.session = sessionmaker(self.engine, expire_on_commit=False)
        self._token_users = {}


__all__ = [
    "Base",
    "Claimed",
    "Job",
    "JobTag",
    "OverCap",
    "Provenance",
    "Store",
    "Study",
    "Token",
    "TokenRefused",
    "TokenTaken",
    "WorkerSeen",
    "finite",
    "remote_worker",
    "token_state",
    "utcnow",
]
