"""hxtrain.solver: calculation order, tears, convergence, result tables and the command line.

>>> from hxtrain.solver import simulate, demo_case_path
>>> result = simulate(demo_case_path("crude_preheat"))
>>> result.converged
True
"""

from .engine import ConvergenceError
from .results import CAUTION, SimulationResult, simulate
from .demos import demo_case_path, DEMO_CASES

__all__ = ["simulate", "SimulationResult", "ConvergenceError", "CAUTION", "demo_case_path", "DEMO_CASES"]
