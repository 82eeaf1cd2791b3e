"""The lift spectrum of a job's bodies, computed by the solver's ``spectrum`` from the job's forces.csv."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter

from wakeyard import solver
from wakeyard.solver.caution import CAUTION
from wakeyard.solver.output import read_forces
from wakeyard.solver.spectrum import lift_spectrum

from .deps import SettingsDep, StoreDep, UserDep
from .problems import NotFound

router = APIRouter(prefix="/api/v1/jobs", tags=["files"])


@router.get("/{job_id}/spectrum", summary="Amplitude spectrum of each body's lift, with the shedding peak")
def spectrum(store: StoreDep, settings: SettingsDep, job_id: str, _: UserDep) -> dict[str, Any]:
    job = store.get(job_id)
    if job is None:
        raise NotFound("job_id", f"no job {job_id}")
    path = settings.jobs_dir / job_id / "forces.csv"
    if not path.is_file():
        raise NotFound("path", f"job {job_id} has no force history (yet)")
    columns, data = read_forces(path)
    spec = solver.load(job.spec)
    bodies = []
    for i, body in enumerate(spec.bodies):
        column = f"{body.name}_cl"
        found = (
            lift_spectrum(
                data[:, 0], data[:, columns.index(column)], spec.reference_length(i), spec.reference_velocity()
            )
            if column in columns
            else None
        )
        bodies.append({"name": body.name, "spectrum": found})
    return {"bodies": bodies, "caution": CAUTION}
