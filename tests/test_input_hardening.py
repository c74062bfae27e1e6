"""Case-file input, one test per class of defect: every key refuses a value of the wrong type
and a number outside its documented range with one InputError naming that key; expressions
refuse every malformed or oversized text the same way; a relation between keys is reported at
the key whose value breaks it; user text in a message is escaped.

The parametrisations are generated from femcav.schema, so a key added there is tested too.
The ranges themselves are ours (README, "Case-file reference"); what the tests check is the
contract, not a physical value.
"""

import copy
import io
import math
from pathlib import Path

import numpy as np
import pytest

from femcav import schema
from femcav.case import case_from_data
from femcav.cli import main
from femcav.errors import InputError, printable
from femcav.expressions import FUNCTIONS, Expression
from femcav.geometry import BUILDERS
from femcav.progress import Progress
from femcav.study.extract import parse_extract
from femcav.study.sweep import parse_sweep
from femcav.study.tune import parse_tune

PATH = Path("case.toml")

# A valid case that uses every table; each test breaks one key of it.
BASE = {
    "title": "hardening base",
    "geometry": {"builder": "tuned_pillbox", "radius": "12 mm", "length": "18 mm",
                 "post_radius": "1 mm", "post_depth": "3 mm", "post_offset": "0 mm"},
    "mesh": {"size": "3 mm", "max_frequency": "12 GHz", "per_wavelength": 10,
             "edge_refinement": 0.5, "curved": False},
    "regions": {"inside": {"eps_r": 1.0, "mu_r": 1.0, "tan_delta": 1e-4,
                           "mesh_size": "2 mm"}},
    "walls": {"side": {"kind": "metal", "conductivity": "58 MS/m", "roughness": "1 um"},
              "top": {"kind": "metal", "metal": "copper"}},
    "solve": {"modes": 3, "near": "9 GHz", "form": "H", "order": 1, "complex_check": False,
              "error_estimate": False, "max_dofs": 100000, "factorization": "auto",
              "method": "auto", "sensitivities": False},
    "sweep": {"parameter": "regions.inside.eps_r", "from": 1.0, "to": 2.0, "points": 3,
              "second": {"parameter": "geometry.post_depth", "values": ["2 mm", "3 mm"]}},
    "tune": {"parameter": "geometry.post_depth", "bracket": ["1 mm", "5 mm"],
             "target": "9.3 GHz", "mode": 1, "tolerance": 1e-6},
    "extract": {"sample": "inside", "mode": 1, "empty_frequency": "9.5 GHz",
                "loaded_frequency": "9.4 GHz", "empty_q": 9000, "loaded_q": 8000,
                "eps_bracket": [1.0, 10.0], "tolerance": 1e-9},
    "tolerances": {"radius": "20 um"},
    "beam": {"velocity": 0.9},
}
# Keys that do not go together with others of BASE: (table, key) -> (what it is added with,
# the keys of BASE to drop for it).
VARIANTS = {
    ("symmetry",): ({"symmetry": {"y": "pec"}}, [("tolerances",)]),
    ("solve", "accuracy"): ({"solve": {"accuracy": "100 ppm"}}, [("tolerances",)]),
    ("solve", "azimuthal_orders"): ({"solve": {"azimuthal_orders": [0]}},
                                    [("tolerances",), ("solve", "form")]),
    ("sweep", "second", "points"): ({"sweep": {"second": {
        "parameter": "geometry.post_depth", "from": "2 mm", "to": "3 mm", "points": 2}}}, []),
    ("walls", "side", "surface_resistance"): ({}, [("walls", "side", "conductivity"),
                                                   ("walls", "side", "roughness")]),
    ("walls", "side", "temperature"): ({"walls": {"side": {
        "kind": "metal", "metal": "niobium", "temperature": "2 K",
        "residual_resistance": "10 nohm"}}}, []),
    # compensation replaces the frequency target
    ("tune", "target_tau_f"): ({"tune": {"target_tau_f": "0 ppm/K"}}, [("tune", "target")]),
}
VARIANTS[("walls", "side", "residual_resistance")] = VARIANTS[("walls", "side", "temperature")]
VARIANTS[("walls", "side", "port_modes")] = ({"walls": {"side": {"kind": "port"}}}, [])
# pml_strength belongs to an absorbing region
VARIANTS[("regions", "inside", "pml_strength")] = ({"regions": {"inside": {"pml": "spherical"}}},
                                                   [])
# [beam] and [symmetry] do not go together
VARIANTS[("symmetry",)][1].append(("beam",))

# Where each declared table sits in BASE.
TABLES = [(("geometry",), schema.builder_table(BUILDERS["tuned_pillbox"])),
          (("mesh",), schema.MESH), (("regions", "inside"), schema.REGION),
          (("walls", "side"), schema.WALL),
          (("symmetry",), schema.SYMMETRY), (("solve",), schema.SOLVE),
          (("sweep",), schema.SWEEP), (("sweep", "second"), schema.SWEEP_AXIS),
          (("tune",), schema.TUNE), (("extract",), schema.EXTRACT), (("beam",), schema.BEAM),
          ((), schema.TOP)]


def load_everything(data: dict) -> None:
    """The case and its study tables, as femcav solve / sweep / tune / extract read them."""
    case_from_data(data, PATH)
    for table, parse in (("sweep", parse_sweep), ("tune", parse_tune),
                         ("extract", parse_extract)):
        if table in data:
            parse(data)


def base_for(table: tuple, key: str) -> dict:
    """A valid case that holds ``table``.``key`` (BASE, or its variant for that key)."""
    data = copy.deepcopy(BASE)
    added, dropped = VARIANTS.get((*table, key), VARIANTS.get(table, ({}, [])))
    for rival in dropped:
        parent = data
        for part in rival[:-1]:
            parent = parent[part]
        parent.pop(rival[-1], None)
    for name, entries in added.items():
        data.setdefault(name, {}).update(copy.deepcopy(entries))
    return data


def with_value(data: dict, table: tuple, key: str, value) -> dict:
    target = data
    for part in table:
        target = target[part]
    target[key] = value
    return data


def field_of(table: tuple, key: str) -> str:
    return ".".join((*table, key))


def refused(data: dict) -> InputError:
    with pytest.raises(InputError) as caught:
        load_everything(data)
    text = str(caught.value)
    assert "\n" not in text and printable(text) == text
    return caught.value


def test_the_base_case_and_its_variants_are_valid():
    load_everything(copy.deepcopy(BASE))
    for where in VARIANTS:
        load_everything(base_for(where[:1], where[-1]) if len(where) > 1
                        else base_for(where, ""))


# --- 1. types ---------------------------------------------------------------------------------

WRONG_TYPES = [["x"], {"nested": {"table": 1}}, True, "text", 1.5, 7]


def _declared_keys():
    for table, declared in TABLES:
        for key, decl in declared.keys.items():
            yield pytest.param(table, key, decl, id=field_of(table, key))


@pytest.mark.parametrize("table, key, declared", list(_declared_keys()))
def test_every_key_refuses_a_value_of_the_wrong_type(table, key, declared):
    for wrong in WRONG_TYPES:
        if declared.type.accepts(wrong):
            continue
        error = refused(with_value(base_for(table, key), table, key, wrong))
        assert error.field == field_of(table, key), (wrong, str(error))
        assert "must be" in error.message


@pytest.mark.parametrize("text, field", [
    # the examples of the issue: lists where a string is expected
    ('["box"]', "geometry.builder"), ('["auto"]', "solve.factorization"),
    ('["copper"]', "walls.top.metal"), ('["pec"]', "symmetry.y"),
])
def test_lists_where_a_choice_is_expected(text, field):
    import tomllib

    table, key = field.rsplit(".", 1)
    value = tomllib.loads(f"v = {text}")["v"]
    data = with_value(base_for(tuple(table.split(".")), key), tuple(table.split(".")), key,
                      value)
    assert refused(data).field == field


@pytest.mark.parametrize("table", ["regions", "walls", "tolerances"])
def test_named_entries_refuse_the_wrong_type(table):
    data = copy.deepcopy(BASE)
    data[table]["odd"] = ["not", "a", "table"] if table != "tolerances" else ["1 mm"]
    assert refused(data).field == f"{table}.odd"


def test_composite_solids_are_type_checked():
    data = copy.deepcopy(BASE)
    data["geometry"] = {"builder": "composite", "solids": [
        {"shape": ["box"], "role": "space", "corner": [0, 0, 0], "size": [0.01, 0.01, 0.01]}]}
    data.pop("tolerances")
    assert refused(data).field == "geometry.solids[0].shape"


# --- 2. ranges --------------------------------------------------------------------------------

def _outside(rng: schema.Range):
    """Values just outside the range, and the non-finite ones."""
    values = [math.nan, math.inf, -math.inf]
    if rng.low is not None:
        values.append(rng.low - max(abs(rng.low), 1.0) * 0.5)
        if rng.low > 0:
            values.append(rng.low / 1e3)
    if rng.high is not None:
        values.append(rng.high * 10 + 1)
    return values


def _ranged_keys():
    for table, declared in TABLES:
        for key, decl in declared.keys.items():
            if decl.range is not None:
                yield pytest.param(table, key, decl, id=field_of(table, key))


def _as_written(decl: schema.Key, value: float):
    """``value`` in the key's own shape: a whole number or a list where the key wants one."""
    if "whole number" in decl.type.name and math.isfinite(value):
        value = int(math.floor(value))
    if decl.type.name.startswith("a list") and not decl.type.accepts(value):
        length = 2 if "two values" in decl.type.name else 1
        return [value] * length if length == 1 else [value, 50.0]
    return value


@pytest.mark.parametrize("table, key, declared", list(_ranged_keys()))
def test_every_number_outside_its_range_is_refused_at_its_key(table, key, declared):
    for value in _outside(declared.range):
        written = _as_written(declared, value)
        if not (declared.type.accepts(written)):
            continue            # a whole-number key cannot hold nan
        if declared.range.contains(value):
            continue
        error = refused(with_value(base_for(table, key), table, key, written))
        assert error.field.startswith(field_of(table, key)), (value, str(error))


@pytest.mark.parametrize("table, key, declared", list(_ranged_keys()))
def test_the_ends_of_every_range_are_accepted(table, key, declared):
    rng = declared.range
    ends = [v for v, open_ in ((rng.low, rng.low_open), (rng.high, rng.high_open))
            if v is not None and not open_]
    for value in ends:
        written = _as_written(declared, value)
        if isinstance(written, list) and len(written) == 2:
            written = [value, value + 1] if value == rng.low else [value - 1, value]
        data = with_value(base_for(table, key), table, key, written)
        if key == "points" and value == rng.high:
            if table == ("sweep", "second"):
                continue                        # with the first axis's 3 points: over the cap
            data["sweep"].pop("second")
        q = data["extract"]
        if (key == "empty_q" and value <= q["loaded_q"]) or (key == "loaded_q"
                                                              and value >= q["empty_q"]):
            q["empty_q" if key == "loaded_q" else "loaded_q"] = value * 2 if key == "loaded_q" \
                else value / 2
            if not (rng.contains(q["empty_q"]) and rng.contains(q["loaded_q"])):
                continue        # the other Q cannot be both in range and on the right side
        load_everything(data)


BOX_TEXT = ('[geometry]\nbuilder = "box"\nwidth = "20 mm"\nheight = "10 mm"\n'
            'length = "25 mm"\n')


def refused_by_the_command_line(folder: Path, capsys, text: str, *options) -> str:
    """femcav solve on ``text``: exit 2, one line on stderr, nothing written."""
    case = folder / "case.toml"
    case.write_text(text)
    assert main(["solve", str(case), "-q", *options]) == 2
    err = capsys.readouterr().err
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert not (folder / "case-results").exists()
    return err


def test_tiny_permittivity_is_refused_before_any_solve(tmp_path, capsys):
    # The issue's example: eps_r = 1e-300 used to end in an ARPACK error -9 traceback.
    err = refused_by_the_command_line(tmp_path, capsys,
                                      BOX_TEXT + "[regions.inside]\neps_r = 1e-300\n")
    assert "regions.inside.eps_r: must be a number from 0.01 to 100000" in err


def test_command_line_overrides_have_the_case_file_ranges(tmp_path, capsys):
    for extra, field in ((["--near", "1e-300 Hz"], "--near"), (["--near", "nan GHz"], "--near"),
                         (["--modes", "100000"], "--modes")):
        assert f"{field}: " in refused_by_the_command_line(tmp_path, capsys, BOX_TEXT, *extra)


@pytest.mark.parametrize("line, field", [
    ("[solve]\nmodes = " + "9" * 400, "solve.modes"),            # an int beyond float
    ("[regions.inside]\nmu_r = -" + "9" * 400, "regions.inside.mu_r"),
    ("[solve]\nnear = " + "9" * 400, "solve.near"),
    ("[solve]\nmodes = " + "9" * 5000, None),                  # beyond Python's digit limit
])
def test_integers_beyond_float_are_refused(tmp_path, capsys, line, field):
    err = refused_by_the_command_line(tmp_path, capsys, BOX_TEXT + line + "\n")
    assert (f"{field}: " in err) if field else "too many digits" in err


@pytest.mark.filterwarnings("error::RuntimeWarning")     # a warning is a second line
def test_an_expression_that_is_nowhere_finite_is_one_line_even_with_sizes_from_it(tmp_path,
                                                                                 capsys):
    # the element sizes sample eps_r before the mesh exists; a NaN there used to print a
    # numpy warning before the error
    err = refused_by_the_command_line(
        tmp_path, capsys, BOX_TEXT + '[mesh]\nmax_frequency = "12 GHz"\n[regions.inside]\n'
                                     'eps_r = "sqrt(-1 + 0*x)"\n')
    assert "regions.inside.eps_r: eps_r must be from 0.01 to 100000 everywhere" in err


def _one_tetrahedron_model(eps):
    from femcav.geometry.mesh import TaggedMesh
    from femcav.materials import Material
    from femcav.model import Model

    mesh = TaggedMesh(points=np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1.0]]),
                      tets=np.array([[0, 1, 2, 3]]), tet_region=np.array([1]),
                      region_names={"blob": 1}, faces=np.zeros((0, 3), int),
                      face_tag=np.zeros(0, int), wall_names={})
    return Model(mesh=mesh, materials={"blob": Material(eps_r=Expression(eps))})


# In range at the four corners (x + y + z is 0 or 1 there), far out of it inside.
CORNERS_ONLY = "2 if (x + y + z < 1e-12) or (x + y + z > 1 - 1e-12) else 1e-9"


def test_an_expression_is_checked_at_the_quadrature_points():
    from femcav.fem.space import build_space
    from femcav.model import make_model

    model = _one_tetrahedron_model(CORNERS_ONLY)
    make_model(model.mesh, model.materials, {})            # the corners pass
    with pytest.raises(InputError, match="from 0.01 to 100000 everywhere") as caught:
        build_space(model, "E", 1)
    assert caught.value.field == "regions.blob.eps_r"


def test_an_axisymmetric_expression_is_checked_at_the_quadrature_points():
    from femcav.axisymmetric.model import AxisymmetricModel
    from femcav.axisymmetric.space import build_order_space
    from femcav.geometry.meridional import MeridionalMesh
    from femcav.materials import Material

    # in range only within 1e-9 m of the corners (r, z) = (0.5, 0), (1, 0), (0.5, 1)
    section = MeridionalMesh(points=np.array([[0.5, 0], [1, 0], [0.5, 1.0]]),
                             triangles=np.array([[0, 1, 2]]), tri_region=np.array([1]),
                             region_names={"ring": 1}, edges=np.zeros((0, 2), int),
                             edge_tag=np.zeros(0, int), wall_names={})
    eps = ("2 if min(min(hypot(x - 0.5, z), hypot(x - 1, z)), hypot(x - 0.5, z - 1)) < 1e-9 "
           "else 1e-9")
    model = AxisymmetricModel(section=section, materials={"ring": Material(eps_r=Expression(eps))})
    with pytest.raises(InputError, match="everywhere in the region") as caught:
        build_order_space(model, 0, 1)
    assert caught.value.field == "regions.ring.eps_r"


# --- 3. expressions ---------------------------------------------------------------------------

def _wrong_arities():
    for name, (_, count) in FUNCTIONS.items():
        for given in (count - 1, count + 1):
            yield f"2 + {name}({', '.join(['x'] * given)})"


@pytest.mark.parametrize("text", [
    *_wrong_arities(),
    "1" * 400,                       # an integer beyond float (OverflowError)
    "9" * 5000,                      # beyond Python's digit limit (ValueError)
    "1e400 * x",                     # a literal that is infinite
    "+".join(["x"] * 100_000),       # 100 000 terms (RecursionError)
    "-" * 50_000 + "x",              # 50 000 unary minuses (MemoryError)
    "-" * 500 + "x",                 # short but deep
    "(" * 300 + "x" + ")" * 300,     # too deeply bracketed for the parser
    "x" * 3000,                      # too long
    "sin(x=1)", "sin(*x)", "x.real", "[x]", "x[0]", "'a' + x", "1j * x", "x @ y",
    "lambda: 1", "(x := 2)", "f'{x}'", "x if y", "",
])
def test_expressions_refuse_with_one_line(text):
    with pytest.raises(InputError) as caught:
        Expression(text)
    message = str(caught.value)
    assert "\n" not in message and len(message) < 1000


def test_an_extra_argument_is_no_longer_an_output_buffer():
    # the issue's example: sin(x, y) passed y to numpy as the output array
    with pytest.raises(InputError, match=r"sin\(\) takes one argument, not 2"):
        Expression("2 + sin(x, y)")


def test_every_function_with_its_own_arity_still_works():
    x, y, z = np.array([0.3]), np.array([0.2]), np.array([0.1])
    for name, (func, count) in FUNCTIONS.items():
        args = [x, y, z][:count]
        text = f"{name}({', '.join('xyz'[:count])})"
        with np.errstate(all="ignore"):
            np.testing.assert_allclose(Expression(text)(x, y, z), func(*args), rtol=1e-15)


def test_the_longest_and_deepest_allowed_expressions_compile():
    Expression("+".join(["x"] * (schema.EXPRESSION_MAX_DEPTH - 2)))
    Expression("1" + " " * (schema.EXPRESSION_MAX_CHARS - 1))


# --- 4. the key named is the key that holds the bad value -------------------------------------

PILLBOX_POST = {"builder": "tuned_pillbox", "radius": "12 mm", "length": "18 mm",
                "post_radius": "1 mm", "post_depth": "3 mm"}
DR = {"builder": "dr_fixture", "shield_radius": "12 mm", "shield_height": "12 mm",
      "puck_radius": "5 mm", "puck_height": "4 mm", "support_height": "3 mm"}
TUNED_BOX = {"builder": "tuned_box", "width": "20 mm", "height": "10 mm", "length": "25 mm",
             "post_radius": "1 mm", "post_depth": "3 mm"}
LOADED = {"builder": "loaded_box", "width": "20 mm", "height": "10 mm", "length": "25 mm",
          "block_corner": ["0 mm", "0 mm", "0 mm"], "block_size": ["5 mm", "10 mm", "25 mm"]}
COAX = {"builder": "coax", "outer_radius": "10 mm", "inner_radius": "3 mm", "length": "30 mm"}


@pytest.mark.parametrize("geometry, change, field, mentioned", [
    (PILLBOX_POST, {"post_radius": "13 mm"}, "geometry.post_radius", "radius"),
    (PILLBOX_POST, {"post_offset": "11.5 mm"}, "geometry.post_offset", "radius"),
    (PILLBOX_POST, {"post_depth": "18 mm"}, "geometry.post_depth", "length"),
    (DR, {"support_radius": "13 mm"}, "geometry.support_radius", "shield_radius"),
    (DR, {"puck_radius": "12 mm"}, "geometry.puck_radius", "shield_radius"),
    (DR, {"puck_offset": "7.5 mm"}, "geometry.puck_offset", "shield_radius"),
    (DR, {"support_height": "12 mm"}, "geometry.support_height", "shield_height"),
    (DR, {"puck_height": "9 mm"}, "geometry.puck_height", "support_height"),
    (DR, {"puck_hole_radius": "5 mm"}, "geometry.puck_hole_radius", "puck_radius"),
    (TUNED_BOX, {"post_radius": "11 mm"}, "geometry.post_radius", "width"),
    (TUNED_BOX, {"post_x": "0.5 mm"}, "geometry.post_x", "post_radius"),
    (TUNED_BOX, {"post_z": "24.5 mm"}, "geometry.post_z", "post_radius"),
    (LOADED, {"block_corner": ["0 mm", "10 mm", "0 mm"]}, "geometry.block_corner[1]",
     "height"),
    (COAX, {"inner_radius": "10 mm"}, "geometry.inner_radius", "outer_radius"),
    (COAX, {"gap": "30 mm"}, "geometry.gap", "length"),
])
def test_a_relation_is_reported_at_the_key_that_breaks_it(geometry, change, field, mentioned):
    data = {"geometry": {**geometry, **change}, "regions": {"puck": {"eps_r": 24},
                                                            "support": {"eps_r": 2},
                                                            "block": {"eps_r": 4}}}
    data["regions"] = {k: v for k, v in data["regions"].items()
                       if k in getattr(BUILDERS[geometry["builder"]], "REGIONS", ())}
    error = refused(data)
    assert error.field == field and mentioned in error.message, str(error)


@pytest.mark.parametrize("region, field", [
    ({"eps_r": "4-nanj"}, "regions.inside.eps_r"),        # the issue's example
    ({"eps_r": "inf-1j"}, "regions.inside.eps_r"),
    ({"eps_r": "4-800j"}, "regions.inside.eps_r"),         # tan δ = 200, out of range
    ({"eps_r": "1e-5-1e-9j"}, "regions.inside.eps_r"),      # eps_r' out of range
    ({"eps_r": "4-0.01j", "tan_delta": 0.1}, "regions.inside.tan_delta"),
])
def test_a_complex_permittivity_is_reported_at_eps_r(region, field):
    data = copy.deepcopy(BASE)
    data["regions"]["inside"] = region
    assert refused(data).field == field


@pytest.mark.parametrize("study, field", [
    # the last point puts the post through the bottom: its value is at sweep.values[2]
    ({"sweep": {"parameter": "geometry.post_depth", "values": ["2 mm", "3 mm", "20 mm"]}},
     "sweep.values[2]"),
    ({"sweep": {"parameter": "geometry.post_depth", "from": "2 mm", "to": "20 mm",
                "points": 3}}, "sweep.to"),
    ({"sweep": {"parameter": "geometry.colour", "values": ["2 mm"]}}, "sweep.parameter"),
    ({"tune": {"parameter": "geometry.post_depth", "bracket": ["20 mm", "1 mm"],
               "target": "9 GHz"}}, "tune.bracket[0]"),
    ({"tune": {"parameter": "regions.inside.eps_r", "bracket": [2, 1e9],
               "target": "9 GHz"}}, "tune.bracket[1]"),
])
def test_a_study_point_is_reported_at_the_key_of_its_value(tmp_path, study, field):
    from femcav.study.sweep import run_sweep
    from femcav.study.tune import run_tune

    lines = ['[geometry]', 'builder = "tuned_pillbox"', 'radius = "12 mm"',
             'length = "18 mm"', 'post_radius = "1 mm"', 'post_depth = "3 mm"']
    (table, spec), = study.items()
    lines.append(f"[{table}]")
    for key, value in spec.items():
        lines.append(f"{key} = {_toml(value)}")
    case = tmp_path / "study.toml"
    case.write_text("\n".join(lines) + "\n")
    out = tmp_path / "out"
    with pytest.raises(InputError) as caught:
        (run_sweep if table == "sweep" else run_tune)(case, out=out)
    assert caught.value.field == field, str(caught.value)
    assert not out.exists()


def _toml(value) -> str:
    if isinstance(value, list):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    return f'"{value}"' if isinstance(value, str) else repr(value)


# --- 5. user text is escaped ------------------------------------------------------------------

def test_user_text_in_a_message_is_escaped():
    error = InputError("unknown metal 'x\x1b]0;owned\x07'", source="case\u202e.toml",
                       field="walls.\x1b[31mRED\nx")
    text = str(error)
    assert all(ch.isprintable() for ch in text)
    assert "\\x1b[31mRED\\nx" in text and "\\u202e" in text and "\\x07" in text


def test_an_unknown_key_with_escapes_is_printed_escaped(tmp_path, capsys):
    # the issue's example
    err = refused_by_the_command_line(
        tmp_path, capsys, BOX_TEXT + '[solve]\n"\\u001b[31mRED\\u001b]0;owned\\u0007" = 1\n')
    assert "\x1b" not in err and "\x07" not in err
    assert "solve.\\x1b[31mRED\\x1b]0;owned\\x07: unknown key" in err


def test_progress_lines_escape_the_title():
    stream = io.StringIO()
    Progress(stream=stream).step("case a.toml: LMW\x1b[2J title\nsecond line")
    assert stream.getvalue().count("\n") == 1 and "\x1b" not in stream.getvalue()


# --- 6. a file that cannot be read as a case --------------------------------------------------

@pytest.mark.parametrize("text", ["a = " + "[" * 5000 + "1" + "]" * 5000,
                                  "a = " + "{b = " * 3000 + "1" + "}" * 3000])
def test_a_toml_file_nested_too_deeply_is_refused(tmp_path, capsys, text):
    # tomllib reads nesting by recursion: 5000 levels used to end in a RecursionError
    err = refused_by_the_command_line(tmp_path, capsys, text + "\n")
    assert "nest too deeply" in err
