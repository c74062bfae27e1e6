"""The fingerprint of a study point: everything that decides its result, hashed.

A sweep keeps every solved point in its folder and reuses it when run again; it may do so
only if nothing that decides the point has changed. The fingerprint is the SHA-256 of a
canonical JSON text (sorted keys, no spaces) holding:

- the point's case: the raw case tables with the point's values written in (the study
  tables themselves, [tolerances] and the title left out: they do not change the solve);
- the contents (SHA-256) of an imported mesh file, not only its name;
- the solve options the study adds (extra modes for tracking);
- RESULTS_VERSION, below.

RESULTS_VERSION names the numerics of femcav: raise it in any change that moves a solved
frequency, Q or field (elements, meshing, sizing, eigen solver, post-processing of the
stored rows), so that points solved by an older femcav are solved again rather than mixed
with new ones. Changes that do not move results (messages, speed, file layout read back
the same) leave it alone.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

RESULTS_VERSION = 2     # 2: a port terminates its lowest modes of every kind (TE, TM, TEM)
# Tables that do not decide a point's solve.
NOT_DECIDING = ("title", "sweep", "tune", "extract", "tolerances")


def point_fingerprint(point_data: dict, case_path: Path, options: dict,
                      file_digests: dict | None = None) -> str:
    """SHA-256 (hex) of the point's case tables ``point_data`` (values already written in),
    the contents of the mesh file they import, ``options`` and RESULTS_VERSION.
    ``file_digests`` caches file hashes by path across the points of one study."""
    tables = {k: v for k, v in point_data.items() if k not in NOT_DECIDING}
    payload = {"results_version": RESULTS_VERSION, "case": tables, "options": options,
               "mesh_file_sha256": _mesh_digest(tables, case_path, file_digests)}
    text = json.dumps(payload, sort_keys=True, separators=(",", ":"), ensure_ascii=True,
                      default=str)      # TOML dates and times, if any, as their text
    return hashlib.sha256(text.encode()).hexdigest()


def _mesh_digest(tables: dict, case_path: Path, cache: dict | None) -> str | None:
    geometry = tables.get("geometry")
    name = geometry.get("mesh") if isinstance(geometry, dict) else None
    if not isinstance(name, str):
        return None
    path = Path(name) if Path(name).is_absolute() else case_path.parent / name
    if cache is not None and path in cache:
        return cache[path]
    digest = file_sha256(path)
    if cache is not None:
        cache[path] = digest
    return digest


def file_sha256(path: Path) -> str | None:
    """The file's SHA-256, or None when it cannot be read (the solve will say why)."""
    h = hashlib.sha256()
    try:
        with open(path, "rb") as f:
            for block in iter(lambda: f.read(1 << 20), b""):
                h.update(block)
    except OSError:
        return None
    return h.hexdigest()
