"""The per-mode integrals of a distributed solve (post.distributed_post), each part of the
mesh summing its own elements and wall faces, against the serial post-processing and the
closed-form wall Q of a rectangular cavity. Two "processes" run here as two threads whose
collectives meet at a barrier, so the split is tested without MPI."""

import functools
import math
import operator
import threading

import numpy as np
from scipy.constants import c, epsilon_0, mu_0

from femcav.geometry import build_part
from femcav.materials import Material
from femcav.metals import CONDUCTIVITY_S_PER_M, surface_resistance
from femcav.model import make_model
from femcav.post.distributed_post import OwnElementsPost
from femcav.solver import solve_model
from femcav.walls import Wall

BOX_WALLS = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")


class _ThreadComm:
    """mpi4py's lowercase allgather and allreduce (sum) for threads sharing one list."""

    def __init__(self, shared: list, rank: int, barrier: threading.Barrier):
        self.shared, self.rank, self.barrier = shared, rank, barrier

    def allgather(self, value):
        self.shared[self.rank] = value
        self.barrier.wait()
        out = list(self.shared)
        self.barrier.wait()          # nobody overwrites before everyone has read
        return out

    def allreduce(self, value):
        return functools.reduce(operator.add, self.allgather(value))


def _in_two_parts(space, parts, work):
    """``work(OwnElementsPost)`` on each part, run as two threads; the results by part."""
    shared, barrier = [None, None], threading.Barrier(2, timeout=60)
    results, errors = [None, None], []

    def run(rank):
        try:
            post = OwnElementsPost(space, parts[rank], _ThreadComm(shared, rank, barrier))
            results[rank] = work(post)
        except Exception as exc:  # noqa: BLE001 - reported by the test below
            errors.append(exc)
            barrier.abort()

    threads = [threading.Thread(target=run, args=(r,)) for r in (0, 1)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors, errors
    return results


def test_two_parts_sum_to_the_serial_q_and_resolution():
    # Pozar, Microwave Engineering, 4th ed., Example 6.3 (from memory): a copper WR-187
    # cavity (a = 4.755 cm, b = 2.215 cm, d = 2.20 cm) filled with polyethylene (ε_r = 2.25,
    # tan δ = 4e-4); TE101's Q_d = 1 / tan δ exactly (the field fills one dielectric) and
    # Q_c from Pozar eq. (6.46): (k a d)³ b η / (2π² R_s) / (2a³b + 2bd³ + a³d + ad³).
    a, b, d, eps_r, sigma = 0.04755, 0.02215, 0.0220, 2.25, CONDUCTIVITY_S_PER_M["copper"]
    walls = {name: Wall("metal", conductivity=sigma) for name in BOX_WALLS}
    model = make_model(build_part("box", width=a, height=b, length=d, mesh_size=0.005),
                       {"inside": Material(eps_r=eps_r, tan_delta=4e-4)}, walls)
    result = solve_model(model, modes=1, form="H")
    space, mode = result.space, result.modes[0]

    centroids = space.mesh.p[:, space.mesh.t].mean(axis=1)
    low = centroids[0] < a / 2                      # two halves across x = a/2
    parts = [np.flatnonzero(low), np.flatnonzero(~low)]
    f = mode.frequency_hz

    def work(post):
        return (post.losses(space, mode.dofs, f),
                post.resolution(space, mode.dofs, f, mode.k0_squared),
                post.faces.facets.size)

    (losses, resolution, faces), (other, other_resolution, other_faces) = _in_two_parts(
        space, parts, work)
    # each part holds a share of the wall faces (the split is real), and both agree
    assert 0 < faces < faces + other_faces
    for report in (losses, other):
        assert math.isclose(report.q_wall, mode.losses.q_wall, rel_tol=1e-12)
        assert math.isclose(report.q_dielectric, mode.losses.q_dielectric, rel_tol=1e-12)
        assert math.isclose(report.q_total, mode.losses.q_total, rel_tol=1e-12)
        assert report.wall_loss_share.keys() == mode.losses.wall_loss_share.keys()
        np.testing.assert_allclose(list(report.wall_loss_share.values()),
                                   list(mode.losses.wall_loss_share.values()), rtol=1e-12)
        np.testing.assert_allclose(report.wall_loss_density, mode.losses.wall_loss_density,
                                   rtol=1e-12)
    for r in (resolution, other_resolution):
        assert math.isclose(r.points_per_wavelength, mode.resolution.points_per_wavelength,
                            rel_tol=1e-12)

    # and the textbook: Q_d = 1 / tan δ; Q_c within the 5 mm mesh's error
    assert math.isclose(losses.q_dielectric, 1 / 4e-4, rel_tol=1e-9)
    k = math.pi * math.sqrt(1 / a**2 + 1 / d**2)
    eta = math.sqrt(mu_0 / (epsilon_0 * eps_r))
    rs = surface_resistance(2 * math.pi * c * k / (2 * math.pi * math.sqrt(eps_r)), sigma)
    q_c = (k * a * d) ** 3 * b * eta / (2 * math.pi**2 * rs) / (
        2 * a**3 * b + 2 * b * d**3 + a**3 * d + a * d**3)
    assert math.isclose(losses.q_wall, q_c, rel_tol=2e-2)
