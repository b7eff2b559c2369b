"""What a plant instrument measures, in terms of a case (a :class:`Tag`): the point (a stream
segment of the built network) a temperature or flow tag reads, the heater or cooler a duty tag
reads, the conversion of its readings' unit to hxtrain's default units, and its uncertainty.

Points are named from the case through the units' ports alone (no unit type is named here):
see :func:`unit_points`. Used by the monitoring-file reader (:mod:`.monitoring_file`).
"""

from __future__ import annotations

import dataclasses
import difflib
import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from . import quantities as q
from .errors import CaseError
from .fields import Fields, describe, nearest
from .graph import Network
from .quantities import shorten

__all__ = ["QUANTITIES", "READING_KINDS", "SPREAD_KINDS", "DUTY_PARAMETERS", "Tag", "unit_points", "resolve_point",
           "resolve_duty_unit", "unit_conversion", "read_uncertainty"]

QUANTITIES = ("temperature", "flow", "duty")
"""What a tag may measure; readings are converted to °C, kg/s and kW."""
READING_KINDS = {"temperature": q.TEMPERATURE, "flow": q.MASS_FLOW, "duty": q.DUTY}
DUTY_PARAMETERS = ("duty", "outlet_temperature")
"""A unit whose duty is set (or follows from a set outlet temperature) declares one of these
parameters (heaters and coolers): the units a duty tag or a heater limit may name."""
SPREAD_KINDS = {"temperature": q.TEMPERATURE_DIFFERENCE, "flow": q.MASS_FLOW, "duty": q.DUTY}
"""The kind of an absolute uncertainty: for a temperature, a difference (0.9 degF = 0.5 K)."""

CONVERSION_SPAN = 1e6
"""The scale of a unit is read from two conversions this far apart, so that an offset (degF's
-17.8 °C) costs no digits of the scale."""


@dataclass
class Tag:
    """One historian tag: what it measures, where, in which unit, and how well. Exactly one of
    ``sigma`` (absolute, in the default unit: K, kg/s, kW) and ``relative_sigma`` (a fraction of
    the reading) is set. ``point`` is the text of the file: a point (:func:`resolve_point`),
    or for a duty the heater's or cooler's tag; ``segment`` the point's segment index in
    ``build_network(case)`` (None for a duty). A reading ``x`` in ``unit`` is
    ``scale * x + offset`` in the default unit."""

    name: str
    quantity: str
    point: str
    unit: str
    sigma: float | None
    relative_sigma: float | None
    key: tuple
    column: str | None = None
    """The data column holding this tag (default: the tag's name)."""
    segment: int | None = None
    scale: float = 1.0
    offset: float = 0.0

    def __post_init__(self):
        if self.column is None:
            self.column = self.name

    def to_default_unit(self, values) -> np.ndarray:
        """Readings in the tag's unit -> °C, kg/s or kW (float64 array)."""
        return self.scale * np.asarray(values, dtype=float) + self.offset

    def from_default_unit(self, values) -> np.ndarray:
        """°C, kg/s or kW -> readings in the tag's unit (to write synthetic historian data)."""
        return (np.asarray(values, dtype=float) - self.offset) / self.scale

    def sigma_of(self, values) -> np.ndarray:
        """One standard deviation of readings ``values`` (default unit), absolute."""
        values = np.asarray(values, dtype=float)
        if self.sigma is not None:
            return np.where(np.isnan(values), np.nan, self.sigma)
        return self.relative_sigma * np.abs(values)


# ----------------------------------------------------------------------------- points


def _plain(port: str) -> bool:
    return port not in ("in", "out") and not any(c in port for c in ":. ")


def unit_points(net: Network, name: str) -> dict[str, int]:
    """Every point text of unit ``name`` -> its segment index, from the unit's ports alone:
    ``NAME.X_in`` / ``NAME.X_out`` for named ports (an exchanger's hot and cold sides);
    ``NAME.inlet`` / ``NAME.outlet`` where the unit has exactly one; ``NAME.X`` for an outlet
    port X that is no inlet's name (a splitter's branch); ``NAME`` alone where that is
    unambiguous: a unit without inlets (a supply stream) or with several inlets and one outlet
    (a mixer) means its outlet, a unit without outlets (a product) its inlet. A unit with one
    inlet and one outlet (a heater) needs ``.inlet`` or ``.outlet``."""
    unit = net.units[name]
    ins, outs = list(unit.inlets), list(unit.outlets)
    points = {}
    for port, seg in zip(ins, net.inlets[name]):
        if _plain(port):
            points[f"{name}.{port}_in"] = seg
    for port, seg in zip(outs, net.outlets[name]):
        if _plain(port):
            points[f"{name}.{port}_out"] = seg
            if port not in ins:
                points[f"{name}.{port}"] = seg
    if len(ins) == 1:
        points[f"{name}.inlet"] = net.inlets[name][0]
    if len(outs) == 1:
        points[f"{name}.outlet"] = net.outlets[name][0]
        if len(ins) != 1:
            points[name] = net.outlets[name][0]
    elif not outs and len(ins) == 1:
        points[name] = net.inlets[name][0]
    return points


def resolve_point(net: Network, text, error: Callable[[str], CaseError] | None = None) -> int:
    """The segment index of point ``text`` (see :func:`unit_points`) in ``net``. A point that
    does not exist raises ``error(message)`` (default: a :class:`CaseError` without a place;
    the monitoring reader passes one naming the tag's key path), with the nearest points."""
    fail = error or CaseError
    if not isinstance(text, str) or not text.strip():
        raise fail(f"expected a point such as crude, E-101.cold_out or F-101.inlet, got {describe(text)}")
    text = text.strip()
    name = text.partition(".")[0]
    if name not in net.units:
        every = [p for unit in net.units for p in unit_points(net, unit)]
        close = difflib.get_close_matches(text, every, n=3)
        hint = f" (did you mean {' or '.join(map(repr, close))}?)" if close else ""
        raise fail(f"no unit or stream {shorten(name)} in the case {net.case.file}{hint}")
    points = unit_points(net, name)
    if text not in points:
        raise fail(f"{shorten(text)} is not a point of {name}{nearest(text, points)}; its points are "
                   f"{', '.join(points)}")
    return points[text]


def resolve_duty_unit(net: Network, text, error: Callable[[str], CaseError] | None = None,
                      word="heater or cooler") -> str:
    """``text`` if it names a unit with a duty of its own (a heater or cooler: a unit declaring
    one of :data:`DUTY_PARAMETERS`); else ``error(message)`` naming the candidates (``word``:
    what the caller asks for, in the message)."""
    fail = error or CaseError
    candidates = [n for n, u in net.units.items() if any(p.name in DUTY_PARAMETERS for p in u.parameters())]
    listed = f"the case's heaters and coolers: {', '.join(candidates)}" if candidates else "the case has none"
    if isinstance(text, str) and text in candidates:
        return text
    if isinstance(text, str) and text in net.units:
        raise fail(f"{text} has no duty of its own to measure: name a {word} ({listed})")
    if isinstance(text, str) and text.strip():
        raise fail(f"no {word} {shorten(text)} in the case{nearest(text, candidates)}; {listed}")
    raise fail(f"expected the tag of a {word}, got {describe(text)}; {listed}")


# ----------------------------------------------------------------------------- units of readings

def unbounded(kind: q.Kind) -> q.Kind:
    """``kind`` without its plausible range (for conversions and sign checks of our own)."""
    return dataclasses.replace(kind, low=-math.inf, high=math.inf, least_nonzero=0.0)


def unit_conversion(unit, quantity: str) -> tuple[float, float]:
    """(scale, offset) taking a reading in ``unit`` to the default unit of ``quantity``
    (°C, kg/s, kW): ``scale * x + offset``. Temperatures are levels (degF: scale 5/9, offset
    -160/9 °C); raises :class:`~.quantities.QuantityError` for a unit that does not fit.

    >>> [round(v, 12) for v in unit_conversion("degF", "temperature")]
    [0.555555555556, -17.777777777778]
    """
    kind = READING_KINDS[quantity]
    expected = {"temperature": "a temperature scale: degC, degF, K", "flow": "a mass flow: kg/s, t/h, lb/h",
                "duty": "a duty: kW, MW, Btu/h, MMBtu/h"}[quantity]
    if not isinstance(unit, str) or not unit.strip() or q.NUMBER_AT_START.match(unit):
        raise q.QuantityError(f"expected the unit of the tag's readings, {expected}; got {describe(unit)}")
    text = unit.strip()
    q.unit_spelling(text, q.NUMBER)  # 'MBtu', 'Mlb': refused as ambiguous, with what to write, before any fit
    try:
        offset = q.to_default_unit(f"0 {text}", unbounded(kind))
        scale = (q.to_default_unit(f"{CONVERSION_SPAN:g} {text}", unbounded(kind)) - offset) / CONVERSION_SPAN
    except q.QuantityError:
        hint = ""
        if quantity == "flow" and _volumetric(text):
            hint = " (a volume flow: hxtrain needs mass flows; convert with the density in the historian)"
        raise q.QuantityError(f"the unit {shorten(unit)} does not fit a {quantity} tag: expected {expected}"
                              f"{hint}") from None
    if not (math.isfinite(scale) and scale > 0.0 and math.isfinite(offset)):
        raise q.QuantityError(f"the unit {shorten(unit)} does not fit a {quantity} tag: expected {expected}")
    return scale, offset


def _volumetric(text: str) -> bool:
    try:
        return dict(q.registry().parse_units(text).dimensionality) == {"[length]": 3, "[time]": -1}
    except Exception:  # pint's parser fails in many ways on junk
        return False


def read_uncertainty(f: Fields, key, quantity: str, default):
    """The uncertainty (one standard deviation) at ``key`` of ``f`` for an instrument measuring
    ``quantity``: (sigma, None), absolute in the default unit ("0.5", "1 K", "0.9 degF": a
    temperature difference), or (None, fraction) for a relative one ("2 %"); ``default`` where
    the key is absent. Zero and negative values are refused."""
    raw = f.raw(key, required=False)
    if raw is None:
        return default
    relative = isinstance(raw, str) and ("%" in raw or "percent" in raw)
    kind = q.FRACTION if relative else SPREAD_KINDS[quantity]
    try:
        number = q.to_default_unit(raw, unbounded(kind))
        if number <= 0.0:
            raise q.QuantityError(f"{shorten(raw)}: an uncertainty must be greater than 0 (a standard deviation"
                                  f"{' cannot be negative' if number < 0 else '; a perfect instrument has none'})")
        q.check_plausible(number, kind, raw)
    except q.QuantityError as exc:
        raise f.error(key, str(exc)) from None
    return (None, number) if relative else (number, None)
