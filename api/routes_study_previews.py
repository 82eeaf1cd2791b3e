"""Study previews: the points a study would queue and their size estimates, computed by the solver
(``solver.study_preview``) and never queued, so a form can show them before the user commits."""

from __future__ import annotations

import time
from typing import Any

from fastapi import APIRouter

from wakeyard import solver
from wakeyard.solver.study import StudySpec
from wakeyard.solver.study_preview import preview_study

from .deps import SettingsDep, UserDep
from .problems import SpecProblems
from .routes_jobs import limits
from .submission import SubmissionDep
from .text_checks import NUL_MESSAGE, nul_fields

router = APIRouter(prefix="/api/v1/studies/previews", tags=["studies"])


@router.post(
    "",
    summary="Preview a study without queueing it",
    description=(
        "Expands the study exactly as `POST /api/v1/studies` would and returns `count`, the `points` "
        "(`{values, reynolds, estimate}`, the estimate as in `POST /api/v1/previews`) and the `total` "
        "`{cells, dofs, steps, seconds}` over all points (`steps` null unless every point has a count or an "
        "estimate of one; `seconds` the sum of the points' rough estimates). A study that would be refused is "
        "refused here with the same 422 problems, and with the same 429 when its points would take the caller "
        "over the per-user cap of queued and running jobs."
    ),
)
def create_study_preview(
    settings: SettingsDep, submission: SubmissionDep, user: UserDep, spec: StudySpec
) -> dict[str, Any]:
    if nul := nul_fields(spec.model_dump(mode="json")):
        raise SpecProblems([(field, NUL_MESSAGE) for field in nul])
    deadline = time.monotonic() + settings.max_validation_seconds
    try:
        # a plain def: runs in the thread pool (gmsh); the cap is checked as queueing would, before any point
        return preview_study(spec, limits(settings), deadline, lambda n: submission.check_room(user.name, n))
    except solver.SpecError as err:
        raise SpecProblems(err.problems) from None
