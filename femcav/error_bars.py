"""Error bars from a mesh sequence, for any solver: the model at each size is built by the
caller, solved by ``solve`` (the 3D ``solver.solve_model`` or the axisymmetric
``solve_axisymmetric``, which take the same request keywords), and the modes are matched and
extrapolated by post.error_estimate."""

from __future__ import annotations

from typing import Callable, Sequence

from .post.error_estimate import EstimatedResult, estimate_over_meshes
from .progress import SILENT, Progress
from .solver import solve_model


def estimate_errors(build_model: Callable[[float], object], sizes: Sequence[float], *,
                    modes: int, near_hz: float | None = None,
                    order_rate: float | Callable[[object], float] = 2.0,
                    size_measure: str = "nominal", solve: Callable = solve_model,
                    progress: Progress = SILENT, **solve_options) -> EstimatedResult:
    """Solve ``build_model(size)`` at every size with ``solve`` and give each of the
    ``modes`` requested modes of the finest mesh an error estimate (see
    post.error_estimate.estimate_over_meshes for ``order_rate`` and ``size_measure``).
    ``solve_options`` go to ``solve`` unchanged (e.g. ``order``, ``form``)."""
    def solve_at(size: float, count: int):
        model = build_model(size)
        return model, solve(model, modes=count, near_hz=near_hz, **solve_options)

    return estimate_over_meshes(solve_at, sizes, modes=modes, near_hz=near_hz,
                                order_rate=order_rate, size_measure=size_measure,
                                progress=progress)
