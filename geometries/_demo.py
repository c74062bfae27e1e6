"""Shared by the family scripts here: mesh the case file of the same name, write the mesh
and its picture, print the summary."""

from __future__ import annotations

import sys
from pathlib import Path

from femcav.errors import InputError
from femcav.io.mesh_summary import mesh_summary
from femcav.mesh_runner import mesh_case
from femcav.progress import Progress


def mesh_and_show(script: str) -> int:
    case = Path(script).with_suffix(".toml")
    try:
        run = mesh_case(case, progress=Progress())
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    print(mesh_summary(run.case.title, run.quality))
    print(f"mesh and picture in {run.folder}; solve with: femcav solve {case}")
    return 0
