"""Unit models behind one small protocol, :class:`UnitModel`, which is all the solver sees.

A unit has named inlet and outlet ports. The solver asks it two things:

* flows — ``flow_coefficients()`` (outlet mass flow = coefficients @ inlet mass flow) and
  ``supplied_flow()`` (what the unit feeds in itself: a source's supply). Flows are linear in
  each other and independent of temperature, so they are solved once, before temperatures.
* temperatures — ``outlet_temperatures(t_in, c_in)`` from inlet temperatures and heat-capacity
  rates, both shaped (batch, inlets); returns (batch, outlets). ``report(t_in, c_in)`` gives
  the quantities for the results table and the findings (limits, warnings, bad input).

Nothing here reads files or knows the graph; ``key`` is the case-file path of the unit, used only
to word messages.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Protocol

import numpy as np

from . import balances
from .exchanger import rate_exchanger

__all__ = ["UnitModel", "Finding", "UnitReport", "Source", "Sink", "Exchanger", "Heater", "Mixer", "Splitter"]

SEVERITIES = ("limit", "warning", "input")
"""``limit``: a design limit violated (shown prominently); ``warning``: worth a look;
``input``: the case asks for something impossible (the run stops as bad input)."""


@dataclass
class Finding:
    """One check on one unit over the batch: where it is active and what to say there."""

    kind: str
    severity: str
    active: np.ndarray
    messages: np.ndarray
    key: str


@dataclass
class UnitReport:
    quantities: dict[str, np.ndarray]
    findings: list[Finding] = field(default_factory=list)
    heat_added: np.ndarray | float = 0.0
    """Heat put into the process streams from outside (kW): heaters +, coolers -."""


class UnitModel(Protocol):
    name: str
    kind: str
    key: str
    inlets: tuple[str, ...]
    outlets: tuple[str, ...]

    def flow_coefficients(self) -> np.ndarray: ...

    def supplied_flow(self) -> np.ndarray: ...

    def outlet_temperatures(self, t_in: np.ndarray, c_in: np.ndarray) -> np.ndarray: ...

    def report(self, t_in: np.ndarray, c_in: np.ndarray) -> UnitReport: ...


def check(kind, severity, active, key, template, **values):
    """A Finding whose message is ``template`` formatted with the values at each active scenario."""
    active = np.atleast_1d(np.asarray(active, dtype=bool))
    arrays = {k: np.broadcast_to(np.asarray(v), active.shape) for k, v in values.items()}
    messages = np.full(active.shape, "", dtype=object)
    for i in np.flatnonzero(active):
        messages[i] = template.format(**{k: v[i] for k, v in arrays.items()})
    return Finding(kind, severity, active, messages, key)


def design_temperature_findings(key, sides):
    """Limit findings for sides whose highest temperature exceeds their design temperature.

    ``sides`` maps a label to (design temperature or None, inlet T, outlet T).
    """
    findings = []
    for label, (design, t_in, t_out) in sides.items():
        if design is None:
            continue
        peak = np.maximum(t_in, t_out)
        findings.append(
            check(
                "design_temperature",
                "limit",
                peak > design,
                f"{key}.design_temperature",
                label + "reaches {peak:.1f} °C, above its design temperature of {design:.1f} °C",
                peak=peak,
                design=design,
            )
        )
    return findings


class _Base:
    inlets: tuple[str, ...] = ("in",)
    outlets: tuple[str, ...] = ("out",)

    def flow_coefficients(self):
        return np.eye(len(self.outlets), len(self.inlets))

    def supplied_flow(self):
        return np.zeros(len(self.outlets))


class Source(_Base):
    """A supply of one fluid at a fixed flow (kg/s) and temperature (°C)."""

    kind = "source"
    inlets = ()

    def __init__(self, name, key, flow, temperature):
        self.name, self.key = name, key
        self.flow = np.asarray(flow, dtype=float)
        self.temperature = np.asarray(temperature, dtype=float)

    def supplied_flow(self):
        return np.atleast_1d(self.flow)

    def outlet_temperatures(self, t_in, c_in):
        return np.broadcast_to(self.temperature, (t_in.shape[0],))[:, None].copy()

    def report(self, t_in, c_in):
        return UnitReport({"t_out": self.outlet_temperatures(t_in, c_in)[:, 0]})


class Sink(_Base):
    """Where a stream leaves the network; an optional target temperature is reported as a deviation."""

    kind = "product"
    outlets = ()

    def __init__(self, name, key, target_temperature=None):
        self.name, self.key = name, key
        self.target_temperature = target_temperature

    def outlet_temperatures(self, t_in, c_in):
        return np.empty((t_in.shape[0], 0))

    def report(self, t_in, c_in):
        quantities = {"t_in": t_in[:, 0]}
        if self.target_temperature is not None:
            quantities["deviation"] = t_in[:, 0] - self.target_temperature
        return UnitReport(quantities)


class Mixer(_Base):
    """Adiabatic mixing of any number of inlets into one outlet."""

    kind = "mixer"

    def __init__(self, name, key, inlets):
        self.name, self.key = name, key
        self.inlets = tuple(inlets)

    def flow_coefficients(self):
        return np.ones((1, len(self.inlets)))

    def outlet_temperatures(self, t_in, c_in):
        return balances.mix_temperature(t_in, c_in)[:, None]

    def report(self, t_in, c_in):
        return UnitReport({"t_out": balances.mix_temperature(t_in, c_in)})


class Splitter(_Base):
    """Splits one inlet into branches by fixed fractions (which sum to one)."""

    kind = "splitter"

    def __init__(self, name, key, fractions):
        self.name, self.key = name, key
        self.outlets = tuple(fractions)
        self.fractions = np.array([fractions[b] for b in self.outlets], dtype=float)

    def flow_coefficients(self):
        return self.fractions[:, None]

    def outlet_temperatures(self, t_in, c_in):
        return np.repeat(t_in, len(self.outlets), axis=1)

    def report(self, t_in, c_in):
        return UnitReport({"t_out": t_in[:, 0]})


class Heater(_Base):
    """A heater (furnace, trim heater) or cooler on one stream: fixed duty or target outlet.

    ``duty`` is the heat added (heater) or removed (cooler), kW, >= 0; or ``outlet_temperature``
    sets the outlet and the duty follows. A target on the wrong side of the inlet is bad input.
    """

    def __init__(self, name, key, *, cooler=False, duty=None, outlet_temperature=None, design_temperature=None):
        if (duty is None) == (outlet_temperature is None):
            raise ValueError("give exactly one of duty and outlet_temperature")
        self.name, self.key = name, key
        self.kind = "cooler" if cooler else "heater"
        self.sign = -1.0 if cooler else 1.0
        self.duty, self.target = duty, outlet_temperature
        self.design_temperature = design_temperature

    def _heat_added(self, t_in, c):
        if self.target is None:
            return np.broadcast_to(self.sign * np.asarray(self.duty, dtype=float), t_in.shape)
        return balances.duty_to_reach(t_in, c, self.target)

    def outlet_temperatures(self, t_in, c_in):
        t, c = t_in[:, 0], c_in[:, 0]
        if self.target is not None:
            return np.broadcast_to(np.asarray(self.target, float), t.shape)[:, None].copy()
        return balances.temperature_after_duty(t, c, self._heat_added(t, c))[:, None]

    def report(self, t_in, c_in):
        t, c = t_in[:, 0], c_in[:, 0]
        added = self._heat_added(t, c)
        t_out = self.outlet_temperatures(t_in, c_in)[:, 0]
        side = "cold" if self.kind == "heater" else "hot"
        quantities = {"duty": self.sign * added, f"t_{side}_in": t, f"t_{side}_out": t_out}
        findings = design_temperature_findings(self.key, {"the stream ": (self.design_temperature, t, t_out)})
        if self.target is not None:
            findings.append(
                check(
                    "target_wrong_side",
                    "input",
                    self.sign * added < 0.0,
                    f"{self.key}.outlet_temperature",
                    f"the {self.kind}'s outlet temperature {{target:.2f}} °C is "
                    + ("below" if self.kind == "heater" else "above")
                    + " its inlet temperature {t:.2f} °C: a "
                    + self.kind
                    + " cannot do that; use "
                    + ("a cooler" if self.kind == "heater" else "a heater")
                    + " or change the target",
                    target=self.target,
                    t=t,
                )
            )
        else:
            findings.append(
                check(
                    "duty_without_flow",
                    "input",
                    (c <= 0.0) & (np.asarray(self.duty) != 0.0),
                    f"{self.key}.duty",
                    f"the {self.kind} has a fixed duty but no flow through it",
                )
            )
        return UnitReport(quantities, findings, heat_added=np.where(c > 0.0, added, 0.0))


class Exchanger(_Base):
    """A two-stream exchanger rated by P–NTU (see :func:`rate_exchanger` for the parameters).

    ``design_temperature`` maps "hot"/"cold" to a side's design temperature (°C) or None.
    ``minimum_approach`` (K) and ``minimum_f`` are the warning lines.
    """

    kind = "exchanger"
    inlets = ("hot", "cold")
    outlets = ("hot", "cold")

    def __init__(self, name, key, *, ua, arrangement, minimum_approach, minimum_f, design_temperature=None, **options):
        self.name, self.key = name, key
        self.ua = ua
        self.arrangement = arrangement
        self.options = options
        self.minimum_approach, self.minimum_f = minimum_approach, minimum_f
        self.design_temperature = design_temperature or {}

    def rate(self, t_in, c_in):
        return rate_exchanger(t_in[:, 0], t_in[:, 1], c_in[:, 0], c_in[:, 1], self.ua, self.arrangement, **self.options)

    def outlet_temperatures(self, t_in, c_in):
        rating = self.rate(t_in, c_in)
        return np.stack([rating.t_hot_out, rating.t_cold_out], axis=1)

    def report(self, t_in, c_in):
        x = self.rate(t_in, c_in)
        t_hot, t_cold = t_in[:, 0], t_in[:, 1]
        quantities = {
            "duty": x.duty,
            "t_hot_in": t_hot,
            "t_hot_out": x.t_hot_out,
            "t_cold_in": t_cold,
            "t_cold_out": x.t_cold_out,
            "ua": np.broadcast_to(np.asarray(self.ua, float), x.duty.shape),
            "ntu": x.ntu,
            "p": x.p,
            "r": x.r,
            "effectiveness": x.effectiveness,
            "f": x.f,
            "lmtd": x.lmtd,
            "approach": x.approach,
        }
        works = x.duty != 0.0
        key = self.key
        findings = design_temperature_findings(
            key,
            {
                "the hot side ": (self.design_temperature.get("hot"), t_hot, x.t_hot_out),
                "the cold side ": (self.design_temperature.get("cold"), t_cold, x.t_cold_out),
            },
        )
        findings += [
            check(
                "temperature_cross",
                "limit",
                x.temperature_cross,
                key,
                "temperature cross inside a multipass shell (P_hot + P_cold = {s:.3f} per shell > 1): "
                "the cold stream leaves above the hot outlet; F = {f:.3f}",
                s=x.shell_p_sum,
                f=x.f,
            ),
            check(
                "low_f",
                "warning",
                works & (x.f < self.minimum_f),
                key,
                "F = {f:.3f} is below {lim:.2f}: steep, unreliable part of the F curve",
                f=x.f,
                lim=self.minimum_f,
            ),
            check(
                "approach",
                "warning",
                works & (x.approach < self.minimum_approach),
                key,
                "minimum approach {a:.1f} K is below the case's {lim:.1f} K",
                a=x.approach,
                lim=self.minimum_approach,
            ),
            check(
                "reversed_heat_flow",
                "warning",
                x.reversed,
                key,
                "the hot-side stream enters colder ({th:.1f} °C) than the cold-side stream "
                "({tc:.1f} °C): heat flows from the cold side to the hot side ({q:.1f} kW)",
                th=t_hot,
                tc=t_cold,
                q=-x.duty,
            ),
        ]
        return UnitReport(quantities, findings)
