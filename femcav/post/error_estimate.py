"""An error bar on every frequency from a sequence of meshes of one part.

The part is solved at each mesh size; every mode of the finest mesh is followed back through
the coarser meshes by field overlap (``mode_matching``), and its matched frequencies are
extrapolated to zero mesh size with a fitted rate (``richardson``, which also says how the
bar is formed and why). A degenerate cluster is extrapolated as one (``estimate_matched``).

Each mesh is asked for a few more modes than requested, so that a mode near the top of the
list still finds its partner on a coarser mesh where the modes are ordered differently, and
so that a degenerate pair cut by the end of the list is matched whole.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field, replace
from typing import Callable, Sequence

import numpy as np

from ..progress import SILENT, Progress
from ..units import format_length
from .field_overlap import result_overlaps
from .mode_matching import DEGENERATE_RTOL, clusters, match_modes
from .q_bars import QEstimate, estimate_q_bars
from .richardson import extrapolate, sizes_from_dofs

SIZE_MEASURES = ("nominal", "dofs")
# Finer meshes added at most in place of sizes that repeated the mesh before them.
MAX_ADDED_MESHES = 3


def extra_modes(count: int) -> int:
    """Spare modes per mesh: enough for a crossing or a degenerate triple at the top."""
    return max(3, math.ceil(count / 3))


@dataclass(frozen=True)
class ModeEstimate:
    index: int                        # the mode's index in the finest result (1-based)
    frequency_hz: float               # on the finest mesh
    extrapolated_hz: float | None     # f0, or None when no coarser mesh has the mode
    error_estimate_hz: float | None   # the bar on frequency_hz, None when not estimable
    fitted_rate: float                # observed rate (nan when undefined)
    rate_used: float                  # the rate behind extrapolated_hz (nan when none)
    fallback: bool                    # True: the theoretical rate was used instead of the fit
    reason: str                       # why the fit was not used ("" when it was)
    safety_factor: float
    matched_hz: tuple[float | None, ...]   # per mesh of EstimatedResult.sizes; None: unmatched
    overlaps: tuple[float, ...]       # subspace overlap with the finest mode, per mesh
    # the degenerate cluster extrapolated together: its size on the finest mesh (1: a single
    # mode) and the indices of its members among the returned modes
    cluster_size: int = 1
    cluster: tuple[int, ...] = ()
    # the bars of its Q factors by LossReport field (post.q_bars); empty without losses
    q_bars: dict[str, QEstimate] = field(default_factory=dict)


@dataclass(frozen=True)
class EstimatedResult:
    finest: object                    # the finest mesh's result, with the requested modes
    estimates: list[ModeEstimate]     # one per mode of ``finest``, in the same order
    sizes: tuple[float, ...]          # the meshes, coarse to fine (nominal sizes, m)
    effective_sizes: tuple[float, ...]   # the sizes the extrapolation used
    dofs: tuple[int, ...]


def estimate_from_results(results: Sequence, sizes: Sequence[float], *,
                          order_rate: float = 2.0, indices: Sequence[int] | None = None,
                          degenerate_rtol: float = DEGENERATE_RTOL) -> list[ModeEstimate]:
    """Estimates for the modes of the finest result (``indices``: 0-based positions in its
    mode list; default all). ``results[k]`` was solved on a mesh of size ``sizes[k]``; the
    smallest size is the finest mesh."""
    if len(results) != len(sizes) or len(results) < 2:
        raise ValueError("need one result per mesh size and at least two meshes")
    order = np.argsort(-np.asarray(sizes, float), kind="stable")
    results = [results[k] for k in order]
    finest = results[-1]
    fine_hz = np.array([m.frequency_hz for m in finest.modes])
    matched, overlaps, partners = [], [], []
    for coarse in results[:-1]:
        coarse_hz = np.array([m.frequency_hz for m in coarse.modes])
        o = result_overlaps(coarse, finest)
        matching = match_modes(o, coarse_hz, fine_hz, degenerate_rtol)
        matched.append([None if p < 0 else float(coarse_hz[p]) for p in matching.partner])
        overlaps.append([float(v) for v in matching.overlap])
        partners.append(matching.partner)
    matched.append([float(f) for f in fine_hz])
    overlaps.append([1.0] * fine_hz.size)
    estimates = estimate_matched(np.asarray(sizes, float)[order], matched, overlaps,
                                 order_rate=order_rate, degenerate_rtol=degenerate_rtol)
    q_bars = estimate_q_bars(results, partners, np.asarray(sizes, float)[order],
                             order_rate=order_rate, degenerate_rtol=degenerate_rtol)
    chosen = range(fine_hz.size) if indices is None else indices
    return [replace(estimates[j], index=finest.modes[j].index, q_bars=q_bars[j])
            for j in chosen]


def estimate_matched(sizes: np.ndarray, matched: list[list[float | None]],
                     overlaps: list[list[float]], *, order_rate: float = 2.0,
                     degenerate_rtol: float = DEGENERATE_RTOL) -> list[ModeEstimate]:
    """Estimates from matched frequencies: ``matched[k][j]`` is the frequency of finest mode
    j on mesh k (sizes coarse to fine, the last mesh the finest), None where unmatched.

    A degenerate cluster of the finest mesh is extrapolated as one: its mean frequency, over
    the meshes where every member is matched. To first order the members move by the
    eigenvalues of the discretisation's perturbation restricted to the eigenspace; their mean
    is its trace, which does not depend on how a mesh happens to split the cluster (T. Kato,
    Perturbation Theory for Linear Operators, ch. 2, from memory), while the split itself is
    mesh noise of the size of the convergence. A member's bar adds its distance from the
    cluster mean on the finest mesh (the triangle inequality:
    |f_j - f| <= |f_j - mean| + |mean - f|).
    """
    fine_hz = np.array(matched[-1], float)
    out: dict[int, ModeEstimate] = {}
    for group in clusters(fine_hz, degenerate_rtol):
        group = sorted(group)
        use = [k for k in range(len(sizes)) if all(matched[k][j] is not None for j in group)]
        mean = [float(np.mean([matched[k][j] for j in group])) for k in use]
        for j in group:
            out[j] = _estimate(j + 1, sizes, use, mean, matched, overlaps, j, group,
                               order_rate)
    return [out[j] for j in range(fine_hz.size)]


def _estimate(index, sizes, use, mean, matched, overlaps, j, group, order_rate) -> ModeEstimate:
    """Mode j's record; ``mean`` is its cluster's mean frequency on the meshes ``use``."""
    own = tuple(m[j] for m in matched)
    common = dict(index=index, frequency_hz=own[-1], matched_hz=own,
                  overlaps=tuple(o[j] for o in overlaps),
                  cluster_size=len(group),
                  cluster=tuple(g + 1 for g in group) if len(group) > 1 else ())
    if len(use) < 2:
        return ModeEstimate(extrapolated_hz=None, error_estimate_hz=None, fitted_rate=math.nan,
                            rate_used=math.nan, fallback=True,
                            reason="no coarser mesh has this mode", safety_factor=math.nan,
                            **common)
    x = extrapolate(sizes[use], mean, order_rate=order_rate)
    notes = [x.reason]
    if len(use) < len(sizes):
        notes.insert(0, f"matched on {len(use)} of {len(sizes)} meshes")
    return ModeEstimate(extrapolated_hz=x.extrapolated_hz,
                        error_estimate_hz=x.error_hz + abs(own[-1] - mean[-1]),
                        fitted_rate=x.fitted_rate, rate_used=x.rate_used, fallback=x.fallback,
                        reason="; ".join(filter(None, notes)), safety_factor=x.safety_factor,
                        **common)


def estimate_over_meshes(solve_at: Callable[[float, int], tuple], sizes: Sequence[float], *,
                         modes: int, near_hz: float | None = None,
                         order_rate: float | Callable[[object], float] = 2.0,
                         size_measure: str = "nominal", solve_many: Callable | None = None,
                         progress: Progress = SILENT) -> EstimatedResult:
    """Solve the part at every mesh size (metres, any order; at least two, three for an
    observed rate) and give each of the ``modes`` requested modes of the finest mesh an
    error estimate. ``solve_at(size, count)`` returns (model, result) for a mesh of ``size``
    asked for ``count`` modes; the result has ``modes``, ``dofs``, ``request`` and
    ``mode_spaces()`` (post.field_overlap), whichever discretisation made it.

    ``order_rate`` is the theoretical rate of the frequency error, 2k for elements of order k
    on a smooth part (the eigenvalue error goes like h^(2k); D. Boffi, Acta Numerica 19
    (2010), from memory); it is the fallback when the observed rate cannot be trusted; it may
    be a function of the model (femcav.post.singularity.bar_rate lowers it for parts with
    singular edges), called on the first element solve_at returns (the model, or whatever
    the caller's order_rate takes). ``solve_many(sizes, count)``, when given, solves the
    sizes at once (on a cluster) and returns the list of those pairs; solve_at then only
    serves a mesh added later. ``size_measure`` "dofs" extrapolates in
    N^(-1/d) (d = 3 for tetrahedra, 2 for a section) instead of the nominal size."""
    if size_measure not in SIZE_MEASURES:
        raise ValueError(f"size_measure must be one of {SIZE_MEASURES}, got {size_measure!r}")
    sizes = sorted((float(s) for s in sizes), reverse=True)
    if len(sizes) < 2 or len(set(sizes)) != len(sizes) or sizes[-1] <= 0:
        raise ValueError(f"need at least two distinct positive mesh sizes, got {sizes}")
    asked = modes + extra_modes(modes)
    results, solved, wanted, added = [], [], len(sizes), 0
    ratio = sizes[-2] / sizes[-1]
    ready = dict(zip(sizes, solve_many(sizes, asked))) if solve_many is not None else {}
    while sizes:
        size = sizes.pop(0)
        t0 = time.perf_counter()
        model, result = ready.pop(size) if size in ready else solve_at(size, asked)
        if callable(order_rate):
            order_rate = float(order_rate(model))
            progress.step(f"error estimate: theoretical rate h^{order_rate:.3g}")
        progress.step(f"error estimate: mesh {len(results) + 1} of {wanted}, size "
                      f"{format_length(size, 3)}: {result.dofs} DOFs, {len(result.modes)} "
                      f"modes in {time.perf_counter() - t0:.2f} s")
        if results and result.dofs == results[-1].dofs:
            # The mesher gave the same mesh for two sizes (it meshes coarse parts in steps):
            # it adds nothing to the sequence, so one more, finer mesh is solved instead.
            results.pop()
            solved.pop()
            added += 1
            if added > MAX_ADDED_MESHES:
                raise ValueError(f"the mesher gave the same mesh for {added + 1} sizes down to "
                                 f"{format_length(size, 3)}: it does not follow the size")
            if len(solved) + len(sizes) + 1 < wanted or not sizes:
                sizes.append((sizes[-1] if sizes else size) / ratio)
            progress.step("error estimate: that size gave the same mesh as the one before; "
                          f"adding a finer mesh of {format_length(sizes[-1], 3)}")
        results.append(result)
        solved.append(size)
    sizes = solved
    effective = (sizes if size_measure == "nominal"
                 else list(sizes_from_dofs([r.dofs for r in results],
                                           dimension=mesh_dimension(results[-1]))))
    t0 = time.perf_counter()
    finest = results[-1]
    keep = _requested(np.array([m.frequency_hz for m in finest.modes]), modes, near_hz)
    estimates = estimate_from_results(results, effective, order_rate=order_rate, indices=keep)
    trimmed = [replace(finest.modes[j], index=i + 1) for i, j in enumerate(keep)]
    renumber = {finest.modes[j].index: i + 1 for i, j in enumerate(keep)}
    estimates = [replace(e, index=i + 1,
                         cluster=tuple(renumber[c] for c in e.cluster if c in renumber))
                 for i, e in enumerate(estimates)]
    request = finest.request if finest.request is None else replace(finest.request, count=modes)
    progress.step(f"error estimate: modes matched and extrapolated in "
                  f"{time.perf_counter() - t0:.2f} s")
    return EstimatedResult(finest=replace(finest, modes=trimmed, request=request),
                           estimates=estimates, sizes=tuple(sizes),
                           effective_sizes=tuple(float(s) for s in effective),
                           dofs=tuple(r.dofs for r in results))


def mesh_dimension(result) -> int:
    """3 for a mesh of the part, 2 for a meridional section: DOFs grow like h^-dimension."""
    return 2 if result.element_kind.startswith("triangles") else 3


def _requested(ascending_hz: np.ndarray, count: int, near_hz: float | None) -> list[int]:
    """Positions of the requested modes among the extras: the lowest, or those nearest."""
    if near_hz is None:
        return list(range(min(count, ascending_hz.size)))
    return sorted(np.argsort(np.abs(ascending_hz - near_hz), kind="stable")[:count].tolist())
