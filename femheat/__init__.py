"""femheat: finite-element heating and cooling of parts in furnaces."""

__version__ = "0.1.0"

# The submodule femheat.run is imported first: importing it later would rebind the package
# attribute `run` to the module and hide the function below.
from . import run as _run_module  # noqa: E402, F401  (after __version__, which modules import)
from .api import Results, run  # noqa: E402

__all__ = ["__version__", "run", "Results"]
