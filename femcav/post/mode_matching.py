"""Which coarse-mesh mode is which fine-mesh mode: by field overlap, not by sort order.

Sort order swaps modes whose frequencies cross between meshes (each mode's discretisation
error is its own), so the pairing is an assignment problem on the overlap matrix: the
Hungarian method on 1 - overlap maximises the total overlap of one-to-one pairs.

A degenerate pair (or triple) has no individual vectors: any rotation inside its eigenspace
is an equally good answer, and two meshes pick different rotations, so single overlaps split
as cos θ, sin θ. Modes whose frequencies agree to ``degenerate_rtol`` form a cluster, and the
overlap of a mode with a cluster member counts as the norm of its projection onto the span of
the whole cluster. Inside a matched cluster the individual overlaps decide the pairing when
they are clear; when they are not, the members pair in frequency order, the only order the
eigenspace has.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from .field_overlap import Overlaps, result_overlaps

# Relative frequency difference below which two modes of one mesh are treated as one
# degenerate eigenspace. Lowest-order meshes of 1.3 to 1.9 mm split the degenerate pairs of
# a box and a pillbox by 0.7 to 5 parts in 10^4 (measured); distinct modes that close are rare and pair correctly inside a cluster too
# when their fields are not mixed (CLEAR_OVERLAP below).
DEGENERATE_RTOL = 1e-3
# Inside a cluster, individual overlaps this high identify the fields; a 45° mix gives 0.71.
CLEAR_OVERLAP = 0.8
# Below this subspace overlap a pair is not the same mode: the partner is missing.
MIN_OVERLAP = 0.5


@dataclass(frozen=True)
class Matching:
    """For each fine mode, its coarse partner (or -1) and the subspace overlap of the pair."""

    partner: np.ndarray      # (n_fine,) int, index into the coarse modes, -1 when unmatched
    overlap: np.ndarray      # (n_fine,) the subspace overlap of the chosen pair (0 if none)
    fine_clusters: list[list[int]]
    coarse_clusters: list[list[int]]


def clusters(frequencies: np.ndarray, rtol: float = DEGENERATE_RTOL) -> list[list[int]]:
    """Groups of modes chained by relative frequency gaps below ``rtol``."""
    order = np.argsort(frequencies, kind="stable")
    groups: list[list[int]] = []
    for k, i in enumerate(order):
        if k and abs(frequencies[i] - frequencies[order[k - 1]]) <= rtol * abs(frequencies[i]):
            groups[-1].append(int(i))
        else:
            groups.append([int(i)])
    return groups


def subspace_overlaps(overlaps: Overlaps, coarse_clusters: list[list[int]],
                      fine_clusters: list[list[int]]) -> np.ndarray:
    """S[i, j]: the larger of the projection norms of coarse mode i onto the span of the fine
    cluster holding j, and of fine mode j onto the span of the coarse cluster holding i."""
    inner = overlaps.inner
    out = np.abs(inner).copy()
    for group in fine_clusters:
        if len(group) > 1:  # fine modes are orthonormal: the projection is a sum of squares
            norm = np.sqrt(np.sum(np.abs(inner[:, group]) ** 2, axis=1))   # complex: periodic
            out[:, group] = np.maximum(out[:, group], norm[:, None])
    for group in coarse_clusters:
        if len(group) > 1:  # transferred coarse fields are only nearly orthonormal
            v = inner[group, :]
            gram = overlaps.coarse_gram[np.ix_(group, group)]
            norm = np.sqrt(np.maximum(np.einsum("aj,aj->j", v.conj(),
                                                np.linalg.solve(gram, v)).real, 0))
            out[group, :] = np.maximum(out[group, :], norm[None, :])
    return np.minimum(out, 1.0)


def match_modes(overlaps: Overlaps, coarse_hz: np.ndarray, fine_hz: np.ndarray,
                degenerate_rtol: float = DEGENERATE_RTOL) -> Matching:
    """Pair every fine mode with a coarse one (rows of ``overlaps`` are coarse modes)."""
    coarse_hz, fine_hz = np.asarray(coarse_hz, float), np.asarray(fine_hz, float)
    c_groups, f_groups = clusters(coarse_hz, degenerate_rtol), clusters(fine_hz, degenerate_rtol)
    from scipy.optimize import linear_sum_assignment   # on use: loading scipy.optimize costs every command ~0.1 s

    score = subspace_overlaps(overlaps, c_groups, f_groups)
    rows, cols = linear_sum_assignment(1.0 - score.T)   # rows: fine, cols: coarse
    partner = np.full(fine_hz.size, -1)
    partner[rows] = cols
    partner = _pair_inside_clusters(partner, overlaps.matrix, c_groups, f_groups,
                                    coarse_hz, fine_hz)
    chosen = np.array([score[p, j] if p >= 0 else 0.0 for j, p in enumerate(partner)])
    partner = np.where(chosen >= MIN_OVERLAP, partner, -1)
    return Matching(partner=partner, overlap=np.where(partner >= 0, chosen, 0.0),
                    fine_clusters=f_groups, coarse_clusters=c_groups)


def _pair_inside_clusters(partner, single, c_groups, f_groups, coarse_hz, fine_hz):
    """Re-pair the members of each matched group of clusters: by individual overlap when that
    is clear, else in frequency order."""
    from scipy.optimize import linear_sum_assignment   # on use: loading scipy.optimize costs every command ~0.1 s

    nc, nf = coarse_hz.size, fine_hz.size
    c_of = np.empty(nc, int)
    for g, members in enumerate(c_groups):
        c_of[members] = g
    f_of = np.empty(nf, int)
    for g, members in enumerate(f_groups):
        f_of[members] = g
    # Nodes: coarse clusters, then fine clusters; an assigned pair links its two clusters.
    fine = np.flatnonzero(partner >= 0)
    link = sp.coo_matrix((np.ones(fine.size), (c_of[partner[fine]], len(c_groups) + f_of[fine])),
                         shape=(len(c_groups) + len(f_groups),) * 2)
    _, label = connected_components(link, directed=False)
    out = partner.copy()
    for component in np.unique(label[len(c_groups) + f_of[fine]]):
        js = fine[label[len(c_groups) + f_of[fine]] == component]
        if js.size < 2:
            continue
        cs = partner[js]
        block = single[np.ix_(cs, js)]
        r, k = linear_sum_assignment(-block)
        if block[r, k].min() >= CLEAR_OVERLAP:
            out[js[k]] = cs[r]
        else:
            out[js[np.argsort(fine_hz[js], kind="stable")]] = cs[np.argsort(coarse_hz[cs],
                                                                            kind="stable")]
    return out


def result_partners(previous, current) -> np.ndarray:
    """For each mode of the result ``current``, its partner's index among the modes of
    ``previous`` (-1: none), by field overlap (results of one field form with
    mode_spaces(), 3D or on a section)."""
    matching = match_modes(result_overlaps(previous, current),
                           np.array([m.frequency_hz for m in previous.modes]),
                           np.array([m.frequency_hz for m in current.modes]))
    return matching.partner
