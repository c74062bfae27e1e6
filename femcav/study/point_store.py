"""A sweep's solved points on disk: ``points/NNN.json`` and ``points/NNN.npz`` per point.

The JSON holds the summary (values, fingerprint, mode rows), the NPZ what tracking needs
(the mesh, or a body of revolution's meridional section, and the full mode vectors). Both are written atomically (unique temporary names in the
same folder, renamed into place, the summary last): a point whose summary is
there is complete, and two writers never share a temporary file. A point is reused only when its
stored fingerprint (femcav.study.fingerprint) equals the one the current run computes; a
file that cannot be read (cut short, damaged) counts as missing.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..geometry.meridional import MeridionalMesh
from ..geometry.mesh import TaggedMesh
from ..io import strict_json
from ..io.atomic import write_file_atomically


@dataclass(frozen=True)
class PointResult:
    """What a sweep keeps of one solved point."""

    values: tuple[float, ...]
    rows: list[dict]                # the mode rows of modes.json
    mesh: TaggedMesh | MeridionalMesh   # the part's mesh, or a body of revolution's section
    dofs: np.ndarray                # (every DOF of the mesh, n_modes): the full vectors
    form: str
    order: int
    seconds: float
    fingerprint: str
    peak_estimate_bytes: float | None = None    # the solver's memory estimate


class UnreadablePoint(Exception):
    """A point file that is there but cannot be read back."""


def point_files(folder: Path, index: int) -> tuple[Path, Path]:
    return folder / "points" / f"{index:03d}.json", folder / "points" / f"{index:03d}.npz"


def _mesh_arrays(mesh: TaggedMesh | MeridionalMesh) -> tuple[str, dict]:
    """The mesh's kind and arrays, for the NPZ."""
    if isinstance(mesh, MeridionalMesh):
        arrays = {"points": mesh.points, "triangles": mesh.triangles,
                  "tri_region": mesh.tri_region, "edges": mesh.edges,
                  "edge_tag": mesh.edge_tag}
        if mesh.triangles6 is not None:
            arrays["triangles6"] = mesh.triangles6
        return "section", arrays
    arrays = {"points": mesh.points, "tets": mesh.tets, "tet_region": mesh.tet_region,
              "faces": mesh.faces, "face_tag": mesh.face_tag}
    if mesh.tets10 is not None:
        arrays["tets10"] = mesh.tets10
    return "tetrahedra", arrays


def _mesh_from(z, document: dict) -> TaggedMesh | MeridionalMesh:
    optional = {name: z[name] if name in z.files else None for name in ("tets10", "triangles6")}
    if document.get("mesh_kind") == "section":
        return MeridionalMesh(points=z["points"], triangles=z["triangles"],
                              tri_region=z["tri_region"], region_names=document["region_names"],
                              edges=z["edges"], edge_tag=z["edge_tag"],
                              wall_names=document["wall_names"],
                              triangles6=optional["triangles6"])
    return TaggedMesh(points=z["points"], tets=z["tets"], tet_region=z["tet_region"],
                      region_names=document["region_names"], faces=z["faces"],
                      face_tag=z["face_tag"], wall_names=document["wall_names"],
                      tets10=optional["tets10"])


def save_point(folder: Path, index: int, point: PointResult) -> None:
    summary, arrays = point_files(folder, index)
    m = point.mesh
    kind, mesh_arrays = _mesh_arrays(m)
    document = {"values": list(point.values), "fingerprint": point.fingerprint,
                "form": point.form, "order": point.order, "seconds": point.seconds,
                "mesh_kind": kind, "region_names": m.region_names, "wall_names": m.wall_names,
                "modes": point.rows}
    # Each file is written under a unique temporary name and renamed into place, the summary
    # last, as it marks the point done. The NPZ carries the fingerprint too, so that an NPZ
    # renamed in just before a stop is never paired with an older summary. (Not
    # staged_output: the points folder keeps no manifest, which parallel workers would race
    # to update.)
    summary.parent.mkdir(parents=True, exist_ok=True)
    write_file_atomically(arrays, lambda p: np.savez_compressed(
        p, dofs=point.dofs, fingerprint=np.array(point.fingerprint), **mesh_arrays),
        suffix=".npz")
    write_file_atomically(summary, lambda p: p.write_text(strict_json.dumps(document, indent=1)))


def load_point(folder: Path, index: int, fingerprint: str) -> tuple[PointResult | None, str]:
    """(the stored point, "reused") when it was solved for ``fingerprint``; else (None, why):
    "missing", "changed" (solved for another case, options or femcav) or "unreadable: ..."."""
    summary, arrays = point_files(folder, index)
    if not summary.is_file():
        return None, "missing"
    try:
        document = _read_summary(summary)
        if document.get("fingerprint") != fingerprint:
            return None, "changed"
        return _read_arrays(arrays, document), "reused"
    except UnreadablePoint as exc:
        return None, f"unreadable: {exc}"


def read_point(folder: Path, index: int) -> PointResult:
    """The stored point, whatever its fingerprint; UnreadablePoint if it cannot be read."""
    summary, arrays = point_files(folder, index)
    return _read_arrays(arrays, _read_summary(summary))


def _read_arrays(arrays: Path, document: dict) -> PointResult:
    try:
        with np.load(arrays) as z:
            if str(z["fingerprint"]) != document["fingerprint"]:
                raise ValueError("its fingerprint is not the summary's (a run stopped "
                                 "between the two files)")
            mesh = _mesh_from(z, document)
            dofs = z["dofs"]
        point = PointResult(values=tuple(document["values"]), rows=document["modes"],
                            mesh=mesh, dofs=dofs, form=document["form"],
                            order=document["order"], seconds=document["seconds"],
                            fingerprint=document["fingerprint"])
    except Exception as exc:  # noqa: BLE001 - any damage to a point file means "solve again"
        raise UnreadablePoint(f"{arrays.name}: {type(exc).__name__}: {exc}") from None
    rows = point.rows
    if not (isinstance(rows, list) and all(isinstance(r, dict) and isinstance(
            r.get("frequency_hz"), (int, float)) for r in rows)):
        raise UnreadablePoint(f"{arrays.name[:-4]}.json: the mode rows are damaged")
    if dofs.ndim != 2 or dofs.shape[1] != len(rows):
        raise UnreadablePoint(f"{arrays.name}: {dofs.shape} mode vectors for "
                              f"{len(rows)} modes")
    return point


def _read_summary(summary: Path) -> dict:
    try:
        document = json.loads(summary.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise UnreadablePoint(f"{summary.name}: {type(exc).__name__}: {exc}") from None
    if not isinstance(document, dict):
        raise UnreadablePoint(f"{summary.name}: not a point summary")
    return document
