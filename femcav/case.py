"""The TOML case file: reading, validation, and turning it into a model.

Every mistake becomes one InputError naming the file and the key path, so the command line can
print it as one line. See README.md ("Case-file reference") for the keys.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from .eigen.factorization import FACTORIZERS
from .eigen.selection import METHODS
from .errors import InputError
from .expressions import Expression
from .fem.space import ORDERS
from .geometry import BUILDERS, build_part, builder_layout, read_mesh
from .geometry.mesh import TaggedMesh
from .geometry.params import checked_length, parse_params
from .materials import VACUUM, Material
from .metals import CONDUCTIVITY_S_PER_M
from .model import FORMS, Model, make_model
from .units import UNITS, parse_quantity
from .walls import KINDS, Wall

TOP_KEYS = {"title", "geometry", "mesh", "regions", "walls", "symmetry", "solve", "sweep",
            "tune", "extract", "tolerances"}
REGION_KEYS = {"eps_r", "mu_r", "tan_delta", "mesh_size"}
MESH_KEYS = {"size", "max_frequency", "per_wavelength", "edge_refinement", "curved"}
SYMMETRY_CHOICES = {"pec": ("pec",), "pmc": ("pmc",), "both": ("pec", "pmc")}
WALL_KEYS = {"kind", "conductivity", "metal", "roughness"}
SOLVE_KEYS = {"modes", "near", "form", "order", "complex_check", "error_estimate", "accuracy",
              "max_dofs", "factorization", "method", "azimuthal_orders", "sensitivities"}
MAX_AZIMUTHAL_ORDER = 100
AXISYMMETRIC_ORDER = 3   # element order of the axisymmetric solver unless the case sets one
DEFAULT_MODES = 10


@dataclass(frozen=True)
class GeometrySpec:
    builder: str | None = None
    parameters: dict[str, object] = field(default_factory=dict)   # SI values
    mesh_path: Path | None = None
    mesh_unit_m: float = 1.0


@dataclass(frozen=True)
class MeshSpec:
    """Element-size requests for builders (see femcav.sizing for how they combine)."""

    size: float | None = None
    max_frequency_hz: float | None = None
    per_wavelength: float | None = None
    edge_refinement: float = 0.5
    region_sizes: dict[str, float] = field(default_factory=dict)
    curved: bool = False


@dataclass(frozen=True)
class SolveSpec:
    modes: int = DEFAULT_MODES
    near_hz: float | None = None
    form: str | None = None   # None: H with metal walls, else E (see runner.choose_form)
    order: int = 1
    complex_check: bool = False
    error_estimate: bool = False       # solve a mesh sequence and bar every frequency
    accuracy: float | None = None      # relative target for the bars (refine until met)
    max_dofs: int = 400_000
    factorization: str = "auto"        # sparse direct library (femcav.eigen.factorization)
    method: str = "auto"               # eigen backend (femcav.eigen.selection)
    # the azimuthal orders m of a body of revolution: solve its meridional section instead
    # of the 3D part (femcav.axisymmetric); None for a 3D solve
    azimuthal_orders: tuple[int, ...] | None = None
    sensitivities: bool = False        # df/dε_r and df/dμ_r of every region, per mode


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


def load_case(path: str | Path) -> Case:
    return case_from_data(read_case_data(path), Path(path))


def case_from_data(data: dict, path: Path) -> Case:
    """Validate raw case tables; ``path`` names the source and anchors relative files. The
    study tables ([sweep], [tune], [extract]) are read by femcav.study, not here."""
    source = str(path)
    try:
        _known(data, TOP_KEYS, "")
        title = data.get("title", path.stem)
        if not isinstance(title, str):
            raise InputError("must be a string", field="title")
        geometry = _geometry(_table(data, "geometry", required=True), path.parent)
        region_tables = _table(data, "regions")
        regions = {name: _region(name, spec) for name, spec in region_tables.items()}
        walls = {name: _wall(name, spec) for name, spec in _table(data, "walls").items()}
        solve = _solve(_table(data, "solve"))
        mesh = _mesh(_table(data, "mesh"), region_tables, geometry)
        if solve.error_estimate and geometry.builder is None:
            raise InputError("error estimates re-mesh the part, so they need a builder; for an "
                             "imported mesh, solve meshes of several sizes yourself",
                             field="solve.error_estimate" if "error_estimate" in
                             _table(data, "solve") else "solve.accuracy")
        symmetry = _symmetry(_table(data, "symmetry"), geometry, walls)
        if solve.azimuthal_orders is not None:
            _check_axisymmetric(solve, geometry, symmetry, _table(data, "solve"))
        tolerances = _tolerances(_table(data, "tolerances"), geometry, symmetry, solve)
    except InputError as exc:
        raise exc.located(source=source) from None
    return Case(path=path, title=title, geometry=geometry, regions=regions, walls=walls,
                solve=solve, mesh=mesh, symmetry=symmetry, tolerances=tolerances)


def _tolerances(spec: dict, geometry: GeometrySpec, symmetry: dict,
                solve: SolveSpec) -> dict[str, float]:
    """Builder length (a name, or NAME[i] for a point's coordinate) -> its tolerance (m)."""
    if not spec:
        return {}
    if geometry.builder is None:
        raise InputError("dimension tolerances move a builder's part; an imported mesh has "
                         "no parameters", field="tolerances")
    if symmetry or solve.azimuthal_orders is not None or solve.error_estimate:
        raise InputError("dimension tolerances are for whole-part 3D solves without error "
                         "bars (drop [symmetry], azimuthal_orders or error_estimate)",
                         field="tolerances")
    out = {}
    for name, raw in spec.items():
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
        tolerance = parse_quantity(raw, "length", field=f"tolerances.{name}")
        if not tolerance > 0:
            raise InputError("must be positive", field=f"tolerances.{name}")
        checked_length(tolerance, f"tolerances.{name}", positive=False)
        out[name] = tolerance
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
            raise exc.located(source=str(case.path)) from None
    if not g.mesh_path.is_file():
        raise InputError(f"mesh file {str(g.mesh_path)!r} not found", source=str(case.path),
                         field="geometry.mesh")
    return read_mesh(g.mesh_path, scale=g.mesh_unit_m)  # its errors name the mesh file


def case_model(case: Case, mesh: TaggedMesh | None = None,
               extra_walls: dict[str, Wall] | None = None) -> Model:
    """The model of ``case`` (materials as in case_materials)."""
    mesh = mesh if mesh is not None else build_mesh(case)
    return make_model(mesh, case_materials(case, mesh.region_names),
                      {**case.walls, **(extra_walls or {})}, source=str(case.path))


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
    if key not in data:
        if required:
            raise InputError(f"the [{key}] table is missing", field=key)
        return {}
    value = data[key]
    if not isinstance(value, dict):
        raise InputError("must be a table", field=key)
    return value


def _known(table: dict, allowed: set[str], prefix: str) -> None:
    for key in table:
        if key not in allowed:
            raise InputError(f"unknown key; allowed here: {', '.join(sorted(allowed))}",
                             field=f"{prefix}{key}")


def _geometry(spec: dict, base: Path) -> GeometrySpec:
    if ("mesh" in spec) == ("builder" in spec):
        raise InputError("give exactly one of mesh = \"file.msh\" or builder = "
                         f"{' | '.join(map(repr, BUILDERS))}", field="geometry")
    if "mesh" in spec:
        _known(spec, {"mesh", "mesh_unit"}, "geometry.")
        if not isinstance(spec["mesh"], str):
            raise InputError("must be a file name string", field="geometry.mesh")
        unit = spec.get("mesh_unit", "m")
        if not isinstance(unit, str) or unit not in UNITS["length"]:
            raise InputError(f"unknown length unit {unit!r}; known: "
                             f"{', '.join(UNITS['length'])}", field="geometry.mesh_unit")
        mesh_path = Path(spec["mesh"])
        return GeometrySpec(mesh_path=mesh_path if mesh_path.is_absolute() else base / mesh_path,
                            mesh_unit_m=UNITS["length"][unit])
    name = spec["builder"]
    if name not in BUILDERS:
        raise InputError(f"unknown builder {name!r}; known: {', '.join(BUILDERS)}",
                         field="geometry.builder")
    given = {k: v for k, v in spec.items() if k != "builder"}
    if "mesh_size" in given:
        raise InputError("element sizes go in the [mesh] table (size = ...)",
                         field="geometry.mesh_size")
    builder = BUILDERS[name]
    parameters = (builder.parse(given, "geometry") if hasattr(builder, "parse")
                  else parse_params(builder.PARAMETERS, given, "geometry"))
    builder_layout(name, parameters)  # refuse parameters that do not fit together, now
    return GeometrySpec(builder=name, parameters=parameters)


def _mesh(spec: dict, region_tables: dict, geometry: GeometrySpec) -> MeshSpec:
    region_sizes = {name: parse_quantity(t["mesh_size"], "length",
                                         field=f"regions.{name}.mesh_size")
                    for name, t in region_tables.items() if isinstance(t, dict) and "mesh_size" in t}
    if geometry.mesh_path is not None and (spec or region_sizes):
        raise InputError("element sizes apply to builders; an imported mesh is used as it is",
                         field="mesh" if spec else "regions")
    _known(spec, MESH_KEYS, "mesh.")
    size = spec.get("size")
    size = None if size is None else parse_quantity(size, "length", field="mesh.size")
    f_max = spec.get("max_frequency")
    f_max = None if f_max is None else parse_quantity(f_max, "frequency",
                                                       field="mesh.max_frequency")
    per_wavelength = spec.get("per_wavelength")
    if per_wavelength is not None and (isinstance(per_wavelength, bool) or
                                       not isinstance(per_wavelength, (int, float))
                                       or not per_wavelength >= 2):
        raise InputError(f"must be a number >= 2, got {per_wavelength!r}",
                         field="mesh.per_wavelength")
    if per_wavelength is not None and f_max is None:
        raise InputError("needs max_frequency, the highest frequency of interest",
                         field="mesh.per_wavelength")
    edge = spec.get("edge_refinement", 0.5)
    if isinstance(edge, bool) or not isinstance(edge, (int, float)) or not 0 < edge <= 1:
        raise InputError(f"must be a number in (0, 1] (1 = no refinement), got {edge!r}",
                         field="mesh.edge_refinement")
    for value, where in [(size, "mesh.size"), (f_max, "mesh.max_frequency"),
                         *[(v, f"regions.{k}.mesh_size") for k, v in region_sizes.items()]]:
        if value is not None and value <= 0:
            raise InputError("must be positive", field=where)
    for value, where in [(size, "mesh.size"),
                         *[(v, f"regions.{k}.mesh_size") for k, v in region_sizes.items()]]:
        if value is not None:
            # only the upper end: a size too small is refused by the element-count estimate
            checked_length(value, where, positive=False)
    curved = spec.get("curved", False)
    if not isinstance(curved, bool):
        raise InputError("must be true or false", field="mesh.curved")
    return MeshSpec(size=size, max_frequency_hz=f_max, curved=curved,
                    per_wavelength=None if per_wavelength is None else float(per_wavelength),
                    edge_refinement=float(edge), region_sizes=region_sizes)


def _symmetry(spec: dict, geometry: GeometrySpec, walls: dict) -> dict[str, tuple[str, ...]]:
    if not spec:
        return {}
    if geometry.builder is None:
        raise InputError("symmetry cuts apply to builders; for an imported mesh, mesh the "
                         "part already cut and give the cut faces a wall kind", field="symmetry")
    _known(spec, {"x", "y", "z"}, "symmetry.")
    out = {}
    for axis, choice in spec.items():
        if choice not in SYMMETRY_CHOICES:
            raise InputError(f"must be one of {', '.join(map(repr, SYMMETRY_CHOICES))}, got "
                             f"{choice!r}", field=f"symmetry.{axis}")
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


def _region(name: str, spec) -> Material:
    where = f"regions.{name}"
    if not isinstance(spec, dict):
        raise InputError("must be a table with eps_r (and optionally mu_r, tan_delta)",
                         field=where)
    _known(spec, REGION_KEYS, where + ".")
    eps = spec.get("eps_r", 1.0)
    tan_delta = spec.get("tan_delta", 0.0)
    if isinstance(tan_delta, bool) or not isinstance(tan_delta, (int, float)) or tan_delta < 0:
        raise InputError(f"must be a number >= 0, got {tan_delta!r}", field=where + ".tan_delta")
    complex_eps = _complex_literal(eps) if isinstance(eps, str) else None
    if complex_eps is not None:
        # eps_r' (1 - j tan δ) with e^{jωt}: a lossy material has a negative imaginary part.
        if "tan_delta" in spec:
            raise InputError("give the loss either as a complex eps_r or as tan_delta, not both",
                             field=where + ".tan_delta")
        if not complex_eps.real > 0 or complex_eps.imag > 0:
            raise InputError(f"a complex eps_r needs a positive real part and an imaginary part "
                             f"<= 0 (loss, with time dependence e^(jwt)); got {eps!r}",
                             field=where + ".eps_r")
        eps, tan_delta = complex_eps.real, -complex_eps.imag / complex_eps.real
    elif isinstance(eps, str):
        try:
            eps = Expression(eps)
        except InputError as exc:
            raise exc.located(field=where + ".eps_r") from None
    elif isinstance(eps, bool) or not isinstance(eps, (int, float)):
        raise InputError("must be a number, an expression string in x, y, z (metres), or a "
                         "complex number string such as \"9.8-0.001j\"", field=where + ".eps_r")
    elif not eps > 0:
        raise InputError(f"must be positive, got {eps!r}", field=where + ".eps_r")
    mu = spec.get("mu_r", 1.0)  # mesh_size is read by _mesh
    if isinstance(mu, bool) or not isinstance(mu, (int, float)) or not mu > 0:
        raise InputError(f"must be a positive number, got {mu!r}", field=where + ".mu_r")
    return Material(eps_r=eps if callable(eps) else float(eps), mu_r=float(mu),
                    tan_delta=float(tan_delta))


def _complex_literal(text: str) -> complex | None:
    """A string such as "9.8-0.0098j" as a complex number; None for anything else."""
    compact = text.replace(" ", "")
    if not compact.endswith("j"):
        return None
    try:
        return complex(compact)
    except ValueError:
        return None


def _wall(name: str, spec) -> Wall:
    where = f"walls.{name}"
    if not isinstance(spec, dict):
        raise InputError('must be a table with kind = "pec", "pmc" or "metal"', field=where)
    _known(spec, WALL_KEYS, where + ".")
    kind = spec.get("kind")
    if kind not in KINDS:
        raise InputError(f"kind must be one of {', '.join(map(repr, KINDS))}, got {kind!r}",
                         field=where + ".kind")
    if kind != "metal":
        extra = next((k for k in ("conductivity", "metal", "roughness") if k in spec), None)
        if extra:
            raise InputError(f'{extra} belongs to kind = "metal"; a {kind.upper()} wall has no '
                             "loss", field=f"{where}.{extra}")
        return Wall(kind=kind)
    if ("conductivity" in spec) == ("metal" in spec):
        raise InputError('a metal wall needs exactly one of conductivity = "58 MS/m" or metal = '
                         f"one of {', '.join(map(repr, CONDUCTIVITY_S_PER_M))}", field=where)
    preset = spec.get("metal")
    if preset is not None:
        if preset not in CONDUCTIVITY_S_PER_M:
            raise InputError(f"unknown metal {preset!r}; known: "
                             f"{', '.join(CONDUCTIVITY_S_PER_M)}", field=where + ".metal")
        sigma = CONDUCTIVITY_S_PER_M[preset]
    else:
        sigma = parse_quantity(spec["conductivity"], "conductivity", field=where + ".conductivity")
        if not sigma > 0:
            raise InputError(f"must be positive, got {spec['conductivity']!r}",
                             field=where + ".conductivity")
    roughness = spec.get("roughness")
    if roughness is not None:
        roughness = parse_quantity(roughness, "length", field=where + ".roughness")
        if roughness < 0:
            raise InputError("must not be negative", field=where + ".roughness")
    return Wall(kind=kind, conductivity=sigma, roughness=roughness, metal=preset)


def _solve(spec: dict) -> SolveSpec:
    _known(spec, SOLVE_KEYS, "solve.")
    modes = spec.get("modes", DEFAULT_MODES)
    if isinstance(modes, bool) or not isinstance(modes, int) or modes < 1:
        raise InputError(f"must be a whole number >= 1, got {modes!r}", field="solve.modes")
    near = spec.get("near")
    near_hz = None if near is None else parse_quantity(near, "frequency", field="solve.near")
    if near_hz is not None and near_hz <= 0:
        raise InputError(f"must be a positive frequency, got {near!r}", field="solve.near")
    form = spec.get("form")
    if form is not None and form not in FORMS:
        raise InputError(f"must be one of {', '.join(map(repr, FORMS))}, got {form!r}",
                         field="solve.form")
    complex_check = spec.get("complex_check", False)
    if not isinstance(complex_check, bool):
        raise InputError("must be true or false", field="solve.complex_check")
    order = spec.get("order", 1)
    if isinstance(order, bool) or order not in ORDERS:
        raise InputError(f"must be one of {', '.join(map(str, ORDERS))}, got {order!r}",
                         field="solve.order")
    estimate = spec.get("error_estimate", False)
    if not isinstance(estimate, bool):
        raise InputError("must be true or false", field="solve.error_estimate")
    accuracy = spec.get("accuracy")
    if accuracy is not None:
        accuracy = _relative(accuracy, "solve.accuracy")
    max_dofs = spec.get("max_dofs", 400_000)
    if isinstance(max_dofs, bool) or not isinstance(max_dofs, int) or max_dofs < 1000:
        raise InputError(f"must be a whole number >= 1000, got {max_dofs!r}",
                         field="solve.max_dofs")
    factorization = spec.get("factorization", "auto")
    if factorization not in FACTORIZERS:
        raise InputError(f"must be one of {', '.join(map(repr, FACTORIZERS))}, got "
                         f"{factorization!r}", field="solve.factorization")
    method = spec.get("method", "auto")
    if method not in METHODS:
        raise InputError(f"must be one of {', '.join(map(repr, METHODS))}, got {method!r}",
                         field="solve.method")
    sensitivities = spec.get("sensitivities", False)
    if not isinstance(sensitivities, bool):
        raise InputError("must be true or false", field="solve.sensitivities")
    orders = spec.get("azimuthal_orders")
    if orders is not None:
        orders = _azimuthal_orders(orders)
        if "order" not in spec:
            order = AXISYMMETRIC_ORDER
    return SolveSpec(modes=modes, near_hz=near_hz, form=form, order=order,
                     complex_check=complex_check, error_estimate=estimate or accuracy is not None,
                     accuracy=accuracy, max_dofs=max_dofs, factorization=factorization,
                     method=method, azimuthal_orders=orders, sensitivities=sensitivities)


def _azimuthal_orders(value) -> tuple[int, ...]:
    """A list of whole numbers m >= 0; a single number is a list of one."""
    items = [value] if isinstance(value, int) and not isinstance(value, bool) else value
    if (not isinstance(items, list) or not items
            or not all(isinstance(m, int) and not isinstance(m, bool)
                       and 0 <= m <= MAX_AZIMUTHAL_ORDER for m in items)):
        raise InputError(f"must be a list of whole numbers from 0 to {MAX_AZIMUTHAL_ORDER}, "
                         f"e.g. [0, 1, 2]; got {value!r}", field="solve.azimuthal_orders")
    if len(set(items)) != len(items):
        raise InputError(f"lists an order twice: {value!r}", field="solve.azimuthal_orders")
    return tuple(sorted(items))


def _check_axisymmetric(solve: SolveSpec, geometry: GeometrySpec, symmetry: dict,
                        spec: dict) -> None:
    """What the axisymmetric path cannot take, refused before any meshing."""
    from .geometry.section import axisymmetric_layout_check

    if geometry.builder is not None:
        axisymmetric_layout_check(builder_layout(geometry.builder, geometry.parameters))
    if symmetry:
        raise InputError("symmetry cuts are for 3D solves; the azimuthal orders already "
                         "separate the field classes of a body of revolution",
                         field="symmetry")
    refused = {"form": solve.form == "H", "method": solve.method == "iterative",
               "error_estimate": solve.error_estimate, "sensitivities": solve.sensitivities}
    reasons = {"form": "the axisymmetric solver works in the E form",
               "method": "the axisymmetric solver uses the direct shift-invert path (its "
                         "problems are small)",
               "error_estimate": "error bars are not yet available for axisymmetric solves; "
                                 "compare two [mesh] sizes",
               "sensitivities": "material sensitivities are not yet available for "
                                "axisymmetric solves"}
    for key, bad in refused.items():
        if bad:
            where = "accuracy" if key == "error_estimate" and "accuracy" in spec else key
            raise InputError(reasons[key], field=f"solve.{where}")


_RELATIVE_UNITS = {"ppm": 1e-6, "ppb": 1e-9, "%": 1e-2}


def _relative(value, field: str) -> float:
    """A relative accuracy: a number (1e-5), or a string such as "10 ppm" or "0.01 %"."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        number = float(value)
    elif isinstance(value, str):
        text = value.strip()
        unit = next((u for u in _RELATIVE_UNITS if text.endswith(u)), None)
        try:
            number = float(text[: -len(unit)] if unit else text) * (_RELATIVE_UNITS[unit]
                                                                     if unit else 1.0)
        except ValueError:
            raise InputError(f"cannot read {value!r}; write e.g. \"10 ppm\", \"0.01 %\" or "
                             "1e-5", field=field) from None
    else:
        raise InputError('must be a relative accuracy such as "10 ppm"', field=field)
    if not 0 < number < 0.5:
        raise InputError(f"must be between 0 and 50 %, got {value!r}", field=field)
    return number
