"""``hxtrain schema KIND``: the JSON Schema of case, study, monitoring or schedule files, shipped
with the package (made by :mod:`.schema_build` from the keys the readers ask for)."""

from __future__ import annotations

from importlib import resources

KINDS = ("case", "study", "monitoring", "schedule")


def schema_text(kind: str) -> str:
    """The schema of ``kind`` as JSON text."""
    if kind not in KINDS:
        raise ValueError(f"no schema for {kind!r}: one of {', '.join(KINDS)}")
    return resources.files("hxtrain.solver.reporting").joinpath("schemas", f"{kind}.schema.json").read_text("utf-8")
