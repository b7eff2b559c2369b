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
        adjust: KEY_PATH              # a numeric key of the case, e.g. exchangers.E-110.bypass.cold
        between: [LOW, HIGH]          # the range searched, in the key's units: [30, 50] or ["86 degF", "122 degF"]
        target: {value: METRIC, equals: VALUE}      # °C for a temperature, kW for a duty, or with units
                # or {difference: [METRIC, METRIC], equals: VALUE}    # K (or kW) for a difference
        changes: [...]                # optional: applied before adjusting
    uncertainty:                      # a Monte Carlo run: see uncertainty.py
      samples: 1000
      seed: 1
      inputs: {KEY_PATH: {distribution: normal, mean: M, sd: S, between: [LOW, HIGH]}, ...}
    sweeps:
      NAME:
        grid: {KEY_PATH: [values...] or {from: A, to: B, steps: N}}   # one or two key paths
        scale: false                  # true: the values multiply the base case's values
        # values as the key takes them (a number in its default unit, or text with units);
        # multipliers with scale (not for temperatures); whole numbers for counts such as shells

A METRIC names a unit's result: ``TAG.duty``, ``TAG.hot_out``, ``TAG.cold_out``, ``TAG.hot_in``,
``TAG.cold_in``, ``TAG.inlet``, ``TAG.outlet``. Everything a study refers to is checked before
anything is simulated; every error names the study file and the key path in it.
"""

from __future__ import annotations

import copy
import math
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from . import quantities as q
from .case import Case, case_from_document
from .changes import (WHOLE_NUMBER, apply_change, apply_changes, existing_number, is_branch_fraction, key_kind,
                      locate, refuse_temperature_multiple, study_number, value_changes, written_path)
from .demos import DEMO_CASES, demo_case_path
from .errors import CaseError
from .fields import Fields, describe
from .reading import Document, read_document, refuse_other_kind
from .uncertainty import read_uncertainty

METRIC_FIELDS = ("duty", "hot_in", "hot_out", "cold_in", "cold_out", "inlet", "outlet")
TARGET_DUTY = q.Kind("a heat duty", "kW", '2500 or "25 MW"')
TARGET_DIFFERENCE = q.Kind("a temperature difference", "delta_degC", '0, 5 or "9 delta_degF"')
"""What a target equals besides a temperature: a duty, or a difference of two temperatures or two
duties; without the case-file ranges (a duty may come out negative, a difference of either sign)."""

MAX_SWEEP_POINTS = 1_000_000
"""Points in one sweep. Measured: a batch of the crude demo takes about 1.8 kB of memory per
point at its peak and solves about 10,000 points a second on one core (200,000 points: 490 MB,
20 s), so a million points is some 2 GB and two minutes; a larger grid would exhaust an ordinary
machine's memory rather than finish, and point by point (about 1.5 s a point) it would take weeks."""


@dataclass
class Specification:
    name: str
    adjust: str
    low: float
    high: float
    target: dict
    changes: list = field(default_factory=list)
    key: tuple = ()
    adjust_unit: str = ""
    """The default unit of ``adjust`` (of ``low`` and ``high``), for messages."""
    target_unit: str = ""


@dataclass
class Sweep:
    name: str
    grid: dict
    scale: bool
    key: tuple = ()


@contextmanager
def attributed(source):
    """Errors raised inside that name no file get ``source``'s (a study or a document): its file,
    and the line of their key path."""
    try:
        yield
    except CaseError as exc:
        if exc.file is not None:
            raise
        raise source.error(exc.path, exc.message) from None


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
    uncertainty: object = None
    """The ``uncertainty`` section (:class:`.uncertainty.Uncertainty`): inputs to sample, or None."""

    def error(self, path, message) -> CaseError:
        return Document(None, self.file, self.lines).error(tuple(path), message)

    def attributed(self):
        return attributed(self)

    def case(self, changes=(), where=(), settings=(), settings_where=(), context=None) -> Case:
        """The base case with ``changes`` (a list in the study at ``where``) and then ``settings``
        (changes the study computes, e.g. a sweep point, attributed to ``settings_where``)
        applied and checked; errors name the study file and the key path of the change.
        ``context`` says in messages which setting made the case invalid."""
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
            at = settings_where if settings else tuple(where) + _culprit(changes, exc.path, self.base.data)
            why = f"{context or 'after these changes'} the case is not valid: {exc.describe()}"
            raise self.error(at, why) from None

    def changed_data(self, changes=(), where=()) -> dict:
        """The base case document with ``changes`` applied (a copy)."""
        with self.attributed():
            return apply_changes(self.base.data, list(changes), where)

    def base_value(self, path, where) -> float:
        """The base case's value at the numeric key ``path``, in its default unit."""
        with self.attributed():
            return existing_number(copy.deepcopy(self.base.data), path, where)[3]


def _culprit(changes, case_path, data=None) -> tuple:
    """(index,) of the last change that wrote where the case reader found the fault (one key path
    lies within the other, and they share a unit where both name one); () when no change did."""
    case_path = tuple(case_path)
    for i in reversed(range(len(changes))):
        written = written_path(changes[i], data)
        shared = min(len(written), len(case_path))
        if shared >= max(1, min(2, len(written), len(case_path))) and written[:shared] == case_path[:shared]:
            return (i,)
    return ()


def load_study(path) -> Study:
    doc = read_document(path)
    top = Fields(doc, (), doc.data, "a mapping with base, variants, specifications and sweeps")
    refuse_other_kind(doc, "study file")
    base = _base(top, Path(doc.file))
    study = Study(doc.file, top.text("title", default="") or "", base, lines=doc.lines)
    top.text("description")
    for name, f in _entries(top, "variants", "variant names to their changes",
                            "'changes', a list of changes such as [{scale: streams.crude.flow, by: 1.1}]"):
        if name == "base":
            raise f.error(None, "'base' names the base case's column; give this variant another name")
        changes = f.raw("changes")
        if not isinstance(changes, list) or not changes:
            raise f.error("changes", f"expected a list of at least one change, got {describe(changes)}"
                                     + (" (empty)" if changes == [] else ""))
        study.variants[name] = (f.text("description", default="") or "", changes, f.path + ("changes",))
        f.finish()
    for name, f in _entries(top, "specifications", "specification names to their settings",
                            "'adjust' (a key path), 'between' ([low, high]) and 'target' "
                            "({value: TAG.cold_out, equals: VALUE})"):
        study.specifications.append(_specification(name, f))
    for name, f in _entries(top, "sweeps", "sweep names to their grids",
                            "'grid', one or two key paths with their values, e.g. {streams.crude.flow: [80, 90]}"):
        study.sweeps.append(_sweep(name, f))
    study.uncertainty = read_uncertainty(top, base)
    top.finish()
    if not (study.variants or study.specifications or study.sweeps or study.uncertainty):
        raise doc.error((), "the study has no variants, specifications, sweeps or uncertainty")
    _check_before_running(study)
    return study


def _entries(top: Fields, key, what, needs):
    """``top.named_entries(key)``, saying what an entry needs when it is empty or not a mapping."""
    section = top.value.get(key)
    for name, value in section.items() if isinstance(section, dict) else ():
        if not isinstance(value, dict):
            state = "is empty" if value is None else f"is {describe(value)}"
            raise top.doc.error((key, name), f"'{name}' {state}: an entry of '{key}' needs {needs}")
    return top.named_entries(key, what)


def _check_before_running(study: Study):
    """Every variant, specification and sweep refers to what exists and gives valid cases at the
    ends of its ranges, before any simulation."""
    base = study.case()
    for name, (_, changes, key) in study.variants.items():
        study.case(changes, key)
    for spec in study.specifications:
        changes_key, adjust_key = spec.key + ("changes",), spec.key + ("adjust",)
        data = study.changed_data(spec.changes, changes_key)
        with study.attributed():
            locate(copy.deepcopy(data), spec.adjust, adjust_key)
        for end, x in (("low", spec.low), ("high", spec.high)):
            with study.attributed():
                settings = value_changes(data, spec.adjust, x, adjust_key)
            study.case(spec.changes, changes_key, settings, spec.key + ("between",),
                       context=f"with {spec.adjust} at {x:g}{spec.adjust_unit} (the {end} end of 'between')")
        field_name = "value" if "value" in spec.target else "difference"
        for metric in [spec.target["value"]] if "value" in spec.target else spec.target["difference"]:
            tag = metric.rpartition(".")[0]
            if tag not in base.keys:
                raise study.error(spec.key + ("target", field_name),
                                  f"no unit '{tag}' in the base case (for '{metric}')")
    for sweep in study.sweeps:
        for path, values in sweep.grid.items():
            where = sweep.key + ("grid", path)
            with study.attributed():
                locate(copy.deepcopy(study.base.data), path, where)
            if sweep.scale:
                values = values * study.base_value(path, where)
                if key_kind(path) is WHOLE_NUMBER:
                    _whole_points(study, where, values, path, "the multiplier times the base value: ")
            for x in (np.min(values), np.max(values)):
                with study.attributed():
                    settings = value_changes(study.base.data, path, x, where)
                study.case((), sweep.key, settings, where, context=f"at {path} = {x:g}")


def _whole_points(source, where, values, path, what=""):
    """Each value of a whole-number key's grid is whole; an error naming the point otherwise."""
    for i, value in enumerate(values):
        if not float(value).is_integer():
            raise source.error(where, f"point {i + 1} of {len(values)} ({what}{value:g}) is not a whole number, "
                                      f"and '{path}' takes whole numbers")


def _base(top: Fields, study_file: Path) -> Document:
    raw = top.raw("base")
    if isinstance(raw, dict):
        demo = Fields(top.doc, ("base",), raw)
        name = demo.choice("demo", DEMO_CASES)
        demo.finish()
        path = demo_case_path(name)
    elif isinstance(raw, str) and raw.strip():
        path = (study_file.parent / raw) if not Path(raw).is_absolute() else Path(raw)
    else:
        raise top.error("base", f"expected the case file's path or {{demo: NAME}}, got {describe(raw)}")
    try:
        return read_document(path)
    except CaseError as exc:
        raise top.error("base", f"cannot read the base case: {exc.describe()}") from None


def parse_metric(f: Fields, key, value) -> str:
    if not isinstance(value, str) or "." not in value or value.rsplit(".", 1)[1] not in METRIC_FIELDS:
        raise f.error(key, f"expected one unit's result, its tag and one of {'|'.join(METRIC_FIELDS)} (an exchanger's "
                           f"TAG.duty or TAG.cold_out, a heater's TAG.inlet), got {describe(value)}")
    return value


def unit_text(kind: q.Kind) -> str:
    """' kg/s' for messages; nothing for a dimensionless kind."""
    return f" {kind.shown_unit}" if kind.shown_unit else ""


def _specification(name, f: Fields) -> Specification:
    adjust = f.raw("adjust")
    with attributed(f.doc):
        kind = key_kind(adjust, f.path + ("adjust",))
    if kind is WHOLE_NUMBER:
        raise f.error("adjust", f"'{adjust}' takes whole numbers, and a specification searches a continuous range; "
                                f"sweep it instead (sweeps: {{NAME: {{grid: {{{adjust}: [1, 2, 3]}}}}}})")
    between = f.raw("between")
    usage = f"expected [low, high] with low < high, each {kind.name} such as {kind.example}"
    if not isinstance(between, list) or len(between) != 2:
        raise f.error("between", f"{usage}, got {describe(between)}")
    with attributed(f.doc):
        low, high = (study_number(v, kind, f.path + ("between", i)) for i, v in enumerate(between))
    if low >= high:
        raise f.error("between", f"{usage}; got {low:g} and {high:g}{unit_text(kind)}")
    t = f.mapping("target", required=True)
    if t.has("value") == t.has("difference"):
        raise t.error(None, "give exactly one of 'value' (a result) and 'difference' ([result, result])")
    target = {}
    if t.has("value"):
        target["value"] = parse_metric(t, "value", t.raw("value"))
        metrics = [target["value"]]
    else:
        pair = t.raw("difference")
        if not isinstance(pair, list) or len(pair) != 2:
            raise t.error("difference", f"expected two results, got {describe(pair)}")
        target["difference"] = metrics = [parse_metric(t, "difference", p) for p in pair]
    target_kind = _target_kind(t, metrics)
    target["equals"] = t.quantity("equals", target_kind, maximum=1e9, minimum=-1e9)
    t.finish()
    changes = f.raw("changes", required=False, default=[])
    if not isinstance(changes, list):
        raise f.error("changes", f"expected a list of changes, got {describe(changes)}")
    f.text("description")
    f.finish()
    return Specification(name, adjust, low, high, target, changes, f.path, unit_text(kind), unit_text(target_kind))


def _target_kind(t: Fields, metrics) -> q.Kind:
    """What the target equals: a duty (kW), a temperature (°C) or a temperature difference (K)."""
    duties = {m.rsplit(".", 1)[1] == "duty" for m in metrics}
    if len(duties) == 2:
        raise t.error("difference", f"{metrics[0]} and {metrics[1]} are not the same kind of result (a duty and a "
                                    "temperature): their difference means nothing")
    if duties.pop():
        return TARGET_DUTY
    return TARGET_DIFFERENCE if len(metrics) == 2 else q.TEMPERATURE


def check_point_count(source, where, grid: dict):
    """A sweep's grid holds at most :data:`MAX_SWEEP_POINTS` points."""
    count = math.prod(len(v) for v in grid.values())
    if count > MAX_SWEEP_POINTS:
        sizes = " × ".join(f"{len(v):,}" for v in grid.values())
        raise source.error(where, f"the grid has {count:,} points ({sizes}); a sweep takes at most "
                                  f"{MAX_SWEEP_POINTS:,} (a batch needs about 2 kB of memory a point): "
                                  "use fewer values")


def _sweep(name, f: Fields) -> Sweep:
    scale = f.raw("scale", required=False, default=False)
    if not isinstance(scale, bool):
        raise f.error("scale", f"expected true or false, got {describe(scale)}")
    grid_fields = f.mapping("grid", required=True, what="a mapping of one or two key paths to their values")
    grid = {}
    for path in grid_fields.value:
        grid_fields.allowed.add(path)
        where = grid_fields.path + (path,)
        with attributed(f.doc):
            kind = key_kind(path, where)
            if scale:
                refuse_temperature_multiple(path, kind, where, "sweep the temperatures themselves (scale: false)")
        grid[path] = _grid_values(f.doc, where, grid_fields.value[path], q.NUMBER if scale else kind, path)
    if not 1 <= len(grid) <= 2:
        raise grid_fields.error(None, f"a sweep varies one or two key paths, got {len(grid)}")
    splitters = [p.split(".")[1] for p in grid if is_branch_fraction(p)]
    if len(splitters) != len(set(splitters)):
        raise grid_fields.error(None, f"both key paths are branches of splitter '{splitters[0]}': setting one branch "
                                      "rescales the others, so two branches cannot vary independently; sweep one")
    check_point_count(f.doc, grid_fields.path, grid)
    f.text("description")
    f.finish()
    return Sweep(name, grid, scale, f.path)


def _grid_values(doc: Document, where, raw, kind: q.Kind, path) -> np.ndarray:
    """One key path's values: a list, or {from, to, steps}; each a number in the key's default unit
    or text with units; whole numbers (as ints) for a whole-number key."""
    if isinstance(raw, dict):
        r = Fields(doc, where, raw, "{from, to, steps}")
        start, stop = r.quantity("from", kind), r.quantity("to", kind)
        steps = r.integer("steps", None, 2, 10_000)
        r.finish()
        # to 12 significant digits: 0.8, not linspace's 0.7999999999999999, in the tables and files
        # (and so in the case solved: the point is the value the user reads)
        values = np.array([float(f"{v:.12g}") for v in np.linspace(start, stop, steps)])
    elif isinstance(raw, list) and raw:
        with attributed(doc):
            values = np.array([study_number(v, kind, where + (i,)) for i, v in enumerate(raw)], dtype=float)
    else:
        raise doc.error(where, f"expected a list of values or {{from, to, steps}}, got {describe(raw)}")
    if kind is WHOLE_NUMBER:
        _whole_points(doc, where, values, path)
        return values.astype(int)
    return values
