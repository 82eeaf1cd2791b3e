"""Result files: forces.csv, summary.json, status.json, field snapshots (npz, VTU + PVD).

Every file is written to a temporary name and renamed, so a reader never sees
half a file and a killed run leaves the last complete version behind.
"""

from __future__ import annotations

import csv
import io
import json
import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

import meshio
import numpy as np
import scipy.sparse as sp
from skfem import Basis

from .taylor_hood import TaylorHood


def write_atomic(path: Path, data: bytes | str) -> None:
    tmp = path.with_name(f".{path.name}.tmp")
    tmp.write_bytes(data.encode() if isinstance(data, str) else data)
    os.replace(tmp, path)


def write_json(path: Path, obj: Any) -> None:
    write_atomic(path, json.dumps(obj, indent=2, allow_nan=False, default=_plain) + "\n")


def _plain(value: Any) -> Any:
    if isinstance(value, np.generic):
        return value.item()
    raise TypeError(f"cannot write {type(value).__name__} to JSON")


def force_columns(body_names: list[str], pressure_drop: bool, velocity_probes: list[int] | None = None) -> list[str]:
    """forces.csv header: time, four columns per body, the pressure drop, then velocities of the numbered probes."""
    cols = ["time"]
    for name in body_names:
        cols += [f"{name}_fx", f"{name}_fy", f"{name}_cd", f"{name}_cl"]
    cols += ["pressure_drop"] if pressure_drop else []
    for k in velocity_probes or []:
        cols += [f"probe{k}_ux", f"probe{k}_uy"]
    return cols


def _force_lines(rows: list[list[float]], columns: list[str] | None = None) -> str:
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    if columns is not None:
        writer.writerow(columns)
    writer.writerows([[f"{v:.12g}" for v in row] for row in rows])
    return buf.getvalue()


def write_forces(path: Path, columns: list[str], rows: list[list[float]]) -> None:
    write_atomic(path, _force_lines(rows, columns))


def append_forces(path: Path, rows: list[list[float]]) -> None:
    """Add whole lines to forces.csv in one write, so a reader of the growing file sees the rows so far (it
    keeps to lines that end in a newline); the text is the same ``write_forces`` would write."""
    with open(path, "a") as f:
        f.write(_force_lines(rows))


def read_forces(path: Path) -> tuple[list[str], np.ndarray]:
    with open(path) as f:
        columns = f.readline().strip().split(",")
    data = np.loadtxt(path, delimiter=",", skiprows=1, ndmin=2)
    return columns, data.reshape(-1, len(columns))


class Snapshots:
    """Field snapshots: compact npz for pictures and resumption, VTU with a PVD time index for ParaView."""

    def __init__(self, out: Path, th: TaylorHood, density: float):
        self.dir = out / "fields"
        self.dir.mkdir(parents=True, exist_ok=True)
        self.th = th
        dofs = th.velocity.element_dofs
        self.cells = [("triangle6", dofs[:6].T)] if th.elements == "P2P1" else [("triangle", dofs[:3].T)]
        self.pressure_to_velocity = density * on_velocity_nodes(th, th.pressure)
        # more fields on the velocity nodes (the temperature), set by whoever solves for them
        self.extra_fields: Callable[[], dict[str, np.ndarray]] | None = None
        self.moving = False  # a moving mesh: the npz files keep the node positions too (for the pictures)
        # a resumed run keeps the snapshots written before its checkpoint
        self.index = sorted((float(np.load(f)["time"]), f.stem) for f in self.dir.glob("step_*.npz"))

    def save(self, k: int, t: float, x: np.ndarray) -> dict[str, np.ndarray]:
        th = self.th
        ux, uy, p = th.split(x)
        fields = {"ux": ux, "uy": uy, "pressure": self.pressure_to_velocity @ p, "vorticity": th.vorticity(ux, uy)}
        extra = self.extra_fields() if self.extra_fields else {}
        fields.update(extra)
        stem = f"step_{k:06d}"
        nodes = th.velocity.doflocs  # where they are now: a moving mesh's snapshot shows its bodies where they were
        moved = {"points": nodes} if self.moving else {}
        np.savez_compressed(self.dir / f"{stem}.npz", time=t, **moved, **fields)
        mesh = meshio.Mesh(
            np.c_[nodes.T, np.zeros(th.nu)],
            self.cells,
            point_data={
                "velocity": np.c_[ux, uy, np.zeros_like(ux)],
                "pressure": fields["pressure"],
                "vorticity": fields["vorticity"],
                "speed": np.hypot(ux, uy),
                **extra,
            },
        )
        tmp = self.dir / f".{stem}.vtu"
        meshio.write(tmp, mesh, file_format="vtu", binary=True)
        os.replace(tmp, self.dir / f"{stem}.vtu")
        self.index = [(tt, s) for tt, s in self.index if tt < t - 1e-12] + [(t, stem)]
        self._write_pvd()
        return fields

    def _write_pvd(self) -> None:
        items = "\n".join(f'    <DataSet timestep="{t:.10g}" file="{s}.vtu"/>' for t, s in self.index)
        write_atomic(
            self.dir / "flow.pvd",
            '<?xml version="1.0"?>\n<VTKFile type="Collection" version="0.1">\n'
            f"  <Collection>\n{items}\n  </Collection>\n</VTKFile>\n",
        )


def on_velocity_nodes(th: TaylorHood, pb: Basis) -> sp.csr_matrix:
    """Matrix that evaluates a field of basis ``pb`` (pressure, temperature) at the velocity nodes.

    The files share one set of points; ``pb`` must live on the velocity basis's cells.
    """
    vb = th.velocity
    rows, cols, vals = [], [], []
    # evaluate every pressure basis function at the velocity element's reference nodes
    refs = vb.elem.doflocs.T
    for k in range(pb.Nbfun):
        phi = pb.elem.lbasis(refs, k)[0]
        for j in range(vb.Nbfun):
            rows.append(vb.element_dofs[j])
            cols.append(pb.element_dofs[k])
            vals.append(np.full(vb.element_dofs.shape[1], phi[j]))
    r, c, v = (np.concatenate(parts) for parts in (rows, cols, vals))
    keep = np.abs(v) > 1e-14
    m = sp.coo_matrix((v[keep], (r[keep], c[keep])), shape=(vb.N, pb.N)).tocsr()
    # shared nodes were summed once per cell: divide by the number of cells that wrote each node
    counts = np.bincount(vb.element_dofs.ravel(), minlength=vb.N)
    return sp.diags(1.0 / counts) @ m
