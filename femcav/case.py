"""The TOML case file: reading, validation, and turning it into a model.

Every mistake becomes one InputError naming the file and the key path, so the command line can
print it as one line. See README.md ("Case-file reference") for the keys.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from .errors import InputError
from .expressions import Expression
from .geometry import BUILDERS, read_mesh
from .geometry.mesh import TaggedMesh
from .materials import VACUUM, Material
from .model import FORMS, Model, make_model
from .units import UNITS, parse_quantity
from .walls import KINDS, Wall

TOP_KEYS = {"title", "geometry", "regions", "walls", "solve"}
REGION_KEYS = {"eps_r", "mu_r"}
WALL_KEYS = {"kind"}
SOLVE_KEYS = {"modes", "near", "form"}
DEFAULT_MODES = 10


@dataclass(frozen=True)
class GeometrySpec:
    builder: str | None = None
    parameters: dict[str, float] = field(default_factory=dict)
    mesh_path: Path | None = None
    mesh_unit_m: float = 1.0


@dataclass(frozen=True)
class SolveSpec:
    modes: int = DEFAULT_MODES
    near_hz: float | None = None
    form: str = "E"


@dataclass(frozen=True)
class Case:
    path: Path
    title: str
    geometry: GeometrySpec
    regions: dict[str, Material]
    walls: dict[str, Wall]
    solve: SolveSpec


def load_case(path: str | Path) -> Case:
    path = Path(path)
    source = str(path)
    if not path.is_file():
        raise InputError("case file not found", source=source)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", source=source) from None
    except UnicodeDecodeError:
        raise InputError("not a UTF-8 text file", source=source) from None
    try:
        _known(data, TOP_KEYS, "")
        title = data.get("title", path.stem)
        if not isinstance(title, str):
            raise InputError("must be a string", field="title")
        geometry = _geometry(_table(data, "geometry", required=True), path.parent)
        regions = {name: _region(name, spec) for name, spec in _table(data, "regions").items()}
        walls = {name: _wall(name, spec) for name, spec in _table(data, "walls").items()}
        solve = _solve(_table(data, "solve"))
    except InputError as exc:
        raise exc.located(source=source) from None
    return Case(path=path, title=title, geometry=geometry, regions=regions, walls=walls,
                solve=solve)


def build_mesh(case: Case) -> TaggedMesh:
    g = case.geometry
    if g.mesh_path is None:
        return BUILDERS[g.builder].build(**g.parameters)
    if not g.mesh_path.is_file():
        raise InputError(f"mesh file {str(g.mesh_path)!r} not found", source=str(case.path),
                         field="geometry.mesh")
    return read_mesh(g.mesh_path, scale=g.mesh_unit_m)  # its errors name the mesh file


def case_model(case: Case, mesh: TaggedMesh | None = None) -> Model:
    """The model of ``case``; a builder's regions not named in the case are vacuum."""
    mesh = mesh if mesh is not None else build_mesh(case)
    materials = dict(case.regions)
    if case.geometry.builder is not None:
        for region in BUILDERS[case.geometry.builder].REGIONS:
            materials.setdefault(region, VACUUM)
    return make_model(mesh, materials, case.walls, source=str(case.path))


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
    builder = BUILDERS[name]
    _known(spec, {"builder", *builder.PARAMETERS}, "geometry.")
    for key in builder.REQUIRED:
        if key not in spec:
            raise InputError(f"the {name} builder needs {key}", field=f"geometry.{key}")
    parameters = {}
    for key, kind in builder.PARAMETERS.items():
        if key in spec:
            value = parse_quantity(spec[key], kind, field=f"geometry.{key}")
            if value <= 0:
                raise InputError(f"must be positive, got {spec[key]!r}", field=f"geometry.{key}")
            parameters[key] = value
    return GeometrySpec(builder=name, parameters=parameters)


def _region(name: str, spec) -> Material:
    where = f"regions.{name}"
    if not isinstance(spec, dict):
        raise InputError("must be a table with eps_r (and optionally mu_r)", field=where)
    _known(spec, REGION_KEYS, where + ".")
    eps = spec.get("eps_r", 1.0)
    if isinstance(eps, str):
        try:
            expression = Expression(eps)
        except InputError as exc:
            raise exc.located(field=where + ".eps_r") from None
        eps = expression
    elif isinstance(eps, bool) or not isinstance(eps, (int, float)):
        raise InputError("must be a number or an expression string in x, y, z (metres)",
                         field=where + ".eps_r")
    elif not eps > 0:
        raise InputError(f"must be positive, got {eps!r}", field=where + ".eps_r")
    mu = spec.get("mu_r", 1.0)
    if isinstance(mu, bool) or not isinstance(mu, (int, float)) or not mu > 0:
        raise InputError(f"must be a positive number, got {mu!r}", field=where + ".mu_r")
    return Material(eps_r=eps if callable(eps) else float(eps), mu_r=float(mu))


def _wall(name: str, spec) -> Wall:
    where = f"walls.{name}"
    if not isinstance(spec, dict):
        raise InputError("must be a table with kind = \"pec\" or \"pmc\"", field=where)
    _known(spec, WALL_KEYS, where + ".")
    kind = spec.get("kind")
    if kind not in KINDS:
        raise InputError(f"kind must be one of {', '.join(map(repr, KINDS))}, got {kind!r}",
                         field=where + ".kind")
    return Wall(kind=kind)


def _solve(spec: dict) -> SolveSpec:
    _known(spec, SOLVE_KEYS, "solve.")
    modes = spec.get("modes", DEFAULT_MODES)
    if isinstance(modes, bool) or not isinstance(modes, int) or modes < 1:
        raise InputError(f"must be a whole number >= 1, got {modes!r}", field="solve.modes")
    near = spec.get("near")
    near_hz = None if near is None else parse_quantity(near, "frequency", field="solve.near")
    if near_hz is not None and near_hz <= 0:
        raise InputError(f"must be a positive frequency, got {near!r}", field="solve.near")
    form = spec.get("form", "E")
    if form not in FORMS:
        raise InputError(f"must be one of {', '.join(map(repr, FORMS))}, got {form!r}",
                         field="solve.form")
    return SolveSpec(modes=modes, near_hz=near_hz, form=form)
