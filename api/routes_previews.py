"""Previews: what a spec would become if it were queued, computed by the solver (``solver.preview``).

A preview never queues anything. A spec with problems is still answered with 200 and a ``problems`` list (every
field and geometry problem at once, each ``{field, message}`` as in a 422), so a form can show them all while the
user types; only a body that is not JSON at all is refused with 422.
"""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Body

from wakeyard.solver.preview import answer, preview

from .deps import SettingsDep, UserDep
from .routes_jobs import SPEC_BODY, limits
from .text_checks import NUL_MESSAGE, nul_fields

router = APIRouter(prefix="/api/v1/previews", tags=["previews"])


@router.post(
    "",
    openapi_extra=SPEC_BODY,
    summary="Preview a job spec without queueing it",
    description=(
        "Returns `problems` (every field and geometry problem at once, `{field, message}`; empty when the spec "
        "would be accepted) and, when there are none: the normalised `spec`, the `reynolds` number, the `blockage` "
        "ratio, the body `outlines` to draw, `warnings` (`{field, message}`: what would not stop the run but "
        "deserves a look, such as a fixed time step past the CFL limit of explicit convection, which the solver "
        "splits, or a spring-mounted body with little room to swing) and an `estimate` "
        "`{cells, dofs, steps, seconds, cfl, method, note}`. Cells and dofs come from a "
        "dry run of the mesher (`method: mesher`, the figures the run will have and the unknowns limit judges) or, "
        "for a mesh too big to generate quickly, from the size rule (`method: rule`). `steps` is null for steady "
        "runs, `end_time / time_step` for the fixed schemes and an estimate for the error-controlled scheme "
        "bdf2-adaptive, whose steps are chosen while it runs (its CFL cap or an accuracy step, whichever is "
        "smaller; within a factor of 2 on the calibration runs). `seconds` is a rough estimate of the run's "
        "wall-clock time from a cost per step calibrated against the unknowns on one machine, not a promise; "
        "`cfl` is the CFL number of a fixed step near the bodies (the fastest inflow on the shortest edge, the "
        "solver's measure), null otherwise."
    ),
)
def create_preview(settings: SettingsDep, _: UserDep, data: Annotated[Any, Body()]) -> dict[str, Any]:
    if isinstance(data, dict) and (nul := nul_fields(data)):
        return answer(None, [(field, NUL_MESSAGE) for field in nul])
    return preview(data, limits(settings))  # a plain def: FastAPI runs it in the thread pool (gmsh takes time)
