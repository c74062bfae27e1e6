"""The per-mode results that do not fit the mode table's one line: frequency spreads from
[tolerances], material sensitivities, and the filling factors of a part with several
regions, as small tables of their own after the mode table (terminal, table.txt) and in
the report.

Built from the mode rows of modes.json (io.results.mode_rows, or the rows read back by
``femcav show``), so the printed table and the report show the same numbers.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..units import format_frequency, format_length


@dataclass(frozen=True)
class SecondTable:
    title: str
    headings: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]    # the first cell is the mode number


def second_tables(rows: list[dict]) -> list[SecondTable]:
    """Every table the modes have data for (none for a plain solve of a one-region part)."""
    return [t for t in (_tolerance_table(rows), _sensitivity_table(rows),
                        _filling_table(rows), _directional_table(rows),
                        _temperature_table(rows)) if t is not None]


def as_text(rows: list[dict]) -> str:
    """The tables as text, each after a blank line; "" when there are none."""
    out = []
    for table in second_tables(rows):
        widths = [max(len(h), *(len(r[i]) for r in table.rows))
                  for i, h in enumerate(table.headings)]
        lines = [table.title, "  ".join(f"{h:>{w}}" for h, w in zip(table.headings, widths))]
        lines += ["  ".join(f"{c:>{w}}" for c, w in zip(r, widths)) for r in table.rows]
        out.append("\n".join(lines))
    return "".join("\n\n" + t for t in out)


def _tolerance_table(rows: list[dict]) -> SecondTable | None:
    # the linear estimate from derivatives (a Monte-Carlo draw alone has its own lines)
    spread = [r for r in rows if "tolerance_m" in (r.get("tolerance") or {})]
    if not spread:
        return None
    lengths = list(spread[0]["tolerance"]["tolerance_m"].items())
    headings = ("mode", *(f"Δf {name} ±{format_length(tol, 3)}" for name, tol in lengths),
                "worst case", "root-sum-square")
    body = []
    for r in spread:
        t = r["tolerance"]
        body.append((str(r["index"]), *(_hz(t["delta_f_hz"][name]) for name, _ in lengths),
                     _hz(t["worst_case_hz"]), _hz(t["rss_hz"])))
    return SecondTable("frequency spread from [tolerances] (each length alone at its "
                       "tolerance; their sum; independent errors)", headings, tuple(body))


def _sensitivity_table(rows: list[dict]) -> SecondTable | None:
    given = [r for r in rows if r.get("sensitivity_hz")]
    if not given:
        return None
    first = given[0]["sensitivity_hz"]
    keys = [(quantity, region) for quantity in ("eps_r", "mu_r")
            for region in (first.get(quantity) or {})]
    headings = ("mode", *(f"df/d{q} {region}" for q, region in keys))
    body = tuple((str(r["index"]), *(_hz(r["sensitivity_hz"][q][region], signed=True)
                                     for q, region in keys)) for r in given)
    return SecondTable("material sensitivities (frequency change per unit change of eps_r "
                       "or mu_r in the region)", headings, body)


def _filling_table(rows: list[dict]) -> SecondTable | None:
    """Electric (with losses) and magnetic shares per region, when there are several."""
    electric = sorted({k for r in rows for k in (r.get("filling_factor") or {})})
    magnetic = sorted({k for r in rows for k in (r.get("magnetic_filling_factor") or {})})
    if max(len(electric), len(magnetic)) < 2:
        return None
    headings = ("mode", *(f"electric {n}" for n in electric),
                *(f"magnetic {n}" for n in magnetic))
    body = tuple((str(r["index"]),
                  *(_share((r.get("filling_factor") or {}).get(n)) for n in electric),
                  *(_share((r.get("magnetic_filling_factor") or {}).get(n)) for n in magnetic))
                 for r in rows)
    return SecondTable("filling factors (share of the electric and of the magnetic energy "
                       "in each region)", headings, body)


def _directional_table(rows: list[dict]) -> SecondTable | None:
    """The electric energy of uniaxial regions along and across their axes."""
    regions = sorted({k for r in rows for k in (r.get("filling_factor_parallel") or {})})
    if not regions:
        return None
    headings = ("mode", *(f"{side} {n}" for n in regions for side in ("along", "across")))
    body = tuple((str(r["index"]), *(_share((r.get(f"filling_factor_{side}") or {}).get(n))
                                     for n in regions for side in ("parallel",
                                                                   "perpendicular")))
                 for r in rows)
    return SecondTable("directional filling factors (share of the electric energy stored "
                       "along and across each uniaxial region's axis)", headings, body)


def _temperature_table(rows: list[dict]) -> SecondTable | None:
    given = [r for r in rows if r.get("temperature_drift")]
    if not given:
        return None
    headings = ("mode", "df/dT", "tau_f", "from eps_r", "housing", "parts")
    body = []
    for r in given:
        t = r["temperature_drift"]
        body.append((str(r["index"]), _hz(t["df_dt_hz_per_k"], signed=True) + "/K",
                     f"{t['tau_f_ppm_per_k']:+.4g} ppm/K",
                     *(_hz(t[k], signed=True) + "/K" for k in (
                         "permittivity_hz_per_k", "housing_hz_per_k", "parts_hz_per_k"))))
    return SecondTable("temperature drift (first order: the regions' tce, the housing's "
                       "expansion, the parts growing against it)", headings, tuple(body))


def _hz(value, signed: bool = False) -> str:
    if value is None:
        return "-"
    text = format_frequency(abs(value), 3)
    return ("-" if value < 0 else "+" if signed else "") + text


def _share(value) -> str:
    return "-" if value is None else f"{value:.4f}"
