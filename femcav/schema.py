"""The case file's keys, declared once: for every table, each key's type, unit, allowed range
or values, and default.

The readers (femcav.case, femcav.study, the composite builder) consult these declarations
before any other use of a value, so a value of the wrong type or outside its range is one
InputError that names its key and says what is allowed, never a TypeError deep inside.
Everything here is plain data; the few checks below only read it.

Ranges are "sane" rather than physical limits: wide enough for every real part (ceramics to
ε_r 10⁵, ferrites to μ_r 10⁵, cryogenic metals, THz cavities), narrow enough that the solvers
stay in floating-point range (ε_r = 1e-300 stops ARPACK; a conductivity of 1e-300 S/m gives a
Q of 1e-150 without complaint). README.md ("Case-file reference") lists them.
"""

from __future__ import annotations

import importlib
import math
from dataclasses import dataclass, field
from typing import Callable

from .errors import InputError
from .superconductors import SUPERCONDUCTORS
from .units import SI_NAME, format_si, parse_quantity


@dataclass(frozen=True)
class ValueType:
    """A TOML value type: its name in messages and the test for it."""

    name: str
    accepts: Callable[[object], bool]


def _is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _is_whole(value) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


STRING = ValueType("a string", lambda v: isinstance(v, str))
NUMBER = ValueType("a number", _is_number)
WHOLE = ValueType("a whole number", _is_whole)
BOOL = ValueType("true or false", lambda v: isinstance(v, bool))
TABLE = ValueType("a table", lambda v: isinstance(v, dict))


def either(*types: ValueType) -> ValueType:
    return ValueType(" or ".join(t.name for t in types),
                     lambda v: any(t.accepts(v) for t in types))


def list_of(item: ValueType, length: int | None = None, *, at_most: int | None = None
            ) -> ValueType:
    count = ({1: "one value", 2: "two values", 3: "three values"}.get(length, f"{length} values")
             if length else f"at most {at_most} values" if at_most else "values")
    return ValueType(
        f"a list of {count}, each {item.name}",
        lambda v: (isinstance(v, list) and (length is None or len(v) == length)
                   and (at_most is None or len(v) <= at_most)
                   and all(item.accepts(x) for x in v)))


# A quantity: a bare number in SI units, or a string with a unit ("12 mm", "9.5 GHz").
QUANTITY = either(NUMBER, STRING)
POINT = list_of(QUANTITY, 3)


@dataclass(frozen=True)
class Range:
    """low <= value <= high (or < with ``*_open``), and always finite."""

    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False

    def contains(self, value: float) -> bool:
        try:
            if not math.isfinite(value):
                return False
        except OverflowError:       # an integer beyond float
            return False
        if self.low is not None and (value <= self.low if self.low_open else value < self.low):
            return False
        return self.high is None or (value < self.high if self.high_open else value <= self.high)

    def describe(self, unit: str = "") -> str:
        """E.g. "from 0.01 to 100000", "above 0 and below 0.5", "finite"."""
        def show(v):
            return format_si(v, unit, 6) if unit else f"{v:g}"
        if self.low is not None and self.high is not None and not (self.low_open
                                                                   or self.high_open):
            return f"from {show(self.low)} to {show(self.high)}"
        parts = []
        if self.low is not None:
            parts.append(f"{'above' if self.low_open else 'at least'} {show(self.low)}")
        if self.high is not None:
            parts.append(f"{'below' if self.high_open else 'at most'} {show(self.high)}")
        return " and ".join(parts) or "finite"


@dataclass(frozen=True)
class Key:
    """One key: its type, the unit kind of a quantity (femcav.units), its range in SI units
    (of every number, in a list), its allowed values, its default (None: no default, or
    absent means "not set")."""

    type: ValueType
    unit: str | None = None
    range: Range | None = None
    # the allowed values, or "module:NAME" of the tuple or dict (its keys) that holds them,
    # read when checked (so that this module imports no solver code)
    choices: tuple | str = ()
    default: object = None
    doc: str = ""
    # a string choice matches whatever its letter case ("PEC", "Copper"); ``spellings``
    # (a dict, or "module:NAME" of one) maps other common spellings to a choice
    fold_case: bool = False
    spellings: dict | str = field(default_factory=dict)

    def allowed(self) -> tuple:
        return tuple(_named(self.choices)) if isinstance(self.choices, str) else self.choices

    def canonical(self, value):
        """The allowed choice ``value`` spells (itself when it is one, or when no other
        spelling is accepted)."""
        allowed = self.allowed()
        if not self.fold_case or not isinstance(value, str) or value in allowed:
            return value
        folded = value.strip().lower()
        by_case = {str(choice).lower(): choice for choice in allowed}
        spellings = _named(self.spellings) if isinstance(self.spellings, str) else self.spellings
        return by_case.get(folded, spellings.get(folded, value))


def _named(reference: str):
    """The object "module:NAME" names (read when needed, so that this module imports no
    solver code)."""
    module, _, name = reference.partition(":")
    return getattr(importlib.import_module(module), name)


@dataclass(frozen=True)
class Table:
    """The keys of one table; ``each``: the declaration of every entry of a table whose keys
    are names the user chooses ([regions], [walls], [tolerances])."""

    keys: dict[str, Key] = field(default_factory=dict)
    each: Key | None = None


# --- Ranges (SI) -----------------------------------------------------------------------------

EPS_R = Range(1e-2, 1e5)
MU_R = Range(1e-2, 1e5)
# Above about 0.1 the perturbation Q_d is flagged per mode (post/loss_validity.py); 100 is far
# past any material, a typo guard.
TAN_DELTA = Range(0.0, 100.0)
CONDUCTIVITY = Range(1.0, 1e12)          # S/m: resistive coatings to cryogenic copper
ROUGHNESS = Range(0.0, 1e-3)             # m, rms
# ohms: a superconductor's nano-ohms to a resistive film's tens of ohms
SURFACE_RESISTANCE = Range(0.0, 1e3, low_open=True)
RESIDUAL_RESISTANCE = Range(0.0, 1.0)    # ohms, added to a superconductor's BCS part
# K: the BCS approximation of femcav.superconductors holds below half the critical
# temperature
TEMPERATURE = Range(0.0, min(s.highest_temperature_k for s in SUPERCONDUCTORS.values()),
                    low_open=True)
BEAM_VELOCITY = Range(0.0, 1.0, low_open=True)   # a fraction of c
FREQUENCY = Range(1.0, 1e13)             # Hz: 1 Hz to 10 THz
POSITIVE = Range(0.0, low_open=True)
MODES = Range(1, 1000)
PER_WAVELENGTH = Range(2, 100)
EDGE_REFINEMENT = Range(0.01, 1)
MAX_DOFS = Range(1000, 1e9)
ACCURACY = Range(0.0, 0.5, low_open=True, high_open=True)
AZIMUTHAL_ORDER = Range(0, 100)
# The most values one study parameter may take (each is a solve): refused before any list
# of values is made, so that a typo such as points = 1000000000 costs nothing.
MAX_STUDY_VALUES = 10_000
STUDY_POINTS = Range(2, MAX_STUDY_VALUES)
TUNE_TOLERANCE = Range(1e-12, 0.1, high_open=True)
EXTRACT_TOLERANCE = Range(1e-15, 1e-2, high_open=True)
QUALITY_FACTOR = Range(1.0, 1e12)
# the imaginary stretch at a layer's outer wall, in layer thicknesses (fem.absorber)
PML_STRENGTH = Range(0.0, 100.0, low_open=True)
# An expression (eps_r in x, y, z) is refused beyond these, before it is compiled.
EXPRESSION_MAX_CHARS = 2000
EXPRESSION_MAX_DEPTH = 100

# A periodic cell: at most three face pairs (a 3D lattice cell), phases within one turn
# either way (a bare number is radians).
MAX_PERIODIC_PAIRS = 3
PHASE = Range(-2 * math.pi, 2 * math.pi)

# --- Tables ----------------------------------------------------------------------------------

LENGTH = Key(QUANTITY, unit="length", range=POSITIVE)
FREQ = Key(QUANTITY, unit="frequency", range=FREQUENCY)

TOP = Table({
    "title": Key(STRING), "geometry": Key(TABLE), "mesh": Key(TABLE), "regions": Key(TABLE),
    "walls": Key(TABLE), "symmetry": Key(TABLE), "solve": Key(TABLE), "sweep": Key(TABLE),
    "tune": Key(TABLE), "extract": Key(TABLE), "tolerances": Key(TABLE),
    "probes": Key(TABLE), "filling": Key(TABLE), "beam": Key(TABLE), "temperature": Key(TABLE),
    "periodic": Key(either(TABLE, list_of(TABLE, at_most=MAX_PERIODIC_PAIRS))),
    "dispersion": Key(TABLE),
    "coupling": Key(TABLE),
    "open": Key(TABLE),
})

GEOMETRY_MESH = Table({
    "mesh": Key(STRING, doc="mesh file, relative to the case file"),
    "mesh_unit": Key(STRING, choices="femcav.units:LENGTH_UNITS", default="m"),
})

# The builder's own parameters join this table (see builder_table).
GEOMETRY_BUILDER = Table({"builder": Key(STRING, choices="femcav.geometry:BUILDERS")})

PARAMETER_TYPES = {"length": QUANTITY, "point": POINT}   # geometry.params.Param.kind

# [geometry] cells of the elliptical_cells builder (its lengths are builder parameters): a
# chain longer than a few tens of cells is no single accelerating structure
CELL_COUNT = Key(WHOLE, range=Range(1, 30), default=1)

COMPOSITE = Table({"solids": Key(list_of(TABLE)), "background": Key(STRING, default="inside")})

SOLID = Table({
    "shape": Key(STRING, choices=("box", "cylinder")),
    "role": Key(STRING, choices=("space", "metal", "fill")),
    "name": Key(STRING, default=""),
    "corner": Key(POINT, unit="length"), "size": Key(POINT, unit="length"),
    "base": Key(POINT, unit="length"), "axis": Key(POINT, unit="length"),
    "radius": LENGTH,
})

MESH = Table({
    "size": LENGTH,
    "max_frequency": FREQ,
    "per_wavelength": Key(NUMBER, range=PER_WAVELENGTH),
    "edge_refinement": Key(NUMBER, range=EDGE_REFINEMENT, default=0.5),
    "curved": Key(BOOL, default=False),
})

# A uniaxial value {perpendicular, parallel, axis} or a 3 x 3 tensor [[..], [..], [..]]
# (femcav.anisotropy checks the inside)
MATRIX = ValueType("a 3 x 3 tensor [[..], [..], [..]]", lambda v: isinstance(v, list))
# ppm/K: a temperature coefficient of permittivity (1/ε dε/dT) or a linear thermal expansion
# coefficient; ceramics and crystals sit within ±1000 ppm/K, polymers up to a few hundred
TEMPERATURE_COEFFICIENT = Range(-1e-2, 1e-2)
EXPANSION = Range(-1e-3, 1e-3)
REGION = Table({
    "eps_r": Key(either(NUMBER, STRING, TABLE, MATRIX), range=EPS_R, default=1.0,
                 doc="a number, a complex number string, an expression in x, y, z, a "
                     "uniaxial table {perpendicular, parallel, axis} or a 3 x 3 tensor"),
    "mu_r": Key(either(NUMBER, STRING, TABLE, MATRIX), range=MU_R, default=1.0,
                doc="a number, a complex number string, a uniaxial table or a 3 x 3 tensor"),
    "tan_delta": Key(either(NUMBER, TABLE), range=TAN_DELTA, default=0.0,
                     doc="a number, or {perpendicular, parallel} with a uniaxial eps_r"),
    "mu_tan_delta": Key(NUMBER, range=TAN_DELTA, default=0.0,
                        doc="magnetic loss tangent: mu_r (1 - j mu_tan_delta)"),
    "tce": Key(either(QUANTITY, TABLE), unit="temperature_coefficient",
               range=TEMPERATURE_COEFFICIENT,
               doc="temperature coefficient of eps_r, (1/eps_r) d eps_r/dT, e.g. "
                   "\"110 ppm/K\", or {perpendicular, parallel} with a uniaxial eps_r"),
    "expansion": Key(QUANTITY, unit="temperature_coefficient", range=EXPANSION,
                     doc="linear thermal expansion of a dielectric part, e.g. \"7 ppm/K\""),
    "material": Key(STRING, choices="femcav.material_library:LIBRARY",
                    doc="a named material (femcav.material_library); keys given beside it "
                        "override its values"),
    "mesh_size": LENGTH,
    # an absorbing region (perfectly matched layer; femcav.fem.absorber)
    "pml": Key(STRING, choices="femcav.fem.absorber:SHAPES", fold_case=True),
    "pml_strength": Key(NUMBER, range=PML_STRENGTH),
})
# [open]: the air and absorbing shell around an open builder's part (geometry.open_space)
OPEN = Table({
    "shape": Key(STRING, choices=("sphere", "cylinder", "box"), fold_case=True,
                 default="sphere"),
    "clearance": LENGTH,
    "thickness": LENGTH,
})
REGIONS = Table(each=Key(TABLE, doc="a region: eps_r, mu_r, tan_delta, mesh_size, pml, "
                                    "pml_strength"))

WALL = Table({
    "kind": Key(STRING, choices="femcav.walls:KINDS", fold_case=True),
    "conductivity": Key(QUANTITY, unit="conductivity", range=CONDUCTIVITY),
    "metal": Key(STRING, choices="femcav.wall_resistance:METAL_NAMES", fold_case=True,
                 spellings="femcav.wall_resistance:METAL_SPELLINGS"),
    "roughness": Key(QUANTITY, unit="length", range=ROUGHNESS),
    "surface_resistance": Key(QUANTITY, unit="resistance", range=SURFACE_RESISTANCE),
    "temperature": Key(QUANTITY, unit="temperature", range=TEMPERATURE,
                       doc="of a superconducting metal"),
    "residual_resistance": Key(QUANTITY, unit="resistance", range=RESIDUAL_RESISTANCE,
                               doc="of a superconducting metal"),
    "port_modes": Key(WHOLE, range=Range(1, 20), default=1,
                      doc="of a port: its lowest waveguide modes that are terminated"),
    "expansion": Key(QUANTITY, unit="temperature_coefficient", range=EXPANSION,
                     doc="linear thermal expansion of the housing the wall belongs to"),
})
WALLS = Table(each=Key(TABLE, doc='a wall: kind = "pec", "pmc", "metal" or "port"'))

SYMMETRY = Table({axis: Key(STRING, choices=("pec", "pmc", "both"), fold_case=True)
                  for axis in "xyz"})

SOLVE = Table({
    "modes": Key(WHOLE, range=MODES, default=10),
    "near": FREQ,
    "form": Key(STRING, choices="femcav.model:FORMS"),
    "order": Key(WHOLE, choices="femcav.fem.space:ORDERS", default=1),
    "complex_check": Key(BOOL, default=False),
    "losses_inside": Key(BOOL, default=False,
                         doc="loss tangents in the operator: complex frequencies, Q from them"),
    "error_estimate": Key(BOOL, default=False),
    "accuracy": Key(either(NUMBER, STRING), range=ACCURACY,
                    doc='relative: 1e-5, "10 ppm", "0.01 %"'),
    "max_dofs": Key(WHOLE, range=MAX_DOFS, default=400_000),
    "factorization": Key(STRING, choices="femcav.eigen.factorization:FACTORIZERS",
                         default="auto"),
    "method": Key(STRING, choices="femcav.eigen.selection:METHODS", default="auto"),
    "azimuthal_orders": Key(either(WHOLE, list_of(WHOLE)), range=AZIMUTHAL_ORDER),
    "sensitivities": Key(BOOL, default=False),
    # open problems: solve again with stronger absorbing layers (post.radiation)
    "layer_check": Key(BOOL, default=False),
})

STUDY_VALUE = either(NUMBER, STRING)
SWEEP_AXIS = Table({
    "parameter": Key(STRING),
    "values": Key(list_of(STUDY_VALUE, at_most=MAX_STUDY_VALUES)),
    "from": Key(STUDY_VALUE), "to": Key(STUDY_VALUE),
    "points": Key(WHOLE, range=STUDY_POINTS),
})
SWEEP = Table({**SWEEP_AXIS.keys, "second": Key(TABLE)})

TUNE = Table({
    "parameter": Key(STRING),
    "bracket": Key(list_of(STUDY_VALUE, 2)),
    # a frequency, or with quantity = "q_external" / "coupling" a number (Q_ext, k)
    "target": Key(either(NUMBER, STRING), doc='"9.5 GHz"; 40 (a Q_ext); -0.05 (a k)'),
    "quantity": Key(STRING, choices=("frequency", "q_external", "coupling"),
                    default="frequency", doc="what the tuned parameter sets"),
    "port": Key(STRING, doc="the port whose Q_ext is tuned (quantity = \"q_external\")"),
    "mode": Key(WHOLE, range=MODES, default=1),
    "tolerance": Key(NUMBER, range=TUNE_TOLERANCE, default=1e-6),
    # compensation: the value that puts the mode's τf (femcav.temperature) on this target
    "target_tau_f": Key(QUANTITY, unit="temperature_coefficient",
                        range=TEMPERATURE_COEFFICIENT, doc='e.g. "0 ppm/K"; instead of target'),
    "tau_f_tolerance": Key(QUANTITY, unit="temperature_coefficient",
                           range=Range(0.0, 1e-3, low_open=True), default=1e-7,
                           doc="stop within this of target_tau_f (default 0.1 ppm/K)"),
})

EXTRACT = Table({
    "sample": Key(STRING),
    "mode": Key(WHOLE, range=MODES, default=1),
    "empty_frequency": FREQ, "loaded_frequency": FREQ,
    "empty_q": Key(NUMBER, range=QUALITY_FACTOR), "loaded_q": Key(NUMBER, range=QUALITY_FACTOR),
    "eps_bracket": Key(list_of(NUMBER, 2), range=Range(1.0, EPS_R.high), default=[1.0, 100.0]),
    "tolerance": Key(NUMBER, range=EXTRACT_TOLERANCE, default=1e-9),
})

# Monte-Carlo draws of the toleranced lengths (femcav.study.monte_carlo): at most this many
# samples, each a solve.
MONTE_CARLO_SAMPLES = Range(2, 100_000)
# [tolerances]: its own keys, then one entry per builder length: a tolerance, or a table
# with the tolerance and the distribution a Monte-Carlo draw takes it from.
TOLERANCES = Table({"samples": Key(WHOLE, range=MONTE_CARLO_SAMPLES),
                    "seed": Key(WHOLE, range=Range(0, 2**63 - 1), default=0)},
                   each=Key(either(QUANTITY, TABLE)))
TOLERANCE_ENTRY = Table({
    "tolerance": LENGTH,
    "distribution": Key(STRING, choices=("normal", "uniform"), default="normal",
                        doc="normal: the tolerance is one standard deviation; uniform: "
                            "the value lies anywhere within ± the tolerance"),
})

# [probes.NAME]: a point (at) or a line of points (from, to, points); coordinates may be
# negative, so no range but finiteness.
PROBE_POINTS = Range(2, 10_000)
PROBE = Table({
    "at": Key(POINT, unit="length", doc="a point"),
    "from": Key(POINT, unit="length", doc="first point of a line"),
    "to": Key(POINT, unit="length", doc="last point of a line"),
    "points": Key(WHOLE, range=PROBE_POINTS, doc="points along the line, ends included"),
})
PROBES = Table(each=Key(TABLE, doc="a probe: at, or from, to and points"))
FILLING = Table({
    "axis": Key(either(STRING, list_of(NUMBER, 3)), default="z",
                doc='"x", "y", "z" or three numbers: the axis of the axial magnetic filling'),
})

# [coupling] modes = [i, j]: the coupling coefficient of two modes of a full model
# (femcav.post.coupling); a cut model's classes give theirs without it.
COUPLING = Table({"modes": Key(list_of(WHOLE, 2), range=MODES,
                               doc="two mode numbers of the full model")})

# The line a beam crosses the part on (femcav.post.beam); both ends or neither.
BEAM = Table({
    "from": Key(POINT, unit="length"), "to": Key(POINT, unit="length"),
    "velocity": Key(NUMBER, range=BEAM_VELOCITY, default=1.0, doc="a fraction of c"),
    "active_length": Key(QUANTITY, unit="length", range=POSITIVE,
                         doc="the length E_acc is quoted over (default: the line's)"),
})

# [periodic] (or [[periodic]], up to three): the fields on the second face of ``pair`` are
# those on the first, moved onto it, times e^{-j phase} (femcav.fem.periodic).
PERIODIC = Table({
    "pair": Key(list_of(STRING, 2), doc="two surfaces, the second a translate of the first"),
    "phase": Key(QUANTITY, unit="angle", range=PHASE, default=0.0,
                 doc='the phase advance per cell: "120 deg", "2.0944 rad"'),
})
# [dispersion] (femcav dispersion): the phases of the first pair to solve at.
DISPERSION = Table({
    "from": Key(QUANTITY, unit="angle", range=PHASE),
    "to": Key(QUANTITY, unit="angle", range=PHASE),
    "points": Key(WHOLE, range=STUDY_POINTS),
    "values": Key(list_of(QUANTITY, at_most=MAX_STUDY_VALUES), unit="angle", range=PHASE),
    "pair": Key(WHOLE, range=Range(1, MAX_PERIODIC_PAIRS), default=1,
                doc="which [[periodic]] pair's phase varies (the others keep theirs)"),
})

# [temperature]: every mode followed from one temperature to another (femcav.temperature)
THERMAL = Range(0.0, 2000.0, low_open=True)
TEMPERATURE_RANGE = Table({
    "from": Key(QUANTITY, unit="temperature", range=THERMAL),
    "to": Key(QUANTITY, unit="temperature", range=THERMAL),
    "points": Key(WHOLE, range=STUDY_POINTS, default=11),
    "reference": Key(QUANTITY, unit="temperature", range=THERMAL, default=293.15,
                     doc="where the case's eps_r and lengths hold (default 293.15 K)"),
})

# The quantities a study may vary (femcav.case_parameters): the key each value goes to.
VARIED = {"eps_r": Key(NUMBER, range=EPS_R), "mu_r": Key(NUMBER, range=MU_R),
          "tan_delta": Key(NUMBER, range=TAN_DELTA), "conductivity": WALL.keys["conductivity"],
          "length": Key(QUANTITY, unit="length")}


# --- Checks ----------------------------------------------------------------------------------

def type_name(value) -> str:
    """What a TOML value is, for messages ("a list", "a table", ...)."""
    for t in (BOOL, WHOLE, NUMBER, STRING, TABLE):
        if t.accepts(value):
            return "true/false" if t is BOOL else t.name
    return "a list" if isinstance(value, list) else f"a {type(value).__name__}"


def builder_table(builder) -> Table:
    """[geometry] for a builder module: ``builder`` and the builder's parameters (its
    ``PARAMETERS``, or its own ``TABLE`` when it reads a richer description)."""
    own = getattr(builder, "TABLE", None)
    keys = own.keys if own is not None else {
        name: Key(PARAMETER_TYPES[p.kind], unit="length")
        for name, p in builder.PARAMETERS.items()}
    return Table({**GEOMETRY_BUILDER.keys, **keys})


def check_table(value, table: Table, where: str, *, unknown: str = "") -> dict:
    """``value`` as a table whose keys are all declared and of their declared types (and,
    where declared, one of the allowed values); the table itself is returned. ``unknown``:
    what to say of an undeclared key (default: the keys allowed)."""
    if not isinstance(value, dict):
        raise InputError(f"must be a table, got {type_name(value)}", field=where or None)
    prefix = f"{where}." if where else ""
    for name, item in value.items():
        key = table.keys.get(name, table.each)     # a table's own keys before its entries
        if key is None:
            hint = unknown or f"allowed here: {', '.join(sorted(table.keys))}"
            raise InputError(f"unknown key; {hint}", field=f"{prefix}{name}")
        check_value(item, key, f"{prefix}{name}")
    return value


def canonical_table(spec: dict, table: Table) -> dict:
    """``spec`` with every value a key accepts in another spelling ("PEC", "aluminum")
    written as the choice it means; other values as they are."""
    return {name: (table.keys[name].canonical(value) if name in table.keys else value)
            for name, value in spec.items()} if isinstance(spec, dict) else spec


def check_value(value, key: Key, field: str) -> None:
    """The type of ``value`` and, for keys with a fixed set of values, its membership."""
    allowed = key.allowed()
    value = key.canonical(value)
    if not key.type.accepts(value):
        if allowed:
            raise InputError(f"must be one of {_listing(allowed)}, got {type_name(value)}",
                             field=field)
        raise InputError(f"must be {key.type.name}, got {type_name(value)}", field=field)
    if allowed and value not in allowed:
        raise InputError(f"must be one of {_listing(allowed)}, got {value!r}", field=field)


def _listing(values) -> str:
    return ", ".join(map(repr, values))


def read(spec: dict, name: str, table: Table, where: str):
    """The value of key ``name`` of the checked table ``spec`` (its default when absent): a
    quantity in SI units, a number within its range, anything else as given."""
    if name not in spec:
        return table.keys[name].default
    return parse_value(spec[name], table.keys[name], f"{where}.{name}")


def parse_value(value, key: Key, field: str):
    """One value against its declaration: type, unit, range (in SI); a list item by item
    (``field[i]``)."""
    check_value(value, key, field)
    value = key.canonical(value)
    if isinstance(value, list):
        return [_parse_item(v, key, f"{field}[{i}]") for i, v in enumerate(value)]
    return _parse_item(value, key, field)


def _parse_item(value, key: Key, field: str):
    if key.unit is not None:
        number = parse_quantity(value, key.unit, field=field)
        check_range(number, key, field, shown=value)
        return number
    if _is_number(value):
        check_range(value, key, field)
        # a whole number stays an int where only whole numbers are allowed
        return value if isinstance(value, int) and not key.type.accepts(0.5) else float(value)
    return value


def describe_range(key: Key) -> str:
    """E.g. "a number from 0.01 to 100000", "a frequency from 1 Hz to 10 THz"."""
    rng = key.range or Range()
    noun = (f"a {key.unit}" if key.unit else
            "a whole number" if "whole number" in key.type.name else "a number")
    return f"{noun} {rng.describe(SI_NAME.get(key.unit, ''))}"


def check_range(number: float, key: Key, field: str, *, shown=None) -> None:
    """Refuse a number (SI) outside the key's range or not finite; ``shown``: the value as
    written, for the message."""
    rng = key.range or Range()
    if not rng.contains(number):
        raise InputError(f"must be {describe_range(key)}, got "
                         f"{(shown if shown is not None else number)!r}", field=field)
