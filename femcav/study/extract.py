"""Permittivity and loss tangent of a sample from a cavity measurement, by the full model.

The case file describes the fixture with the sample in one region ([extract] sample = NAME;
its eps_r in the case is the starting guess and picks the mode with ``mode``). Measured: the
resonance frequency and unloaded Q of that mode without the sample (the region empty) and
with it. Procedure:

1. Solve the empty fixture. Its measured frequency over the solved one is a calibration
   factor applied to every solved frequency (it absorbs machining and mesh offsets); its
   measured Q over the solved wall Q calibrates the wall loss (surface finish, plating).
2. Find ε_r' at which the calibrated frequency of the mode (followed by field overlap, as in
   femcav.study.tune) equals the loaded measurement: Brent's method on the full model.
3. At that ε_r', 1/Q_loaded = (1/Q_wall) (calibrated) + Σ_i p_i tan δ_i; the sample's
   electric filling factor p from the same solve gives its tan δ.

For comparison, the classic small-sample perturbation estimate from the empty mode alone
(H. A. Bethe and J. Schwinger, "Perturbation theory for cavities", NDRC report D1-117, 1943;
Pozar, Microwave Engineering, 4th ed., §6.7; both from memory):
ε_r' - 1 = 2 (f_0 - f_s) / (f_0 F) and ε_r'' = (1/Q_s - 1/Q_0) / F, with F = ∫_sample |E_0|²
/ ∫_cavity |E_0|² of the empty mode. It neglects the change of the field inside and around
the sample, so its error grows with (ε_r' - 1) F (and with depolarisation, for a sample
across the field lines).
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from ..case import in_case
from ..errors import InputError
from ..io import strict_json
from ..io.atomic import check_output_folder, staged_output
from ..post.sensitivity import material_sensitivities
from ..progress import SILENT, Progress
from ..case_studies import ExtractSpec, parse_extract
from ..units import format_frequency
from ..case_parameters import check_scalar_material, with_value
from .sweep import TRACKING_SPARE, load_study, study_case
from ..post.mode_matching import result_partners
from .tune import TuneSpec, _Evaluations, _root

def run_extract(path: str | Path, *, out: str | Path | None = None,
                progress: Progress = SILENT) -> tuple[dict, Path]:
    from ..runner import solve_case

    path = Path(path)
    data, spec, base = load_study(path, parse_extract)
    folder = check_output_folder(Path(out) if out is not None
                                 else path.parent / f"{path.stem}-extract")
    eps_path = f"regions.{spec.sample}.eps_r"
    try:
        check_scalar_material(base, spec.sample, "eps_r", "extract.sample")
        # 1. the empty fixture, its mode found from the case as written
        lossless = with_value(data, f"regions.{spec.sample}.tan_delta", 0.0)
        runs = _Evaluations(lossless, path, TuneSpec(
            path=eps_path, kind="number", bracket=spec.eps_bracket, target_hz=spec.loaded_hz,
            mode=spec.mode, tolerance=spec.tolerance), progress)
        runs.start(float(base.regions[spec.sample].eps_r))
        f_empty = runs.frequency(1.0)
        empty = next(r for v, r, _ in runs.points if v == 1.0)
        empty_mode = empty.modes[next(j for v, _, j in runs.points if v == 1.0)]
        freq_scale = spec.empty_hz / f_empty
        q_wall_empty = empty_mode.losses.q_wall if empty_mode.losses else None
        if q_wall_empty is None:
            raise InputError("the fixture has no metal walls, so the empty Q cannot calibrate "
                             "the wall loss; give the walls kind = \"metal\"", field="walls")
        other = (1.0 / empty_mode.losses.q_dielectric) if empty_mode.losses.q_dielectric else 0
        q_wall_scale = (1.0 / (1.0 / spec.empty_q - other)) / q_wall_empty
        progress.step(f"extract: empty fixture solved at {format_frequency(f_empty, 9)} "
                      f"(measured {format_frequency(spec.empty_hz, 9)}: frequency factor "
                      f"{freq_scale:.8f}); wall Q factor {q_wall_scale:.5f}")
        # 2. ε_r' from the loaded frequency
        runs.spec = replace(runs.spec, target_hz=spec.loaded_hz / freq_scale)
        f_lo, f_hi = (runs.frequency(e) for e in spec.eps_bracket)
        target = runs.spec.target_hz
        if (f_lo - target) * (f_hi - target) > 0:
            raise InputError(f"the mode is at {format_frequency(f_lo * freq_scale, 7)} and "
                             f"{format_frequency(f_hi * freq_scale, 7)} (calibrated) at the "
                             "ends of eps_bracket; the loaded frequency is not between them",
                             field="extract.eps_bracket")
        eps = _root(runs, runs.spec)
        # 3. tan δ at that ε_r', from the same model with the sample's loss switched on
        case = study_case(with_value(lossless, eps_path, eps), path)
        result = solve_case(case, replace(case.solve, modes=case.solve.modes + TRACKING_SPARE
                                          + spec.mode), SILENT)
        _, near, index = min(runs.points, key=lambda p: abs(p[0] - eps))
        found = [j for j, p in enumerate(result_partners(near, result)) if p == index]
        mode = result.modes[found[0]]
        losses = mode.losses
        q_wall = losses.q_wall * q_wall_scale
        # the other regions' loss (the sample's tan δ is 0 in these solves): dielectric,
        # per direction in a uniaxial region, and magnetic (post.material_losses)
        others = sum(1.0 / q for q in (losses.q_dielectric, losses.q_magnetic) if q)
        p_sample = losses.filling_factor[spec.sample]
        tan_delta = (1.0 / spec.loaded_q - 1.0 / q_wall - others) / p_sample
        perturbation = _perturbation_estimate(empty, empty_mode, spec)
    except InputError as exc:
        raise in_case(exc, str(path)) from None
    document = {"format": "femcav-extract", "format_version": 1, "case": str(path),
                "sample": spec.sample, "mode": spec.mode, "eps_r": eps, "tan_delta": tan_delta,
                "filling_factor": p_sample, "q_wall_calibrated": q_wall,
                "frequency_factor": freq_scale, "wall_q_factor": q_wall_scale,
                "solves": len(runs.points) + 1,
                "solved_frequency_hz": mode.frequency_hz * freq_scale,
                "perturbation_estimate": perturbation,
                "measured": {"empty_frequency_hz": spec.empty_hz, "empty_q": spec.empty_q,
                             "loaded_frequency_hz": spec.loaded_hz, "loaded_q": spec.loaded_q}}
    with staged_output(folder, kind="extract") as files:
        files.write_text("extract.json", strict_json.dumps(document, indent=1))
    return document, folder


def _perturbation_estimate(empty, empty_mode, spec: ExtractSpec) -> dict:
    """The small-sample formulas with F from the empty mode (see the module notes)."""
    s = material_sensitivities(empty.space, empty_mode.dofs, empty_mode.frequency_hz)
    share = -2.0 * s.eps_r[spec.sample] / empty_mode.frequency_hz       # F
    eps1 = 1.0 + 2.0 * (spec.empty_hz - spec.loaded_hz) / (spec.empty_hz * share)
    eps2 = (1.0 / spec.loaded_q - 1.0 / spec.empty_q) / share
    return {"eps_r": eps1, "tan_delta": eps2 / eps1, "field_share": share}


def summary_lines(document: dict) -> list[str]:
    """What `femcav extract` prints of an extraction document (extract.json)."""
    d, p = document, document["perturbation_estimate"]
    return [f"sample {d['sample']!r}: eps_r = {d['eps_r']:.6g}, tan delta = "
            f"{d['tan_delta']:.4g} (full model, {d['solves']} solves; filling factor "
            f"{d['filling_factor']:.4g})",
            f"small-sample perturbation formula: eps_r = {p['eps_r']:.6g}, "
            f"tan delta = {p['tan_delta']:.4g} (field share F = {p['field_share']:.4g})"]
