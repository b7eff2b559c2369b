"""hxtrain.network: the case model — reading and checking case files, the unit graph, flows.

Imports :mod:`hxtrain.units` (to build unit models); never :mod:`hxtrain.solver`.

The names below are imported on first use (PEP 562): importing the package loads nothing
numerical, so a command that needs only part of it starts quickly.
"""

from hxtrain.units import lazy_exports

_EXPORTS = {
    "Case": ".case", "Settings": ".case", "Step": ".case", "case_from_mapping": ".case", "load_case": ".case",
    "without_fouling": ".case", "fouled_units": ".case", "CaseError": ".errors", "HxtrainError": ".errors",
    "Network": ".graph", "Segment": ".graph", "build_network": ".graph",
}

__all__ = ["Case", "Settings", "Step", "load_case", "case_from_mapping", "without_fouling", "fouled_units", "CaseError",
           "HxtrainError", "Network", "Segment", "build_network"]


__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
