"""hxtrain.solver: calculation order, tears, convergence, result tables and the command line.

>>> from hxtrain.solver import simulate, demo_case_path
>>> result = simulate(demo_case_path("crude_preheat"))
>>> result.converged
True

The names below are imported on first use (PEP 562), so that importing the package, or the
``hxtrain`` command's module, loads no numerical library: start-up stays short and an
interrupt during it is handled by the command like any other.
"""

from hxtrain.units import lazy_exports

_EXPORTS = {
    "simulate": ".simulation.results",
    "SimulationResult": ".simulation.results",
    "CAUTION": ".simulation.results",
    "ConvergenceError": ".simulation.engine",
    "demo_case_path": ".demos",
    "simulate_batch": ".simulation.batch",
    "evaluate": ".simulation.evaluation",
    "DEMO_CASES": ".demos",
}

__all__ = ["simulate", "simulate_batch", "evaluate", "SimulationResult", "ConvergenceError", "CAUTION", "demo_case_path", "DEMO_CASES",
           "package_version"]


__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)


def package_version() -> str:
    """The installed hxtrain version, or "unknown" when running from a source tree."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("hxtrain")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree
        return "unknown"
