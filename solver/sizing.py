"""How big a case's mesh will be: the one estimate behind the preview and the service's unknowns limit.

Cells and unknowns come from a dry run of the mesher (:func:`solver.meshing.counts`): the coarse base mesh is
generated and the uniform splits are counted, so the figures are the ones the run will have. A mesh too big to
generate quickly is estimated by the size rule instead (:func:`solver.meshing.estimate_cells`, calibrated against
the mesher; ``method`` says which). Dry runs are cached by the part of the spec that shapes the mesh.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from functools import lru_cache

from . import meshing
from .spec import JobSpec

# Largest base mesh (cells before the uniform splits, by the size rule) a dry run generates; gmsh makes about 1e5
# cells a second here, so a dry run stays well under a second. Bigger meshes get the size rule's figure.
MAX_DRY_CELLS = 60_000


@dataclass(frozen=True)
class MeshSize:
    """``cells``, ``dofs`` (unknowns) and the shortest edge of a case's mesh, with how they were found."""

    cells: int
    dofs: int
    shortest_edge: float
    method: str  # "mesher" (a dry run) or "rule"
    note: str | None = None


def mesh_size(spec: JobSpec, dry_run: bool = True) -> MeshSize:
    """The size of the mesh ``spec`` would get (``dry_run`` False: the size rule alone, for a caller out of time)."""
    s = meshing.sizes(spec)
    cells = meshing.estimate_cells(spec)
    rule = MeshSize(cells, meshing.estimate_dofs(spec), s.body / 2**s.extra_splits, "rule")
    if not dry_run or cells / 4 ** (s.preset_splits + s.extra_splits) > MAX_DRY_CELLS:
        return rule
    try:
        vertices, edges, cells, shortest = _counts(_mesh_key(spec))
    except Exception as err:  # gmsh raises plain Exceptions; the run would meet the same failure
        return MeshSize(rule.cells, rule.dofs, rule.shortest_edge, "rule", f"the mesher failed on this case ({err})")
    dofs = 3 * vertices + 2 * edges if spec.elements == "P2P1" else 3 * vertices + 5 * edges + 2 * cells
    return MeshSize(cells, dofs, shortest, "mesher")


def _mesh_key(spec: JobSpec) -> str:
    """The part of the spec that shapes the mesh (no names, temperatures, spins or mounts), as canonical JSON."""
    bodies = [b.model_dump(mode="json", exclude={"name", "thermal", "spin", "mount"}) for b in spec.bodies]
    channel = {"length": spec.channel.length, "height": spec.channel.height}
    mesh = spec.mesh.model_dump(mode="json")
    return json.dumps([channel, bodies, mesh], sort_keys=True)


@lru_cache(maxsize=256)
def _counts(key: str) -> tuple[int, int, int, float]:
    channel, bodies, mesh = json.loads(key)
    return meshing.counts(JobSpec.model_validate({"channel": channel, "bodies": bodies, "mesh": mesh}))
