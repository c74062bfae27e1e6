"""Fields of a distributed solve as partitioned VTK: one piece per MPI process and an index.

Every process evaluates the fields on the elements it assembled (the METIS part of
femcav.fem.distributed_assembly) and writes them, with only the points those elements use,
as ``fields_piece_R.vtu`` (R its rank): the same cell data as the serial ``fields.vtu``
(femcav.io.vtk.mode_cell_data). Rank 0 writes ``fields.pvtu``, VTK's XML index of the
pieces (a PUnstructuredGrid with one Piece per process), so no process evaluates or holds
the whole field. The pieces are written to temporaries in the output folder, which every
process must see (one machine, or a shared file system), and handed to rank 0's staged
output, which renames them into place with its other files or removes them on a failure.
"""

from __future__ import annotations

import sys
from contextlib import contextmanager
from pathlib import Path
from xml.sax.saxutils import quoteattr

import numpy as np

from ..fem.distributed_assembly import element_parts
from ..solver import SolveResult
from .atomic import StagedFiles, temporary_path
from .vtk import mode_cell_data

INDEX = "fields.pvtu"


def piece_name(rank: int) -> str:
    return f"fields_piece_{rank}.vtu"


class PiecesOfRankZero:
    """Rank 0's side of the collective write; ``write`` stages every piece and the index."""

    def __init__(self, result: SolveResult):
        from ..eigen.petsc_stack import load

        self.result, self.stack, self.entered = result, load(), False

    def write(self, files: StagedFiles) -> None:
        self.entered = True
        self.stack.comm.bcast(True, root=0)      # the folder exists: write your pieces
        outcomes = _write_own_piece(self.result, self.stack,
                                    lambda: files.path_for(piece_name(0), ".vtu"))
        failures = [message for _, message, _ in outcomes if message is not None]
        if failures:
            raise RuntimeError("a piece of fields.pvtu could not be written: "
                               + "; ".join(failures))
        for rank, (path, _, _) in enumerate(outcomes[1:], start=1):
            files.adopt(Path(path), piece_name(rank))
        files.write_text(INDEX, pvtu_index([piece_name(r) for r in range(self.stack.size)],
                                           outcomes[0][2]))


@contextmanager
def partitioned_fields(result: SolveResult):
    """On rank 0, around its staged output: yields a PiecesOfRankZero. When the block ends
    before ``write`` (rank 0 failed first), the other processes are told to write nothing,
    so that they do not wait for it for ever."""
    pieces = PiecesOfRankZero(result)
    try:
        yield pieces
    finally:
        if not pieces.entered:
            pieces.stack.comm.bcast(False, root=0)


def write_own_piece(result: SolveResult, folder: Path) -> None:
    """The side of every process but rank 0: once rank 0 has made the folder, write this
    process's piece to a temporary there and hand its path to rank 0."""
    from ..eigen.petsc_stack import load

    stack = load()
    if not stack.comm.bcast(None, root=0):
        return
    _, message, _ = _write_own_piece(
        result, stack, lambda: temporary_path(folder, piece_name(stack.rank), ".vtu"))
    if message is not None:
        raise RuntimeError(message)


def _write_own_piece(result: SolveResult, stack, make_path):
    """Collective: write this process's elements to ``make_path()``; rank 0 gets every
    process's (path, error message or None, cell arrays), the others their own."""
    try:
        mine = np.flatnonzero(element_parts(stack, result.space.mesh) == stack.rank)
        path = make_path()
        outcome = (str(path), None, write_piece(result, mine, path))
    except Exception as exc:  # noqa: BLE001 - said by rank 0 and by this process
        outcome = (None, f"process {stack.rank}: {exc}", None)
    gathered = stack.comm.gather(outcome, root=0)
    return gathered if stack.rank == 0 else outcome


def write_piece(result: SolveResult, elements: np.ndarray, path: Path) -> list[tuple]:
    """``elements`` (tetrahedron indices) with their fields, as a .vtu of the points they use;
    returns the cell arrays as (name, numpy dtype, components) for the index."""
    import meshio

    tm = result.space.model.mesh
    tets = tm.tets[elements]
    used, local = np.unique(tets, return_inverse=True)
    data = mode_cell_data(result, elements)
    meshio.write(str(path), meshio.Mesh(tm.points[used], [("tetra", local.reshape(tets.shape))],
                                        cell_data=data), file_format="vtu")
    return [(name, values[0].dtype, 1 if values[0].ndim == 1 else values[0].shape[1])
            for name, values in data.items()]


_VTK_TYPES = {"f8": "Float64", "f4": "Float32", "i4": "Int32", "i8": "Int64"}


def pvtu_index(pieces: list[str], arrays: list[tuple]) -> str:
    """VTK's XML parallel unstructured grid (file format of VTK 4.2+, "VTK File Formats",
    Kitware): the point type, the cell arrays, and one Piece per file."""
    def array(name, dtype, components):
        return (f'      <PDataArray type="{_VTK_TYPES[np.dtype(dtype).str[1:]]}" '
                f'Name={quoteattr(name)} NumberOfComponents="{components}"/>')

    lines = ['<?xml version="1.0"?>',
             '<VTKFile type="PUnstructuredGrid" version="0.1" '
             f'byte_order="{"LittleEndian" if sys.byteorder == "little" else "BigEndian"}">',
             '  <PUnstructuredGrid GhostLevel="0">',
             '    <PPoints>',
             '      <PDataArray type="Float64" NumberOfComponents="3"/>',
             '    </PPoints>',
             '    <PCellData>']
    lines += [array(*entry) for entry in arrays]
    lines += ['    </PCellData>']
    lines += [f'    <Piece Source={quoteattr(piece)}/>' for piece in pieces]
    lines += ['  </PUnstructuredGrid>', '</VTKFile>']
    return "\n".join(lines) + "\n"
