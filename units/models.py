"""Unit models behind one small protocol, :class:`UnitModel`, which is all the solver sees.

A unit has named inlet and outlet ports. The solver asks it two things:

* flows — ``flow_coefficients()`` (outlet mass flow = coefficients @ inlet mass flow) and
  ``supplied_flow()`` (what the unit feeds in itself: a source's supply). Flows are linear in
  each other and independent of temperature, so they are solved once, before temperatures.
* temperatures — ``outlet_temperatures(inlets)`` from an :class:`Inlets` (inlet temperatures
  and mass flows shaped (batch, inlets), and each inlet's fluid model); returns
  (batch, outlets). ``report(inlets)`` gives the quantities for the results table and the
  findings (limits, warnings, bad input).

Nothing here reads files or knows the graph; ``key`` is the case-file path of the unit, used only
to word messages.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Protocol

import numpy as np

from . import balances
from .properties import Blend

__all__ = ["UnitModel", "Inlets", "Finding", "UnitReport", "Source", "Sink", "Heater", "Mixer", "Splitter", "check"]

SEVERITIES = ("limit", "warning", "input")
"""``limit``: a design limit violated (shown prominently); ``warning``: worth a look;
``input``: the case asks for something impossible (the run stops as bad input)."""


@dataclass
class Finding:
    """One check on one unit over the batch: where it is active and what to say there.

    ``messages`` (one text per scenario, empty where inactive) are worded on first use: a batch
    summary that only counts findings never pays for formatting thousands of texts."""

    kind: str
    severity: str
    active: np.ndarray
    template: str
    values: dict
    key: str

    @cached_property
    def messages(self) -> np.ndarray:
        arrays = {k: np.broadcast_to(np.asarray(v), self.active.shape) for k, v in self.values.items()}
        messages = np.full(self.active.shape, "", dtype=object)
        for i in np.flatnonzero(self.active):
            messages[i] = self.template.format(**{k: v[i] for k, v in arrays.items()})
        return messages


@dataclass
class UnitReport:
    quantities: dict[str, np.ndarray]
    findings: list[Finding] = field(default_factory=list)
    heat_added: np.ndarray | float = 0.0
    """Heat put into the process streams from outside (kW): heaters +, coolers -."""
    labels: dict[str, str] = field(default_factory=dict)
    """Fixed descriptions for the results table (e.g. how U is found)."""


@dataclass
class Inlets:
    """What enters a unit: temperatures (°C) and mass flows (kg/s), each (batch, inlets), and the
    fluid model of each inlet (a blend where streams of several fluids have mixed)."""

    t: np.ndarray
    m: np.ndarray
    fluids: tuple

    @property
    def batch(self) -> int:
        return self.t.shape[0]

    def enthalpy_flow(self, j):
        """ṁ·h of inlet j, kW (enthalpy referred to 0 °C)."""
        return self.m[:, j] * self.fluids[j].enthalpy(self.t[:, j])

    def capacity(self, j):
        """ṁ·cp of inlet j at its inlet temperature, kW/K."""
        return self.m[:, j] * self.fluids[j].cp(self.t[:, j])


class UnitModel(Protocol):
    name: str
    kind: str
    key: str
    inlets: tuple[str, ...]
    outlets: tuple[str, ...]

    def flow_coefficients(self) -> np.ndarray: ...

    def supplied_flow(self) -> np.ndarray: ...

    def outlet_temperatures(self, inlets: Inlets) -> np.ndarray: ...

    def report(self, inlets: Inlets) -> UnitReport: ...


def check(kind, severity, active, key, template, **values):
    """A Finding whose message is ``template`` formatted with the values at each active scenario."""
    return Finding(kind, severity, np.atleast_1d(np.asarray(active, dtype=bool)), template, values, key)


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

    def outlet_temperatures(self, inlets):
        return np.broadcast_to(self.temperature, (inlets.batch,))[:, None].copy()

    def report(self, inlets):
        return UnitReport({"t_out": self.outlet_temperatures(inlets)[:, 0]})


class Sink(_Base):
    """Where a stream leaves the network; an optional target temperature is reported as a deviation."""

    kind = "product"
    outlets = ()

    def __init__(self, name, key, target_temperature=None):
        self.name, self.key = name, key
        self.target_temperature = target_temperature

    def outlet_temperatures(self, inlets):
        return np.empty((inlets.batch, 0))

    def report(self, inlets):
        quantities = {"t_in": inlets.t[:, 0]}
        if self.target_temperature is not None:
            quantities["deviation"] = inlets.t[:, 0] - self.target_temperature
        return UnitReport(quantities)


class Mixer(_Base):
    """Adiabatic mixing of any number of inlets into one outlet."""

    kind = "mixer"

    def __init__(self, name, key, inlets):
        self.name, self.key = name, key
        self.inlets = tuple(inlets)

    def flow_coefficients(self):
        return np.ones((1, len(self.inlets)))

    def outlet_temperatures(self, inlets):
        return mix(inlets)[:, None]

    def report(self, inlets):
        return UnitReport({"t_out": mix(inlets)})


class Splitter(_Base):
    """Splits one inlet into branches by fixed fractions (which sum to one)."""

    kind = "splitter"

    def __init__(self, name, key, fractions):
        self.name, self.key = name, key
        self.outlets = tuple(fractions)
        self.fractions = np.array([fractions[b] for b in self.outlets], dtype=float)

    def flow_coefficients(self):
        return self.fractions[:, None]

    def outlet_temperatures(self, inlets):
        return np.repeat(inlets.t, len(self.outlets), axis=1)

    def report(self, inlets):
        return UnitReport({"t_out": inlets.t[:, 0]})


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

    def _heat_added(self, inlets):
        """Heat added (kW, negative for a cooler) and the outlet temperature."""
        t, m, fluid = inlets.t[:, 0], inlets.m[:, 0], inlets.fluids[0]
        if self.target is not None:
            t_out = np.broadcast_to(np.asarray(self.target, float), t.shape).copy()
            return m * (fluid.enthalpy(t_out) - fluid.enthalpy(t)), t_out
        added = np.broadcast_to(self.sign * np.asarray(self.duty, dtype=float), t.shape)
        flows = m > 0.0
        h_out = fluid.enthalpy(t) + added / np.where(flows, m, 1.0)
        return added, np.where(flows, fluid.temperature(h_out, guess=t), t)

    def outlet_temperatures(self, inlets):
        return self._heat_added(inlets)[1][:, None]

    def report(self, inlets):
        t, m = inlets.t[:, 0], inlets.m[:, 0]
        added, t_out = self._heat_added(inlets)
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
                    (m <= 0.0) & (np.asarray(self.duty) != 0.0),
                    f"{self.key}.duty",
                    f"the {self.kind} has a fixed duty but no flow through it",
                )
            )
        return UnitReport(quantities, findings, heat_added=np.where(m > 0.0, added, 0.0))


def mix(inlets: Inlets):
    """Outlet temperature of an adiabatic mixer from its enthalpy balance; with no flow at all,
    the mean of the inlet temperatures (any value balances a zero flow)."""
    total = inlets.m.sum(axis=1)
    flows = total > 0.0
    if all(f.constant_cp for f in inlets.fluids):
        capacities = np.stack([inlets.capacity(j) for j in range(inlets.t.shape[1])], axis=1)
        return balances.mix_temperature(inlets.t, capacities)
    h_in = sum(inlets.enthalpy_flow(j) for j in range(inlets.t.shape[1]))
    fractions = inlets.m / np.where(flows, total, 1.0)[:, None]
    blend = Blend(inlets.fluids, [fractions[:, j] for j in range(inlets.t.shape[1])])
    guess = balances.mix_temperature(inlets.t, np.where(flows[:, None], inlets.m, 1.0))
    t_out = blend.temperature(h_in / np.where(flows, total, 1.0), guess=guess)
    return np.where(flows, t_out, inlets.t.mean(axis=1))
