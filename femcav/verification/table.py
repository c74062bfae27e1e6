"""The verification table for the terminal: one line per compared quantity, units on every
number (errors and tolerances are relative, |computed / reference - 1|)."""

from __future__ import annotations


def _rate(q: dict) -> str:
    if q["expected_rate"] is None:
        return "-"           # exact on any mesh: no rate to observe
    if q["expected_rate"] is not None and q["observed_rate"] is not None \
            and not q["rate_judged"]:
        return "floor"       # errors at the eigen solver's floor: no rate judged
    return "-" if q["observed_rate"] is None else f"h^{q['observed_rate']:.2f}"


def _error(value) -> str:
    return "missing" if value is None or value == float("inf") else f"{value:.1e} rel."


def _bars(q: dict) -> str:
    if q["coverage"] is None:
        return "-"
    held = round(q["coverage"] * len(q["reference"][-1]))
    return f"{held}/{len(q['reference'][-1])} held"


def format_table(document: dict) -> str:
    head = (f"{'case':<19} {'quantity':<31} {'k':>1} {'DOFs':>7} {'error':>12} "
            f"{'tolerance':>12} {'rate':>7} {'expected':>8} {'bars':>9} {'time':>7}  result")
    lines = [head]
    for case in document["cases"]:
        first = True
        dofs = case["meshes"][-1]["dofs"] if case["meshes"] else None
        for q in case["quantities"] or [None]:
            if q is None:        # the case failed before any quantity was compared
                lines.append(f"{case['name']:<19} {'(not run)':<31}"
                             f"{'':>52}{case['time_s']:6.1f} s  FAILED")
                continue
            errors = q["errors"]
            expected = ("exact" if q["expected_rate"] is None
                        else f"h^{q['expected_rate']:g}")
            lines.append(
                f"{case['name'] if first else '':<19} {q['name']:<31} {case['order']:>1} "
                f"{dofs if dofs is not None else '-':>7} "
                f"{_error(errors[-1] if errors else None):>12} {_error(q['tolerance']):>12} "
                f"{_rate(q):>7} {expected:>8} {_bars(q):>9} "
                + (f"{case['time_s']:5.1f} s" if first else " " * 7)
                + f"  {'pass' if q['passed'] else 'FAILED'}")
            first = False
    passed = sum(c["passed"] for c in document["cases"])
    lines.append(f"{passed} of {len(document['cases'])} cases passed ({document['mode']}, "
                 f"{document['wall_time_s']:.1f} s wall time, femcav "
                 f"{document['femcav_version']}); k = element order, DOFs of the finest "
                 "mesh, rates in h = DOFs^(-1/3) in 3D and DOFs^(-1/2) on a section")
    for case in document["cases"]:
        for failure in case["failures"]:
            lines.append(f"FAILED {case['name']}: {failure}")
    return "\n".join(lines)
