"""femcav: resonant modes of microwave cavities, open and periodic structures, by the finite
element method.

The public names are imported on first use (PEP 562), so that `femcav --help`, a case-file
error or `import femcav.units` does not pay for scikit-fem, gmsh and the solver stack.
"""

from importlib import import_module

__version__ = "0.1.0"

# public name -> module that defines it
_PUBLIC = {
    # materials, walls and models
    "Material": ".materials",
    "Wall": ".walls",
    "make_model": ".model",
    "make_axisymmetric_model": ".axisymmetric.model",
    # geometry: built parts, layouts and their (r, z) sections
    "build_part": ".geometry",
    "builder_layout": ".geometry",
    "Sizing": ".geometry.parts",
    "mesh_section": ".geometry.section",
    # solving
    "solve_model": ".solver",
    "solve_axisymmetric": ".axisymmetric.solve",
    "mode_rows": ".io.results",
    # figures of merit: geometry factor and beam figures, for either solver's result
    "with_figures_of_merit": ".merit",
    "BeamRequest": ".post.beam",
    # case files and the studies
    "case_model": ".case",
    "load_case": ".case",
    "run_case": ".solve_command",
    "run_sweep": ".study.sweep",
    "run_tune": ".study.tune",
    "run_extract": ".study.extract",
    "run_dispersion": ".study.dispersion",
    # periodic cells: a face pair and its phase (make_model(..., periodic=(PeriodicPair, ...)))
    "PeriodicPair": ".model",
}

__all__ = [*_PUBLIC, "__version__"]


def __getattr__(name: str):
    if name not in _PUBLIC:
        raise AttributeError(f"module 'femcav' has no attribute {name!r}")
    value = getattr(import_module(_PUBLIC[name], __name__), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__():
    return sorted(set(globals()) | set(_PUBLIC))
