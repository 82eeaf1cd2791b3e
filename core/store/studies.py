"""Studies: a study row holds its spec; its points are ordinary jobs that carry its id."""

from __future__ import annotations

import uuid
from typing import Any

from sqlalchemy import select

from .base import Repository
from .models import Job, Study
from .values import utcnow


class Studies(Repository):
    def create_study(self, owner: str, kind: str, title: str, spec: dict[str, Any]) -> Study:
        study = Study(id=uuid.uuid4().hex, kind=kind, title=title[:200], owner=owner, spec=spec, created_at=utcnow())
        with self.session.begin() as s:
            s.add(study)
        return study

    def get_study(self, study_id: str) -> Study | None:
        with self.session() as s:
            return s.scalar(select(Study).where(Study.id == study_id))

    def list_studies(self, limit: int) -> list[Study]:
        with self.session() as s:
            return list(s.scalars(select(Study).order_by(Study.seq.desc()).limit(limit)))

    def study_jobs(self, study_ids: list[str]) -> list[Job]:
        """The jobs of these studies, in the order their points were created."""
        with self.session() as s:
            return list(s.scalars(select(Job).where(Job.study_id.in_(study_ids)).order_by(Job.seq)))
