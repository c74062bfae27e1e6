"""report.html: one self-contained page per result folder (no network; the pictures are
embedded as data URIs), from modes.json and the pictures that femcav.viz.show draws.

Sections: the caution, the case summary (geometry source, element order and form, DOFs,
elements, solver and timings, the Weyl check), the mode table, the spectrum, each mode's
picture, and the limits of the per-mode checks.
"""

from __future__ import annotations

import base64
import html
import math
from pathlib import Path

from ..io.results import frequency_digits
from ..io.second_tables import second_tables
from .coupling_section import coupling_section
from .port_response import port_section
from ..units import format_frequency
from .figures_of_merit import beam_section, wall_description

CAUTION = ("Results are engineering estimates from a finite-element model: check them "
           "against measurement before relying on them. High-power RF and microwave exposure, "
           "pressure vessels and cryogenics are for licensed practice under local codes.")

STYLE = """
body { font-family: system-ui, sans-serif; margin: 2em auto; max-width: 70em; color: #1e2328;
       background: #f6f5f1; line-height: 1.4; }
h1 { font-size: 1.5em; } h2 { font-size: 1.15em; margin-top: 1.6em; }
.caution { border-left: 4px solid #d55e00; padding: 0.4em 0.8em; background: #fff; }
table { border-collapse: collapse; background: #fff; font-size: 0.9em; }
th, td { border: 1px solid #c8c6bd; padding: 0.25em 0.6em; text-align: right; }
th { background: #e8e6df; } td.text { text-align: left; }
.failed { color: #b00020; font-weight: 600; }
figure { margin: 1em 0; } img { max-width: 100%; border: 1px solid #c8c6bd; }
figcaption { font-size: 0.9em; }
"""


def _image(path: Path, alt: str) -> str:
    data = base64.b64encode(path.read_bytes()).decode("ascii")
    return f'<img src="data:image/png;base64,{data}" alt="{html.escape(alt)}">'


def _length(value) -> str:
    if isinstance(value, list):
        return "(" + ", ".join(_length(v) for v in value) + ")"
    return f"{value * 1e3:.6g} mm" if isinstance(value, (int, float)) else str(value)


def _cell(value, digits: str = ".5g") -> str:
    return "-" if value is None else format(value, digits)


def write_report(document: dict, pictures: dict[str, Path], path: Path) -> None:
    """``pictures``: "spectrum" and "mode_KK" -> PNG paths (those that exist are embedded)."""
    e = html.escape
    modes = document.get("modes", [])
    axisymmetric = any(m.get("azimuthal_order") is not None for m in modes)
    bars = any(m.get("error_estimate_hz") is not None for m in modes)
    lossy = any(m.get("q_total") is not None for m in modes)
    labels = any(m.get("label") for m in modes)
    head = ["mode", "frequency"] + (["± error"] if bars else []) + (
        ["m", "class"] if axisymmetric else []) + (["label"] if labels else []) + (
        ["symmetry"] if any(
            m.get("symmetry") for m in modes) else []) + (
        ["Q wall", "Q dielectric", "Q total"] if lossy else []) + [
        "residual", "divergence", "orthogonality", "check"]
    rows = []
    for m in modes:
        digits = frequency_digits(m["frequency_hz"], m.get("error_estimate_hz"), default=9)
        cells = [str(m["index"]), e(format_frequency(m["frequency_hz"], digits))]
        if bars:
            bar = m.get("error_estimate_hz")
            cells.append("-" if bar is None else e(format_frequency(bar, 3)))
        if axisymmetric:
            cells += [str(m.get("azimuthal_order")), f'<span>{e(str(m.get("field_class")))}</span>']
        if labels:
            cells.append(e(m.get("label") or "unclassified"))
        if "symmetry" in head:
            cells.append(e(m.get("symmetry") or ""))
        if lossy:
            cells += [_cell(m.get("q_wall")), _cell(m.get("q_dielectric")),
                      _cell(m.get("q_total"))]
        cells += [_cell(m["residual"], ".1e"), _cell(m["divergence"], ".1e"),
                  _cell(m["orthogonality"], ".1e"),
                  _check_cell(m)]
        rows.append("<tr>" + "".join(f"<td>{c}</td>" for c in cells) + "</tr>")
    table = ("<table><thead><tr>" + "".join(f"<th>{e(h)}</th>" for h in head)
             + "</tr></thead><tbody>" + "".join(rows) + "</tbody></table>")

    timings = ", ".join(f"{e(timing_name(k))} {v:.2f} s"
                        for k, v in (document.get("timings_s") or {}).items())
    weyl = document.get("weyl") or {}
    summary = [
        ("case file", document.get("case") or "-"),
        ("field form and element order", f"{document.get('form')}, order {document.get('order')}"),
        ("unknowns (DOFs)", str(document.get("dofs"))),
        ("elements", str(document.get("elements"))),
        ("sparse direct library", document.get("factorization") or "-"),
        ("timings", timings or "-"),
        ("all checks passed", "yes" if document.get("checks_passed") else "NO"),
        ("all modes resolved by the mesh",
         {True: "yes", False: "NO: refine the mesh", None: "-"}[document.get("modes_resolved")]),
        ("optical volume for the Weyl check",
         f"{weyl['optical_volume_m3'] * 1e6:.5g} cm³" if weyl.get("optical_volume_m3") else "-"),
    ]
    if document.get("axisymmetric"):
        summary.append(("azimuthal orders solved",
                        ", ".join(map(str, document["axisymmetric"]["azimuthal_orders"]))))
    model = document.get("model") or {}
    geometry = model.get("geometry") or {}
    if geometry.get("builder"):
        params = ", ".join(f"{k} = {_length(v)}" for k, v in geometry["parameters"].items()
                           if v is not None)
        summary.insert(1, ("geometry", f"{geometry['builder']}: {params}"
                           + (f"; {geometry['section']}" if geometry.get("section") else "")))
    elif geometry.get("mesh"):
        summary.insert(1, ("geometry", f"imported mesh {geometry['mesh']}"))
    for name, m in (model.get("regions") or {}).items():
        material = f"ε_r {m['eps_r']}, μ_r {m['mu_r']}, tan δ {m['tan_delta']}"
        summary.append((f"region {name}", material))
    for name, w in (model.get("walls") or {}).items():
        what = w["kind"].upper() if w["kind"] != "metal" else wall_description(w)
        summary.append((f"wall {name}", what))
    if model.get("symmetry"):
        summary.append(("symmetry cuts", ", ".join(f"{a}: {'/'.join(k)}"
                                                  for a, k in model["symmetry"].items())))
    for pair in model.get("periodic") or []:
        summary.append((f"periodic pair {pair['pair'][0]} → {pair['pair'][1]}",
                        f"phase advance {math.degrees(pair['phase_rad']):.6g}°"))
    summary.append(("unnamed boundaries", "PEC (the metal enclosure)"))
    summary_html = "<table>" + "".join(
        f'<tr><th>{e(k)}</th><td class="text">{e(v)}</td></tr>' for k, v in summary) + "</table>"

    figures = []
    if "spectrum" in pictures and pictures["spectrum"].is_file():
        figures.append("<h2>Spectrum</h2><figure>" + _image(pictures["spectrum"], "spectrum")
                       + "<figcaption>Every mode by class (at its Q where known); the count "
                       "of modes below f against Weyl's estimate V k³ / 3π².</figcaption>"
                       "</figure>")
    mode_figures = []
    for m in modes:
        picture = pictures.get(f"mode_{m['index']:02d}")
        if picture is not None and picture.is_file():
            caption = (f"Mode {m['index']}: {format_frequency(m['frequency_hz'], 7)}"
                       + (f" ({m['label']})" if m.get("label") else ""))
            mode_figures.append(f"<figure>{_image(picture, caption)}<figcaption>{e(caption)}"
                                "</figcaption></figure>")
        extras = ((f"wall_loss_{m['index']:02d}", "loss per area on the metal walls (W/m² at "
                   "1 J stored, from wall_loss.vtu)"),
                  (f"far_field_{m['index']:02d}", "radiation pattern, directivity in dBi on "
                   "two cuts through its peak (from far_field.csv)"))
        for stem, what in extras:
            extra = pictures.get(stem)
            if extra is not None and extra.is_file():
                caption = f"Mode {m['index']}: {what}"
                mode_figures.append(f"<figure>{_image(extra, caption)}<figcaption>"
                                    f"{e(caption)}</figcaption></figure>")
    if mode_figures:
        figures.append("<h2>Fields</h2>" + "".join(mode_figures))
    probe_figures = [f"<figure>{_image(p, name)}<figcaption>{e(name.replace('_', ' ', 1))}: "
                     "|E| and |H| along the line at 1 J stored (values in modes.json and "
                     "probes.csv)</figcaption></figure>"
                     for name, p in sorted(pictures.items())
                     if name.startswith("probe_") and p.is_file()]
    if probe_figures:
        figures.append("<h2>Line probes</h2>" + "".join(probe_figures))
    limits = document.get("limits") or {}
    checks = ("<p>Each mode is checked: relative residual ‖Kx − λMx‖/‖λMx‖ ≤ "
              f"{limits.get('residual', '-')}, gradient (divergence) content ≤ "
              f"{limits.get('divergence', '-')}, largest M-inner product with another mode ≤ "
              f"{limits.get('orthogonality', '-')}. A mode outside them is marked FAILED.</p>")
    title = document.get("title") or "femcav results"
    page = ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>{e(title)}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n"
            f"<h1>{e(title)}</h1>\n<p class=\"caution\">{e(CAUTION)}</p>\n"
            f"<h2>Case</h2>\n{summary_html}\n<h2>Modes</h2>\n{table}\n"
            + _second_tables_html(modes) + "\n"
            + beam_section(document) + "\n" + coupling_section(document) + "\n"
            + port_section(document, _image(pictures["response"], "response")
                           if "response" in pictures and pictures["response"].is_file()
                           else "") + "\n"
            + "\n".join(figures) + f"\n<h2>Checks</h2>\n{checks}\n</body>\n</html>\n")
    path.write_text(page, encoding="utf-8")


# the keys of modes.json's timings_s as the report says them
TIMING_NAMES = {"assembly_s": "assembly", "eigen_s": "eigen solve",
                "complex_check_s": "complex check"}


def timing_name(key: str) -> str:
    """A timing key in words; a key not listed loses its "_s" and underscores."""
    return TIMING_NAMES.get(key) or key.removesuffix("_s").replace("_", " ")


def _second_tables_html(modes: list[dict]) -> str:
    """The tolerance, sensitivity and filling tables (io.second_tables) as HTML."""
    e = html.escape
    parts = []
    for t in second_tables(modes):
        parts.append(f"<h3>{e(t.title[0].upper() + t.title[1:])}</h3><table><thead><tr>"
                     + "".join(f"<th>{e(h)}</th>" for h in t.headings) + "</tr></thead><tbody>"
                     + "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>"
                               for row in t.rows) + "</tbody></table>")
    return "\n".join(parts)


def _check_cell(mode: dict) -> str:
    """ok, or what is wrong: failed checks, too few elements per wavelength, Q warnings."""
    notes = [] if mode["passed"] else ["FAILED"]
    if mode.get("resolved") is False:
        notes.append(f"NOT RESOLVED ({mode.get('points_per_wavelength') or 0:.2g} elements "
                     "per wavelength)")
    notes += [html.escape(w) for w in mode.get("loss_warnings") or []]
    return ("ok" if not notes else
            '<span class="failed">' + "<br>".join(notes) + "</span>")
