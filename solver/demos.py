"""The bundled demo cases: see :mod:`hxtrain.network.demos`."""

from hxtrain.network.demos import DEMO_CASES, demo_case_path

__all__ = ["DEMO_CASES", "demo_case_path"]
