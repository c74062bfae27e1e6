"""Matrices that live across MPI processes, seen from code written for one process.

A ``Layout`` numbers the reduced DOFs the PETSc way: process r owns the contiguous range
``ranges[r]`` of rows, and ``order[i]`` is the reduced DOF of PETSc row i (DOFs are renumbered
so that each process owns the DOFs of its own elements). A ``DistributedMatrix`` wraps a
PETSc MPIAIJ matrix with its row and column layouts and multiplies global NumPy vectors in
the reduced numbering (``A @ X``), which is all the per-mode checks ask of K and M: each
process multiplies its rows, the few columns are then gathered on every process.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .petsc_stack import Stack


@dataclass(frozen=True)
class Layout:
    order: np.ndarray        # reduced DOF of each PETSc row, global
    counts: np.ndarray       # rows owned by each process

    @property
    def size(self) -> int:
        return int(self.order.size)

    @property
    def starts(self) -> np.ndarray:
        return np.concatenate([[0], np.cumsum(self.counts)[:-1]]).astype(np.int64)

    def owned(self, rank: int) -> np.ndarray:
        """The reduced DOFs process ``rank`` owns, in its PETSc order."""
        start = int(self.starts[rank])
        return self.order[start:start + int(self.counts[rank])]

    @property
    def position(self) -> np.ndarray:
        """PETSc row of each reduced DOF."""
        position = np.empty(self.size, dtype=np.int64)
        position[self.order] = np.arange(self.size)
        return position

    @classmethod
    def from_owners(cls, owner: np.ndarray, n_processes: int) -> "Layout":
        """DOF i goes to process owner[i]; within a process the reduced order is kept."""
        order = np.lexsort((np.arange(owner.size), owner)).astype(np.int64)
        return cls(order=order, counts=np.bincount(owner, minlength=n_processes))


class DistributedVectors:
    """Moves between global NumPy vectors in the reduced numbering and PETSc vectors."""

    def __init__(self, stack: Stack, layout: Layout):
        self.stack, self.layout = stack, layout
        self._owned = layout.owned(stack.rank)

    def create(self):
        PETSc = self.stack.PETSc
        vec = PETSc.Vec().createMPI((self._owned.size, self.layout.size),
                                    comm=self.stack.comm)
        vec.set(0.0)
        return vec

    def to_petsc(self, x: np.ndarray, vec=None):
        """A PETSc vector holding the global vector ``x`` (only this process's rows are read)."""
        vec = self.create() if vec is None else vec
        vec.getArray()[:] = x[self._owned]
        return vec

    def to_global(self, vec) -> np.ndarray:
        """The whole vector on every process, in the reduced numbering."""
        pieces = self.stack.comm.allgather(vec.getArray(readonly=True).copy())
        out = np.empty(self.layout.size, dtype=pieces[0].dtype if pieces else float)
        out[self.layout.order] = np.concatenate(pieces)
        return out


class DistributedMatrix:
    """A PETSc matrix with the layouts of its rows and columns; ``A @ X`` on global arrays."""

    def __init__(self, stack: Stack, mat, rows: Layout, cols: Layout):
        self.stack, self.mat = stack, mat
        self.row_vectors = DistributedVectors(stack, rows)
        self.col_vectors = DistributedVectors(stack, cols)
        # of a first-order kernel basis: the coordinates (3, owned columns) of the vertices
        # its columns stand for, which the auxiliary-space preconditioner needs
        self.column_points: np.ndarray | None = None

    @property
    def shape(self) -> tuple[int, int]:
        return self.mat.getSize()

    @property
    def nnz(self) -> int:
        info = self.mat.getInfo(self.stack.PETSc.Mat.InfoType.GLOBAL_SUM)
        return int(info["nz_used"])

    @property
    def dtype(self) -> np.dtype:
        return np.dtype(float)

    def __matmul__(self, X: np.ndarray) -> np.ndarray:
        columns = X.reshape(X.shape[0], -1)
        x, y = self.mat.createVecs()
        out = np.empty((self.shape[0], columns.shape[1]))
        for j in range(columns.shape[1]):
            self.col_vectors.to_petsc(columns[:, j], x)
            self.mat.mult(x, y)
            out[:, j] = self.row_vectors.to_global(y)
        return out.reshape((self.shape[0],) + X.shape[1:])

    def gradient_projector(self, kernel: "DistributedMatrix"):
        """The kernel projector of this mass matrix (femcav.eigen.distributed_projection)."""
        from .distributed_projection import DistributedGradientProjector
        return DistributedGradientProjector(self, kernel)
