"""femcav: resonant modes of closed microwave cavities by the finite element method."""

__version__ = "0.1.0"

from .case import case_model, load_case  # noqa: E402
from .materials import Material  # noqa: E402
from .model import make_model  # noqa: E402
from .runner import run_case  # noqa: E402
from .solver import solve_model  # noqa: E402
from .walls import Wall  # noqa: E402

__all__ = ["Material", "Wall", "case_model", "load_case", "make_model", "run_case",
           "solve_model", "__version__"]
