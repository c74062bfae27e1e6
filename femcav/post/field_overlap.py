"""Overlap of modes solved on two meshes of the same part.

A mode of the coarse mesh is read at the quadrature points of the fine mesh (point location
in the coarse mesh, then the coarse basis there: fem.point_location), so both fields are
integrated with one rule, the fine one. The weight is the mass coefficient of the form
(eps_r in the E form, mu_r in the H form; times r on a meridional section): the overlap is
then the M-inner product of the fine discretisation, in which the fine modes are
orthonormal, and O_ij = |(c_i, f_j)_M| / (‖c_i‖_M ‖f_j‖_M) lies in [0, 1] by the
Cauchy–Schwarz inequality.

Spaces take part through three methods (fem.space.EdgeSpace and the axisymmetric order
spaces have them): ``samples()`` -> quadrature points and weights, ``sampled_fields(vectors)``
-> the fields there, ``field_reader(points)`` -> a Transfer. A result whose modes live in
several spaces (a body of revolution: one per azimuthal order) gives them by
``mode_spaces()``; modes of different spaces are orthogonal and overlap 0.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..fem.point_location import Transfer
from .fields import most_real_phase


@dataclass(frozen=True)
class Overlaps:
    """``matrix[i, j]`` = overlap of coarse mode i with fine mode j, in [0, 1]. ``inner`` holds
    the signed inner products of the normalised fields and ``coarse_gram`` those of the
    normalised coarse fields with each other (not quite the identity: they were orthonormal
    on their own mesh), for projections onto the span of a cluster of modes."""

    matrix: np.ndarray
    inner: np.ndarray
    coarse_gram: np.ndarray


def transfer_matrix(coarse, points: np.ndarray) -> Transfer:
    """The matrix that evaluates a stored mode vector of ``coarse`` at ``points``."""
    return coarse.field_reader(points)


def mode_overlaps(coarse, coarse_dofs: np.ndarray, fine, fine_dofs: np.ndarray) -> Overlaps:
    """Overlaps of the coarse modes (columns of ``coarse_dofs``) with the fine ones."""
    if coarse.form != fine.form:
        raise ValueError(f"cannot compare an {coarse.form} form result with an {fine.form} "
                         "form one: the stored fields differ")
    if np.iscomplexobj(coarse_dofs) or np.iscomplexobj(fine_dofs):
        # complex modes (losses inside the solve): each turned to its most-real phase, so
        # that the signed inner products keep their meaning; magnitudes use xᴴ y
        coarse_dofs, fine_dofs = (np.column_stack([most_real_phase(x) for x in d.T]).astype(
            complex) for d in (coarse_dofs, fine_dofs))
    points, weight = fine.samples()
    reader = coarse.field_reader(points)
    c = (reader.matrix @ coarse_dofs).reshape(-1, points.shape[1], coarse_dofs.shape[1])
    f = fine.sampled_fields(fine_dofs)
    c_bar, f_bar = (np.conj(a) if np.iscomplexobj(a) else a for a in (c, f))
    cross = np.einsum("cpi,p,cpj->ij", c_bar, weight, f)
    gram = np.einsum("cpi,p,cpk->ik", c_bar, weight, c)
    c_norm = np.sqrt(np.maximum(np.real(np.diag(gram)), np.finfo(float).tiny))
    f_norm = np.sqrt(np.maximum(np.real(np.einsum("cpj,p,cpj->j", f_bar, weight, f)),
                                np.finfo(float).tiny))
    inner = cross / np.outer(c_norm, f_norm)
    return Overlaps(matrix=np.minimum(np.abs(inner), 1.0), inner=np.real(inner),
                    coarse_gram=np.real(gram) / np.outer(c_norm, c_norm))


def result_overlaps(coarse, fine) -> Overlaps:
    """Overlaps of every mode of the result ``coarse`` with every mode of ``fine``, space by
    space (``mode_spaces()``: (key, space, positions of its modes)); 0 across spaces."""
    n_c, n_f = len(coarse.modes), len(fine.modes)
    complex_fields = any(np.iscomplexobj(m.dofs) for m in (*coarse.modes, *fine.modes))
    kind = complex if complex_fields else float
    matrix, inner, gram = np.zeros((n_c, n_f)), np.zeros((n_c, n_f), kind), np.eye(n_c, dtype=kind)
    fine_spaces = {key: (space, positions) for key, space, positions in fine.mode_spaces()}
    for key, space, rows in coarse.mode_spaces():
        if key not in fine_spaces or not rows:
            continue
        fine_space, cols = fine_spaces[key]
        if not cols:
            continue
        o = mode_overlaps(space, np.column_stack([coarse.modes[i].dofs for i in rows]),
                          fine_space, np.column_stack([fine.modes[j].dofs for j in cols]))
        block = np.ix_(rows, cols)
        matrix[block], inner[block] = o.matrix, o.inner
        gram[np.ix_(rows, rows)] = o.coarse_gram
    return Overlaps(matrix=matrix, inner=inner, coarse_gram=gram)
