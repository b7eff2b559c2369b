"""Study files: a base case and what to do with it — named variants, specifications, sweeps.

::

    base: crude_preheat.yaml          # a case file, relative to this file (or {demo: NAME})
    title: Options for the spring turnaround
    variants:
      NAME:
        description: text
        changes: [ {set: ..., to: ...}, {scale: ..., by: ...}, ... ]   # see changes.py
    specifications:
      NAME:
        adjust: KEY_PATH              # a numeric value of the case, e.g. exchangers.E-110.bypass.cold
        between: [LOW, HIGH]          # the range searched
        target: {value: METRIC, equals: NUMBER}
                # or {difference: [METRIC, METRIC], equals: NUMBER}
        changes: [...]                # optional: applied before adjusting
    sweeps:
      NAME:
        grid: {KEY_PATH: [values...] or {from: A, to: B, steps: N}}   # one or two key paths
        scale: false                  # true: the values multiply the base case's values
        # values are numbers in the key's default unit (kg/s, °C, ...), or multipliers with scale

A METRIC names a unit's result: ``TAG.duty``, ``TAG.hot_out``, ``TAG.cold_out``, ``TAG.hot_in``,
``TAG.cold_in``, ``TAG.inlet``, ``TAG.outlet``.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .case import Case, case_from_document
from .changes import apply_change, apply_changes, locate, numeric_value
from .demos import DEMO_CASES, demo_case_path
from .errors import CaseError
from .fields import Fields, describe
from .quantities import NUMBER
from .reading import Document, read_document

METRIC_FIELDS = ("duty", "hot_in", "hot_out", "cold_in", "cold_out", "inlet", "outlet")


@dataclass
class Specification:
    name: str
    adjust: str
    low: float
    high: float
    target: dict
    changes: list = field(default_factory=list)
    key: tuple = ()


@dataclass
class Sweep:
    name: str
    grid: dict
    scale: bool
    key: tuple = ()


@dataclass
class Study:
    file: str
    title: str
    base: Document
    variants: dict = field(default_factory=dict)
    """name -> (description, changes, key path)."""
    specifications: list = field(default_factory=list)
    sweeps: list = field(default_factory=list)
    lines: dict = field(default_factory=dict, repr=False)

    def error(self, path, message) -> CaseError:
        return Document(None, self.file, self.lines).error(tuple(path), message)

    def case(self, changes=(), where=(), settings=(), settings_where=()) -> Case:
        """The base case with ``changes`` (a list in the study at ``where``) and then ``settings``
        (changes the study computes, e.g. a sweep point, attributed to ``settings_where``)
        applied and checked; errors name the study file and the key path of the change."""
        try:
            data = apply_changes(self.base.data, list(changes), where)
            for change in settings:
                apply_change(data, change, tuple(settings_where))
        except CaseError as exc:
            raise self.error(exc.path or where, exc.message) from None
        try:
            return case_from_document(Document(data, self.base.file, self.base.lines))
        except CaseError as exc:
            if not changes and not settings:
                raise
            raise self.error(settings_where if settings else where,
                             f"after these changes the case is not valid: {exc.describe()}") from None

    def base_value(self, path, where) -> float:
        data = copy.deepcopy(self.base.data)
        try:
            node, key = locate(data, path, where, create_last=False)
        except CaseError as exc:
            raise self.error(where, exc.message) from None
        return numeric_value(node[key], key, where)


def load_study(path) -> Study:
    doc = read_document(path)
    top = Fields(doc, (), doc.data, "a mapping with base, variants, specifications and sweeps")
    base = _base(top, Path(doc.file))
    study = Study(doc.file, top.text("title", default="") or "", base, lines=doc.lines)
    top.text("description")
    for name, f in top.named_entries("variants", "variant names to their changes"):
        if name == "base":
            raise f.error(None, "'base' names the base case's column; give this variant another name")
        changes = f.raw("changes")
        if not isinstance(changes, list) or not changes:
            raise f.error("changes", f"expected a list of changes, got {describe(changes)}")
        study.variants[name] = (f.text("description", default="") or "", changes, f.path + ("changes",))
        f.finish()
    for name, f in top.named_entries("specifications", "specification names to their settings"):
        study.specifications.append(_specification(name, f))
    for name, f in top.named_entries("sweeps", "sweep names to their grids"):
        study.sweeps.append(_sweep(name, f))
    top.finish()
    if not (study.variants or study.specifications or study.sweeps):
        raise doc.error((), "the study has no variants, specifications or sweeps")
    _check_before_running(study)
    return study


def _check_before_running(study: Study):
    """Every variant, specification and sweep refers to what exists, before any simulation."""
    base = study.case()
    for name, (_, changes, key) in study.variants.items():
        study.case(changes, key)
    for spec in study.specifications:
        study.case(spec.changes, spec.key + ("changes",))
        study.base_value(spec.adjust, spec.key + ("adjust",))
        metrics = [spec.target["value"]] if "value" in spec.target else spec.target["difference"]
        field = "value" if "value" in spec.target else "difference"
        for name in metrics:
            tag = name.rpartition(".")[0]
            if tag not in base.keys:
                raise study.error(spec.key + ("target", field), f"no unit '{tag}' in the base case (for '{name}')")
    for sweep in study.sweeps:
        for path in sweep.grid:
            study.base_value(path, sweep.key + ("grid", path))


def _base(top: Fields, study_file: Path) -> Document:
    raw = top.raw("base")
    if isinstance(raw, dict):
        demo = Fields(top.doc, ("base",), raw)
        name = demo.choice("demo", DEMO_CASES)
        demo.finish()
        path = demo_case_path(name)
    elif isinstance(raw, str):
        path = (study_file.parent / raw) if not Path(raw).is_absolute() else Path(raw)
    else:
        raise top.error("base", f"expected the case file's path or {{demo: NAME}}, got {describe(raw)}")
    try:
        return read_document(path)
    except CaseError as exc:
        raise top.error("base", f"cannot read the base case: {exc.describe()}") from None


def parse_metric(f: Fields, key, value) -> str:
    if not isinstance(value, str) or "." not in value or value.rsplit(".", 1)[1] not in METRIC_FIELDS:
        raise f.error(key, f"expected a result such as F-101.inlet or E-106.cold_out (TAG.{'|'.join(METRIC_FIELDS)}), "
                           f"got {describe(value)}")
    return value


def _specification(name, f: Fields) -> Specification:
    adjust = f.raw("adjust")
    if not isinstance(adjust, str):
        raise f.error("adjust", f"expected a key path such as exchangers.E-110.bypass.cold, got {describe(adjust)}")
    between = f.raw("between")
    if (not isinstance(between, list) or len(between) != 2
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in between)
            or not np.all(np.isfinite(between)) or between[0] >= between[1]):
        raise f.error("between", f"expected [low, high] numbers with low < high, got {describe(between)}")
    t = f.mapping("target", required=True)
    target = {"equals": t.quantity("equals", NUMBER, maximum=1e9, minimum=-1e9)}
    if t.has("value") == t.has("difference"):
        raise t.error(None, "give exactly one of 'value' (a result) and 'difference' ([result, result])")
    if t.has("value"):
        target["value"] = parse_metric(t, "value", t.raw("value"))
    else:
        pair = t.raw("difference")
        if not isinstance(pair, list) or len(pair) != 2:
            raise t.error("difference", f"expected two results, got {describe(pair)}")
        target["difference"] = [parse_metric(t, "difference", p) for p in pair]
    t.finish()
    changes = f.raw("changes", required=False, default=[])
    f.text("description")
    f.finish()
    return Specification(name, adjust, float(between[0]), float(between[1]), target, changes, f.path)


def _sweep(name, f: Fields) -> Sweep:
    grid_fields = f.mapping("grid", required=True, what="a mapping of one or two key paths to their values")
    grid = {}
    for path in grid_fields.value:
        grid_fields.allowed.add(path)
        raw = grid_fields.value[path]
        where = grid_fields.path + (path,)
        if isinstance(raw, dict):
            r = Fields(f.doc, where, raw)
            start, stop = r.quantity("from", NUMBER), r.quantity("to", NUMBER)
            steps = r.integer("steps", None, 2, 10_000)
            r.finish()
            values = np.linspace(start, stop, steps)
        elif isinstance(raw, list) and raw and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in raw):
            values = np.asarray(raw, dtype=float)
        else:
            raise f.doc.error(where, f"expected a list of numbers or {{from, to, steps}}, got {describe(raw)}")
        if not np.all(np.isfinite(values)):
            raise f.doc.error(where, "the values must be finite numbers")
        grid[path] = values
    if not 1 <= len(grid) <= 2:
        raise grid_fields.error(None, f"a sweep varies one or two key paths, got {len(grid)}")
    scale = f.raw("scale", required=False, default=False)
    if not isinstance(scale, bool):
        raise f.error("scale", f"expected true or false, got {describe(scale)}")
    f.text("description")
    f.finish()
    return Sweep(name, grid, scale, f.path)
