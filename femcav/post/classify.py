"""Mode labels from the field, by documented heuristics; "unclassified" where they do not
decide, never a guess.

Field class: the share of the electric energy in E_z and of the magnetic energy in H_z.
Below CLASS_SHARE for E_z: TE-like; for H_z: TM-like; for both: TEM-like; else hybrid
(z is the builder's axis: a cylinder's axis, a box's length).

Boxes (the box builder, corner at the origin): the index triple (m, n, l) whose standing-wave
pattern, E_x ∝ cos(mπx/a) sin(nπy/b) sin(lπz/d), E_y ∝ sin cos sin, E_z ∝ sin sin cos (the
fields of Pozar, Microwave Engineering, 4th ed., §6.3; from memory), captures at least
CAPTURE of the electric energy by weighted least squares over the element centroids; the
label is TE_mnl or TM_mnl by the field class, TE/TM_mnl for a mix of a degenerate pair.

Bodies of revolution (a layout of cylinders on the z axis): the azimuthal order m is the
harmonic cos mφ / sin mφ that carries most of the axial field (E_z, or H_z for a TE-like
mode; the radial E for a TEM-like one) on the ring of elements around the field's strongest
point at least a quarter radius off the axis, fitted by least squares;
it counts only when it carries at least CAPTURE of that ring's energy. The label is then
"m = M, TE-like" (or TM-like, TEM-like, hybrid).
"""

from __future__ import annotations

import numpy as np

CLASS_SHARE = 0.02
CAPTURE = 0.9
MAX_INDEX = 4
MAX_HARMONIC = 6


def field_class(E: np.ndarray, H: np.ndarray, w: np.ndarray) -> str:
    E, H = np.abs(E), np.abs(H)      # complex in a periodic cell
    ez = np.sum(w * E[:, 2] ** 2) / max(np.sum(w * np.sum(E**2, axis=1)), 1e-300)
    hz = np.sum(w * H[:, 2] ** 2) / max(np.sum(w * np.sum(H**2, axis=1)), 1e-300)
    return class_from_shares(float(ez), float(hz))


def class_from_shares(axial_electric: float, axial_magnetic: float) -> str:
    """The field class from the shares of the electric energy in E_z and of the magnetic
    energy in H_z: the one rule of the 3D and the axisymmetric solvers."""
    if axial_electric < CLASS_SHARE and axial_magnetic < CLASS_SHARE:
        return "TEM-like"
    if axial_electric < CLASS_SHARE:
        return "TE-like"
    if axial_magnetic < CLASS_SHARE:
        return "TM-like"
    return "hybrid"


def box_label(points: np.ndarray, w: np.ndarray, E: np.ndarray, H: np.ndarray,
              size: tuple[float, float, float]) -> str:
    a, b, d = size
    x, y, z = points.T
    total = np.sum(w * np.sum(E**2, axis=1))
    # cos and sin of every index along each axis, once: the triple loop only multiplies
    # (the same values as evaluating them inside it; it took 0.04 s a mode that way)
    cos_x, sin_x = _standing_waves(x, a)
    cos_y, sin_y = _standing_waves(y, b)
    cos_z, sin_z = _standing_waves(z, d)
    best, best_share = None, 0.0
    for m in range(MAX_INDEX + 1):
        for n in range(MAX_INDEX + 1):
            for l in range(MAX_INDEX + 1):
                if (m > 0) + (n > 0) + (l > 0) < 2:
                    continue
                shapes = (cos_x[m] * sin_y[n] * sin_z[l], sin_x[m] * cos_y[n] * sin_z[l],
                          sin_x[m] * sin_y[n] * cos_z[l])
                share = 0.0
                for c, phi in enumerate(shapes):
                    norm = np.sum(w * phi**2)
                    if norm > 1e-12 * np.sum(w):
                        share += np.sum(w * E[:, c] * phi) ** 2 / norm
                share /= total
                if share > best_share:
                    best, best_share = (m, n, l), share
    if best is None or best_share < CAPTURE:
        return "unclassified"
    m, n, l = best
    kind = field_class(E, H, w)
    triple = f"{m}{n}{l}"
    if kind == "TE-like" and l >= 1:
        return f"TE{triple}"
    if kind == "TM-like" and m >= 1 and n >= 1:
        return f"TM{triple}"
    if kind == "hybrid" and l >= 1 and m >= 1 and n >= 1:
        return f"TE/TM{triple} (degenerate pair, mixed)"
    return "unclassified"


def _standing_waves(u: np.ndarray, length: float) -> tuple[list, list]:
    """cos(kπu/L) and sin(kπu/L) for k = 0 ... MAX_INDEX."""
    phases = [k * np.pi * u / length for k in range(MAX_INDEX + 1)]
    return [np.cos(p) for p in phases], [np.sin(p) for p in phases]


def azimuthal_label(points: np.ndarray, w: np.ndarray, E: np.ndarray, H: np.ndarray) -> str:
    kind = field_class(E, H, w)
    axial = H[:, 2] if kind == "TE-like" else E[:, 2]
    if kind == "TEM-like":                     # no axial field: use the radial E
        r_hat = points[:, :2] / np.maximum(np.linalg.norm(points[:, :2], axis=1), 1e-300)[:, None]
        axial = np.einsum("ij,ij->i", E[:, :2], r_hat)
    r = np.hypot(points[:, 0], points[:, 1])
    phi = np.arctan2(points[:, 1], points[:, 0])
    # the strongest axial field away from the axis (a ring on the axis has no room for a
    # harmonic fit)
    peak = int(np.argmax(np.abs(axial) * np.minimum(1.0, r / (0.25 * r.max()))))
    spread = 0.08 * max(np.ptp(r), np.ptp(points[:, 2]))
    ring = (np.abs(r - r[peak]) < spread) & (np.abs(points[:, 2] - points[peak, 2]) < spread)
    if ring.sum() < 4 * MAX_HARMONIC:
        return f"unclassified ({kind})"
    columns = [np.ones(ring.sum())]
    for k in range(1, MAX_HARMONIC + 1):
        columns += [np.cos(k * phi[ring]), np.sin(k * phi[ring])]
    A = np.column_stack(columns) * np.sqrt(w[ring])[:, None]
    coefficients, *_ = np.linalg.lstsq(A, axial[ring] * np.sqrt(w[ring]), rcond=None)
    energy = [coefficients[0] ** 2 * 2] + [coefficients[2 * k - 1] ** 2 + coefficients[2 * k] ** 2
                                           for k in range(1, MAX_HARMONIC + 1)]
    m = int(np.argmax(energy))
    if energy[m] < CAPTURE * sum(energy):
        return f"unclassified ({kind})"
    return f"m = {m}, {kind}"
