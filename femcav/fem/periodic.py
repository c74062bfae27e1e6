"""Periodic cells: the DOFs of one face follow those of its translate with a phase (Floquet).

A pair (A, B) of boundary surfaces, B a translate of A, says that the fields on B are the
fields on A, moved by the translation, times e^{-jφ} (the Floquet theorem: a mode of an
infinite chain of cells advances by the phase φ per cell). Both faces must be meshed alike:
every vertex, edge and facet of B has its translate on A; otherwise the pair is refused with
the place where the meshes differ.

A DOF on B is then a combination of the DOFs of its partner edge or facet on A: the DOFs are
moments in the parametrisation of the sorted vertices (fem.nedelec), and a partner whose
vertex order differs is parametrised differently. The combination is found by evaluating both
sets of moments on polynomial test fields (exact: each set spans the same functionals). The
scalar (gradient) space gets the same ties with the same phase, so that its gradients are
the curl-free fields of the cell and R G Q stays the kernel of the reduced problem.

An edge on two pairs (the corner edges of a 2- or 3-pair lattice cell) follows its partner
through both: the one-step ties are composed until every DOF is written in DOFs that are
not on any B face. Essential walls still fix their DOFs; a B DOF whose partner is fixed is
zero too.
"""

from __future__ import annotations

from functools import lru_cache
from itertools import permutations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from ..errors import InputError
from .constraints import Constraint
from .nedelec import _gauss_line, _monomials, _triangle_rule

# Vertices of two faces match when they are this fraction of the faces' shortest edge apart.
MATCH_FRACTION = 1e-3
# A tie factor whose imaginary part is below this is real (phase 0 or π): a real problem.
REAL_TIE = 1e-12
FIELD = "periodic.pair"


class FacePairing:
    """The matched entities of one pair: B's vertices, edges and facets with A's partners."""

    def __init__(self, mesh, facet_wall: dict[int, str], pair):
        self.pair = pair
        facets_a = _facets_named(facet_wall, pair.wall_a)
        facets_b = _facets_named(facet_wall, pair.wall_b)
        self.shift = _centroid(mesh, facets_b) - _centroid(mesh, facets_a)
        self.vertex_partner = _match_vertices(mesh, facets_a, facets_b, self.shift, pair)
        self.edges_b, self.edges_a, self.edge_flipped = self._match_edges(mesh, facets_a,
                                                                          facets_b)
        self.facets_b, self.facets_a, self.facet_order = self._match_facets(mesh, facets_a,
                                                                            facets_b)

    def _match_edges(self, mesh, facets_a, facets_b):
        edges_a = np.unique(mesh.f2e[:, facets_a])
        edges_b = np.unique(mesh.f2e[:, facets_b])
        ends = self.vertex_partner[mesh.edges[:, edges_b]]             # (2, n) on A
        found = _find(np.sort(mesh.edges[:, edges_a], axis=0), np.sort(ends, axis=0),
                      mesh.nvertices)
        if (found < 0).any():
            where = mesh.p[:, mesh.edges[:, edges_b[np.argmax(found < 0)]]].mean(axis=1)
            raise _mismatch(self.pair, f"the edge at {_mm(where)} on {self.pair.wall_b!r} "
                            f"has no partner edge on {self.pair.wall_a!r}")
        return edges_b, edges_a[found], ends[0] > ends[1]

    def _match_facets(self, mesh, facets_a, facets_b):
        corners = self.vertex_partner[mesh.facets[:, facets_b]]        # (3, n) on A
        found = _find(mesh.facets[:, facets_a], np.sort(corners, axis=0), mesh.nvertices)
        if (found < 0).any():
            where = mesh.p[:, mesh.facets[:, facets_b[np.argmax(found < 0)]]].mean(axis=1)
            raise _mismatch(self.pair, f"the triangle at {_mm(where)} on "
                            f"{self.pair.wall_b!r} has no partner triangle on "
                            f"{self.pair.wall_a!r}")
        # B's sorted vertex i is vertex order[i] of its partner's sorted vertices
        order = np.argsort(np.argsort(corners, axis=0), axis=0)
        return facets_b, facets_a[found], order


def periodic_constraints(model, mesh, facet_wall: dict[int, str], dofs, scalar_dofs,
                         fixed: np.ndarray, fixed_scalar: np.ndarray, order: int
                         ) -> tuple[Constraint, Constraint]:
    """The edge-space and scalar-space constraints of ``model.periodic`` on ``mesh``, with
    the essential walls' ``fixed`` DOFs (edge space) and ``fixed_scalar`` (scalar space)."""
    pairings = [FacePairing(mesh, facet_wall, pair) for pair in model.periodic]
    factors = [np.exp(-1j * pair.phase_rad) for pair in model.periodic]
    if all(abs(f.imag) < REAL_TIE for f in factors):
        factors = [float(np.round(f.real)) for f in factors]
    edge_ties = [_edge_space_ties(p, dofs, order, f) for p, f in zip(pairings, factors)]
    scalar_ties = [_scalar_space_ties(p, scalar_dofs, order, f)
                   for p, f in zip(pairings, factors)]
    edge = tied_constraint(dofs.N, edge_ties, fixed)
    constants = all(f == 1.0 for f in factors)   # only at phase 0 has the cell constant fields
    ground = _one_vertex_per_piece(mesh, scalar_ties, fixed_scalar) if constants else ()
    return edge, tied_constraint(scalar_dofs.N, scalar_ties, fixed_scalar, ground)


def tied_constraint(n_full: int, ties: list[tuple], fixed, ground=()) -> Constraint:
    """The constraint of ``ties`` (rows, cols, values per pair: DOF row = Σ value · DOF col)
    with ``fixed`` DOFs zero and the ``ground`` DOFs (independent ones) dropped."""
    step = _one_step(n_full, ties)
    dependent = np.unique(step.nonzero()[0])
    is_dependent = np.zeros(n_full, dtype=bool)
    is_dependent[dependent] = True
    independent = np.flatnonzero(~is_dependent)
    chain = (step + sp.csr_matrix((np.ones(independent.size), (independent, independent)),
                                  shape=(n_full, n_full))).tocsr()
    resolved = chain
    for _ in range(4):     # one more tie per pair a DOF sits on, at most three
        if not is_dependent[resolved.nonzero()[1]].any():
            break
        resolved = (resolved @ chain).tocsr()
    else:
        raise InputError("the periodic pairs tie faces in a loop; each pair's second face "
                         "must be a translate of its first, away from it", field=FIELD)
    zero = np.zeros(n_full, dtype=bool)
    zero[np.asarray(fixed, dtype=np.int64)] = True
    kept = np.setdiff1d(independent, np.flatnonzero(zero))
    kept = np.setdiff1d(kept, np.asarray(ground, dtype=np.int64))
    # Rows: dependent DOFs that no wall fixes; columns: the kept DOFs.
    rows_alive = sp.diags((is_dependent & ~zero).astype(float))
    links = (rows_alive @ resolved[:, kept]).tocsr()
    links.data[np.abs(links.data) < 1e-14] = 0.0
    links.eliminate_zeros()
    return Constraint(n_full, kept, links)


def _one_step(n_full: int, ties: list[tuple]) -> sp.csr_matrix:
    """The ties of all pairs in one matrix; a DOF on the B faces of two pairs keeps the
    first pair's tie (the other route reaches the same DOF with the same phase)."""
    claimed = np.zeros(n_full, dtype=bool)
    rows, cols, vals = [], [], []
    for r, c, v in ties:
        take = ~claimed[r]
        rows.append(r[take]), cols.append(c[take]), vals.append(v[take])
        claimed[np.unique(r)] = True
    vals = np.concatenate(vals) if vals else np.zeros(0)
    return sp.csr_matrix((vals, (np.concatenate(rows), np.concatenate(cols))),
                         shape=(n_full, n_full))


def _edge_space_ties(pairing: FacePairing, dofs, order: int, factor) -> tuple:
    """(rows, cols, values): each Nédélec DOF on B in the DOFs of its partner on A."""
    blocks = [(dofs.edge_dofs[:, pairing.edges_b], dofs.edge_dofs[:, pairing.edges_a],
               pairing.edge_flipped.astype(int), lambda flip: _edge_transfer(order, flip))]
    if order >= 2:
        codes = _permutation_code(pairing.facet_order)
        blocks.append((dofs.facet_dofs[:, pairing.facets_b], dofs.facet_dofs[:, pairing.facets_a],
                       codes, lambda code: _face_transfer(order, _PERMUTATIONS[code])))
    return _tie_entries(blocks, factor)


def _scalar_space_ties(pairing: FacePairing, dofs, order: int, factor) -> tuple:
    """(rows, cols, values): each Lagrange DOF on B equals its partner on A (point values;
    the edge nodes of a reversed edge in reverse order)."""
    b = np.flatnonzero(pairing.vertex_partner >= 0)
    blocks = [(dofs.nodal_dofs[:, b], dofs.nodal_dofs[:, pairing.vertex_partner[b]],
               np.zeros(b.size, dtype=int), lambda _: np.eye(1))]
    if order >= 2:
        blocks.append((dofs.edge_dofs[:, pairing.edges_b], dofs.edge_dofs[:, pairing.edges_a],
                       pairing.edge_flipped.astype(int),
                       lambda flip: np.eye(order - 1)[::-1] if flip else np.eye(order - 1)))
    if order == 3:   # one node per face, at its centre
        blocks.append((dofs.facet_dofs[:, pairing.facets_b], dofs.facet_dofs[:, pairing.facets_a],
                       np.zeros(pairing.facets_b.size, dtype=int), lambda _: np.eye(1)))
    return _tie_entries(blocks, factor)


def _tie_entries(blocks, factor) -> tuple:
    """Entries of DOF_B[p] = factor Σ_q T[p, q] DOF_A[q] for blocks (B DOFs (n, m), A DOFs
    (n, m), a code per entity, code -> T (n x n))."""
    rows, cols, vals = [], [], []
    for dofs_b, dofs_a, codes, transfer in blocks:
        for code in np.unique(codes):
            T = transfer(int(code))
            which = codes == code
            p, q = np.nonzero(np.abs(T) > 1e-12)
            rows.append(dofs_b[p][:, which].ravel())
            cols.append(dofs_a[q][:, which].ravel())
            vals.append(np.repeat(factor * T[p, q], which.sum()))
    return (np.concatenate(rows).astype(np.int64), np.concatenate(cols).astype(np.int64),
            np.concatenate(vals))


@lru_cache(maxsize=None)
def _edge_transfer(k: int, flipped: int) -> np.ndarray:
    """T (k x k): the edge moments ∫ u·t s^p ds (fem.nedelec) of B's edge in those of A's
    partner edge, for a partner run the same way (identity) or the other way."""
    s, w = _gauss_line(k + 3)
    tests = np.array([s**i for i in range(k)])         # u·t along A's direction, degree < k
    own = np.array([[np.sum(w * s**p * g) for g in tests] for p in range(k)])
    if not flipped:
        return np.eye(k)
    # B's parameter runs from A's far end: point s' is A's 1 - s', tangent reversed
    other = np.array([[-np.sum(w * s**p * g) for g in np.array([(1 - s)**i for i in range(k)])]
                      for p in range(k)])
    return other @ np.linalg.inv(own)


_PERMUTATIONS = tuple(permutations(range(3)))


def _permutation_code(order: np.ndarray) -> np.ndarray:
    codes = {perm: i for i, perm in enumerate(_PERMUTATIONS)}
    return np.array([codes[tuple(col)] for col in order.T.tolist()], dtype=int)


@lru_cache(maxsize=None)
def _face_transfer(k: int, perm: tuple[int, int, int]) -> np.ndarray:
    """T (k(k-1) square): the face moments (fem.nedelec) of B's triangle in those of its
    partner, when B's sorted vertex i is the partner's vertex perm[i]. The moments are
    evaluated in the partner's reference triangle on vector monomials of degree <= k."""
    corners = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]])
    tests = [(c, m) for c in range(2) for m in _monomials(k) if m[2] == 0]

    def moments_in(vertex_order):
        a, b, c = corners[list(vertex_order)]
        pts, wts = _triangle_rule(k + 3)
        X = a[:, None] + np.outer(b - a, pts[:, 0]) + np.outer(c - a, pts[:, 1])
        rows = []
        for p in _monomials(k - 2):
            if p[2] != 0:
                continue
            q = wts * pts[:, 0] ** p[0] * pts[:, 1] ** p[1]
            for tangent in (b - a, c - a):
                rows.append([tangent[comp] * np.sum(q * X[0] ** m[0] * X[1] ** m[1])
                             for comp, m in tests])
        return np.array(rows)

    own, other = moments_in((0, 1, 2)), moments_in(perm)
    T = other @ np.linalg.pinv(own)
    assert np.allclose(T @ own, other, atol=1e-10), "face moments are not closed under a permutation"
    return T


def _one_vertex_per_piece(mesh, scalar_ties, fixed_scalar) -> np.ndarray:
    """At phase 0 a constant potential has no gradient: drop one independent vertex per
    connected piece that no essential wall touches (as fem.space does without pairs)."""
    n = mesh.nvertices
    t = mesh.t
    graph = sp.coo_matrix((np.ones(t.shape[0] ** 2 * t.shape[1]),
                           (np.repeat(t, t.shape[0], axis=0).ravel(),
                            np.tile(t, (t.shape[0], 1)).ravel())), shape=(n, n))
    _, label = connected_components(graph, directed=False)
    dependent = np.zeros(n, dtype=bool)
    for rows, _, _ in scalar_ties:
        dependent[rows[rows < n]] = True
    touched = np.zeros(n, dtype=bool)
    fixed_scalar = np.asarray(fixed_scalar, dtype=np.int64)
    touched[np.unique(label[fixed_scalar[fixed_scalar < n]])] = True
    out = []
    for piece in np.flatnonzero(~touched[:label.max() + 1]):
        free = np.flatnonzero((label == piece) & ~dependent)
        if free.size:
            out.append(free[0])
    return np.array(out, dtype=np.int64)


def _facets_named(facet_wall: dict[int, str], name: str) -> np.ndarray:
    facets = np.array(sorted(f for f, wall in facet_wall.items() if wall == name), dtype=np.int64)
    if not facets.size:
        raise InputError(f"the surface {name!r} of a periodic pair is not on the boundary of "
                         "the mesh", field=FIELD)
    return facets


def _centroid(mesh, facets: np.ndarray) -> np.ndarray:
    corners = mesh.p[:, mesh.facets[:, facets]]                       # (3, 3, n)
    area = np.linalg.norm(np.cross(corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0],
                                   axis=0), axis=0)
    return (corners.mean(axis=1) * area).sum(axis=1) / area.sum()


def _match_vertices(mesh, facets_a, facets_b, shift, pair) -> np.ndarray:
    """partner[v] = the vertex of A that B's vertex v is the translate of; -1 off B."""
    on_a = np.unique(mesh.facets[:, facets_a])
    on_b = np.unique(mesh.facets[:, facets_b])
    edges = mesh.p[:, mesh.facets[[0, 1, 2], :][:, facets_a]]
    shortest = np.min(np.linalg.norm(edges - np.roll(edges, 1, axis=1), axis=0))
    tol = MATCH_FRACTION * shortest
    if np.linalg.norm(shift) <= tol or np.intersect1d(on_a, on_b).size:
        raise _mismatch(pair, f"{pair.wall_a!r} and {pair.wall_b!r} touch or coincide; the "
                        "second face must be a translate of the first, away from it")
    distance, nearest = cKDTree(mesh.p[:, on_a].T).query(mesh.p[:, on_b].T - shift)
    if distance.max() > tol:
        worst = np.argmax(distance)
        raise _mismatch(pair, f"the vertex at {_mm(mesh.p[:, on_b[worst]])} on "
                        f"{pair.wall_b!r} has no partner on {pair.wall_a!r} moved by "
                        f"{_mm(-shift)} (nearest {distance[worst] * 1e3:.3g} mm away)")
    if on_a.size != on_b.size or np.unique(nearest).size != on_b.size:
        unmatched = np.setdiff1d(np.arange(on_a.size), nearest)
        where = mesh.p[:, on_a[unmatched[0]]] if unmatched.size else mesh.p[:, on_a[0]]
        raise _mismatch(pair, f"the vertex at {_mm(where)} on {pair.wall_a!r} has no partner "
                        f"on {pair.wall_b!r} ({on_a.size} vertices against {on_b.size})")
    partner = np.full(mesh.nvertices, -1, dtype=np.int64)
    partner[on_b] = on_a[nearest]
    return partner


def _find(table: np.ndarray, wanted: np.ndarray, n: int) -> np.ndarray:
    """Column index in ``table`` (rows sorted per column) of each column of ``wanted``;
    -1 where there is none."""
    key = lambda cols: sum(cols[i].astype(np.int64) * n ** (cols.shape[0] - 1 - i)
                           for i in range(cols.shape[0]))
    keys = key(table)
    order = np.argsort(keys)
    want = key(wanted)
    at = np.clip(np.searchsorted(keys[order], want), 0, keys.size - 1)
    found = order[at]
    return np.where(keys[found] == want, found, -1)


def _mismatch(pair, what: str) -> InputError:
    return InputError(f"the periodic faces are not meshed alike: {what}; mesh the two faces "
                      "identically (the builders do when the case has [periodic])", field=FIELD)


def _mm(x) -> str:
    return "(" + ", ".join(f"{v * 1e3:.4g}" for v in np.ravel(x)) + ") mm"
