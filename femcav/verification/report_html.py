"""verify.html: one offline page (no network, no script) with the run's environment, the
rules, and per case its table and convergence plot (error against DOFs on log axes, the
expected slope and the tolerance drawn in), PNGs from matplotlib's Agg backend as data URIs."""

from __future__ import annotations

import base64
import html
import io
import math

from ..viz.report import STYLE

INTRO = ("Each case is a case file solved by femcav's own runner at two or three element "
         "sizes and compared with a closed form or an independent 1D solution computed at "
         "run time (femcav.analytic, scipy). Errors are relative, |computed / reference - 1|, "
         "the largest over the values a quantity compares. A quantity passes when the error "
         "on the finest mesh is within its tolerance, the observed rate reaches {share:g} of "
         "the expected one (not judged where the errors are below {floor:g}, the eigen "
         "solver's floor), and error bars, where computed, hold the reference values; a case "
         "passes when all its quantities do and every mode passed femcav's own checks and "
         "resolution limits.")


def convergence_png(case: dict) -> bytes | None:
    """Error against DOFs, one line per quantity with a non-zero error, PNG bytes."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    dofs = [m["dofs"] for m in case["meshes"]]
    plotted = False
    fig, ax = plt.subplots(figsize=(6.4, 4.0), dpi=100)
    try:
        for i, q in enumerate(case["quantities"]):
            points = [(n, e) for n, e in zip(dofs, q["errors"])
                      if e is not None and math.isfinite(e) and e > 0]
            if not points:
                continue
            colour = f"C{i % 10}"
            xs, ys = zip(*points)
            ax.loglog(xs, ys, "o-", color=colour, label=q["name"])
            if q["expected_rate"] is not None and len(xs) > 1:
                # the expected slope through the coarsest point: error ∝ DOFs^(-rate/dim)
                dim = 2 if case["section"] else 3
                ax.loglog([xs[0], xs[-1]],
                          [ys[0], ys[0] * (xs[-1] / xs[0]) ** (-q["expected_rate"] / dim)],
                          ":", color=colour, label=f"h^{q['expected_rate']:g} expected")
            ax.axhline(q["tolerance"], color=colour, linestyle="--", linewidth=0.8)
            plotted = True
        if not plotted:
            return None
        ax.set_xlabel("degrees of freedom (finest mesh right)")
        ax.set_ylabel("relative error (1)")
        ax.set_title(f"{case['name']}: error against DOFs (dashed: tolerance)", fontsize=10)
        ax.grid(True, which="both", linewidth=0.3)
        ax.legend(fontsize=7)
        fig.tight_layout()
        buffer = io.BytesIO()
        fig.savefig(buffer, format="png")
        return buffer.getvalue()
    finally:
        plt.close(fig)


def _number(value, unit: str = "") -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return f"{value:.3g}{' ' + unit if unit else ''}"


def _rates(q: dict) -> str:
    """Observed against expected rate, e.g. "h^3.91 (h^4 expected)"."""
    if q["expected_rate"] is None:
        return "exact on any mesh"
    observed = "-" if q["observed_rate"] is None else f"h^{q['observed_rate']:.2f}"
    judged = "" if q["rate_judged"] else ", not judged"
    return f"{observed} (h^{q['expected_rate']:g} expected{judged})"


def _coverage(q: dict) -> str:
    return "-" if q["coverage"] is None else f"{q['coverage']:.0%}"


def _case_section(case: dict) -> str:
    e = html.escape
    verdict = ("<span>passed</span>" if case["passed"]
               else '<span class="failed">FAILED</span>')
    rows = []
    for q in case["quantities"]:
        cells = [f'<td class="text">{e(q["name"])}</td>']
        cells += [f"<td>{_number(err)}</td>" for err in q["errors"]]
        cells += [f"<td>{_number(q['tolerance'])}</td>", f"<td>{_rates(q)}</td>",
                  f"<td>{_coverage(q)}</td>",
                  f"<td>{'pass' if q['passed'] else '<span class=failed>FAILED</span>'}</td>"]
        rows.append("<tr>" + "".join(cells) + "</tr>")
    sizes = "".join(f"<th>{m['size_m'] * 1e3:.3g} mm<br>{m['dofs']} DOFs<br>"
                    f"{m['time_s']:.2f} s</th>" for m in case["meshes"])
    head = (f"<tr><th>relative error of</th>{sizes}<th>tolerance</th><th>rate</th>"
            "<th>error bars hold</th><th>result</th></tr>")
    png = convergence_png(case) if case["meshes"] else None
    picture = ("" if png is None else
               f'<figure><img src="data:image/png;base64,{base64.b64encode(png).decode()}" '
               f'alt="convergence of {e(case["name"])}"></figure>')
    failures = "".join(f'<li class="failed">{e(f)}</li>' for f in case["failures"])
    return (f'<h2 id="{e(case["name"])}">{e(case["name"])}: {e(case["title"])} — {verdict}</h2>'
            f"<p>Covers: {e(case['covers'])}. Element order {case['order']}"
            f"{', on the (r, z) section' if case['section'] else ', 3D'}; "
            f"{case['time_s']:.1f} s in all.<br>Reference: {e(case['source'])}.</p>"
            + (f"<ul>{failures}</ul>" if failures else "")
            + (f"<table>{head}{''.join(rows)}</table>" if rows else "") + picture)


def render(document: dict) -> str:
    e = html.escape
    env = document["environment"]
    passed = sum(c["passed"] for c in document["cases"])
    libraries = ", ".join(f"{k} {v}" for k, v in env["libraries"].items() if v)
    rules = document["rules"]
    environment_rows = "".join(
        f'<tr><td class="text">{e(k)}</td><td class="text">{e(str(v))}</td></tr>' for k, v in (
            ("femcav", document["femcav_version"]), ("run started (UTC)", document["started_utc"]),
            ("catalogue", document["mode"]), ("wall time", f"{document['wall_time_s']:.1f} s"),
            ("worker processes", document["jobs"]),
            ("Python", f"{env['implementation']} {env['python']}"), ("libraries", libraries),
            ("sparse direct solves", env["factorization"]), ("platform", env["platform"]),
            ("machine", f"{env['machine']}, {env['cpu_count']} logical CPUs, "
                        f"{env['processor'] or 'processor not reported'}"),
            ("host", env["hostname"]),
            ("thread settings", ", ".join(f"{k}={v}" for k, v in env["threads"].items()))))
    summary = "".join(
        f'<li><a href="#{e(c["name"])}">{e(c["name"])}</a>: '
        f'{"passed" if c["passed"] else "<span class=failed>FAILED</span>"}</li>'
        for c in document["cases"])
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        f"<title>femcav verification {e(document['started_utc'])}</title>"
        f"<style>{STYLE}</style></head><body>"
        f"<h1>femcav {e(document['femcav_version'])} verification ({e(document['mode'])} "
        f"catalogue, {e(document['started_utc'])}): {passed} of "
        f"{len(document['cases'])} cases passed</h1>"
        f"<p>{e(INTRO.format(share=rules['rate_share'], floor=rules['error_floor']))}</p>"
        f"<table>{environment_rows}</table><ul>{summary}</ul>"
        + "".join(_case_section(c) for c in document["cases"])
        + "</body></html>\n")
