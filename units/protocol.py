"""Unit models behind one small protocol, :class:`UnitModel`, which is all the solver sees.

A unit has named inlet and outlet ports. The solver asks it two things:

* flows — ``flow_coefficients()`` (outlet mass flow = coefficients @ inlet mass flow) and
  ``supplied_flow()`` (what the unit feeds in itself: a source's supply). Flows are linear in
  each other and independent of temperature, so they are solved once, before temperatures;
  except where a unit splits by its inlet state (a flash drum, ``splits_by_state``): then the
  solver solves flows and temperatures in turn until its split settles.
* temperatures — ``outlet_temperatures(inlets)`` from an :class:`Inlets` (inlet temperatures
  and mass flows shaped (batch, inlets), and each inlet's fluid model); returns
  (batch, outlets). ``report(inlets)`` gives the quantities for the results table and the
  findings (limits, warnings, bad input).

Nothing here reads files or knows the graph; ``key`` is the case-file path of the unit, used only
to word messages.
"""

from __future__ import annotations

import re
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass, field
from functools import cached_property
from typing import Protocol

import numpy as np


__all__ = ["UnitModel", "UnitBase", "Inlets", "takes_enthalpy_state", "splits_by_state", "StackedInlets", "outlet_temperatures_together", "reports_together", "Finding", "UnitReport", "Parameter", "PortStates", "PropertyNeed", "check", "design_temperature_findings",
           "HEAT_LOST", "TOTALS", "HEAT_SOURCES", "LARGEST_DUTY", "LARGEST_FIRED_DUTY",
           "METRIC_UNITS", "Worded", "exchanger_totals", "outlets_within", "outlet_precision",
           "note_outlets_loosened"]


@dataclass
class _Precision:
    kelvin: float = 0.0
    used: bool = False


_OUTLET_PRECISION = ContextVar("hxtrain_outlet_precision", default=_Precision())


@contextmanager
def outlets_within(kelvin):
    """Within this block a unit that iterates on its own outlets (an exchanger whose cp and U
    follow its temperatures) may stop once they move less than ``kelvin`` K, where that is
    looser than its own tolerance: a solver says so when it needs the outlets only that closely
    at the present iterate (an inexact Newton step, far from the answer). 0: the unit's own
    tolerance, which every answer is finally computed with. Yields a record whose ``used``
    says afterwards whether any unit did stop early (see :func:`note_outlets_loosened`)."""
    record = _Precision(float(kelvin))
    token = _OUTLET_PRECISION.set(record)
    try:
        yield record
    finally:
        _OUTLET_PRECISION.reset(token)


def outlet_precision() -> float:
    """The precision (K) :func:`outlets_within` allows here; 0 outside it."""
    return _OUTLET_PRECISION.get().kelvin


def note_outlets_loosened():
    """A unit says it stopped its own iteration on the looser precision allowed here (so the
    solver knows that sweep was not exact). Outside :func:`outlets_within` nothing is looser
    than the unit's own tolerance, and nothing is noted."""
    record = _OUTLET_PRECISION.get()
    if record.kelvin > 0.0:
        record.used = True


SEVERITIES = ("limit", "warning", "input")
"""``limit``: a design limit violated (shown prominently); ``warning``: worth a look;
``input``: the case asks for something impossible (that scenario is not valid)."""

HEAT_RECOVERED = "heat_recovered_kw"
FIRED_HEATERS = "fired_heater_duty_kw"
OTHER_HEATERS = "other_heater_duty_kw"
COOLERS = "cooler_duty_kw"
HEAT_TO_UTILITIES = "heat_to_utilities_kw"
HEAT_FROM_UTILITIES = "heat_from_utilities_kw"
HEAT_LOST = "heat_lost_kw"
TOTALS = {
    HEAT_RECOVERED: "heat recovered, process to process",
    FIRED_HEATERS: "fired heaters (furnaces)",
    OTHER_HEATERS: "other heaters (utility heat, heat of reaction)",
    COOLERS: "coolers",
    HEAT_TO_UTILITIES: "heat to utilities (air coolers, exchangers on utility streams)",
    HEAT_FROM_UTILITIES: "heat from utilities (air coolers, exchangers on utility streams)",
    HEAT_LOST: "heat lost to the surroundings (desalters)",
}
"""The totals a run reports, each fed by the units that declare a contribution to it in their
report (:attr:`UnitReport.totals`): the solver adds them up without knowing unit types."""

LARGEST_DUTY = 1e6
"""kW: 1 GW, above the largest fired heaters (~100-300 MW, common practice): the edge of a
plausible heat duty, given (the case format's range) or computed (a heater's or cooler's warning)."""
LARGEST_FIRED_DUTY = 5e5
"""kW: 500 MW, well above the largest fired heaters (~100-300 MW, common practice): a fired
heater's computed duty above it is warned of."""
HEAT_SOURCES = ("fired", "utility", "reaction")
"""What a heater's heat is: burnt fuel (a furnace or fired heater), a bought utility (steam,
hot oil, electricity), or heat released in the process itself (a reaction)."""
METRIC_UNITS = {"duty": "kW", "hot_in": "°C", "hot_out": "°C", "cold_in": "°C", "cold_out": "°C", "inlet": "°C",
                "outlet": "°C", "air_out": "°C", "steam_flow": "kg/s", "brine_flow": "kg/s", "air_flow": "kg/s",
                "vapour_flow": "kg/s", "vapour_fraction": "", "hot_out_vapour_fraction": "",
                "cold_out_vapour_fraction": ""}
"""The unit of every named result a unit may offer (``UnitReport.metrics``), as messages write it
("" for a fraction): a report shows ``TAG.duty`` in the chosen units by it. A unit offering a
metric not named here fails the protocol test."""


@dataclass(frozen=True)
class Parameter:
    """A value of a unit that a scenario may vary: its key below the unit's case-file entry
    (``flow``, ``fouling.shell``, ``branches.north.fraction``), the kind of quantity (a name such
    as ``mass_flow``, ``temperature``, ``fraction``) and its physical bounds."""

    name: str
    quantity: str
    low: float = -np.inf
    high: float = np.inf
    low_open: bool = False
    """True where ``low`` itself is excluded (a flow must be above 0)."""

    def outside(self, values) -> np.ndarray:
        """True where a value is not finite or lies outside the bounds."""
        v = np.asarray(values, dtype=float)
        below = v <= self.low if self.low_open else v < self.low
        return ~np.isfinite(v) | below | (v > self.high)

    def bounds_text(self) -> str:
        low = f"above {self.low:g}" if self.low_open else f"at least {self.low:g}"
        if np.isinf(self.low):
            return f"at most {self.high:g}"
        return low if np.isinf(self.high) else f"{low} and at most {self.high:g}"


@dataclass(frozen=True)
class PropertyNeed:
    """Fluid properties a unit needs besides cp (``viscosity``, ``conductivity``, ``density``),
    the key below the unit's entry that makes it need them, and why, for the message."""

    properties: tuple[str, ...]
    key: str
    reason: str


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
    excess: object = None
    """How far past its limit a violated limit is, per scenario, in the limit's own terms (K over
    a design temperature, Pa over an allowable drop): which scenario is the worst (:meth:`worst`)."""

    def worst(self) -> int:
        """The active scenario farthest past the limit (the first where the check gives no
        excess or several tie); -1 where none is active."""
        active = np.flatnonzero(self.active)
        if not active.size:
            return -1
        if self.excess is None:
            return int(active[0])
        excess = np.broadcast_to(np.asarray(self.excess, float), self.active.shape)[active]
        return int(active[np.argmax(np.where(np.isfinite(excess), excess, -np.inf))])

    @cached_property
    def messages(self) -> np.ndarray:
        """One text per scenario, each carrying its numbers at full precision as ``exact`` (see
        :class:`Worded`: a report in other units converts those, not the rounded ones)."""
        arrays = {k: np.broadcast_to(np.asarray(v), self.active.shape) for k, v in self.values.items()}
        messages = np.full(self.active.shape, "", dtype=object)
        exact = _FLOAT_FIELD.sub(r"{\1:.17g}", self.template)
        for i in np.flatnonzero(self.active):
            values = {k: v[i] for k, v in arrays.items()}
            messages[i] = Worded(self.template.format(**values), exact.format(**values))
        return messages


_FLOAT_FIELD = re.compile(r"\{(\w+):[^{}]*[fgeFGE]\}")
"""A template's field formatted as a rounded float ("{t:.1f}"), worded at full precision in the
exact text."""


class Worded(str):
    """A message as worded (rounded), carrying ``exact``: the same words with every number at
    full precision, which a report in other units converts instead of the rounded ones."""

    exact: str

    def __new__(cls, text: str, exact: str):
        worded = super().__new__(cls, text)
        worded.exact = exact
        return worded

    def __reduce__(self):  # pickled to worker processes and back: keep the exact words
        return (Worded, (str(self), self.exact))

    @classmethod
    def joined(cls, separator: str, parts) -> "Worded":
        """``parts`` (words, each worded with its exact numbers or plain) joined by ``separator``,
        the exact words joined alike: a list of messages, or a message with a prefix."""
        parts = list(parts)
        return cls(separator.join(parts), separator.join(getattr(p, "exact", p) for p in parts))


@dataclass
class UnitReport:
    quantities: dict[str, np.ndarray]
    findings: list[Finding] = field(default_factory=list)
    heat_added: np.ndarray | float = 0.0
    """Heat put into the process streams from outside (kW): heaters +, coolers -."""
    labels: dict[str, str] = field(default_factory=dict)
    """Fixed descriptions for the results table (e.g. how U is found)."""
    totals: dict[str, np.ndarray] = field(default_factory=dict)
    """This unit's contribution to the run's totals (keys of :data:`TOTALS`), kW."""
    metrics: dict[str, np.ndarray] = field(default_factory=dict)
    """Named results a study may target: ``duty``, ``hot_out``, ``inlet``, ``outlet``, ... (each a
    key of :data:`METRIC_UNITS`)."""
    highlights: dict[str, np.ndarray] = field(default_factory=dict)
    """Headline numbers of the run this unit gives (a furnace's inlet temperature)."""
    profile: dict[str, np.ndarray] = field(default_factory=dict)
    """Temperatures along an exchanger where they are not straight lines between its ends (rated
    by zones): ``duty`` (kW from the cold end), ``hot`` and ``cold`` (°C), each (batch, points)."""


@dataclass
class Inlets:
    """What enters a unit: temperatures (°C) and mass flows (kg/s), each (batch, inlets), and the
    fluid model of each inlet (a blend where streams of several fluids have mixed). ``h``
    (kJ/kg, (batch, inlets)) is given where a unit is asked for :meth:`UnitModel.outlet_states`:
    the state of an inlet whose fluid has a saturation plateau, where ``t`` alone does not fix it."""

    t: np.ndarray
    m: np.ndarray
    fluids: tuple
    h: np.ndarray | None = None

    @property
    def batch(self) -> int:
        return self.t.shape[0]

    def enthalpy(self, j):
        """Specific enthalpy of inlet j, kJ/kg: as given, or from its temperature."""
        return self.h[:, j] if self.h is not None else self.fluids[j].enthalpy(self.t[:, j])

    def enthalpy_flow(self, j):
        """ṁ·h of inlet j, kW (enthalpy referred to 0 °C, or to a curve's own reference)."""
        return self.m[:, j] * self.enthalpy(j)

    def capacity(self, j):
        """ṁ·cp of inlet j at its inlet temperature, kW/K."""
        return self.m[:, j] * self.fluids[j].cp(self.t[:, j])


@dataclass
class StackedInlets:
    """What enters each of several units of one class: temperatures and mass flows shaped
    (units, batch, inlets), and per unit the fluid model of each inlet."""

    t: np.ndarray
    m: np.ndarray
    fluids: list
    h: np.ndarray | None = None

    def of(self, k) -> Inlets:
        """The inlets of unit ``k`` alone."""
        return Inlets(self.t[k], self.m[k], self.fluids[k], None if self.h is None else self.h[k])


def outlet_temperatures_together(units, inlets: StackedInlets) -> np.ndarray:
    """Outlet temperatures (units, batch, outlets) of ``units``, all of one class, each from its
    own inlets: through the class's ``outlet_temperatures_together`` where it has one (one
    stacked call for many units), else unit by unit. Either way the numbers are those of
    ``outlet_temperatures`` of each unit."""
    together = getattr(type(units[0]), "outlet_temperatures_together", None)
    return one_by_one(units, inlets) if together is None else together(units, inlets)


def one_by_one(units, inlets: StackedInlets) -> np.ndarray:
    """Outlet temperatures (units, batch, outlets), each unit asked in turn."""
    return np.stack([u.outlet_temperatures(inlets.of(k)) for k, u in enumerate(units)])


def reports_together(units, inlets: StackedInlets) -> list:
    """The reports of ``units``, all of one class, each from its own inlets: through the class's
    ``report_together`` where it has one, else unit by unit; either way each unit's ``report``."""
    together = getattr(type(units[0]), "report_together", None)
    return reports_one_by_one(units, inlets) if together is None else together(units, inlets)


def reports_one_by_one(units, inlets: StackedInlets) -> list:
    """Each unit's report, asked in turn."""
    return [u.report(inlets.of(k)) for k, u in enumerate(units)]


@dataclass
class PortStates:
    """Temperatures (°C) and mass flows (kg/s) at every port of a unit, as measured or reconciled
    rather than rated: inlets and outlets each (batch, ports), with each port's fluid model."""

    t_in: np.ndarray
    m_in: np.ndarray
    t_out: np.ndarray
    m_out: np.ndarray
    fluids_in: tuple
    fluids_out: tuple

    def enthalpy_in(self):
        """ṁ·h summed over the inlets, kW (enthalpy referred to 0 °C)."""
        return sum(self.m_in[:, j] * f.enthalpy(self.t_in[:, j]) for j, f in enumerate(self.fluids_in))

    def enthalpy_out(self):
        """ṁ·h summed over the outlets, kW."""
        return sum(self.m_out[:, j] * f.enthalpy(self.t_out[:, j]) for j, f in enumerate(self.fluids_out))


class UnitModel(Protocol):
    name: str
    kind: str
    """What the unit is, in words for the results table ("exchanger", "heater", ...)."""
    group: str
    """The results section it is shown in: ``exchangers``, ``heaters_and_coolers``, ``products``,
    ``separators`` (desalters), ``drums`` (flash drums) or ``nodes`` (supplies, mixers, splitters)."""
    key: str
    inlets: tuple[str, ...]
    outlets: tuple[str, ...]

    def flow_coefficients(self) -> np.ndarray:
        """(outlets, inlets), or (batch, outlets, inlets) where a scenario varies them."""

    def supplied_flow(self) -> np.ndarray:
        """(outlets,), or (batch, outlets)."""

    def outlet_temperatures(self, inlets: Inlets) -> np.ndarray: ...

    def outlet_states(self, inlets: Inlets, outlet_fluids) -> tuple[np.ndarray, np.ndarray]:
        """Optional: outlet temperatures and specific enthalpies (kJ/kg), each (batch, outlets),
        from inlets that carry ``h``; ``outlet_fluids`` are the fluids leaving. Only a unit that
        has it may take a fluid whose state T does not fix (``state_by_enthalpy``): the
        solver carries enthalpy on those streams and asks such a unit this instead of
        :meth:`outlet_temperatures`."""

    @classmethod
    def outlet_temperatures_together(cls, units, inlets: StackedInlets) -> np.ndarray:
        """Outlet temperatures (units, batch, outlets) of several units of this class, equal to
        each unit's ``outlet_temperatures``; a class with a vectorised rating stacks its units
        along the batch axis and rates them in one call (the solver's per-call overhead)."""

    def report(self, inlets: Inlets) -> UnitReport: ...

    @classmethod
    def report_together(cls, units, inlets: StackedInlets) -> list:
        """The reports of several units of this class, equal to each unit's ``report``; a class
        with a vectorised rating rates them stacked in one call."""

    def parameters(self) -> tuple[Parameter, ...]:
        """The values a scenario may vary."""

    def set_parameter(self, name: str, values: np.ndarray) -> None:
        """Give parameter ``name`` one value per scenario (mutates the unit)."""

    outlet_fluids: dict[str, str]
    """Outlet port -> name of the fluid it carries, for outlets that do not carry what enters (a
    reactor's effluent): the network starts that fluid there (mass conserved). Empty for most."""

    def check_flows(self, m_in: np.ndarray, m_out: np.ndarray) -> list:
        """``input`` Findings on the solved flows, (batch, inlets) and (batch, outlets) kg/s: a
        scenario a finding is active in is not valid (a splitter whose inlet carries less than a
        branch's set flow)."""

    def balance_identities(self) -> tuple:
        """Port quantities that are equal whatever the unit's settings: (quantity, inlet port,
        outlet port) with quantity ``flow`` or ``temperature`` (an exchanger side passes its
        flow through; a splitter's branches leave at its inlet temperature); the first port may
        instead be an outlet, written ``("outlet", port)``, for two outlets that leave alike (a
        drum's vapour and liquid leave at one temperature)."""

    def balance_unknowns(self) -> tuple[str, ...]:
        """The unit's own unknowns in its balances (a heater's duty, kW)."""

    def balances(self, states: PortStates, unknowns: np.ndarray) -> np.ndarray:
        """Residuals (batch, equations) of the conservation laws that hold whatever the unit's
        settings, beyond its identities: mass (kg/s), energy (kW). Used to reconcile plant
        data; ``unknowns`` is (batch, len(balance_unknowns()))."""

    def condition(self, states: PortStates) -> dict | None:
        """What measured or reconciled port states say about the unit's condition (an
        exchanger's duty, UA, service and clean U, fouling resistance), arrays over the batch
        keyed by result column, with ``reason`` text where a value cannot be found; None for a
        unit with nothing to say."""

    def settings_from_states(self, states: PortStates, unknowns: np.ndarray) -> dict:
        """The unit's parameter values (names of :meth:`parameters`) that reproduce these port
        states in a simulation: a supply's flow and temperature, a heater's outlet temperature,
        a splitter's fractions, an exchanger's fouling."""

    def carry_utility(self, ports) -> None:
        """Which inlet ports carry utility streams only (mutates the unit)."""

    def required_properties(self) -> PropertyNeed | None:
        """Fluid properties besides cp needed on every inlet, and why."""

    def fluid_problem(self, fluids) -> tuple[str, str] | None:
        """(key below the unit's entry, message) where the unit cannot rate these inlet fluids."""


def splits_by_state(unit) -> bool:
    """Whether ``unit``'s flow coefficients follow its inlet state (a flash drum): it has
    ``split_from_state(inlets)`` (the (batch,) fraction the state gives) and
    ``set_split(fraction, outer_iterations)`` (the fraction its next flow solve uses), and the
    solver iterates flows and states until the fraction settles."""
    return callable(getattr(unit, "split_from_state", None))


def takes_enthalpy_state(unit) -> bool:
    """Whether ``unit`` can take streams that carry enthalpy (it has ``outlet_states``)."""
    return callable(getattr(unit, "outlet_states", None))


def exchanger_totals(total, duty) -> dict:
    """The run totals an exchanger's duty (kW, hot side to cold side) counts in: heat recovered
    between process streams is what passes, whichever way it flows (a case that labels the colder
    stream "hot" still recovers it: |duty|); heat to or from utilities keeps its sign. ``total``
    None: in no total."""
    if total is None:
        return {}
    return {total: np.abs(duty) if total == HEAT_RECOVERED else duty}


def check(kind, severity, active, key, template, excess=None, **values):
    """A Finding whose message is ``template`` formatted with the values at each active scenario;
    ``excess``: how far past the limit each scenario is (see :attr:`Finding.excess`)."""
    return Finding(kind, severity, np.atleast_1d(np.asarray(active, dtype=bool)), template, values, key, excess)


def design_temperature_findings(sides):
    """Limit findings for sides whose highest temperature exceeds their design temperature.

    ``sides`` maps a label to (the limit's key path, design temperature or None, inlet T, outlet T).
    """
    findings = []
    for label, (key, design, t_in, t_out) in sides.items():
        if design is None:
            continue
        peak = np.maximum(t_in, t_out)
        findings.append(check("design_temperature", "limit", peak > design, key,
                              label + "reaches {peak:.1f} °C, above its design temperature of {design:.1f} °C",
                              excess=peak - design, peak=peak, design=design))
    return findings


def stagnant_side_findings(key, still, t_in) -> list:
    """A warning where nothing flows through one side of an exchanger (a closed branch, a side
    bypassed whole) while the other side flows: it has no duty, but what stands in that side
    heats or cools towards the other side's inlet temperature, and liquid
    blocked in there and heated expands (it needs thermal relief: common practice).
    ``still``: side -> where nothing flows through it; ``t_in``: side -> inlet temperature, °C."""
    return [check("no_flow", "warning", still[side] & ~still[other], key,
                  f"no flow through the {side} side while the {other} side flows at {{t:.1f}} °C: what stands in "
                  f"the {side} side goes towards that temperature (blocked in and heated, liquid needs thermal relief)",
                  t=t_in[other]) for side, other in (("hot", "cold"), ("cold", "hot"))]


def blanked_where_idle(quantities: dict, idle) -> dict:
    """A rating's report quantities with P, R, NTU, effectiveness, F, LMTD and approach blank (NaN,
    not 1 or 0) where ``idle``: a side with nothing flowing through has none of them."""
    if not np.any(idle):
        return quantities
    shape = ("ntu", "p", "r", "effectiveness", "f", "lmtd", "approach")
    return {k: np.where(idle, np.nan, v) if k in shape else v for k, v in quantities.items()}


def warning_line_findings(rating, key, works, minimum_f, minimum_approach):
    """The warnings of a P–NTU rating (:class:`.pntu_rating.ExchangerRating`) against the case's
    warning lines, where the unit ``works`` (transfers heat): F below ``minimum_f`` and the
    smallest approach below ``minimum_approach`` (K)."""
    return [check("low_f", "warning", works & (rating.f < minimum_f), key,
                  "F = {f:.3f} is below {lim:.2f}: steep, unreliable part of the F curve", f=rating.f, lim=minimum_f),
            check("approach", "warning", works & (rating.approach < minimum_approach), key,
                  "minimum approach {a:.1f} K is below the case's {lim:.1f} K", a=rating.approach,
                  lim=minimum_approach)]


class UnitBase:
    """Defaults for a unit with one inlet and one outlet that passes its flow through and has
    nothing a scenario may vary; concrete units override what differs."""

    inlets: tuple[str, ...] = ("in",)
    outlets: tuple[str, ...] = ("out",)
    group = "nodes"

    def flow_coefficients(self):
        return np.eye(len(self.outlets), len(self.inlets))

    def supplied_flow(self):
        return np.zeros(len(self.outlets))

    outlet_fluids: dict = {}
    """Outlet port -> fluid name where an outlet carries a fluid of its own (see UnitModel)."""

    def check_flows(self, m_in, m_out) -> list:
        return []

    utility_inlets: frozenset = frozenset()
    """Inlet ports fed by utility streams only (cooling water, steam, hot oil), as the network
    found them: a unit whose duty counts as heat to or from utilities says so in its totals."""

    def parameters(self) -> tuple[Parameter, ...]:
        return ()

    def balance_identities(self) -> tuple:
        return ()

    def balance_unknowns(self) -> tuple[str, ...]:
        return ()

    def balances(self, states: PortStates, unknowns: np.ndarray) -> np.ndarray:
        """Adiabatic by default: total mass and total enthalpy in equal those out."""
        mass = states.m_out.sum(axis=1) - states.m_in.sum(axis=1)
        return np.stack([mass, states.enthalpy_out() - states.enthalpy_in()], axis=1)

    def condition(self, states: PortStates) -> dict | None:
        return None

    def settings_from_states(self, states: PortStates, unknowns: np.ndarray) -> dict:
        return {}

    def carry_utility(self, ports) -> None:
        """Tell the unit which of its inlet ports carry utility streams only (mutates the unit)."""
        self.utility_inlets = frozenset(ports)

    def required_properties(self) -> PropertyNeed | None:
        """Fluid properties besides cp the unit needs on every inlet: the case must give them."""
        return None

    def fluid_problem(self, fluids) -> tuple[str, str] | None:
        """(key below the unit's entry, message) where the unit cannot rate the fluids that reach
        its inlets (``fluids``, in inlet order), else None: bad input the network refuses."""
        return None

    @classmethod
    def outlet_temperatures_together(cls, units, inlets: StackedInlets) -> np.ndarray:
        """Unit by unit: the default for a class that has no stacked rating."""
        return one_by_one(units, inlets)

    @classmethod
    def report_together(cls, units, inlets: StackedInlets) -> list:
        """Unit by unit: the default for a class that has no stacked rating."""
        return reports_one_by_one(units, inlets)

    def set_parameter(self, name, values):
        known = ", ".join(p.name for p in self.parameters()) or "none"
        raise KeyError(f"{self.key} has no parameter '{name}' that a scenario may vary (it has: {known})")
