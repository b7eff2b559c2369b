"""Schedule files: a cleaning plan's horizon, fouling laws, operating plan, economics and
constraints, read and checked key by key (the solver plans on the checked :class:`ScheduleFile`).

Keys: ``case``, ``start`` (an ISO date), ``horizon``, ``step``, ``fouling`` (``from_monitoring``
and/or ``exchangers``), ``operation``, ``economics``, ``cleaning``, ``furnace``, ``baselines``:
README.md ("Cleaning schedules") describes each; ``cases/crude_schedule.yaml`` is the demo.

Fouling resistances here are an exchanger's total, referred to the tube outside area (as plant
data back-calculate them: the tube side's share counts times D_o/D_i). A model's parameters are
the keys of its table in :data:`hxtrain.units.fouling_models.MODELS` (``r_f0``, its value just
after a cleaning, optional and 0 by default), bare numbers in the model's own units (days,
m²·K/W per day, J/mol), bounded by that table; ``initial`` (the resistance at ``start``)
defaults to the plant data's fouling now where the schedule has ``from_monitoring`` and they
give one for that exchanger, else to the case's fouling of that exchanger. Conditions of threshold models (film
temperature, Reynolds number, shear) are set by the network, never in the file.

Time: dates are ISO 8601. The horizon and fixed baseline intervals are whole numbers of steps
(part steps are refused, naming the nearest whole numbers), the horizon at most
:data:`MAX_STEPS`; a cleaning's duration is rounded UP to whole steps (10 days with weekly steps
takes 2 steps: an exchanger cannot be back in service part-way through a step); an exchanger
whose cleaning is longer than the horizon is never cleaned, and the report says so. A
``not_allowed`` period is inclusive: a ``to`` date (at midnight) includes that whole day; it
becomes the indices of every step it overlaps (widened to whole steps; the report says so). An
operating-plan entry holds from its date until the next entry's (the case's values before the
first); its key paths are those a scenario may vary (:func:`.scenarios.varied_paths`).

Every key is read through :class:`~.fields.Fields` (unknown keys refused with the nearest
known one); errors name this file, the key path and the line; errors inside the case name the
case file.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import NamedTuple

import pandas as pd

from hxtrain.units.fouling_models import MODELS

from . import quantities as q
from .case import Case
from .changes import key_kind, study_number
from .errors import CaseError, format_path
from .fields import Fields, counted, describe, nearest
from .graph import Network, build_network
from .monitoring_file import (DEFAULT_STEP, read_base_case, read_duration, read_economics, error_at, read_quantity,
                              relative_path, read_timestamp, load_monitoring, shown_duration, whole_steps)
from .quantities import shorten
from .reading import Document, read_document, refuse_other_kind
from .scenarios import unit_parameter
from .sections import UNIT_SECTIONS

__all__ = ["ScheduleFile", "FoulingLaw", "CleaningTerms", "FurnaceLimit", "load_schedule", "schedule_from_mapping",
           "schedule_from_document", "steps_covering", "parameter_kind", "lumped_fouling", "DEFAULT_FIXED_INTERVALS",
           "DEFAULT_AT_MOST_AT_ONCE", "MAX_STEPS"]

DEFAULT_AT_MOST_AT_ONCE = 1
"""One cleaning at a time: one crew and one bundle-pulling rig (common practice)."""
DEFAULT_FIXED_INTERVALS = tuple(pd.Timedelta(weeks=w) for w in (26, 39, 52, 78))
"""Fixed cleaning intervals of the baselines: half-yearly to every eighteen months, the span of
crude preheat cleaning cycles (common practice); those not shorter than the horizon are left out."""
MAX_STEPS = 520
"""The most steps a horizon may have (ten years of weeks): the optimiser's cycle MILP has a
variable per exchanger and pair of (start, end) steps, so it grows with the square of the steps
(5,000 weekly steps grew to 17 GB of memory); plan longer horizons with longer steps."""
TOP_KEYS = ("title", "description", "case", "start", "horizon", "step", "fouling", "operation", "economics",
            "cleaning", "furnace", "baselines")
DAY = pd.Timedelta(days=1)


class FoulingLaw(NamedTuple):
    """How one exchanger's fouling grows: a model of :data:`MODELS` by name, its parameters in
    the model's units (every parameter of its table, ``r_f0`` included), and the fouling at the
    start of the horizon (m²·K/W, total on the outside area). ``initial_written`` False: the file
    gives no ``initial``, and ``initial`` is the case's fouling, which the plant data's fouling
    now replaces where the schedule has them (:func:`hxtrain.solver.scheduling.setup.build_horizon`)."""

    model: str
    parameters: dict
    initial: float
    initial_written: bool = True


class CleaningTerms(NamedTuple):
    """What cleaning one exchanger costs (in the economics' currency) and how many whole steps
    it is out of service on its bypass; ``allowed`` False: never cleaned (then cost and duration
    are the default's, or 0, and unused)."""

    cost: float
    duration_steps: int
    allowed: bool = True


class FurnaceLimit(NamedTuple):
    """A fired heater's largest duty (kW), the key path of the flow (kg/s) cut to stay within
    it, and the value of a tonne of throughput not processed (in the economics' currency)."""

    heater: str
    maximum_duty: float
    throughput: str
    lost_value: float


@dataclass
class ScheduleFile:
    """A checked schedule file (see the module notes). ``operation``: (from, {key path: value in
    the default unit}) in date order; ``economics``: fuel_price (per GJ of fuel), currency,
    furnace_efficiency, co2_per_fuel (kg/GJ), co2_price (per tonne); ``cleaning``: terms of every
    exchanger whose fouling can change (a law here, or any that takes fouling when
    ``monitoring_file`` is given); ``not_allowed``: (first_step, last_step, why), inclusive step
    indices; ``baselines``: fixed_intervals (whole steps, ascending) and fouling_threshold
    (exchanger -> m²·K/W: the file's value, or the case's fouling of each);
    ``new_limits_allowed`` (``cleaning.allow_new_limit_violations``, default false): whether a plan
    may violate a limit at a step where the train with no cleaning does not; ``network``: the case
    as built by ``build_network(case)``."""

    file: str
    title: str
    case: Case
    start: pd.Timestamp
    step: pd.Timedelta
    steps: int
    fouling: dict[str, FoulingLaw]
    monitoring_file: Path | None
    operation: list[tuple[pd.Timestamp, dict[str, float]]]
    economics: dict
    cleaning: dict[str, CleaningTerms]
    at_most_at_once: int
    not_allowed: list[tuple[int, int, str]]
    furnace: FurnaceLimit | None
    baselines: dict
    new_limits_allowed: bool = False
    beyond_horizon: list = field(default_factory=list)
    """What the file gives for times the horizon does not reach, left out and said in the report
    (key path, what): closed periods, operating changes, fixed intervals. A horizon shortened to
    try a plan had been refused until each was taken out."""
    lines: dict[tuple, int] = field(default_factory=dict, repr=False)
    network: Network | None = field(default=None, repr=False)

    @property
    def end(self) -> pd.Timestamp:
        """The end of the last step (the first moment after the horizon)."""
        return self.start + self.steps * self.step

    def step_of(self, when) -> int:
        """Index of the step holding the moment ``when`` (negative before the start)."""
        return int((pd.Timestamp(when) - self.start) // self.step)

    def error(self, path, message) -> CaseError:
        """A CaseError at key path ``path`` of the schedule file, with its line."""
        return Document(None, self.file, self.lines).error(tuple(path), message)


def steps_covering(duration: pd.Timedelta, step: pd.Timedelta) -> int:
    """Whole steps a cleaning of ``duration`` occupies: rounded up (exact in nanoseconds).

    >>> week = pd.Timedelta(weeks=1)
    >>> steps_covering(pd.Timedelta(days=10), week), steps_covering(pd.Timedelta(days=14), week)
    (2, 2)
    """
    return int(-(-duration // step))


def parameter_kind(model: str, name: str) -> q.Kind:
    """The kind of quantity of a fouling model's parameter: the model's unit as the default unit
    (a temperature in a compound unit read as a difference, as everywhere in case files) and the
    bounds of its table as the plausible range."""
    found = {p.name: p for p in MODELS[model].parameters}[name]
    unit = "dimensionless" if found.unit == "-" else found.unit.replace("m2", "m^2").replace(".", "*")
    unit = unit.replace("K", "delta_degC") if unit != "K" else unit
    low, high = found.bounds
    shown = q.Kind("", unit, "").shown_unit
    return q.Kind(f"a value of {name}", unit, f"a number in {shown or 'no unit'}, or text with units", low=low,
                  high=high, basis=f"bounds of the {model} model: hxtrain.units.fouling_models")


def lumped_fouling(spec) -> float:
    """An exchanger spec's fouling as one resistance on the outside area, m²·K/W (the tube side
    counts times D_o/D_i, :func:`hxtrain.units.resistances.overall_coefficient`)."""
    sides = spec.fouling
    return float(sides.get("shell", 0.0) + sides.get("tube", 0.0) * getattr(spec.thermal, "diameter_ratio", 1.0))


def load_schedule(path) -> ScheduleFile:
    """Read, parse and check a schedule file; raises :class:`CaseError` on any bad input."""
    return schedule_from_document(read_document(path), Path(path).parent)


def schedule_from_mapping(data, file="<schedule>", folder=".") -> ScheduleFile:
    """Check a schedule file given as plain Python data; relative paths start at ``folder``."""
    return schedule_from_document(Document(data, str(file)), Path(folder))


def schedule_from_document(doc: Document, folder: Path) -> ScheduleFile:
    top = Fields(doc, (), doc.data, "a mapping at the top level (case, start, horizon, fouling, cleaning, ...)")
    refuse_other_kind(doc, "schedule file")
    top.allowed.update(TOP_KEYS)
    top.finish()
    top.text("description")
    case = read_base_case(top, folder)
    net = build_network(case)
    start = read_timestamp(top, "start")
    step, steps = _horizon(top)
    laws, monitoring = _fouling(top, case, folder)
    cleanable = [t for t, data in case.exchangers.items() if t in laws or (monitoring and data["spec"].fouling)]
    cleaning = top.mapping("cleaning", required=True, what="a mapping with default, exchangers, at_most_at_once, ...")
    beyond = []
    terms = _cleaning_terms(cleaning, case, cleanable, step, steps, beyond)
    at_most = cleaning.integer("at_most_at_once", DEFAULT_AT_MOST_AT_ONCE, 1, 1000)
    new_limits_allowed = cleaning.flag("allow_new_limit_violations", False)
    not_allowed = _not_allowed(cleaning, start, step, steps, beyond)
    cleaning.finish()
    return ScheduleFile(
        file=doc.file, title=top.text("title", default="") or "", case=case, start=start, step=step, steps=steps,
        fouling=laws, monitoring_file=monitoring,
        operation=_operation(top, net, laws, monitoring, start, step * steps, beyond),
        economics=read_economics(top.mapping("economics", required=True)), cleaning=terms, at_most_at_once=at_most,
        not_allowed=not_allowed, furnace=_furnace(top, case, net),
        baselines=_baselines(top, step, steps, {t: lumped_fouling(case.exchangers[t]["spec"]) for t in cleanable},
                             beyond),
        new_limits_allowed=new_limits_allowed, beyond_horizon=beyond, lines=doc.lines, network=net)


# ----------------------------------------------------------------------------- sections


def _day(when: pd.Timestamp) -> str:
    return str(when.date()) if when == when.normalize() else str(when)


def _horizon(top: Fields) -> tuple[pd.Timedelta, int]:
    top.raw("horizon")  # required (with the misspelling hint)
    step = read_duration(top, "step", DEFAULT_STEP)
    steps = whole_steps(top, "horizon", read_duration(top, "horizon", None), step, step_key="step")
    if steps > MAX_STEPS:
        raise top.error("horizon", f"{steps:,} steps of {shown_duration(step)}: more than the {MAX_STEPS} the optimiser "
                                   "plans (its cycle MILP grows with the square of the steps); use a longer step or a "
                                   "shorter horizon")
    return step, steps


def _nearest_steps(interval: pd.Timedelta, step: pd.Timedelta) -> int:
    return max(1, int(interval / step + 0.5))  # half up, at least one step (the defaults only)


def _unit_in(case: Case, tag, section: str, fail):
    """The entry of unit ``tag`` of ``section``; ``fail`` (a message -> CaseError) otherwise."""
    word = {s.name: s.word for s in UNIT_SECTIONS}
    if not isinstance(tag, str) or tag not in case.keys:
        raise fail(f"no {word[section]} {shorten(tag)} in the case{nearest(tag, case.section(section))}")
    if case.section_of(tag) != section:
        found, wanted = word[case.section_of(tag)], word[section]
        raise fail(f"{tag} is a{'n' * (found[0] in 'aeiou')} {found} in the case, not a{'n' * (wanted[0] in 'aeiou')} "
                   f"{wanted}")
    return case.section(section)[tag]


def _fouling(top: Fields, case: Case, folder: Path) -> tuple[dict, Path | None]:
    f = top.mapping("fouling", required=True, what="a mapping with from_monitoring and/or exchangers")
    monitoring = _monitoring(f, case, folder) if f.has("from_monitoring") else None
    laws = {}
    for tag, e in f.named_entries("exchangers", "exchanger tags to their fouling models"):
        spec = _unit_in(case, tag, "exchangers", error_at(e, None))["spec"]
        if not spec.fouling:
            raise e.error(None, f"{tag}'s U takes no fouling (it is given by 'ua' or 'u'): a fouling model needs U "
                                "from 'clean_u', 'film' or 'geometry' in the case")
        laws[tag] = _law(e, spec, measured_later=monitoring is not None)
    if monitoring is None and not laws:
        raise f.error(None, "give 'from_monitoring' (models fitted to plant data), 'exchangers' (models written "
                            "here), or both")
    f.finish()
    return laws, monitoring


def _monitoring(f: Fields, case: Case, folder: Path) -> Path:
    raw = f.text("from_monitoring", required=True)
    path = relative_path(folder, raw)
    if not raw.strip() or not path.is_file():
        missing = raw.strip() and not path.exists()
        raise f.error("from_monitoring", f"the monitoring file {shorten(str(path))} does not exist" if missing
                      else f"expected a monitoring file's path, got {shorten(raw)}")
    try:
        monitored = load_monitoring(path).case.file
    except CaseError as exc:
        raise f.error("from_monitoring", f"the monitoring file does not load: {exc.describe()}") from None
    if Path(monitored).resolve() != Path(case.file).resolve():
        raise f.error("from_monitoring", f"{path.name} monitors the case {monitored}, not this schedule's case "
                                         f"{case.file}: its fitted models belong to another train")
    return path


def _law(e: Fields, spec, measured_later=False) -> FoulingLaw:
    """The law written at ``e``. Without ``initial`` it starts from the case's fouling, unless
    ``measured_later`` (the schedule has plant data, whose fouling now is the start: its check
    against an asymptote waits for it)."""
    name = e.choice("model", tuple(MODELS))
    for condition in MODELS[name].conditions:
        if condition.name in e.value:
            raise e.error(condition.name, f"'{condition.name}' ({condition.meaning}) is a condition the network "
                                          "sets at each step, not a parameter of the file")
    parameters = {p.name: e.quantity(p.name, parameter_kind(name, p.name), required=p.name != "r_f0", default=0.0)
                  for p in MODELS[name].parameters}
    written = e.has("initial")
    initial = e.quantity("initial", q.FOULING, required=False, default=lumped_fouling(spec))
    problem = asymptote_problem(name, parameters, initial, "initial" if written else
                                "the case's fouling (the default initial)")
    if problem and (written or not measured_later):
        raise e.error("r_inf", problem)
    e.text("description")
    e.finish()
    return FoulingLaw(name, parameters, initial, written)


def asymptote_problem(model: str, parameters: dict, initial: float, start: str) -> str | None:
    """Why an asymptotic law cannot start at ``initial`` (called ``start`` in the message), or
    None: its start must not lie above its asymptote r_f0 + r_inf; the usual slip is writing the
    asymptote itself as r_inf, which is the rise above r_f0."""
    if model != "asymptotic":
        return None
    r_f0, r_inf = parameters["r_f0"], parameters["r_inf"]
    if initial <= (r_f0 + r_inf) * (1.0 + 1e-12):
        return None
    return (f"{start} {initial:.4g} m²·K/W lies above the asymptote r_f0 + r_inf = {r_f0:.4g} + {r_inf:.4g} = "
            f"{r_f0 + r_inf:.4g} m²·K/W (all in m²·K/W, whatever units the file used): r_inf is the rise above "
            f"r_f0, not the asymptote itself (an asymptote of {initial:.4g} or more needs r_inf >= "
            f"{initial - r_f0:.4g} m²·K/W)")


def _cleaning_terms(f: Fields, case: Case, cleanable: list, step, steps, beyond: list) -> dict:
    """Each cleanable exchanger's terms: its own entry, else the default. A cleaning longer than
    the horizon cannot be planned: that exchanger is never cleaned, and ``beyond`` says so (a
    horizon shortened to try a plan is not refused for it)."""
    default = _terms(f.mapping("default", what="{cost, duration}"), None, step) if f.has("default") else None
    terms, where = {}, {}
    for tag, e in f.named_entries("exchangers", "exchanger tags to their cleaning terms"):
        spec = _unit_in(case, tag, "exchangers", error_at(e, None))["spec"]
        if tag not in cleanable:
            why = ("its U takes no fouling (given by 'ua' or 'u')" if not spec.fouling else
                   "it has no fouling model (fouling.exchangers) and there is no from_monitoring: its fouling stays "
                   "as the case gives it")
            raise e.error(None, f"cleaning {tag} changes nothing: {why}")
        terms[tag] = _terms(e, default, step)
        where[tag] = e.path + ("duration",) if e.has("duration") else None
    missing = [t for t in cleanable if t not in terms]
    if missing and default is None:
        raise f.error(None, f"no cleaning terms for {', '.join(missing)}: give 'default' ({{cost, duration}}) or an "
                            "entry under 'exchangers' for each")
    chosen = {t: terms.get(t, default) for t in cleanable}
    too_long = {tag: t for tag, t in chosen.items() if t.allowed and t.duration_steps > steps}
    for tag, t in too_long.items():
        chosen[tag] = t._replace(allowed=False)
        key = where.get(tag) or f.path + ("default", "duration")
        if not any(c.allowed for c in chosen.values()):  # nothing left to plan: refused at this one's key
            raise f.doc.error(key, f"a cleaning of {counted(t.duration_steps, 'step')} of {shown_duration(step)} (its "
                                   f"duration rounded up to whole steps) does not fit in the horizon of "
                                   f"{counted(steps, 'step')}, nor does any other exchanger's: no plan could clean "
                                   "anything")
        beyond.append((format_path(key), f"{tag}'s cleaning, {counted(t.duration_steps, 'step')} of "
                                         f"{shown_duration(step)} (rounded up to whole steps): never cleaned"))
    return chosen


def _terms(f: Fields, default: CleaningTerms | None, step) -> CleaningTerms:
    allowed = f.flag("allowed", True)
    cost = read_quantity(f, "cost", q.NUMBER, required=allowed and default is None, minimum=0.0)
    if allowed and (default is None or not default.duration_steps):
        f.raw("duration")  # required (with the misspelling hint)
    duration = read_duration(f, "duration", None)
    f.text("description")
    f.finish()
    fallback = default or CleaningTerms(0.0, 0, allowed)
    count = fallback.duration_steps if duration is None else steps_covering(duration, step)
    return CleaningTerms(fallback.cost if cost is None else cost, count, allowed)


def _not_allowed(f: Fields, start, step, steps, beyond: list) -> list:
    raw = f.raw("not_allowed", required=False)
    if raw is None:
        return []
    if not isinstance(raw, list):
        raise f.error("not_allowed", f"expected a list of periods {{from: DATE, to: DATE, why: TEXT}}, got "
                                     f"{describe(raw)}")
    end, periods = start + steps * step, []
    for i, item in enumerate(raw):
        p = Fields(f.doc, f.path + ("not_allowed", i), item, "a period: {from: DATE, to: DATE, why: TEXT}")
        begin, until = read_timestamp(p, "from"), read_timestamp(p, "to")
        if until < begin:
            raise p.error("to", f"the period ends ({_day(until)}) before it begins ({_day(begin)})")
        stop = until + DAY if until == until.normalize() else until  # a date: to the end of that day
        if stop <= start or begin >= end:  # it forbids nothing
            beyond.append((format_path(p.path), f"no cleaning from {_day(begin)} to {_day(until)}"))
            p.text("why", default="")
            p.finish()
            continue
        first, last = max(0, (begin - start) // step), min(steps - 1, -(-(stop - start) // step) - 1)
        periods.append((int(first), int(last), p.text("why", default="") or ""))
        p.finish()
    return periods


def _operation(top: Fields, net: Network, laws: dict, monitoring, start, horizon, beyond: list) -> list:
    raw = top.raw("operation", required=False)
    if raw is None:
        return []
    if not isinstance(raw, list) or not raw:
        raise top.error("operation", f"expected a list of {{from: DATE, set: {{KEY PATH: VALUE}}}}, got "
                                     f"{describe(raw)}")
    entries = []
    for i, item in enumerate(raw):
        f = Fields(top.doc, ("operation", i), item, "an operating period: {from: DATE, set: {KEY PATH: VALUE}}")
        when = read_timestamp(f, "from")
        if when < start:
            raise f.error("from", f"{_day(when)} lies outside the horizon ({start.date()} to "
                                  f"{(start + horizon - DAY).date()}): the operation at the start is the case's own")
        if entries and when <= entries[-1][0]:
            raise f.error("from", f"{_day(when)} is not after the previous entry's {_day(entries[-1][0])}: entries go "
                                  "in date order, each from a later date")
        s = f.mapping("set", required=True, what="a mapping of key paths to values, e.g. {streams.crude.flow: 320 t/h}")
        if not s.value:
            raise f.error("set", "expected at least one key path and its value, got an empty mapping")
        values = {}
        for path, value in s.value.items():
            s.allowed.add(path)
            values[path] = _operating_value(s, path, value, net, laws, monitoring)
        f.text("description")
        f.finish()
        if when >= start + horizon:
            beyond.append((format_path(f.path), f"the operation set from {_day(when)}"))
            continue
        entries.append((when, values))
    return entries


def _variable(net: Network, path, where) -> q.Kind:
    """The kind of a key path a scenario may vary (its parameter's bounds lie within the kind's
    plausible range); a CaseError at ``where`` otherwise."""
    try:
        unit_parameter(net, path)
        return key_kind(path, where)
    except CaseError as exc:
        raise CaseError(exc.message, path=exc.path or where) from None


def _operating_value(s: Fields, path, value, net, laws, monitoring) -> float:
    where = s.path + (path,)
    try:
        number = study_number(value, _variable(net, path, where), where)
    except CaseError as exc:
        raise s.doc.error(exc.path, exc.message) from None
    parts = path.split(".")
    if parts[0] == "exchangers" and parts[2] == "fouling" and (parts[1] in laws or monitoring):
        raise s.error(path, f"{parts[1]}'s fouling follows its fouling law in this schedule; the operating plan "
                            "cannot set it as well")
    return number


def _furnace(top: Fields, case: Case, net: Network) -> FurnaceLimit | None:
    f = top.mapping("furnace", what="a mapping with heater, maximum_duty, throughput and lost_throughput_value")
    if f is None:
        return None
    heater = f.text("heater", required=True)
    source = _unit_in(case, heater, "heaters", error_at(f, "heater"))["heat_source"]
    if source != "fired":
        raise f.error("heater", f"{heater} is heated by {source}, not fired: the furnace limit is a fired heater's")
    maximum = read_quantity(f, "maximum_duty", q.DUTY, required=True, above=0.0)
    throughput = f.text("throughput", required=True)
    try:
        kind = _variable(net, throughput, f.path + ("throughput",))
    except CaseError as exc:
        raise f.error("throughput", exc.message) from None
    if kind is not q.MASS_FLOW:
        raise f.error("throughput", f"'{throughput}' is {kind.name}, not a mass flow: the throughput cut to meet the "
                                    "limit is a flow such as streams.crude.flow")
    lost = read_quantity(f, "lost_throughput_value", q.NUMBER, required=True, minimum=0.0)
    f.finish()
    return FurnaceLimit(heater, maximum, throughput, lost)


def _baselines(top: Fields, step, steps, design: dict, beyond: list) -> dict:
    f = top.mapping("baselines", what="a mapping with fixed_intervals and fouling_threshold")
    raw = None if f is None else f.raw("fixed_intervals", required=False)
    left_out = []  # default intervals not shorter than the horizon: the report says so
    if raw is None:
        intervals = [_nearest_steps(d, step) for d in DEFAULT_FIXED_INTERVALS if d < step * steps]
        left_out = [d for d in DEFAULT_FIXED_INTERVALS if d >= step * steps]
    elif not isinstance(raw, list) or not raw:
        raise f.error("fixed_intervals", f"expected a list of durations such as [26 weeks, 52 weeks], got "
                                         f"{describe(raw)}")
    else:
        items = Fields(f.doc, f.path + ("fixed_intervals",), dict(enumerate(raw)))
        intervals = []
        for i in items.value:
            interval = read_duration(items, i, None)
            if interval is None:
                raise items.error(i, f"expected a duration such as 26 weeks, got {describe(raw[i])}")
            if interval >= step * steps:  # no cleaning within the horizon: the same as no cleaning
                beyond.append((format_path(items.path + (i,)), f"a fixed interval of {shown_duration(interval)}"))
                continue
            intervals.append(whole_steps(items, i, interval, step))
    threshold = None if f is None else read_quantity(f, "fouling_threshold", q.FOULING, above=0.0)
    if f is not None:
        f.finish()
    return {"fixed_intervals": sorted(set(intervals)), "intervals_left_out": left_out,
            "fouling_threshold": {t: design[t] if threshold is None else threshold for t in design}}
