"""The TOML case file: reading, validation, and turning it into a model.

Every mistake becomes one InputError naming the file and the key path, so the command line can
print it as one line. Every table is checked against its declaration in femcav.schema (keys,
types, ranges) before its values are used. See README.md ("Case-file reference") for the keys.
"""

from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
from scipy.constants import c as C0

from . import schema
from .bare_numbers import bare_number_warnings
from .errors import InputError
from .expressions import Expression
from .geometry import BUILDERS, build_part, builder_layout, read_mesh
from .geometry.mesh import TaggedMesh
from .geometry.names import check_case_names, part_names
from .geometry.params import checked_length, parse_params
from .anisotropy import check_mirror_symmetry, parse_tensor, parse_uniaxial
from .material_library import with_library_values
from .materials import VACUUM, Material
from .metals import CONDUCTIVITY_S_PER_M
from .model import Model, PeriodicPair, make_model
from .post.probes import ProbeSpec
from .post.beam import BeamRequest
from .schema import check_table, read
from .units import UNITS
from .superconductors import SUPERCONDUCTORS
from .wall_resistance import METAL_NAMES
from .walls import Wall

SYMMETRY_CHOICES = {"pec": ("pec",), "pmc": ("pmc",), "both": ("pec", "pmc")}
AXISYMMETRIC_ORDER = 3   # element order of the axisymmetric solver unless the case sets one
DEFAULT_MODES = schema.SOLVE.keys["modes"].default


@dataclass(frozen=True)
class GeometrySpec:
    builder: str | None = None
    parameters: dict[str, object] = field(default_factory=dict)   # SI values
    mesh_path: Path | None = None
    mesh_unit_m: float = 1.0
    # said on stderr before the work starts (femcav.bare_numbers)
    warnings: tuple[str, ...] = ()


@dataclass(frozen=True)
class MeshSpec:
    """Element-size requests for builders (see femcav.sizing for how they combine)."""

    size: float | None = None
    max_frequency_hz: float | None = None
    per_wavelength: float | None = None
    edge_refinement: float = 0.5
    region_sizes: dict[str, float] = field(default_factory=dict)
    curved: bool = False
    # not a key: femcav.accuracy_plan's grading towards the edges of dielectric fills
    fill_edge_refinement: float = 1.0


@dataclass(frozen=True)
class SolveSpec:
    modes: int = DEFAULT_MODES
    near_hz: float | None = None
    form: str | None = None   # None: H with metal walls, else E (see runner.choose_form)
    order: int = 1
    complex_check: bool = False
    losses_inside: bool = False        # tan δ in the operator: complex modes (solver.py)
    error_estimate: bool = False       # solve a mesh sequence and bar every frequency
    accuracy: float | None = None      # relative target for the bars (refine until met)
    max_dofs: int = 400_000
    factorization: str = "auto"        # sparse direct library (femcav.eigen.factorization)
    method: str = "auto"               # eigen backend (femcav.eigen.selection)
    # the azimuthal orders m of a body of revolution: solve its meridional section instead
    # of the 3D part (femcav.axisymmetric); None for a 3D solve
    azimuthal_orders: tuple[int, ...] | None = None
    sensitivities: bool = False        # df/dε_r and df/dμ_r of every region, per mode
    layer_check: bool = False          # open problems: a second solve, stronger layers


@dataclass(frozen=True)
class Case:
    path: Path
    title: str
    geometry: GeometrySpec
    regions: dict[str, Material]
    walls: dict[str, Wall]
    solve: SolveSpec
    mesh: MeshSpec = field(default_factory=MeshSpec)
    symmetry: dict[str, tuple[str, ...]] = field(default_factory=dict)  # axis -> wall kinds
    tolerances: dict[str, float] = field(default_factory=dict)   # builder length -> m
    probes: tuple[ProbeSpec, ...] = ()          # [probes.NAME] (post.probes)
    filling_axis: tuple[float, float, float] = (0.0, 0.0, 1.0)   # [filling] axis, unit
    beam: BeamRequest | None = None    # [beam]: figures along a beam line (post.beam)
    # [tolerances] samples: a Monte-Carlo draw of those lengths (femcav.study.monte_carlo)
    tolerance_samples: object = None
    periodic: tuple[PeriodicPair, ...] = ()   # [periodic] / [[periodic]]: a periodic cell
    coupling_modes: tuple[int, int] | None = None   # [coupling] modes (post.coupling)
    # tce and expansion of regions and walls (femcav.temperature.TemperatureSpec)
    temperature: object = None
    # [temperature]: the temperatures to follow every mode over (femcav.temperature)
    temperature_range: "TemperatureRange | None" = None
    # without an element size: the a priori sizing for the stated accuracy
    # (femcav.accuracy_plan.AccuracyPlan); None when the case sets its sizes
    accuracy_plan: object = None


def in_case(exc: InputError, source: str | None) -> InputError:
    """A core error located in the case file: its source, and the key of the request
    parameter it names (the [solve] table holds them all: order, form, method, ...)."""
    field = f"solve.{exc.option}" if exc.field is None and exc.option else None
    return exc.located(source=source, field=field)


def read_case_data(path: str | Path) -> dict:
    """The raw TOML tables of a case file (for studies that vary them before validation)."""
    path = Path(path)
    source = str(path)
    if not path.is_file():
        raise InputError("case file not found", source=source)
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", source=source) from None
    except UnicodeDecodeError:
        raise InputError("not a UTF-8 text file", source=source) from None
    except ValueError:              # an integer beyond Python's digit limit
        raise InputError("not valid TOML: a number has too many digits to read",
                         source=source) from None
    except RecursionError:
        raise InputError("not a case file: its arrays or tables nest too deeply to read",
                         source=source) from None
    except OSError as exc:
        raise InputError(f"cannot read the case file ({exc.strerror or exc})",
                         source=source) from None


def load_case(path: str | Path) -> Case:
    return case_from_data(read_case_data(path), Path(path))


def case_from_data(data: dict, path: Path) -> Case:
    """Validate raw case tables; ``path`` names the source and anchors relative files. The
    study tables ([sweep], [tune], [extract]) are read by femcav.study, not here."""
    source = str(path)
    try:
        check_table(data, schema.TOP, "")
        title = data.get("title", path.stem)
        geometry = _geometry(_table(data, "geometry", required=True), path.parent)
        region_tables = check_table(_table(data, "regions"), schema.REGIONS, "regions")
        regions = {name: _region(name, spec) for name, spec in region_tables.items()}
        walls = {name: _wall(name, spec) for name, spec in
                 check_table(_table(data, "walls"), schema.WALLS, "walls").items()}
        solve = _solve(_table(data, "solve"))
        geometry = _open_part(_table(data, "open"), geometry, regions, solve)
        regions = _absorbing_regions(regions, region_tables, geometry, data.get("solve", {}))
        mesh = _mesh(_table(data, "mesh"), region_tables, geometry)
        mesh = _open_layer_size(mesh, geometry)
        if solve.error_estimate and geometry.builder is None:
            raise InputError("error estimates re-mesh the part, so they need a builder; for an "
                             "imported mesh, solve meshes of several sizes yourself",
                             field="solve.error_estimate" if "error_estimate" in
                             _table(data, "solve") else "solve.accuracy")
        symmetry = _symmetry(_table(data, "symmetry"), geometry, walls)
        check_mirror_symmetry(regions, symmetry)
        if geometry.builder is not None:    # names are checked before any meshing
            check_case_names(geometry.builder, geometry.parameters, regions, walls)
        if solve.azimuthal_orders is not None:
            _check_axisymmetric(solve, geometry, symmetry)
            port = next((n for n, w in walls.items() if w.kind == "port"), None)
            if port is not None:
                raise InputError("ports are terminated in 3D solves only so far",
                                 field=f"walls.{port}.kind")
        tolerances = _tolerances(_table(data, "tolerances"), geometry, symmetry, solve)
        probes = _probes(_table(data, "probes"))
        filling_axis = _filling_axis(_table(data, "filling"))
        beam = _beam(data["beam"], geometry, solve, symmetry) if "beam" in data else None
        samples = parse_monte_carlo(_table(data, "tolerances"), tolerances)
        periodic = _periodic(data.get("periodic"), geometry, walls, solve)
        coupling_modes = _coupling_modes(_table(data, "coupling"), solve.modes)
        temperature = _temperature(region_tables, _table(data, "walls"))
        temperature_range = _temperature_range(_table(data, "temperature"), temperature)
    except InputError as exc:
        raise in_case(exc, source) from None
    case = Case(path=path, title=title, geometry=geometry, regions=regions, walls=walls,
                solve=solve, mesh=mesh, symmetry=symmetry, tolerances=tolerances,
                probes=probes, filling_axis=filling_axis, beam=beam,
                tolerance_samples=samples, periodic=periodic,
                coupling_modes=coupling_modes, temperature=temperature,
                temperature_range=temperature_range)
    from .accuracy_plan import planned_case
    return planned_case(case, order_given="order" in _table(data, "solve"))


def _periodic(spec, geometry: GeometrySpec, walls: dict, solve: SolveSpec
              ) -> tuple[PeriodicPair, ...]:
    """[periodic], or up to three [[periodic]] tables: the face pairs of a periodic cell."""
    if spec is None:
        return ()
    tables = [spec] if isinstance(spec, dict) else spec
    if solve.azimuthal_orders is not None and len(tables) > 1:
        raise InputError("a body of revolution repeats along z only: one [periodic] pair "
                         "(its two end lines)", field="periodic")
    surfaces = (part_names(geometry.builder, geometry.parameters).walls
                if geometry.builder is not None else None)
    pairs = []
    for i, table in enumerate(tables):
        where = "periodic" if isinstance(spec, dict) else f"periodic[{i}]"
        check_table(table, schema.PERIODIC, where)
        if "pair" not in table:
            raise InputError('needs pair = ["FIRST_FACE", "SECOND_FACE"]', field=f"{where}.pair")
        first, second = table["pair"]
        if first == second:
            raise InputError("a pair needs two different faces", field=f"{where}.pair")
        for name in (first, second):
            if surfaces is not None and name not in surfaces:
                raise InputError(f"this {geometry.builder} has no wall {name!r}; its walls "
                                 f"are {', '.join(map(repr, surfaces))}", field=f"{where}.pair")
            if name in walls:
                raise InputError(f"{name!r} is a periodic face, which takes no wall kind",
                                 field=f"walls.{name}")
            if any(name in (p.wall_a, p.wall_b) for p in pairs):
                raise InputError(f"the face {name!r} is in two periodic pairs",
                                 field=f"{where}.pair")
        pairs.append(PeriodicPair(first, second, read(table, "phase", schema.PERIODIC, where)))
    return tuple(pairs)


def _coupling_modes(spec: dict, solved: int) -> tuple[int, int] | None:
    modes = read(check_table(spec, schema.COUPLING, "coupling"), "modes", schema.COUPLING,
                 "coupling")
    if modes is not None and modes[0] == modes[1]:
        raise InputError("name two different modes", field="coupling.modes")
    if modes is not None and max(modes) > solved:
        raise InputError(f"mode {max(modes)} is beyond the {solved} modes [solve] asks for",
                         field="coupling.modes")
    return None if modes is None else (int(modes[0]), int(modes[1]))


UNIFORM_STD = 1 / math.sqrt(3)   # standard deviation of U(-1, 1) (common practice)


@dataclass(frozen=True)
class MonteCarloSpec:
    samples: int
    seed: int
    tolerances: dict[str, float]        # builder length (NAME or NAME[i]) -> m
    distributions: dict[str, str]       # the same names -> "normal" | "uniform"

    def standard_deviation(self, name: str) -> float:
        scale = UNIFORM_STD if self.distributions[name] == "uniform" else 1.0
        return scale * self.tolerances[name]


def parse_monte_carlo(spec: dict, tolerances: dict[str, float]) -> MonteCarloSpec | None:
    """The draw a checked [tolerances] table asks for (None without ``samples``)."""
    if "samples" not in spec:
        if "seed" in spec:
            raise InputError("seed is for a Monte-Carlo draw: give samples = N too",
                             field="tolerances.seed")
        return None
    if not tolerances:
        raise InputError("samples = N draws the lengths listed here; list at least one",
                         field="tolerances.samples")
    distributions = {name: (read(spec[name], "distribution", schema.TOLERANCE_ENTRY,
                                 f"tolerances.{name}") if isinstance(spec[name], dict)
                            else "normal") for name in tolerances}
    return MonteCarloSpec(samples=read(spec, "samples", schema.TOLERANCES, "tolerances"),
                          seed=read(spec, "seed", schema.TOLERANCES, "tolerances"),
                          tolerances=dict(tolerances), distributions=distributions)


@dataclass(frozen=True)
class TemperatureSpec:
    """The case's thermal data, per region and for the housing (1/K)."""

    # region -> τε, or (τε⊥, τε∥) for a uniaxial region
    tce: dict[str, float | tuple[float, float]] = field(default_factory=dict)
    expansion: dict[str, float] = field(default_factory=dict)
    housing_expansion: float = 0.0



@dataclass(frozen=True)
class TemperatureRange:
    """[temperature]: the temperatures (K) to solve at, and the one where the case holds."""

    temperatures_k: tuple[float, ...]
    reference_k: float


def _temperature_range(spec: dict, thermal) -> "TemperatureRange | None":
    if not spec:
        return None
    check_table(spec, schema.TEMPERATURE_RANGE, "temperature")
    for key in ("from", "to"):
        if key not in spec:
            raise InputError(f"needs {key} (and to, from, points)", field=f"temperature.{key}")
    if thermal is None:
        raise InputError("a temperature range needs the materials' drift: give a region a "
                         "tce or an expansion, or the walls an expansion",
                         field="temperature")
    v = {k: read(spec, k, schema.TEMPERATURE_RANGE, "temperature")
         for k in schema.TEMPERATURE_RANGE.keys}
    if v["from"] == v["to"]:
        raise InputError("from and to are the same temperature", field="temperature.to")
    points = np.linspace(v["from"], v["to"], v["points"])
    return TemperatureRange(temperatures_k=tuple(float(t) for t in points),
                            reference_k=v["reference"])


def _temperature(region_tables: dict, wall_tables: dict):
    """The regions' tce and expansion (named materials' included) and the housing's
    expansion from the walls (every wall that gives one gives the same: one housing); None
    when the case gives none of them (femcav.temperature)."""
    tce, expansion = {}, {}
    for name, table in region_tables.items():
        spec = with_library_values(table, f"regions.{name}")
        if isinstance(spec.get("tce"), dict):
            tce[name] = _directional_tce(spec, f"regions.{name}")
        for key, out in (("tce", tce), ("expansion", expansion)):
            if key in spec and name not in out:
                out[name] = read(spec, key, schema.REGION, f"regions.{name}")
    housing = {name: read(table, "expansion", schema.WALL, f"walls.{name}")
               for name, table in wall_tables.items() if "expansion" in table}
    for name, value in housing.items():
        if value != next(iter(housing.values())):
            raise InputError("the walls belong to one housing: give them one expansion",
                             field=f"walls.{name}.expansion")
    if not (tce or expansion or housing):
        return None
    return TemperatureSpec(tce=tce, expansion=expansion,
                           housing_expansion=next(iter(housing.values()), 0.0))


def _directional_tce(spec: dict, where: str) -> tuple[float, float]:
    """tce = {perpendicular = .., parallel = ..} of a uniaxial region (a missing one is 0)."""
    field = f"{where}.tce"
    if not isinstance(spec.get("eps_r"), dict):
        raise InputError("a tce per direction needs a uniaxial eps_r = {perpendicular = .., "
                         "parallel = .., axis = [..]}", field=field)
    for name in spec["tce"]:
        if name not in ("perpendicular", "parallel"):
            raise InputError("unknown key; a tce per direction takes perpendicular and "
                             "parallel", field=f"{field}.{name}")
    key = schema.Key(schema.QUANTITY, unit="temperature_coefficient",
                     range=schema.TEMPERATURE_COEFFICIENT)
    return tuple(schema.parse_value(spec["tce"].get(side, 0.0), key, f"{field}.{side}")
                 for side in ("perpendicular", "parallel"))


PROBE_NAME = re.compile(r"[A-Za-z0-9_-]{1,64}")


def _probes(spec: dict) -> tuple[ProbeSpec, ...]:
    """[probes.NAME]: ``at`` (a point) or ``from``, ``to`` and ``points`` (a line)."""
    check_table(spec, schema.PROBES, "probes")
    probes = []
    for name, table in spec.items():
        where = f"probes.{name}"
        if not PROBE_NAME.fullmatch(name):
            raise InputError("a probe name is 1 to 64 letters, digits, _ or - (it names "
                             "files and CSV rows)", field=where)
        check_table(table, schema.PROBE, where)
        values = {key: read(table, key, schema.PROBE, where) for key in schema.PROBE.keys}
        line = [k for k in ("from", "to", "points") if k in table]
        if ("at" in table) == bool(line):
            raise InputError("give either at = [x, y, z] (a point) or from, to and points "
                             "(a line)", field=where)
        if "at" in table:
            probes.append(ProbeSpec(name, "point", np.array([values["at"]], dtype=float)))
            continue
        missing = [k for k in ("from", "to", "points") if k not in table]
        if missing:
            raise InputError(f"a line probe needs from, to and points; {missing[0]} is "
                             "missing", field=f"{where}.{missing[0]}")
        start, end = np.array(values["from"]), np.array(values["to"])
        if np.array_equal(start, end):
            raise InputError("from and to are the same point; use at = [...] for a point",
                             field=f"{where}.to")
        steps = np.linspace(0.0, 1.0, values["points"])[:, None]
        probes.append(ProbeSpec(name, "line", start + steps * (end - start)))
    return tuple(probes)


def _filling_axis(spec: dict) -> tuple[float, float, float]:
    """[filling] axis: "x", "y", "z" or three numbers (a direction, normalised here)."""
    check_table(spec, schema.FILLING, "filling")
    axis = read(spec, "axis", schema.FILLING, "filling")
    if isinstance(axis, str):
        if axis not in ("x", "y", "z"):
            raise InputError(f'must be "x", "y", "z" or three numbers, got {axis!r}',
                             field="filling.axis")
        return tuple(float(axis == c) for c in "xyz")
    vector = np.array(axis, dtype=float)
    length = float(np.linalg.norm(vector))
    if not length > 0:
        raise InputError("the axis must not be the zero vector", field="filling.axis")
    return tuple(float(v) for v in vector / length)



def _beam(spec: dict, geometry: GeometrySpec, solve: SolveSpec, symmetry: dict
          ) -> BeamRequest:
    """[beam]: both ends of the line or neither (then the z axis through the part, which
    needs a body of revolution), and β."""
    check_table(spec, schema.BEAM, "beam")
    start, end = (read(spec, key, schema.BEAM, "beam") for key in ("from", "to"))
    if (start is None) != (end is None):
        raise InputError("give both from and to, or neither (the z axis through a body of "
                         "revolution)", field="beam.to" if end is None else "beam.from")
    if symmetry:
        raise InputError("beam figures need the whole part; drop [symmetry]", field="beam")
    if start is None and solve.azimuthal_orders is None:
        why = "an imported mesh" if geometry.builder is None else None
        if why is None:
            from .geometry.section import axisymmetric_layout_check
            try:
                axisymmetric_layout_check(builder_layout(geometry.builder, geometry.parameters))
            except InputError:
                why = f"this {geometry.builder}"
        if why:
            raise InputError(f"give from and to: the default beam line is the z axis of a body "
                             f"of revolution, and {why} is not known to be one", field="beam")
    if start is not None:
        if math.dist(start, end) == 0:
            raise InputError("the beam line's two ends are the same point", field="beam.to")
        if solve.azimuthal_orders is not None:
            for key, point in (("from", start), ("to", end)):
                if point[0] != 0 or point[1] != 0:
                    raise InputError("a body of revolution solved on its section has its beam "
                                     "on the z axis: x and y must be 0", field=f"beam.{key}")
    return BeamRequest(start=None if start is None else tuple(start),
                       end=None if end is None else tuple(end),
                       velocity=read(spec, "velocity", schema.BEAM, "beam"),
                       active_length=read(spec, "active_length", schema.BEAM, "beam"))


def _tolerances(spec: dict, geometry: GeometrySpec, symmetry: dict,
                solve: SolveSpec) -> dict[str, float]:
    """Builder length (a name, or NAME[i] for a point's coordinate) -> its tolerance (m)."""
    if not spec:
        return {}
    if geometry.builder is None:
        raise InputError("dimension tolerances move a builder's part; an imported mesh has "
                         "no parameters", field="tolerances")
    if symmetry or solve.error_estimate:
        raise InputError("dimension tolerances are for whole-part solves without error "
                         "bars (drop [symmetry] or error_estimate)", field="tolerances")
    check_table(spec, schema.TOLERANCES, "tolerances")
    out = {}
    for name, raw in spec.items():
        if name in schema.TOLERANCES.keys:      # samples, seed: femcav.study.monte_carlo
            continue
        if isinstance(raw, dict):
            check_table(raw, schema.TOLERANCE_ENTRY, f"tolerances.{name}")
            if "tolerance" not in raw:
                raise InputError("missing tolerance", field=f"tolerances.{name}")
            raw = raw["tolerance"]
        key, _, index = name.partition("[")
        value = geometry.parameters.get(key)
        if key not in BUILDERS[geometry.builder].PARAMETERS or value is None:
            raise InputError(f"{geometry.builder} has no length {key!r} set; its parameters "
                             f"are {', '.join(BUILDERS[geometry.builder].PARAMETERS)}",
                             field=f"tolerances.{name}")
        if isinstance(value, tuple) != bool(index) or (index and index not in ("0]", "1]",
                                                                               "2]")):
            raise InputError("a point's coordinate is named NAME[0], NAME[1] or NAME[2]; a "
                             "length by its name", field=f"tolerances.{name}")
        out[name] = schema.parse_value(raw, schema.TOLERANCE_ENTRY.keys["tolerance"],
                                       f"tolerances.{name}")
        checked_length(out[name], f"tolerances.{name}", positive=False)
    return out


def build_mesh(case: Case) -> TaggedMesh:
    from .sizing import builder_sizing

    g = case.geometry
    if g.mesh_path is None:
        try:
            sizing = builder_sizing(case, builder_layout(g.builder, g.parameters))
            return build_part(g.builder, sizing=sizing, symmetry=tuple(case.symmetry),
                              **g.parameters)
        except InputError as exc:
            raise in_case(exc, str(case.path)) from None
    if not g.mesh_path.is_file():
        raise InputError(f"mesh file {str(g.mesh_path)!r} not found", source=str(case.path),
                         field="geometry.mesh")
    return read_mesh(g.mesh_path, scale=g.mesh_unit_m)  # its errors name the mesh file


def case_model(case: Case, mesh: TaggedMesh | None = None,
               extra_walls: dict[str, Wall] | None = None) -> Model:
    """The model of ``case`` (materials as in case_materials)."""
    mesh = mesh if mesh is not None else build_mesh(case)
    return make_model(mesh, case_materials(case, mesh.region_names),
                      {**case.walls, **(extra_walls or {})}, source=str(case.path),
                      periodic=case.periodic)


def case_materials(case: Case, region_names) -> dict[str, Material]:
    """The case's materials for the mesh regions ``region_names``: with a builder, its plain
    regions (the cavity's space) that the case does not name are vacuum; regions a builder
    marks as needing a material (a puck, a block) must be named."""
    materials = dict(case.regions)
    if case.geometry.builder is not None:
        builder = BUILDERS[case.geometry.builder]
        for region in region_names:
            if region not in getattr(builder, "NEEDS_MATERIAL", ()):
                materials.setdefault(region, VACUUM)
    return materials


def _table(data: dict, key: str, required: bool = False) -> dict:
    """A top-level table of ``data`` (already checked against schema.TOP), {} when absent."""
    if key not in data:
        if required:
            raise InputError(f"the [{key}] table is missing", field=key)
        return {}
    return data[key]


def _geometry(spec: dict, base: Path) -> GeometrySpec:
    if ("mesh" in spec) == ("builder" in spec):
        raise InputError("give exactly one of mesh = \"file.msh\" or builder = "
                         f"{' | '.join(map(repr, BUILDERS))}", field="geometry")
    if "mesh" in spec:
        check_table(spec, schema.GEOMETRY_MESH, "geometry")
        unit = read(spec, "mesh_unit", schema.GEOMETRY_MESH, "geometry")
        mesh_path = Path(spec["mesh"])
        return GeometrySpec(mesh_path=mesh_path if mesh_path.is_absolute() else base / mesh_path,
                            mesh_unit_m=UNITS["length"][unit])
    name = read(spec, "builder", schema.GEOMETRY_BUILDER, "geometry")
    if "mesh_size" in spec:
        raise InputError("element sizes go in the [mesh] table (size = ...)",
                         field="geometry.mesh_size")
    builder = BUILDERS[name]
    check_table(spec, schema.builder_table(builder), "geometry",
                unknown=f"this builder takes {', '.join(builder.PARAMETERS) or 'solids'}")
    given = {k: v for k, v in spec.items() if k != "builder"}
    parameters = (builder.parse(given, "geometry") if hasattr(builder, "parse")
                  else parse_params(builder.PARAMETERS, given, "geometry"))
    layout = builder_layout(name, parameters)  # refuse parameters that do not fit, now
    return GeometrySpec(builder=name, parameters=parameters,
                        warnings=bare_number_warnings(given, layout.extent()))


def _mesh(spec: dict, region_tables: dict, geometry: GeometrySpec) -> MeshSpec:
    """[mesh] and the regions' mesh_size (the region tables are checked by _region)."""
    region_sizes = {name: read(t, "mesh_size", schema.REGION, f"regions.{name}")
                    for name, t in region_tables.items() if "mesh_size" in t}
    if geometry.mesh_path is not None and (spec or region_sizes):
        raise InputError("element sizes apply to builders; an imported mesh is used as it is",
                         field="mesh" if spec else f"regions.{next(iter(region_sizes))}.mesh_size")
    check_table(spec, schema.MESH, "mesh")
    values = {key: read(spec, key, schema.MESH, "mesh") for key in schema.MESH.keys}
    if values["per_wavelength"] is not None and values["max_frequency"] is None:
        raise InputError("needs max_frequency, the highest frequency of interest",
                         field="mesh.per_wavelength")
    for key, size in [("mesh.size", values["size"]),
                      *[(f"regions.{k}.mesh_size", v) for k, v in region_sizes.items()]]:
        if size is not None:
            # only the upper end: a size too small is refused by the element-count estimate
            checked_length(size, key, positive=False)
    return MeshSpec(size=values["size"], max_frequency_hz=values["max_frequency"],
                    curved=values["curved"], per_wavelength=values["per_wavelength"],
                    edge_refinement=values["edge_refinement"], region_sizes=region_sizes)


def _symmetry(spec: dict, geometry: GeometrySpec, walls: dict) -> dict[str, tuple[str, ...]]:
    if not spec:
        return {}
    if geometry.builder is None:
        raise InputError("symmetry cuts apply to builders; for an imported mesh, mesh the "
                         "part already cut and give the cut faces a wall kind", field="symmetry")
    check_table(spec, schema.SYMMETRY, "symmetry")
    spec = schema.canonical_table(spec, schema.SYMMETRY)
    out = {}
    for axis, choice in spec.items():
        if f"symmetry_{axis}" in walls:
            raise InputError("the cut face's kind is set by [symmetry], not [walls]",
                             field=f"walls.symmetry_{axis}")
        out[axis] = SYMMETRY_CHOICES[choice]
    planes = BUILDERS[geometry.builder].symmetry_planes(**geometry.parameters)
    for axis in out:
        if axis not in planes:
            raise InputError(f"this {geometry.builder} has no symmetry plane normal to {axis}; "
                             f"it has {', '.join(planes) or 'none'}", field=f"symmetry.{axis}")
    return out


def _region(name: str, spec: dict) -> Material:
    where = f"regions.{name}"
    check_table(spec, schema.REGION, where)
    spec = check_table(with_library_values(spec, where), schema.REGION, where)
    eps = spec.get("eps_r", schema.REGION.keys["eps_r"].default)
    if isinstance(eps, (dict, list)) or isinstance(spec.get("tan_delta"), dict):
        return _anisotropic_region(spec, where)
    tan_delta = read(spec, "tan_delta", schema.REGION, where)
    if isinstance(eps, str) and (complex_eps := _complex_literal(eps)) is not None:
        eps, tan_delta = _complex_permittivity(complex_eps, eps, spec, where)
    elif isinstance(eps, str):
        try:
            eps = Expression(eps)
        except InputError as exc:
            raise exc.located(field=where + ".eps_r") from None
    else:
        eps = read(spec, "eps_r", schema.REGION, where)
    mu, mu_tan_delta = _permeability(spec, where)  # mesh_size is read by _mesh
    return Material(eps_r=eps, mu_r=mu, tan_delta=tan_delta, mu_tan_delta=mu_tan_delta)


def _anisotropic_region(spec: dict, where: str) -> Material:
    """A region whose eps_r is uniaxial ({perpendicular, parallel, axis}, with a tan_delta
    that may be given per direction) or a full 3 x 3 tensor (femcav.anisotropy)."""
    eps, tan_delta = spec.get("eps_r"), spec.get("tan_delta")
    eps_key, tan_key = schema.REGION.keys["eps_r"], schema.REGION.keys["tan_delta"]
    mu, mu_tan_delta = _permeability(spec, where)
    if isinstance(eps, dict):
        uniaxial = parse_uniaxial(eps, eps_key, tan_key, where + ".eps_r", tan_delta)
        return Material(uniaxial=uniaxial, mu_r=mu, mu_tan_delta=mu_tan_delta)
    if isinstance(tan_delta, dict):
        raise InputError("a loss tangent per direction needs a uniaxial eps_r = "
                         "{perpendicular = .., parallel = .., axis = [..]}",
                         field=where + ".tan_delta")
    return Material(eps_r=parse_tensor(eps, eps_key, where + ".eps_r"), mu_r=mu,
                    tan_delta=read(spec, "tan_delta", schema.REGION, where),
                    mu_tan_delta=mu_tan_delta)


def _permeability(spec: dict, where: str):
    """(mu_r, mu_tan_delta): mu_r a number, a complex number string (mu' - j mu''), a
    uniaxial table or a 3 x 3 tensor."""
    mu = spec.get("mu_r", schema.REGION.keys["mu_r"].default)
    mu_tan_delta = read(spec, "mu_tan_delta", schema.REGION, where)
    key, field = schema.REGION.keys["mu_r"], where + ".mu_r"
    if isinstance(mu, dict):
        return parse_uniaxial(mu, key, schema.REGION.keys["tan_delta"], field).tensor(), \
            mu_tan_delta
    if isinstance(mu, list):
        return parse_tensor(mu, key, field), mu_tan_delta
    if isinstance(mu, str):
        value = _complex_literal(mu)
        if value is None:
            raise InputError(f"must be a number or a complex number such as \"2-0.1j\", got "
                             f"{mu!r}", field=field)
        return _complex_permittivity(value, mu, spec, where, key="mu_r",
                                     loss_key="mu_tan_delta")
    return read(spec, "mu_r", schema.REGION, where), mu_tan_delta


def _absorbing_regions(regions: dict[str, Material], tables: dict, geometry: GeometrySpec,
                       solve_table: dict) -> dict[str, Material]:
    """[regions.NAME] pml and pml_strength: those regions become perfectly matched layers
    (fem.absorber). An open builder's shell is one by default, with or without a table of
    its own. Refused with error bars (not available yet)."""
    from .fem.absorber import DEFAULT_STRENGTH, AbsorbingMaterial
    from .geometry.open_space import shell_layers

    shells = (shell_layers(geometry.parameters) if geometry.builder is not None
              and getattr(BUILDERS[geometry.builder], "OPEN", False) else {})
    out = dict(regions)
    for name in dict.fromkeys([*tables, *shells]):
        table, where = tables.get(name, {}), f"regions.{name}"
        shape = read(table, "pml", schema.REGION, where) or shells.get(name)
        if shape is None:
            if "pml_strength" in table:
                raise InputError('pml_strength belongs to an absorbing region: add pml = '
                                 '"spherical", "cylindrical" or "cartesian"',
                                 field=f"{where}.pml_strength")
            continue
        bars = next((k for k in ("error_estimate", "accuracy") if solve_table.get(k)), None)
        if bars:
            # measured on the sphere: the mesh sequence re-meshes the layer too, and its
            # coarser meshes under-resolve it: a 315 MHz bar for a 1.4 MHz error at 8 mm, even
            # with complex modes now matched between meshes (post.field_overlap)
            raise InputError("error bars are not available for open problems (absorbing "
                             "regions) yet; compare solves on two meshes yourself",
                             field=f"solve.{bars}")
        medium = out.get(name, VACUUM)
        strength = read(table, "pml_strength", schema.REGION, where) or DEFAULT_STRENGTH
        try:
            out[name] = AbsorbingMaterial(eps_r=medium.eps_r, mu_r=medium.mu_r,
                                          tan_delta=medium.tan_delta, pml=shape,
                                          pml_strength=strength)
        except InputError as exc:
            raise InputError(exc.message, field=f"{where}.{exc.field}") from None
    return out


def _open_part(spec: dict, geometry: GeometrySpec, regions: dict[str, Material],
               solve: SolveSpec) -> GeometrySpec:
    """[open] shape, clearance and thickness of an open builder's air and absorbing shell
    (geometry.open_space), as builder parameters. Defaults from the frequency the solve
    looks near, [solve] near or else c / (n D) (half a wavelength across the part of
    largest dimension D inside its material, fem.open_target): a quarter of the free-space
    wavelength of clearance and a sixth of layer."""
    check_table(spec, schema.OPEN, "open")
    builder = BUILDERS[geometry.builder] if geometry.builder is not None else None
    if not getattr(builder, "OPEN", False):
        if spec:
            raise InputError("[open] wraps the part of an open builder (sphere, puck) in air "
                             "and an absorbing shell; for another part, mark its absorbing "
                             "region with [regions.NAME] pml", field="open")
        return geometry
    values = {key: read(spec, key, schema.OPEN, "open") for key in schema.OPEN.keys}
    if values["shape"] == "box" and solve.azimuthal_orders is not None:
        raise InputError('a box shell is no body of revolution: with azimuthal_orders use '
                         'shape = "sphere" or "cylinder"', field="open.shape")
    frequency = solve.near_hz
    if frequency is None:
        part = regions.get(builder.NEEDS_MATERIAL[0], VACUUM)
        index = math.sqrt(max(part.eps_at(*np.zeros((3, 1)))[0] * part.mu_scalar, 1.0)) \
            if part.is_uniform else 1.0
        frequency = C0 / (index * builder.part_size(**geometry.parameters))
    wavelength = C0 / frequency
    clearance = values["clearance"] or wavelength / 4
    thickness = values["thickness"] or wavelength / 6
    for key, value in (("clearance", clearance), ("thickness", thickness)):
        checked_length(value, f"open.{key}", positive=True)
    return replace(geometry, parameters={**geometry.parameters, "shell": values["shape"],
                                         "clearance": clearance,
                                         "absorber_thickness": thickness})


def _open_layer_size(mesh: MeshSpec, geometry: GeometrySpec) -> MeshSpec:
    """An open builder's absorbing shell gets three elements across unless the case sizes
    it: fewer cannot follow the field's fast decay there (README's eps_r 36 sphere, order 2:
    Q_rad 4.7 % off with 8 mm elements across a 15 mm layer, 0.08 % with three across
    20 mm)."""
    thickness = geometry.parameters.get("absorber_thickness")
    if thickness is None or "absorber" in mesh.region_sizes:
        return mesh
    return replace(mesh, region_sizes={**mesh.region_sizes, "absorber": thickness / 3})


def _complex_permittivity(value: complex, text: str, spec: dict, where: str, *,
                          key: str = "eps_r", loss_key: str = "tan_delta"
                          ) -> tuple[float, float]:
    """(eps_r', tan δ) of a complex eps_r = eps_r' (1 - j tan δ) with e^{jωt}: a lossy
    material has a negative imaginary part. Every refusal names eps_r, the key that holds
    both numbers. The same for a complex mu_r (``key``) and its ``loss_key``."""
    field = f"{where}.{key}"
    if loss_key in spec:
        raise InputError(f"give the loss either as a complex {key} or as {loss_key}, not both",
                         field=f"{where}.{loss_key}")
    if not (math.isfinite(value.real) and math.isfinite(value.imag)):
        raise InputError(f"a complex {key} needs finite real and imaginary parts; got {text!r}",
                         field=field)
    if not value.real > 0 or value.imag > 0:
        raise InputError(f"a complex {key} needs a positive real part and an imaginary part "
                         f"<= 0 (loss, with time dependence e^(jwt)); got {text!r}",
                         field=field)
    schema.check_range(value.real, schema.REGION.keys[key], field,
                       shown=f"real part {value.real:g} of {text!r}")
    tan_delta = -value.imag / value.real
    schema.check_range(tan_delta, schema.REGION.keys[loss_key], field,
                       shown=f"{loss_key} = {tan_delta:g} from {text!r}")
    return value.real, tan_delta


def _complex_literal(text: str) -> complex | None:
    """A string such as "9.8-0.0098j" as a complex number; None for anything else."""
    compact = text.replace(" ", "")
    if not compact.endswith("j"):
        return None
    try:
        return complex(compact)
    except ValueError:
        return None


_LOSS_KEYS = ("conductivity", "metal", "roughness", "surface_resistance", "temperature",
              "residual_resistance")


def _wall(name: str, spec: dict) -> Wall:
    where = f"walls.{name}"
    check_table(spec, schema.WALL, where)
    spec = schema.canonical_table(spec, schema.WALL)     # "PEC", "Copper", "aluminum"
    kind = spec.get("kind")
    if kind is None:
        kinds = ", ".join(map(repr, schema.WALL.keys["kind"].allowed()))
        raise InputError(f"missing: kind = one of {kinds}", field=where + ".kind")
    if kind != "port" and "port_modes" in spec:
        raise InputError('port_modes belongs to kind = "port"', field=f"{where}.port_modes")
    if kind != "metal":
        extra = next((k for k in _LOSS_KEYS if k in spec), None)
        if extra:
            raise InputError(f'{extra} belongs to kind = "metal"; a {kind.upper()} wall has no '
                             "loss", field=f"{where}.{extra}")
        return Wall(kind=kind, port_modes=read(spec, "port_modes", schema.WALL, where))
    if "surface_resistance" in spec:
        other = next((k for k in _LOSS_KEYS[:3] + _LOSS_KEYS[4:] if k in spec), None)
        if other:
            raise InputError(f"surface_resistance gives R_s itself; {other} is also set",
                             field=f"{where}.{other}")
        return Wall(kind=kind, surface_resistance=read(spec, "surface_resistance", schema.WALL,
                                                       where))
    if "conductivity" in spec and "metal" in spec:
        raise InputError("give either metal or conductivity, not both (conductivity is also "
                         "set)", field=where + ".metal")
    if "conductivity" not in spec and "metal" not in spec:
        raise InputError('a metal wall needs conductivity = "58 MS/m", surface_resistance = '
                         '"10 mohm" or metal = one of '
                         f"{', '.join(map(repr, METAL_NAMES))}", field=where)
    preset = spec.get("metal")
    if preset in SUPERCONDUCTORS:
        return _superconducting_wall(spec, where)
    extra = next((k for k in ("temperature", "residual_resistance") if k in spec), None)
    if extra:
        raise InputError(f"{extra} belongs to a superconducting metal "
                         f"({', '.join(SUPERCONDUCTORS)}); a normal metal's R_s comes from its "
                         "conductivity", field=f"{where}.{extra}")
    sigma = (CONDUCTIVITY_S_PER_M[preset] if preset is not None
             else read(spec, "conductivity", schema.WALL, where))
    return Wall(kind=kind, conductivity=sigma, roughness=read(spec, "roughness", schema.WALL,
                                                               where), metal=preset)


def _superconducting_wall(spec: dict, where: str) -> Wall:
    """metal = a superconductor: R_s = R_BCS(f, T) + R_res needs T (within the range of the
    low-temperature approximation, schema.TEMPERATURE) and R_res (femcav.superconductors)."""
    metal = spec["metal"]
    if "roughness" in spec:
        raise InputError("roughness scales a normal metal's R_s; a superconductor's surface "
                         "is in its residual_resistance", field=where + ".roughness")
    for key, example in (("temperature", "2 K"), ("residual_resistance", "10 nohm")):
        if key not in spec:
            raise InputError(f"{metal} is superconducting: give {key} (e.g. {example!r})",
                             field=f"{where}.{key}")
    return Wall(kind="metal", metal=metal,
                temperature=read(spec, "temperature", schema.WALL, where),
                residual_resistance=read(spec, "residual_resistance", schema.WALL, where))


def _solve(spec: dict) -> SolveSpec:
    check_table(spec, schema.SOLVE, "solve")
    v = {key: read(spec, key, schema.SOLVE, "solve") for key in schema.SOLVE.keys
         if key != "accuracy"}
    accuracy = spec.get("accuracy")
    if accuracy is not None:
        accuracy = _relative(accuracy, "solve.accuracy")
    orders = read(spec, "azimuthal_orders", schema.SOLVE, "solve")
    if orders is not None:
        orders = _azimuthal_orders(orders)
        if "order" not in spec:
            v["order"] = AXISYMMETRIC_ORDER
    return SolveSpec(modes=v["modes"], near_hz=v["near"], form=v["form"], order=v["order"],
                     complex_check=v["complex_check"], losses_inside=v["losses_inside"],
                     error_estimate=v["error_estimate"] or accuracy is not None,
                     accuracy=accuracy, max_dofs=v["max_dofs"],
                     factorization=v["factorization"], method=v["method"],
                     azimuthal_orders=orders, sensitivities=v["sensitivities"],
                     layer_check=v["layer_check"])


def _azimuthal_orders(value) -> tuple[int, ...]:
    """A list of whole numbers m >= 0 (each checked by schema.SOLVE); a single number is a
    list of one."""
    items = [value] if not isinstance(value, list) else value
    if not items:
        raise InputError("must be a list of whole numbers such as [0, 1, 2]; got []",
                         field="solve.azimuthal_orders")
    if len(set(items)) != len(items):
        raise InputError(f"lists an order twice: {value!r}", field="solve.azimuthal_orders")
    return tuple(sorted(items))


def _check_axisymmetric(solve: SolveSpec, geometry: GeometrySpec, symmetry: dict) -> None:
    """What the axisymmetric path cannot take, refused before any meshing."""
    from .geometry.section import axisymmetric_layout_check

    if geometry.builder is not None:
        axisymmetric_layout_check(builder_layout(geometry.builder, geometry.parameters))
    if symmetry:
        raise InputError("symmetry cuts are for 3D solves; the azimuthal orders already "
                         "separate the field classes of a body of revolution",
                         field="symmetry")
    if solve.method == "iterative":
        raise InputError("the axisymmetric solver uses the direct shift-invert path (its "
                         "problems are small)", field="solve.method")


_RELATIVE_UNITS = {"ppm": 1e-6, "ppb": 1e-9, "%": 1e-2}


def _relative(value, field: str) -> float:
    """A relative accuracy: a number (1e-5), or a string such as "10 ppm" or "0.01 %"."""
    if isinstance(value, str):
        text = value.strip()
        unit = next((u for u in _RELATIVE_UNITS if text.endswith(u)), None)
        try:
            number = float(text[: -len(unit)] if unit else text) * (_RELATIVE_UNITS[unit]
                                                                     if unit else 1.0)
        except ValueError:
            raise InputError(f"cannot read {value!r}; write e.g. \"10 ppm\", \"0.01 %\" or "
                             "1e-5", field=field) from None
    else:
        number = float(value)            # the type is checked against schema.SOLVE
    schema.check_range(number, schema.SOLVE.keys["accuracy"], field, shown=value)
    return number
