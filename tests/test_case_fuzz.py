"""Fuzzing the case-file parser with a seeded generator (repeatable; set FEMCAV_FUZZ_SEED and
FEMCAV_FUZZ_ROUNDS to explore further). The contract under test:

- in-process, reading and validating a case (and its study tables, and its materials at some
  points) either succeeds or raises InputError whose text is one printable line; nothing else
  escapes;
- on the command line, `femcav solve` / `femcav mesh` exit with 0, 2 or 3 only; on 2 they print
  exactly one line on stderr, no traceback, and write nothing.

Mutations start from small valid cases: wrong types for a key, random strings, huge, tiny and
non-finite numbers, random and malformed expressions, unknown keys (with escape characters),
nested tables, deleted keys, and damaged TOML text.
"""

import copy
import datetime
import json
import math
import os
import random
import string
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from femcav.case import case_from_data, case_materials, read_case_data
from femcav.errors import InputError
from femcav.expressions import CONSTANTS, FUNCTIONS, VARIABLES
from femcav.study.extract import parse_extract
from femcav.study.sweep import parse_sweep
from femcav.study.tune import parse_tune

SEED = int(os.environ.get("FEMCAV_FUZZ_SEED", "17"))
ROUNDS = int(os.environ.get("FEMCAV_FUZZ_ROUNDS", "2500"))
# the in-process part stops here even if rounds are left
TIME_LIMIT_S = float(os.environ.get("FEMCAV_FUZZ_SECONDS", "15"))

BOX = {"title": "fuzz box",
       "geometry": {"builder": "box", "width": "20 mm", "height": "10 mm", "length": "25 mm"},
       "mesh": {"size": "6 mm"},
       "regions": {"inside": {"eps_r": "1 + 0.5*sin(pi*x/0.02)", "tan_delta": 1e-4}},
       "walls": {"x_min": {"kind": "metal", "metal": "copper", "roughness": "1 um"},
                 "x_max": {"kind": "metal", "conductivity": "58 MS/m"},
                 "y_min": {"kind": "pmc"}},
       "solve": {"modes": 2, "near": "5 GHz", "form": "H", "order": 1,
                 "factorization": "auto"}}
SEEDS = [
    BOX,
    {"geometry": {"builder": "tuned_pillbox", "radius": "12 mm", "length": "18 mm",
                  "post_radius": "1 mm", "post_depth": "3 mm", "post_offset": "2 mm"},
     "symmetry": {"y": "both"}, "solve": {"modes": 3, "complex_check": True},
     "regions": {"inside": {"eps_r": "2.2-0.001j"}}},
    {"geometry": {"builder": "dr_fixture", "shield_radius": "12 mm", "shield_height": "12 mm",
                  "puck_radius": "5 mm", "puck_height": "4 mm", "support_height": "3 mm"},
     "regions": {"puck": {"eps_r": 24, "tan_delta": 1e-4}, "support": {"eps_r": 2.1}},
     "solve": {"azimuthal_orders": [0, 1], "modes": 4},
     "mesh": {"max_frequency": "12 GHz", "per_wavelength": 12, "edge_refinement": 0.5}},
    {"geometry": {"builder": "loaded_box", "width": "20 mm", "height": "10 mm",
                  "length": "25 mm", "block_corner": ["0 mm", "0 mm", "0 mm"],
                  "block_size": ["5 mm", "10 mm", "25 mm"]},
     "regions": {"block": {"eps_r": 4, "mesh_size": "2 mm"}},
     "sweep": {"parameter": "regions.block.eps_r", "values": [2, 4, 6],
               "second": {"parameter": "geometry.width", "from": "18 mm", "to": "22 mm",
                          "points": 2}},
     "tolerances": {"width": "10 um", "block_corner[0]": "5 um"}},
    {"geometry": {"builder": "tuned_box", "width": "20 mm", "height": "10 mm",
                  "length": "25 mm", "post_radius": "1 mm", "post_depth": "3 mm"},
     "tune": {"parameter": "geometry.post_depth", "bracket": ["1 mm", "5 mm"],
              "target": "9 GHz", "mode": 1, "tolerance": 1e-6},
     "solve": {"accuracy": "100 ppm", "max_dofs": 50000}},
    {"geometry": {"builder": "composite", "background": "inside", "solids": [
        {"shape": "box", "role": "space", "corner": [0, 0, 0], "size": ["20 mm", "10 mm",
                                                                        "25 mm"]},
        {"shape": "cylinder", "role": "metal", "name": "rod", "base": ["10 mm", 0, "12 mm"],
         "axis": [0, "5 mm", 0], "radius": "1 mm"},
        {"shape": "box", "role": "fill", "name": "slab", "corner": [0, 0, 0],
         "size": ["3 mm", "10 mm", "25 mm"]}]},
     "regions": {"slab": {"eps_r": 3}},
     "extract": {"sample": "slab", "empty_frequency": "9 GHz", "loaded_frequency": "8 GHz",
                 "empty_q": 5000, "loaded_q": 3000, "eps_bracket": [1, 10]}},
    {"geometry": {"mesh": "part.msh", "mesh_unit": "mm"}, "regions": {"air": {"eps_r": 1}},
     "solve": {"method": "iterative", "sensitivities": True}},
]

STRINGS = ["", " ", "12 mm", "12", "nan GHz", "1e999 mm", "-3 MS/m", "4-nanj", "inf-1j",
           "9.8-0.01j", "1 - 1e6*x", "box", "pec", "both", "copper", "E", "auto", "12 GHz",
           "0.01 %", "10 ppm", "x" * 3000, "\x1b[31mRED\x1b]0;owned\x07", "r\u202eeversed",
           "line\nbreak", "µm", "1e-300 m", "1 parsec", "geometry.radius",
           "regions.inside.eps_r", "walls.x_min.conductivity", "__import__('os')", "ü" * 5]
NUMBERS = [0, -1, 1, 2, 3, 7, 10**20, -(10**18), 2**63 - 1, 10**400, -(10**400), 0.0, -0.0, 1e-300, 5e-324, 1e300,
           -1e300, math.nan, math.inf, -math.inf, 0.5, 1e-9, 1e5, 1e9, 1e12, 1e13, 100.5]
KEY_NAMES = ["eps_r", "modes", "size", "kind", "x", "builder", "radius", "parameter",
             "unknown", "\x1b[2J", "ключ", "a.b", "", " ", "solids", "second", "[0]"]


def random_expression(rng: random.Random, depth: int = 0) -> str:
    """Well-formed, ill-formed, oversized and out-of-range formulas."""
    roll = rng.random()
    if roll < 0.04:
        return "+".join(["x"] * rng.choice([150, 1500, 100_000]))
    if roll < 0.06:
        return "-" * rng.choice([150, 3000]) + "x"
    if roll < 0.08:
        return rng.choice(["1" * 400, "9" * 5000, "1e400", "0x1F", "1_000", "2**2**2**2**2"])
    if depth > 4 or roll < 0.3:
        return rng.choice([*VARIABLES, *CONSTANTS, "1", "0", "-2.5", "1e-300", "1e300", "q",
                           "True", "None", "'s'", "x.real", "[x]"])
    if roll < 0.55:
        op = rng.choice(["+", "-", "*", "/", "**", "<", ">=", " and ", " or ", "%", "//", "@"])
        return f"({random_expression(rng, depth + 1)}{op}{random_expression(rng, depth + 1)})"
    if roll < 0.85:
        name = rng.choice([*FUNCTIONS, "print", "open", "eval"])
        args = ", ".join(random_expression(rng, depth + 1) for _ in range(rng.randint(0, 4)))
        return f"{name}({args})"
    return (f"{random_expression(rng, depth + 1)} if {random_expression(rng, depth + 1)} "
            f"else {random_expression(rng, depth + 1)}")


def random_value(rng: random.Random, depth: int = 0, *, toml_only: bool = False):
    roll = rng.random()
    if roll < 0.25:
        return rng.choice(NUMBERS)
    if roll < 0.45:
        return rng.choice(STRINGS)
    if roll < 0.6:
        return random_expression(rng)
    if roll < 0.65:
        return rng.choice([True, False])
    if roll < 0.68 and not toml_only:
        return rng.choice([datetime.date(2024, 1, 1), datetime.time(12, 0),
                           datetime.datetime(2024, 1, 1, 12, 0)])
    if roll < 0.75:
        return "".join(rng.choice(string.printable + "\x00\x1b\x7fµ€") for _ in
                       range(rng.randint(0, 30)))
    if depth > 2:
        return rng.choice(NUMBERS)
    if roll < 0.88:
        return [random_value(rng, depth + 1, toml_only=toml_only)
                for _ in range(rng.randint(0, 4))]
    return {rng.choice(KEY_NAMES): random_value(rng, depth + 1, toml_only=toml_only)
            for _ in range(rng.randint(0, 3))}


def _places(data, prefix=()):
    """Every (parent, key) pair in the nested tables and lists of ``data``."""
    items = data.items() if isinstance(data, dict) else enumerate(data)
    for key, value in items:
        yield data, key
        if isinstance(value, (dict, list)):
            yield from _places(value, (*prefix, key))


def mutate(rng: random.Random, data: dict, *, allowed=None, toml_only: bool = False) -> dict:
    """One to three random changes to a copy of ``data``; ``allowed``: the top-level tables
    whose keys may change (None: all)."""
    data = copy.deepcopy(data)
    for _ in range(rng.randint(1, 3)):
        places = [(p, k) for p, k in _places(data)
                  if allowed is None or _top_of(data, p, k) in allowed]
        tables = [data] + [p[k] for p, k in places if isinstance(p[k], dict)]
        roll = rng.random()
        if roll < 0.6 and places:
            parent, key = rng.choice(places)
            parent[key] = random_value(rng, toml_only=toml_only)
        elif roll < 0.75:
            rng.choice(tables)[rng.choice(KEY_NAMES)] = random_value(rng, toml_only=toml_only)
        elif roll < 0.85 and places:
            parent, key = rng.choice(places)
            if isinstance(parent, dict):
                del parent[key]
        else:
            table = rng.choice(tables)
            if table:
                key = rng.choice(list(table))
                table[key] = {"nested": {"deeper": table[key]}}
    return data


def _top_of(data: dict, parent, key) -> str | None:
    """The top-level table that holds ``parent[key]``."""
    if parent is data:
        return key
    for name, table in data.items():
        if table is parent or (isinstance(table, (dict, list))
                               and any(p is parent for p, _ in _places(table))):
            return name
    return None


POINTS = np.array([[0.001, 0.002, 0.003], [0.01, 0.005, 0.0125], [0.0, 0.0, 0.0]])


def load_in_process(data: dict, path: Path) -> None:
    """What femcav does with a case before it meshes: validate everything it reads."""
    case = case_from_data(data, path)
    case_materials(case, set(case.regions))
    for name, material in case.regions.items():
        material.check(POINTS, field=f"regions.{name}")
    for table, parse in (("sweep", parse_sweep), ("tune", parse_tune),
                         ("extract", parse_extract)):
        if table in data:
            parse(data)


def assert_one_clean_line(error: InputError) -> None:
    text = str(error)
    assert text and "\n" not in text and all(ch.isprintable() for ch in text), repr(text)


def test_mutated_cases_raise_only_input_errors():
    rng = random.Random(SEED)
    start, accepted, refused = time.perf_counter(), 0, 0
    for round_ in range(ROUNDS):
        if time.perf_counter() - start > TIME_LIMIT_S:
            break
        data = mutate(rng, rng.choice(SEEDS))
        try:
            load_in_process(data, Path("fuzz.toml"))
            accepted += 1
        except InputError as error:
            assert_one_clean_line(error)
            refused += 1
        except Exception as exc:     # noqa: BLE001 - the contract: nothing but InputError
            pytest.fail(f"round {round_} (seed {SEED}): {type(exc).__name__}: {exc}\n"
                        f"case: {data!r}"[:4000])
    # the generator must exercise both sides of the contract
    assert accepted > 20 and refused > 20 * accepted / 100, (accepted, refused)


def test_damaged_toml_text_raises_only_input_errors(tmp_path):
    rng = random.Random(SEED + 1)
    texts = [to_toml(seed) for seed in SEEDS]
    path = tmp_path / "damaged.toml"
    for round_ in range(300):
        text = list(rng.choice(texts))
        for _ in range(rng.randint(1, 4)):
            at = rng.randrange(len(text))
            action = rng.random()
            if action < 0.4:
                del text[at]
            elif action < 0.8:
                text.insert(at, rng.choice('[]{}="\',.\n#\\x0 \x00\x1b\ud800µ'))
            else:
                text[at:at] = text[rng.randrange(len(text)):][:40]
        path.write_bytes("".join(text).encode("utf-8", "surrogatepass"))
        try:
            load_in_process(read_case_data(path), path)
        except InputError as error:
            assert_one_clean_line(error)
        except Exception as exc:     # noqa: BLE001
            pytest.fail(f"round {round_}: {type(exc).__name__}: {exc}\n{''.join(text)}")


# --- the command line -------------------------------------------------------------------------

def to_toml(data: dict) -> str:
    """A small TOML writer for the fuzz cases (tables as [headers], the rest inline)."""
    def key(name) -> str:
        return _string(str(name))

    def value(v) -> str:
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, int):
            return str(v)
        if isinstance(v, float):
            return ("nan" if math.isnan(v) else ("inf" if v > 0 else "-inf")
                    if math.isinf(v) else repr(v))
        if isinstance(v, str):
            return _string(v)
        if isinstance(v, list):
            return "[" + ", ".join(value(x) for x in v) + "]"
        return "{" + ", ".join(f"{key(k)} = {value(x)}" for k, x in v.items()) + "}"

    lines, tables = [], []

    def table(prefix, content):
        scalars = {k: v for k, v in content.items() if not isinstance(v, dict)}
        if prefix:
            lines.append("[" + ".".join(key(p) for p in prefix) + "]")
        lines.extend(f"{key(k)} = {value(v)}" for k, v in scalars.items())
        for k, v in content.items():
            if isinstance(v, dict):
                tables.append(((*prefix, k), v))

    table((), data)
    while tables:
        table(*tables.pop(0))
    return "\n".join(lines) + "\n"


def _string(text: str) -> str:
    # JSON's escapes are TOML's, but TOML wants DEL escaped too
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


TINY_BOX = {"title": "tiny box",
            "geometry": {"builder": "box", "width": "20 mm", "height": "10 mm",
                         "length": "25 mm"},
            "mesh": {"size": "8 mm"},
            "regions": {"inside": {"eps_r": 2.0}},
            "walls": {"x_min": {"kind": "metal", "metal": "copper"}},
            "symmetry": {"x": "pec"},
            "solve": {"modes": 2, "order": 1}}
# What the command-line runs may change: not the sizes, so that a run stays small.
CLI_TABLES = {"title", "regions", "walls", "symmetry", "solve"}


def _cli_cases():
    rng = random.Random(SEED + 2)
    cases = []
    while len(cases) < 4:
        data = mutate(rng, TINY_BOX, allowed=CLI_TABLES, toml_only=True)
        solve = data.get("solve")
        if isinstance(solve, dict) and any(k in solve for k in ("accuracy", "error_estimate",
                                                                "max_dofs")):
            continue                  # error bars re-mesh: not a quick run
        cases.append(data)
    return [("solve", TINY_BOX), ("mesh", TINY_BOX), *(("solve", c) for c in cases[:3]),
            *(("mesh", c) for c in cases[3:])]


@pytest.mark.parametrize("command, data", _cli_cases())
def test_the_command_line_keeps_its_contract(tmp_path, command, data):
    case = tmp_path / "case.toml"
    case.write_text(to_toml(data), encoding="utf-8")
    out = tmp_path / "out"
    env = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
           "MKL_NUM_THREADS": "1"}
    run = subprocess.run([sys.executable, "-m", "femcav", command, str(case), "--out", str(out),
                          "-q", *(["--no-report"] if command == "solve" else [])],
                         capture_output=True, text=True, timeout=120, env=env)
    assert run.returncode in (0, 2, 3), run.stderr
    assert "Traceback" not in run.stderr
    assert all(line.isprintable() for line in run.stderr.splitlines()), run.stderr
    if run.returncode == 2:
        assert len(run.stderr.splitlines()) == 1, run.stderr
        assert run.stderr.startswith("femcav: error: ")
        assert sorted(p.name for p in tmp_path.iterdir()) == ["case.toml"]
    else:
        assert out.is_dir()
