"""PETSc, SLEPc and MPI for the distributed backend, loaded on first use.

The serial install never imports them: petsc4py, slepc4py and mpi4py come as Debian packages
built for Debian's own Python (scripts/distributed_env.sh makes an environment that has
them). When one is missing, ``load`` says which and how to get them, as an InputError.
PETSc reads its options from the PETSC_OPTIONS environment variable at start, which is how a
user passes ``-eps_...``, ``-st_...`` and ``-mat_mumps_...`` options through (README).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import InputError

# What a launcher sets in every process it starts (Open MPI, then MPICH / Intel MPI).
_WORLD_SIZE_VARIABLES = ("OMPI_COMM_WORLD_SIZE", "PMI_SIZE")
_RANK_VARIABLES = ("OMPI_COMM_WORLD_RANK", "PMI_RANK")


@dataclass(frozen=True)
class Stack:
    PETSc: object
    SLEPc: object
    comm: object        # mpi4py's COMM_WORLD

    @property
    def rank(self) -> int:
        return self.comm.Get_rank()

    @property
    def size(self) -> int:
        return self.comm.Get_size()


@lru_cache(maxsize=1)
def load() -> Stack:
    missing = []
    for name in ("mpi4py", "petsc4py", "slepc4py"):
        try:
            __import__(name)
        except ImportError:
            missing.append(name)
    if missing:
        raise InputError(f"\"distributed\" needs {', '.join(missing)}, which this Python "
                         "cannot import; make an environment that has them with "
                         "scripts/distributed_env.sh DIR, then run mpiexec -n N "
                         "DIR/bin/python -m femcav solve CASE", option="method")
    import petsc4py
    import slepc4py
    petsc4py.init()          # reads PETSC_OPTIONS; no command-line arguments of ours
    slepc4py.init()
    from mpi4py import MPI
    from petsc4py import PETSc
    from slepc4py import SLEPc
    if np.dtype(PETSc.ScalarType).kind != "f":
        raise InputError("method \"distributed\" needs the real-valued PETSc build (this one "
                         f"has scalars {PETSc.ScalarType}); scripts/distributed_env.sh sets it",
                         option="method")
    return Stack(PETSc=PETSc, SLEPc=SLEPc, comm=MPI.COMM_WORLD)


def launched_processes() -> int:
    """How many processes the MPI launcher started (1 without one), from its environment,
    without importing MPI."""
    for name in _WORLD_SIZE_VARIABLES:
        if os.environ.get(name, "").isdigit():
            return int(os.environ[name])
    return 1


def launched_rank() -> int:
    """This process's rank as the launcher set it (0 without one)."""
    for name in _RANK_VARIABLES:
        if os.environ.get(name, "").isdigit():
            return int(os.environ[name])
    return 0
