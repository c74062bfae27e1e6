"""K, M and the kernel basis G as PETSc matrices spread over MPI processes.

Every process holds the mesh and the space (the first step: the mesh is small next to the
factorisation), but assembles only its own share of the elements: METIS (pymetis) splits the
element graph (elements sharing a face) into one part per process on rank 0, which sends the
parts to all. A DOF belongs to the lowest-numbered process among the elements that touch
it, and the DOFs are renumbered so that each process owns a contiguous range of PETSc rows.
Each process sums its element matrices locally and adds them (ADD_VALUES) into MPIAIJ
matrices; PETSc moves the entries of shared DOFs to their owners. No process forms the
global K or M. G's rows are values, not sums, so each process sets the rows it owns, from
its own elements (every element touching a DOF gives that DOF's row whole).
"""

from __future__ import annotations

import hashlib

import numpy as np
import scipy.sparse as sp

from ..eigen.distributed_matrix import DistributedMatrix, Layout
from ..eigen.petsc_stack import Stack, load
from ..errors import InputError
from .assembly import element_matrices
from .gradient import gradient_entries


def assemble_distributed(space) -> tuple[DistributedMatrix, DistributedMatrix,
                                         DistributedMatrix]:
    """(K, M, G) of ``space`` over the kept DOFs, as femcav.fem.assembly.assemble and
    femcav.fem.gradient.kernel_basis give them, but spread over the MPI processes."""
    stack = load()
    if not (space.constraint.selects_only and space.scalar_constraint.selects_only):
        raise InputError("method \"distributed\" handles essential walls and symmetry cuts, "
                         "not linked DOFs (periodic cells) yet", option="method")
    if np.iscomplexobj(space.stiffness_coef) or np.iscomplexobj(space.mass_coef):
        raise InputError("method \"distributed\" runs on the real-valued PETSc build; this "
                         "model has complex coefficients", option="method")
    _check_same_mesh(stack, space.mesh)
    part = element_parts(stack, space.mesh)
    mine = np.flatnonzero(part == stack.rank)

    edge_index = space.constraint.reduced_index[space.dofs.element_dofs]   # -1: fixed
    edge_owner = dof_owners(edge_index, part, space.constraint.size)
    edges = Layout.from_owners(edge_owner, stack.size)
    scalar_index = space.scalar_constraint.reduced_index[space.scalar_dofs.element_dofs]
    scalars = Layout.from_owners(dof_owners(scalar_index, part, space.scalar_constraint.size),
                                 stack.size)

    pattern = _owned_pattern(stack, edges, edge_index, edge_owner)
    local_K, local_M = element_matrices(space, mine)
    K = _sum_into_petsc(stack, edges, edge_index[:, mine], local_K, pattern)
    M = _sum_into_petsc(stack, edges, edge_index[:, mine], local_M, pattern)
    G = _gradient(stack, space, mine, edges, edge_owner, scalars)
    if space.order == 1:   # the nodes of the auxiliary space: the owned columns' vertices
        G.column_points = space.mesh.p[:, space.scalar_constraint.kept[
            scalars.owned(stack.rank)]]
    return K, M, G


_last_parts: list = []      # [(mesh, parts)] of the last call: the writers ask again


def element_parts(stack: Stack, mesh) -> np.ndarray:
    """The process of every element: METIS on the face-sharing graph, on rank 0 (collective;
    the same mesh object again gives the same parts without a new partition)."""
    if stack.size == 1:
        return np.zeros(mesh.nelements, dtype=np.int64)
    if _last_parts and _last_parts[0][0] is mesh:
        return _last_parts[0][1]
    part = None
    if stack.rank == 0:
        import pymetis
        f2t = mesh.f2t
        interior = f2t[1] >= 0
        a, b = f2t[0, interior], f2t[1, interior]
        rows, cols = np.concatenate([a, b]), np.concatenate([b, a])
        order = np.argsort(rows, kind="stable")
        xadj = np.concatenate([[0], np.cumsum(np.bincount(rows, minlength=mesh.nelements))])
        _, membership = pymetis.part_graph(stack.size, xadj=xadj, adjncy=cols[order])
        part = np.asarray(membership, dtype=np.int64)
    part = stack.comm.bcast(part, root=0)
    _last_parts[:] = [(mesh, part)]
    return part


def dof_owners(index: np.ndarray, part: np.ndarray, n: int) -> np.ndarray:
    """The lowest process among the elements touching each of the ``n`` DOFs; ``index``
    (n_basis, n_elements) holds each element's DOFs, -1 for a fixed one."""
    owner = np.full(n, np.iinfo(np.int64).max, dtype=np.int64)
    kept = index >= 0
    np.minimum.at(owner, index[kept], np.broadcast_to(part, index.shape)[kept])
    return owner


def _check_same_mesh(stack: Stack, mesh) -> None:
    """Every process meshed the part itself; they must have the same mesh."""
    digest = hashlib.sha256(np.ascontiguousarray(mesh.p).tobytes()
                            + np.ascontiguousarray(mesh.t).tobytes()).hexdigest()
    if len(set(stack.comm.allgather(digest))) > 1:
        raise RuntimeError("the MPI processes made different meshes of the part; give the "
                           "case a mesh file ([geometry] mesh) so that they read one")


def _owned_pattern(stack: Stack, layout: Layout, index: np.ndarray, owner: np.ndarray):
    """Nonzeros per owned row inside and outside the owned column range (MPIAIJ's
    preallocation), from every element that touches an owned DOF."""
    start, count = int(layout.starts[stack.rank]), int(layout.counts[stack.rank])
    kept = index >= 0
    touches = np.zeros(index.shape, dtype=bool)
    touches[kept] = owner[index[kept]] == stack.rank
    near = index[:, touches.any(axis=0)]
    position = np.where(near >= 0, layout.position[np.maximum(near, 0)], -1)
    rows = np.broadcast_to(position[:, None, :], (near.shape[0],) * 2 + near.shape[1:])
    cols = np.broadcast_to(position[None, :, :], rows.shape)
    keep = (rows >= start) & (rows < start + count) & (cols >= 0)
    pairs = np.unique((rows[keep] - start) * layout.size + cols[keep])
    row, col = pairs // layout.size, pairs % layout.size
    inside = (col >= start) & (col < start + count)
    return (np.bincount(row[inside], minlength=count).astype(np.int32),
            np.bincount(row[~inside], minlength=count).astype(np.int32))


def _sum_into_petsc(stack: Stack, layout: Layout, index: np.ndarray, local: np.ndarray,
                    pattern) -> DistributedMatrix:
    """ADD the element matrices ``local`` (elements, n_basis, n_basis) of DOFs ``index``
    (n_basis, elements) into a new MPIAIJ matrix."""
    PETSc = stack.PETSc
    position = np.where(index >= 0, layout.position[np.maximum(index, 0)], -1).T
    rows = np.broadcast_to(position[:, :, None], local.shape)
    cols = np.broadcast_to(position[:, None, :], local.shape)
    keep = (rows >= 0) & (cols >= 0)
    touched, row = np.unique(rows[keep], return_inverse=True)
    summed = sp.csr_matrix((local[keep], (row, cols[keep])), shape=(touched.size, layout.size))
    summed.sum_duplicates()
    own = int(layout.counts[stack.rank])
    mat = PETSc.Mat().createAIJ(((own, layout.size), (own, layout.size)), nnz=pattern,
                                comm=stack.comm)
    mat.setValuesIJV(summed.indptr.astype(PETSc.IntType), summed.indices.astype(PETSc.IntType),
                     summed.data, addv=PETSc.InsertMode.ADD_VALUES,
                     rowmap=touched.astype(PETSc.IntType))
    mat.assemble()
    mat.setOption(PETSc.Mat.Option.SYMMETRIC, True)
    return DistributedMatrix(stack, mat, layout, layout)


def _gradient(stack: Stack, space, mine: np.ndarray, edges: Layout, edge_owner: np.ndarray,
              scalars: Layout) -> DistributedMatrix:
    """The kernel basis R G Q with this process's rows, set from its own elements."""
    PETSc = stack.PETSc
    rows, cols, vals = gradient_entries(space, mine)
    rows = space.constraint.reduced_index[rows]
    cols = space.scalar_constraint.reduced_index[cols]
    keep = (rows >= 0) & (cols >= 0)
    keep[keep] = edge_owner[rows[keep]] == stack.rank
    row, col = edges.position[rows[keep]], scalars.position[cols[keep]]
    _, first = np.unique(row * max(scalars.size, 1) + col, return_index=True)
    row, col, vals = row[first], col[first], vals[keep][first]

    start, own = int(edges.starts[stack.rank]), int(edges.counts[stack.rank])
    col_start, col_own = int(scalars.starts[stack.rank]), int(scalars.counts[stack.rank])
    inside = (col >= col_start) & (col < col_start + col_own)
    pattern = (np.bincount(row[inside] - start, minlength=own).astype(np.int32),
               np.bincount(row[~inside] - start, minlength=own).astype(np.int32))
    local = sp.csr_matrix((vals, (row - start, col)), shape=(own, max(scalars.size, 1)))
    mat = PETSc.Mat().createAIJ(((own, edges.size), (col_own, scalars.size)), nnz=pattern,
                                comm=stack.comm)
    if local.nnz:
        mat.setValuesIJV(local.indptr.astype(PETSc.IntType),
                         local.indices.astype(PETSc.IntType), local.data,
                         addv=PETSc.InsertMode.INSERT_VALUES,
                         rowmap=np.arange(start, start + own, dtype=PETSc.IntType))
    mat.assemble()
    return DistributedMatrix(stack, mat, edges, scalars)
