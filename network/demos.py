"""The bundled demo cases (installed as package data with hxtrain)."""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from .errors import CaseError

DEMO_CASES = ("crude_preheat", "feed_effluent", "product_cooling", "desalter_and_reactor", "naphtha_vaporiser")
"""Demo case names; the first is what ``hxtrain run`` uses with no case given."""


def demo_case_path(name: str = DEMO_CASES[0]) -> Path:
    """Path of a bundled demo case file by name (see :data:`DEMO_CASES`)."""
    if name not in DEMO_CASES:
        raise CaseError(f"no demo case {name!r}; there are {', '.join(DEMO_CASES)}")
    return Path(str(resources.files("hxtrain.cases").joinpath(f"{name}.yaml")))
