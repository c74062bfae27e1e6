"""What a verification ran on: femcav, Python and library versions, the machine, the thread
settings, so that a filed verify.json says which installation it vouches for."""

from __future__ import annotations

import os
import platform
import sys
from importlib import metadata

LIBRARIES = ("numpy", "scipy", "scikit-fem", "gmsh", "meshio", "pymetis", "pyamg",
             "matplotlib", "mkl")
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def _version(name: str) -> str | None:
    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return None


def environment() -> dict:
    from ..eigen.factorization import describe

    return {
        "python": sys.version.split()[0],
        "implementation": platform.python_implementation(),
        "libraries": {name: _version(name) for name in LIBRARIES},
        "factorization": describe("auto"),
        "platform": platform.platform(),
        "machine": platform.machine(),
        "processor": platform.processor() or None,
        "cpu_count": os.cpu_count(),
        "hostname": platform.node(),
        "threads": {name: os.environ.get(name) for name in THREAD_VARIABLES},
    }
