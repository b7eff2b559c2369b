"""Monitoring files: how a plant's historian tags map onto a case, read and checked key by key.

A monitoring file (YAML, keys of our own) names the base case, the historian export (CSV or
XLSX), the averaging window and the steady-state test, and maps each tag to what it measures:

.. code-block:: yaml

    case: crude_preheat.yaml          # relative to this file, or {demo: crude_preheat}
    data: crude_history.csv           # relative to this file (.csv or .xlsx)
    window: 1 day
    tags:
      FI-1001: {flow: crude, unit: t/h}
      TI-1011: {temperature: E-101.cold_out, unit: degF, uncertainty: 0.9 degF}
      JI-1201: {duty: F-101, unit: MW, uncertainty: 3 %}

A tag measures a ``temperature`` or a ``flow`` at a point (a stream segment: see
:func:`resolve_point`), or the ``duty`` of a heater or cooler named by its tag. Its ``unit`` is
the unit of the historian's numbers and must fit the quantity. Uncertainties are ONE standard
deviation, absolute ("0.5", "1 K", "0.9 degF": a temperature *difference*; a bare number is in
the default unit K, kg/s or kW, as everywhere in case files) or relative ("2 %" of the reading),
per tag or per instrument kind (``uncertainty:`` at the top), with the defaults below. The
uncertainty is that of the instrument's error in a window MEAN (its accuracy: a calibration error
does not average out over a window); where the readings inside a window scatter more than that,
the window uses the larger scatter (:mod:`hxtrain.solver.monitoring.windows`).

Times are ISO 8601 (2026-03-14, 2026-03-14 06:00, with or without seconds, 'T' allowed), without
a time-zone offset, unless ``time_format`` gives the data's format in strftime codes (such as
'%d/%m/%Y %H:%M'): 04/01/2026 is April to some and January to others, so a day-first or other
form is never guessed. The projection's horizon is a whole number of its steps.

Every key is read through :class:`~.fields.Fields` (unknown keys refused with the nearest known
one), and every error names the monitoring file, the key path and the line; errors inside the
case name the case file. Units follow :mod:`.quantities`, with one addition for the trade's fuel
and duty unit: "MMBtu" is a million Btu; "MBtu" (a thousand to some, a million to others) is
refused as ambiguous.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from typing import Callable, NamedTuple

import pandas as pd

from . import quantities as q
from .case import Case, load_case
from .demos import DEMO_CASES, demo_case_path
from .errors import CaseError
from .fields import Fields, describe, nearest
from .graph import Network, build_network
from .measurement_points import (DUTY_PARAMETERS, QUANTITIES, Tag, read_uncertainty, resolve_duty_unit,
                                 resolve_point, unit_conversion, unit_points)
from .quantities import shorten
from .reading import Document, read_document, refuse_other_kind

__all__ = ["MonitoringFile", "Tag", "SteadyState", "Projection", "load_monitoring", "monitoring_from_mapping",
           "monitoring_from_document", "resolve_point", "resolve_duty_unit", "unit_points", "unit_conversion",
           "read_uncertainty", "QUANTITIES", "DUTY_PARAMETERS"]

# ----------------------------------------------------------------------------- defaults and their basis
DEFAULT_TIME_COLUMN = "time"
DEFAULT_WINDOW = pd.Timedelta(days=1)
"""Daily averages: the usual resolution of fouling monitoring, whose trends run over weeks and
months, while a day averages out control-loop swings (common practice)."""
DEFAULT_FLOW_CHANGE = 0.03
"""A window is transient when a flow moves by more than 3 % of its mean (common practice)."""
DEFAULT_TEMPERATURE_CHANGE = 3.0
"""... or a temperature by more than 3 K (common practice)."""
DEFAULT_MINIMUM_SAMPLES = 1
DEFAULT_CONFIDENCE = 0.95
"""How sure the instrument's noise must leave us that a drift exceeds its threshold before the
window is set aside as transient: one-sided 95 %, the usual level (common practice)."""
DEFAULT_UNCERTAINTY = {"temperature": (1.0, None), "flow": (None, 0.02), "duty": (None, 0.05)}
"""(absolute sigma, relative sigma) per instrument kind, one standard deviation: thermocouples and
RTDs in service 1 K; orifice and other differential-pressure flow meters 2 % of reading; a heater
duty from fuel metering times an efficiency 5 % of reading (all common practice)."""
DEFAULT_SIGNIFICANCE = 0.05
"""Of the gross-error tests: the usual level of the global and measurement tests (common practice)."""
MAX_SIGNIFICANCE = 0.5
DEFAULT_HORIZON = pd.Timedelta(weeks=26)  # 26 whole steps of the default week
DEFAULT_STEP = pd.Timedelta(days=7)
"""Projection: half a year ahead in weekly steps, the span of cleaning planning (common practice)."""
DEFAULT_FURNACE_EFFICIENCY = 0.85
"""Fired duty over fuel energy (LHV basis): refinery fired heaters run about 0.80-0.92 (common
practice)."""
DEFAULT_CO2_PER_FUEL = 56.1
"""kg CO2 per GJ of fuel: the IPCC 2006 default for natural gas (from memory)."""
DEFAULT_CO2_PRICE = 0.0
"""No carbon price unless the file gives one."""
DATA_SUFFIXES = (".csv", ".xlsx")
TOP_KEYS = ("title", "description", "case", "data", "time_column", "time_format", "window", "steady_state",
            "uncertainty", "tags", "cleanings", "economics", "limits", "projection", "significance")
ISO_TIME = re.compile(r"\d{4}-\d{2}-\d{2}(?:[ T]\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?)?")
"""A date or time as ISO 8601 writes it, without an offset (matched whole, after stripping)."""
ISO_EXAMPLE = "an ISO date such as 2026-03-14 (YYYY-MM-DD; a time as '2026-03-14 06:00' if needed)"
FORMAT_SAMPLE = datetime(2026, 3, 14, 6, 30, 15)
"""A moment every date code can write distinctly (day 14 > 12): a time_format must read it back."""


class SteadyState(NamedTuple):
    flow_change: float = DEFAULT_FLOW_CHANGE
    """Fraction of a flow tag's mean."""
    temperature_change: float = DEFAULT_TEMPERATURE_CHANGE
    """K."""
    minimum_samples: int = DEFAULT_MINIMUM_SAMPLES
    confidence: float = DEFAULT_CONFIDENCE
    """0.5 to below 1: the drift less its standard error (from the tag's noise, pooled over the
    data) times the one-sided normal quantile at this level must exceed the threshold; 0.5
    compares the drift itself (see :mod:`hxtrain.solver.monitoring.windows`)."""


class Projection(NamedTuple):
    horizon: pd.Timedelta = DEFAULT_HORIZON
    step: pd.Timedelta = DEFAULT_STEP


@dataclass
class MonitoringFile:
    """A checked monitoring file. ``cleanings`` is a list of (exchanger, time), sorted by time;
    ``economics`` None or a dict (fuel_price per GJ of fuel and co2_price per tonne, both in
    ``currency``; furnace_efficiency; co2_per_fuel kg/GJ); ``limits`` a dict of
    ``fired_duty`` (kW) and ``inlet_temperature`` (°C), each heater tag -> value; ``projection``
    None or (horizon, step), the horizon a whole number of steps; ``network`` the case as built
    by ``build_network(case)``, which the tags' ``segment`` indices refer to; ``time_format``
    strftime codes of the data's times (None: ISO 8601); ``cleaning_keys`` (exchanger, time) of
    each cleaning -> its key path in the file."""

    file: str
    title: str
    case: Case
    data_path: Path
    time_column: str
    window: pd.Timedelta
    steady_state: SteadyState
    tags: dict[str, Tag]
    cleanings: list[tuple[str, pd.Timestamp]]
    economics: dict | None
    limits: dict
    projection: Projection | None
    significance: float
    lines: dict[tuple, int] = field(default_factory=dict, repr=False)
    network: Network | None = field(default=None, repr=False)
    time_format: str | None = None
    """strftime codes of the data's times; None: ISO 8601."""
    cleaning_keys: dict = field(default_factory=dict, repr=False)
    """(exchanger, time) of each cleaning -> its key path in the file (for messages)."""

    def error(self, path, message) -> CaseError:
        """A CaseError at key path ``path`` of the monitoring file, with its line."""
        return Document(None, self.file, self.lines).error(tuple(path), message)

    def tags_of(self, quantity: str) -> list[Tag]:
        return [t for t in self.tags.values() if t.quantity == quantity]


def load_monitoring(path) -> MonitoringFile:
    """Read, parse and check a monitoring file; raises :class:`CaseError` on any bad input."""
    return monitoring_from_document(read_document(path), Path(path).parent)


def monitoring_from_mapping(data, file="<monitoring>", folder=".") -> MonitoringFile:
    """Check a monitoring file given as plain Python data; relative paths start at ``folder``."""
    return monitoring_from_document(Document(data, str(file)), Path(folder))


def monitoring_from_document(doc: Document, folder: Path) -> MonitoringFile:
    top = Fields(doc, (), doc.data, "a mapping at the top level (case, data, tags, ...)")
    refuse_other_kind(doc, "monitoring file")
    top.allowed.update(TOP_KEYS)
    top.finish()
    case = read_base_case(top, folder)
    net = build_network(case)
    data = top.text("data", required=True)
    if not data.strip():
        raise top.error("data", "expected the historian export's file name (.csv or .xlsx), got empty text")
    data_path = relative_path(folder, data)
    if data_path.suffix.lower() not in DATA_SUFFIXES:
        hint = ": save the workbook as .xlsx" if data_path.suffix.lower() == ".xls" else ""
        raise top.error("data", f"expected a .csv or .xlsx file, got {shorten(data)}{hint}")
    time_column = top.text("time_column", default=DEFAULT_TIME_COLUMN)
    if not time_column.strip():
        raise top.error("time_column", "expected the name of the data's time column, got empty text")
    window = read_duration(top, "window", DEFAULT_WINDOW)
    tags = _tags(top, net, _default_uncertainties(top.mapping("uncertainty")), time_column)
    projection = None
    if top.has("projection"):
        f = top.mapping("projection")
        step = read_duration(f, "step", DEFAULT_STEP)
        horizon = read_duration(f, "horizon", DEFAULT_HORIZON)
        projection = Projection(step * whole_steps(f, "horizon", horizon, step, step_key="step"), step)
        f.finish()
    significance = read_quantity(top, "significance", q.FRACTION, default=DEFAULT_SIGNIFICANCE, above=0.0)
    if significance > MAX_SIGNIFICANCE:
        raise top.error("significance", f"{significance:g} is above {MAX_SIGNIFICANCE}: a test that fails good "
                                        "data more often than not (0.05 is usual)")
    cleaning_keys = _cleanings(top, case)
    return MonitoringFile(
        file=doc.file, title=top.text("title", default="") or "", case=case, data_path=data_path,
        time_column=time_column, window=window, steady_state=_steady_state(top.mapping("steady_state")), tags=tags,
        cleanings=sorted(cleaning_keys, key=lambda c: (c[1], c[0])), economics=read_economics(top.mapping("economics")),
        limits=_limits(top.mapping("limits"), net), projection=projection, significance=significance,
        lines=doc.lines, network=net, time_format=_time_format(top), cleaning_keys=cleaning_keys)


# ----------------------------------------------------------------------------- sections


def relative_path(folder: Path, text: str) -> Path:
    path = Path(text)
    return path if path.is_absolute() else folder / path


def read_base_case(top: Fields, folder: Path) -> Case:
    raw = top.raw("case")
    if isinstance(raw, dict):
        demo = Fields(top.doc, ("case",), raw)
        path = demo_case_path(demo.choice("demo", DEMO_CASES))
        demo.finish()
    elif isinstance(raw, str) and raw.strip():
        path = relative_path(folder, raw)
    else:
        raise top.error("case", f"expected the case file's path (relative to this file) or {{demo: NAME}}, "
                                f"got {describe(raw)}")
    if not path.is_file():
        raise top.error("case", f"the case file {path} does not exist" if not path.exists()
                        else f"{path} is not a case file (a directory?)")
    return load_case(path)  # its errors name the case file


def _default_uncertainties(f: Fields | None) -> dict:
    if f is None:
        return dict(DEFAULT_UNCERTAINTY)
    result = {kind: read_uncertainty(f, kind, kind, DEFAULT_UNCERTAINTY[kind]) for kind in QUANTITIES}
    f.finish()
    return result


def _steady_state(f: Fields | None) -> SteadyState:
    if f is None:
        return SteadyState()
    result = SteadyState(
        read_quantity(f, "flow_change", q.FRACTION, default=DEFAULT_FLOW_CHANGE, above=0.0),
        read_quantity(f, "temperature_change", q.TEMPERATURE_DIFFERENCE, default=DEFAULT_TEMPERATURE_CHANGE, above=0.0),
        f.integer("minimum_samples", DEFAULT_MINIMUM_SAMPLES, 1, 1_000_000),
        read_quantity(f, "confidence", q.FRACTION, default=DEFAULT_CONFIDENCE, minimum=0.5))
    if result.confidence >= 1.0:
        raise f.error("confidence", f"{result.confidence:g} must be below 1: at full confidence no drift could be "
                                    "shown to exceed its threshold (0.5 compares the drift itself)")
    f.finish()
    return result


def _tags(top: Fields, net: Network, defaults: dict, time_column: str) -> dict[str, Tag]:
    entries = top.named_entries("tags", "tag names to what they measure")
    if not entries:
        raise top.doc.error(("tags",), "the monitoring file maps no tags: add 'tags', e.g. "
                                       "FI-1001: {flow: crude, unit: t/h}")
    tags: dict[str, Tag] = {}
    columns: dict[str, str] = {}
    for name, f in entries:
        quantity = _measured_quantity(f)
        fail = error_at(f, quantity)
        point = f.text(quantity, required=True)
        segment = None
        if quantity == "duty":
            resolve_duty_unit(net, point, fail)
        else:
            segment = resolve_point(net, point, fail)
        unit = f.raw("unit")
        try:
            scale, offset = unit_conversion(unit, quantity)
        except q.QuantityError as exc:
            raise f.error("unit", str(exc)) from None
        sigma, relative = read_uncertainty(f, "uncertainty", quantity, defaults[quantity])
        column = f.text("column", default=name)
        if not column.strip():
            raise f.error("column", "expected the data column's name, got empty text")
        if column in columns or column == time_column:
            other = f"tag {columns[column]}" if column in columns else "the time"
            raise f.error("column", f"column {column!r} already holds {other}; each tag needs a column of its own")
        columns[column] = name
        f.text("description")
        f.finish()
        tags[name] = Tag(name, quantity, point, unit, sigma, relative, f.path, column, segment, scale, offset)
    return tags


def _measured_quantity(f: Fields) -> str:
    given = [k for k in QUANTITIES if f.has(k)]
    if len(given) == 1:
        return given[0]
    raise f.one_of_error(QUANTITIES, f"give exactly one of {', '.join(QUANTITIES)} (what the tag measures, and where); "
                        f"got {', '.join(given) if given else 'none'}")


def _cleanings(top: Fields, case: Case) -> dict:
    """(exchanger, time) -> key path of each logged cleaning."""
    raw = top.raw("cleanings", required=False)
    if raw is None:
        return {}
    if not isinstance(raw, list):
        raise top.error("cleanings", f"expected a list of {{exchanger: TAG, date: YYYY-MM-DD}}, got {describe(raw)}")
    seen = {}
    for i, item in enumerate(raw):
        f = Fields(top.doc, ("cleanings", i), item, "a cleaning: {exchanger: TAG, date: YYYY-MM-DD}")
        tag = f.text("exchanger", required=True)
        if tag not in case.exchangers:
            raise f.error("exchanger", f"no exchanger {shorten(tag)} in the case{nearest(tag, case.exchangers)}")
        when = read_timestamp(f, "date")
        if (tag, when) in seen:
            raise f.error(None, f"the cleaning of {tag} on {when} is listed twice (also at "
                                f"cleanings[{seen[tag, when]}])")
        seen[tag, when] = i
        f.text("description")
        f.finish()
    return {cleaning: ("cleanings", i, "date") for cleaning, i in seen.items()}


def _time_format(top: Fields) -> str | None:
    """The data's time format in strftime codes: it must write a date (year, month and day) that
    it reads back, and carry no time zone (times are the plant's clock)."""
    text = top.text("time_format")
    if text is None:
        return None
    example = "strftime codes such as '%d/%m/%Y %H:%M' (day/month/year hour:minute)"
    if re.search(r"%[zZ]", text):
        raise top.error("time_format", f"{shorten(text)}: times are read as the plant's clock shows them, without a "
                                       "time zone; leave out %z and %Z (and export the times without an offset)")
    try:
        read_back = datetime.strptime(FORMAT_SAMPLE.strftime(text), text)
    except ValueError:
        read_back = None
    if read_back is None or read_back.date() != FORMAT_SAMPLE.date():
        raise top.error("time_format", f"expected {example} that write and read back a whole date; got {shorten(text)}")
    return text


def read_economics(f: Fields | None) -> dict | None:
    if f is None:
        return None
    result = {
        "fuel_price": read_quantity(f, "fuel_price", q.NUMBER, required=True, minimum=0.0, per="GJ of fuel"),
        "currency": f.text("currency", required=True),
        "furnace_efficiency": read_quantity(f, "furnace_efficiency", q.FRACTION, default=DEFAULT_FURNACE_EFFICIENCY,
                                        above=0.0),
        "co2_per_fuel": read_quantity(f, "co2_per_fuel", q.EMISSION_FACTOR, default=DEFAULT_CO2_PER_FUEL),
        "co2_price": read_quantity(f, "co2_price", q.NUMBER, default=DEFAULT_CO2_PRICE, minimum=0.0,
                                   per="tonne of CO2"),
    }
    if not result["currency"].strip() or len(result["currency"]) > 12:
        raise f.error("currency", f"expected a currency's short name such as USD or EUR, got "
                                  f"{shorten(result['currency'])}")
    f.finish()
    return result


def _limits(f: Fields | None, net: Network) -> dict:
    limits = {"fired_duty": {}, "inlet_temperature": {}}
    if f is None:
        return limits
    for key, kind in (("fired_duty", q.DUTY), ("inlet_temperature", q.TEMPERATURE)):
        section = f.mapping(key, what="a mapping of heater tags to their limit")
        for unit in list(section.value) if section is not None else ():
            resolve_duty_unit(net, unit, error_at(section, unit), word="heater")
            limits[key][unit] = read_quantity(section, unit, kind, required=True, above=0.0 if kind is q.DUTY else None)
        if section is not None:
            section.finish()
    f.finish()
    return limits


# ----------------------------------------------------------------------------- values


def error_at(f: Fields, key) -> Callable[[str], CaseError]:
    return lambda message: f.error(key, message)


def read_quantity(f: Fields, key, kind: q.Kind, required=False, default=None, above=None, minimum=None, per=None):
    """Fields.quantity (the trade's MMBtu understood, 'MBtu' refused: :func:`.quantities.unit_spelling`);
    ``per``: for a plain number that is a
    price, what it is per ("GJ of fuel"), said where units are written with it."""
    raw = f.raw(key, required, None)
    if raw is None:
        return default
    if per is not None and isinstance(raw, str) and not _plain_number(raw):
        raise f.error(key, f"expected a plain number, the price per {per} in the economics' currency, got "
                           f"{shorten(raw)} (convert it: 1 MMBtu = 1.05506 GJ, 1 t = 1000 kg)")
    try:
        number = q.to_default_unit(raw, kind)
    except q.QuantityError as exc:
        raise f.error(key, str(exc)) from None
    unit = f" {kind.shown_unit}" if kind.shown_unit else ""
    if above is not None and number <= above:
        raise f.error(key, f"{shorten(raw)} must be greater than {above:g}{unit}")
    if minimum is not None and number < minimum:
        raise f.error(key, f"{shorten(raw)} cannot be below {minimum:g}{unit}")
    return number


def _plain_number(text: str) -> bool:
    written = q.NUMBER_AT_START.match(text)
    return written is not None and not written.group(2)


def read_duration(f: Fields, key, default) -> pd.Timedelta:
    raw = f.raw(key, required=False)
    if raw is None:
        return default
    match = q.NUMBER_AT_START.match(raw) if isinstance(raw, str) else None
    if match is None or not match.group(2):
        raise f.error(key, f"expected a duration with its unit such as '1 day', '6 h' or '15 min', got {describe(raw)}")
    try:
        seconds = q.to_default_unit(raw, q.DURATION)
    except q.QuantityError as exc:
        raise f.error(key, str(exc)) from None
    return pd.Timedelta(seconds=round(seconds, 6))


def read_timestamp(f: Fields, key) -> pd.Timestamp:
    """A date or time of the file: ISO 8601 only (:data:`ISO_TIME`), without a time-zone offset."""
    raw = f.raw(key)
    if isinstance(raw, bool) or not hasattr(raw, "year") and not isinstance(raw, str):
        raise f.error(key, f"expected {ISO_EXAMPLE}, got {describe(raw)}")
    if isinstance(raw, str) and not ISO_TIME.fullmatch(raw.strip()):
        raise f.error(key, f"expected {ISO_EXAMPLE}, got {shorten(raw)}: 04/01/2027 is April to some and January "
                           "to others")
    try:
        when = pd.Timestamp(raw.strip() if isinstance(raw, str) else raw)
    except (ValueError, TypeError, OverflowError):
        raise f.error(key, f"expected {ISO_EXAMPLE}; cannot read {shorten(raw)}") from None
    if pd.isna(when) or when.tzinfo is not None:
        raise f.error(key, f"expected {ISO_EXAMPLE} without a time-zone offset, got {shorten(str(raw))}")
    return when


def shown_duration(duration: pd.Timedelta) -> str:
    """A duration as a person writes it: in the largest of weeks, days, hours, minutes and
    seconds that divides it, else in the largest it is at least one of.

    >>> shown_duration(pd.Timedelta(days=21)), shown_duration(pd.Timedelta(days=1))
    ('3 weeks', '1 day')
    >>> shown_duration(pd.Timedelta(hours=36)), shown_duration(pd.Timedelta(minutes=1))
    ('36 h', '1 min')
    """
    duration = pd.Timedelta(duration)
    units = (("week", pd.Timedelta(weeks=1)), ("day", pd.Timedelta(days=1)), ("h", pd.Timedelta(hours=1)),
             ("min", pd.Timedelta(minutes=1)), ("s", pd.Timedelta(seconds=1)))
    whole = next(((unit, length) for unit, length in units if duration % length == pd.Timedelta(0)), None)
    unit, length = whole or next(((u, n) for u, n in units if duration >= n), units[-1])
    count = duration / length
    return f"{count:g} {unit}" + ("s" if unit in ("week", "day") and count != 1 else "")


def whole_steps(f: Fields, key, duration: pd.Timedelta, step: pd.Timedelta, step_key=None) -> int:
    """``duration`` (read at ``key`` of ``f``) as a whole number of ``step``s. Part steps are
    refused naming the nearest whole numbers; a duration shorter than one step too, at
    ``step_key`` (where the step was read) if given, else at ``key``."""
    whole, rest = divmod(duration, step)
    if whole < 1 and step_key is not None:
        raise f.error(step_key, f"the step ({shown_duration(step)}) is longer than the {key} "
                                f"({shown_duration(duration)})")
    if whole < 1:
        raise f.error(key, f"{shown_duration(duration)} is shorter than one step ({shown_duration(step)})")
    if rest:
        raise f.error(key, f"{shown_duration(duration)} is {duration / step:.4g} steps of {shown_duration(step)}, not "
                           f"a whole number: use {shown_duration(whole * step)} ({whole} step{'s' * (whole != 1)}) or "
                           f"{shown_duration((whole + 1) * step)} ({whole + 1} steps)")
    return int(whole)
