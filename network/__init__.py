"""hxtrain.network: the case model — reading and checking case files, the unit graph, flows.

Imports :mod:`hxtrain.units` (to build unit models); never :mod:`hxtrain.solver`.
"""

from .case import Case, Settings, Step, case_from_mapping, load_case, without_fouling
from .errors import CaseError, HxtrainError
from .graph import Network, Segment, build_network

__all__ = ["Case", "Settings", "Step", "load_case", "case_from_mapping", "without_fouling", "CaseError", "HxtrainError", "Network", "Segment", "build_network"]
