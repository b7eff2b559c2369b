"""The units every network has besides exchangers: supplies, products, mixers, splitters,
heaters and coolers, each behind the :class:`~.protocol.UnitModel` protocol."""

from __future__ import annotations

import numpy as np

from . import balances
from .arrays import mean_last, sum_last
from .properties import PHYSICAL_RANGE, Blend
from .protocol import COOLERS, FIRED_HEATERS, LARGEST_DUTY, LARGEST_FIRED_DUTY, OTHER_HEATERS, Inlets, Parameter, \
    UnitBase, UnitReport, check, design_temperature_findings

__all__ = ["Source", "Sink", "Mixer", "Splitter", "Heater", "mix", "shared_fractions"]


class Source(UnitBase):
    """A supply of one fluid at a fixed flow (kg/s) and temperature (°C); ``vapour_fraction``
    (kg/kg) places it on its fluid's saturation plateau where the temperature is that of one."""

    kind = "supply"
    inlets = ()

    def __init__(self, name, key, flow, temperature, vapour_fraction=None):
        self.name, self.key = name, key
        self.flow = np.asarray(flow, dtype=float)
        self.temperature = np.asarray(temperature, dtype=float)
        self.vapour_fraction = vapour_fraction

    def supplied_flow(self):
        return self.flow[..., None]

    def parameters(self):
        return (Parameter("flow", "mass_flow", 0.0, low_open=True),
                Parameter("supply_temperature", "temperature", PHYSICAL_RANGE[0], PHYSICAL_RANGE[1]))

    def set_parameter(self, name, values):
        if name == "flow":
            self.flow = np.asarray(values, dtype=float)
        elif name == "supply_temperature":
            self.temperature = np.asarray(values, dtype=float)
        else:
            super().set_parameter(name, values)

    def outlet_temperatures(self, inlets):
        return np.broadcast_to(self.temperature, (inlets.batch,))[:, None].copy()

    def outlet_states(self, inlets, outlet_fluids):
        """The supply's temperature and its enthalpy on the fluid's curve (on a plateau, at the
        supply's vapour fraction; NaN there without one)."""
        t = self.outlet_temperatures(inlets)
        fluid = outlet_fluids[0]
        at = getattr(fluid, "enthalpy_at", None)
        return t, (fluid.enthalpy(t) if at is None else at(t, self.vapour_fraction))

    def report(self, inlets):
        t = self.outlet_temperatures(inlets)[:, 0]
        return UnitReport({"t_out": t}, metrics={"outlet": t})

    def balances(self, states, unknowns):
        return np.empty((states.t_out.shape[0], 0))  # a supply's flow and temperature are free

    def settings_from_states(self, states, unknowns):
        return {"flow": states.m_out[:, 0], "supply_temperature": states.t_out[:, 0]}


class Sink(UnitBase):
    """Where a stream leaves the network; an optional target temperature is reported as a deviation."""

    kind = "product"
    group = "products"
    outlets = ()

    def __init__(self, name, key, target_temperature=None):
        self.name, self.key = name, key
        self.target_temperature = target_temperature

    def outlet_temperatures(self, inlets):
        return np.empty((inlets.batch, 0))

    def outlet_states(self, inlets, outlet_fluids):
        return np.empty((inlets.batch, 0)), np.empty((inlets.batch, 0))

    def balances(self, states, unknowns):
        return np.empty((states.t_in.shape[0], 0))  # what leaves the network is free

    def report(self, inlets):
        quantities = {"t_in": inlets.t[:, 0]}
        if self.target_temperature is not None:
            quantities["deviation"] = inlets.t[:, 0] - self.target_temperature
        return UnitReport(quantities, metrics={"inlet": inlets.t[:, 0]})


class Mixer(UnitBase):
    """Adiabatic mixing of any number of inlets into one outlet."""

    kind = "mixer"

    def __init__(self, name, key, inlets):
        self.name, self.key = name, key
        self.inlets = tuple(inlets)

    def flow_coefficients(self):
        return np.ones((1, len(self.inlets)))

    def outlet_temperatures(self, inlets):
        return mix(inlets)[:, None]

    def outlet_states(self, inlets, outlet_fluids):
        """Mixed by enthalpy: on a stream that carries enthalpy every inlet has one fluid (fluids
        on enthalpy curves mix with no other), so the outlet's h is the flow-weighted mean."""
        total = sum_last(inlets.m)
        flows = total > 0.0
        h_in = sum(inlets.enthalpy_flow(j) for j in range(inlets.m.shape[1]))
        h = np.where(flows, h_in / np.where(flows, total, 1.0), mean_last(inlets.h))[:, None]
        return outlet_fluids[0].temperature(h), h

    def report(self, inlets):
        t = mix(inlets) if inlets.h is None else self.outlet_states(inlets, inlets.fluids[:1])[0][:, 0]
        return UnitReport({"t_out": t}, metrics={"outlet": t})


class Splitter(UnitBase):
    """Splits one inlet into branches by fractions that sum to one, or with some branches set by
    flow (a flow controller on the branch). A branch set by flow carries its set flow whatever
    enters; the other branches share the rest (inlet less the set flows) by their fractions, so
    the flows stay affine in the supplies: outlet = fractions x inlet + a constant per branch. A
    scenario may set one or more branches' fractions or set flows; the fraction branches not set
    share the rest in their base proportions. An inlet carrying less than the set flows is not a
    possible operating point (:meth:`check_flows`)."""

    kind = "splitter"

    def __init__(self, name, key, fractions, set_flows=None, order=None):
        self.name, self.key = name, key
        self.set_flows = {b: np.asarray(f, dtype=float) for b, f in (set_flows or {}).items()}
        self.outlets = tuple(order or (*fractions, *self.set_flows))
        self.shared = tuple(fractions)
        """The branches that share what the set flows leave, by fraction."""
        self.base = np.array([fractions[b] for b in self.shared], dtype=float)
        self.given = {}
        self._update()

    def _update(self):
        fractions = shared_fractions(self.shared, self.base, self.given) if self.given else self.base
        shares = dict(zip(self.shared, fractions))
        zero = np.zeros(())
        self.fractions = np.stack(np.broadcast_arrays(*(shares.get(b, zero) for b in self.outlets)), axis=-1)
        taken = sum(self.set_flows.values()) if self.set_flows else zero
        self.added = np.stack(np.broadcast_arrays(
            *(self.set_flows[b] if b in self.set_flows else -shares[b] * taken for b in self.outlets)), axis=-1)

    def flow_coefficients(self):
        return self.fractions[..., None]

    def supplied_flow(self):
        """The set flows (+ on their branches, - shared by the others): the affine part."""
        return self.added

    def parameters(self):
        return (tuple(Parameter(f"branches.{b}.fraction", "fraction", 0.0, 1.0) for b in self.shared)
                + tuple(Parameter(f"branches.{b}.flow", "mass_flow", 0.0) for b in self.set_flows))

    def set_parameter(self, name, values):
        branch, _, what = name.removeprefix("branches.").rpartition(".")
        if what == "fraction" and branch in self.shared:
            self.given[branch] = np.asarray(values, dtype=float)
        elif what == "flow" and branch in self.set_flows:
            self.set_flows[branch] = np.asarray(values, dtype=float)
        else:
            return super().set_parameter(name, values)
        self._update()

    def check_flows(self, m_in, m_out):
        """Not valid where the inlet carries less than the set flows take (a branch sharing the
        rest would run backwards), by more than round-off."""
        if not self.set_flows:
            return []
        taken = np.broadcast_to(sum(self.set_flows.values()), m_in.shape[:1])
        short = m_in[:, 0] < taken - 1e-9 * np.maximum(taken, 1.0)
        first = next(iter(self.set_flows))
        sets = ", ".join(f"{b} {{{b}:.6g}} kg/s" for b in self.set_flows)
        return [check("inlet_below_set_flow", "input", short, f"{self.key}.branches.{first}.flow",
                      "the splitter's inlet carries {inlet:.6g} kg/s, less than its branches set by flow take "
                      f"({sets}): the branches left would run backwards", inlet=m_in[:, 0],
                      **{b: np.broadcast_to(v, m_in.shape[:1]) for b, v in self.set_flows.items()})]

    def outlet_temperatures(self, inlets):
        return np.repeat(inlets.t, len(self.outlets), axis=1)

    def outlet_states(self, inlets, outlet_fluids):
        return self.outlet_temperatures(inlets), np.repeat(inlets.h, len(self.outlets), axis=1)

    def balance_identities(self):
        return tuple(("temperature", "in", branch) for branch in self.outlets)

    def balances(self, states, unknowns):
        """Mass only: the branches leave at the inlet temperature (an identity)."""
        return (states.m_out.sum(axis=1) - states.m_in[:, 0])[:, None]

    def settings_from_states(self, states, unknowns):
        """Each set branch's flow, and each sharing branch's share of what they leave."""
        index = {b: j for j, b in enumerate(self.outlets)}
        settings = {f"branches.{b}.flow": states.m_out[:, index[b]] for b in self.set_flows}
        total = sum(states.m_out[:, index[b]] for b in self.shared)
        safe = np.where(total > 0.0, total, 1.0)
        settings.update({f"branches.{b}.fraction": states.m_out[:, index[b]] / safe for b in self.shared})
        return settings

    def report(self, inlets):
        return UnitReport({"t_out": inlets.t[:, 0]}, metrics={"outlet": inlets.t[:, 0]})


def shared_fractions(branches, base, given):
    """Branch fractions with the branches in ``given`` (branch -> a number or an array) at their
    values and the others sharing the rest in proportion to ``base`` (the case's fractions), or
    equally where their base shares are all zero. Where the given values leave nothing (or less
    than nothing) to share, or every branch is given, all are divided by their sum, so that the
    fractions always add up to one.

    >>> [round(float(f), 12) for f in shared_fractions(("a", "b", "c"), [0.5, 0.3, 0.2], {"a": 0.8})]
    [0.8, 0.12, 0.08]
    >>> [round(float(f), 12) for f in shared_fractions(("a", "b", "c"), [0.5, 0.3, 0.2], {"a": 0.6, "c": 0.1})]
    [0.6, 0.3, 0.1]
    """
    base = np.asarray(base, dtype=float)
    values = {b: np.asarray(v, dtype=float) for b, v in given.items()}
    free = [j for j, b in enumerate(branches) if b not in values]
    taken = sum(values.values()) if values else np.zeros(())
    rest = np.maximum(1.0 - taken, 0.0)
    free_base = base[free].sum()
    shares = {j: (base[j] / free_base if free_base > 0.0 else 1.0 / len(free)) for j in free}
    fractions = [values[b] * 1.0 if b in values else rest * shares[j] for j, b in enumerate(branches)]
    total = sum(np.broadcast_arrays(*fractions))
    scale = np.where(total > 0.0, total, 1.0)
    return [np.asarray(f / scale) for f in np.broadcast_arrays(*fractions)]


class Heater(UnitBase):
    """A heater (furnace, trim heater, steam heater, a reactor's heat release) or a cooler on one
    stream: fixed duty or target outlet temperature.

    ``duty`` is the heat added (heater) or removed (cooler), kW, >= 0; or ``outlet_temperature``
    sets the outlet and the duty follows. A heater whose inlet is already at or above its target
    (a cooler: at or below) idles, as its control valve would close: zero duty, the outlet at the
    inlet temperature, and a "target not reached" warning. ``heat_source`` (heaters) says which
    total its duty counts in (see :data:`HEAT_SOURCES`).

    ``outlet_fluid`` (a fluid model, with its name in ``outlet_fluid_name``) makes the outlet
    carry another fluid than what enters: a reactor's effluent is not its feed. The duty is then
    the heat added at the inlet temperature, as if the change (a reaction) happened there and
    the new fluid were then heated: ṁ·(h_new(T_out) − h_new(T_in)); for a reactor
    (``heat_source: reaction``) it is the heat its reaction releases at its inlet temperature,
    and the outlet lies duty / (ṁ·cp_new) above the inlet. The energy balance, whose enthalpies
    are each fluid's own referred to 0 °C, counts the heat of the change at 0 °C (Kirchhoff's
    law): the duty plus ṁ·(h_new(T_in) − h_old(T_in)) (``heat_added`` in the report), so it
    closes on the fluids the segments carry.
    """

    group = "heaters_and_coolers"

    def __init__(self, name, key, *, cooler=False, duty=None, outlet_temperature=None, design_temperature=None,
                 heat_source="fired", outlet_fluid=None, outlet_fluid_name=""):
        if (duty is None) == (outlet_temperature is None):
            raise ValueError("give exactly one of duty and outlet_temperature")
        self.name, self.key = name, key
        self.kind = "cooler" if cooler else "heater"
        self.sign = -1.0 if cooler else 1.0
        self.duty = None if duty is None else np.asarray(duty, dtype=float)
        self.target = None if outlet_temperature is None else np.asarray(outlet_temperature, dtype=float)
        self.design_temperature = design_temperature
        self.heat_source = None if cooler else heat_source
        self.total = COOLERS if cooler else (FIRED_HEATERS if heat_source == "fired" else OTHER_HEATERS)
        self.outlet_fluid = outlet_fluid
        self.outlet_fluids = {"out": outlet_fluid_name} if outlet_fluid is not None else {}

    def parameters(self):
        if self.target is not None:
            return (Parameter("outlet_temperature", "temperature", PHYSICAL_RANGE[0], PHYSICAL_RANGE[1]),)
        return (Parameter("duty", "duty", 0.0),)

    def set_parameter(self, name, values):
        if name == "outlet_temperature" and self.target is not None:
            self.target = np.asarray(values, dtype=float)
        elif name == "duty" and self.duty is not None:
            self.duty = np.asarray(values, dtype=float)
        else:
            super().set_parameter(name, values)

    def balance_identities(self):
        return (("flow", "in", "out"),)

    def balance_unknowns(self):
        return ("duty",)

    def balances(self, states, unknowns):
        """Energy: the outlet's enthalpy flow less the inlet's is the duty added (a heater) or
        removed (a cooler), kW, plus where the fluid changes the heat of the change (see the class)."""
        change = self._change_heat(states.t_in[:, 0], states.m_in[:, 0], states.fluids_in[0], states.fluids_out[0])
        return (states.enthalpy_out() - states.enthalpy_in() - change - self.sign * unknowns[:, 0])[:, None]

    def settings_from_states(self, states, unknowns):
        """Its outlet temperature where the unit is set by one, else its duty."""
        if self.target is not None:
            return {"outlet_temperature": states.t_out[:, 0]}
        change = self._change_heat(states.t_in[:, 0], states.m_in[:, 0], states.fluids_in[0], states.fluids_out[0])
        return {"duty": self.sign * (states.enthalpy_out() - states.enthalpy_in() - change)}

    def _heat_added(self, inlets):
        """Heat added (kW, negative for a cooler) on the outlet fluid at the inlet temperature,
        the outlet temperature, and where a unit set by its outlet temperature idles."""
        t, m = inlets.t[:, 0], inlets.m[:, 0]
        fluid = inlets.fluids[0] if self.outlet_fluid is None else self.outlet_fluid
        if self.target is not None:
            target = np.broadcast_to(self.target, t.shape)
            idle = self.sign * (t - target) > 1e-9 * (1.0 + np.abs(target))
            t_out = np.maximum(target, t) if self.sign > 0 else np.minimum(target, t)
            return m * (fluid.enthalpy(t_out) - fluid.enthalpy(t)), t_out, idle
        added = np.broadcast_to(self.sign * self.duty, t.shape)
        flows = m > 0.0
        h_out = fluid.enthalpy(t) + added / np.where(flows, m, 1.0)
        return added, np.where(flows, fluid.temperature(h_out, guess=t), t), np.zeros(t.shape, bool)

    def _change_heat(self, t, m, fluid_in, fluid_out=None):
        """ṁ·(h_out fluid(T_in) − h_in fluid(T_in)), kW: what a fluid change adds to the energy
        balance besides the duty (0 for a unit whose outlet carries what enters)."""
        if self.outlet_fluid is None:
            return np.zeros(np.shape(t))
        return m * ((fluid_out or self.outlet_fluid).enthalpy(t) - fluid_in.enthalpy(t))

    def outlet_temperatures(self, inlets):
        return self._heat_added(inlets)[1][:, None]

    def report(self, inlets):
        t, m = inlets.t[:, 0], inlets.m[:, 0]
        added, t_out, idle = self._heat_added(inlets)
        side = "cold" if self.sign > 0 else "hot"
        duty = self.sign * added
        quantities = {"duty": duty, f"t_{side}_in": t, f"t_{side}_out": t_out}
        heat_added = np.where(m > 0.0, added + self._change_heat(t, m, inlets.fluids[0]), 0.0)
        labels = {"heat_source": self.heat_source} if self.heat_source else {}
        labels.update({"outlet_fluid": name for name in self.outlet_fluids.values()})
        findings = self._findings(t, m, t_out, idle) + [self._duty_finding(duty)]
        return UnitReport(quantities, findings, heat_added=heat_added, labels=labels,
                          totals={self.total: np.where(m > 0.0, duty, 0.0)},
                          metrics={"duty": duty, "inlet": t, "outlet": t_out},
                          highlights={f"{self.name}_inlet_c": t} if self.total == FIRED_HEATERS else {})

    def _duty_finding(self, duty):
        """A computed duty beyond any plant's: a slip in the case that no single input shows."""
        fired = self.total == FIRED_HEATERS
        edge = LARGEST_FIRED_DUTY if fired else LARGEST_DUTY
        return check("duty_beyond_plausible", "warning", np.abs(duty) > edge, self.key,
                     f"the {self.kind}'s duty comes out at {{duty:,.0f}} kW, above {edge / 1e3:,.0f} MW, the edge of "
                     f"a plausible {'fired heater' if fired else 'duty'} (the largest fired heaters deliver ~100-300 "
                     "MW, common practice): check the flows and temperatures that set it", duty=np.abs(duty))

    def _findings(self, t, m, t_out, idle):
        """Its design temperature, and what its setting cannot do: a target behind the inlet (it
        idles), a fixed duty without flow."""
        findings = design_temperature_findings(
            {"the stream ": (f"{self.key}.design_temperature", self.design_temperature, t, t_out)})
        if self.target is not None:
            target = np.broadcast_to(self.target, t.shape)
            findings.append(
                check("target_not_reached", "warning", idle & (m > 0.0), f"{self.key}.outlet_temperature",
                      f"target not reached: the stream enters at {{t:.2f}} °C, already "
                      + ("above" if self.sign > 0 else "below")
                      + f" the {self.kind}'s outlet temperature of {{target:.2f}} °C, so the {self.kind} idles "
                        "at zero duty", target=target, t=t))
        elif self.duty is not None:
            without_flow = (m <= 0.0) & (np.broadcast_to(self.duty, t.shape) != 0.0)
            findings.append(check("duty_without_flow", "input", without_flow, f"{self.key}.duty",
                                  f"the {self.kind} has a fixed duty but no flow through it"))
        return findings


def mix(inlets: Inlets, heat_loss=None):
    """Outlet temperature of an adiabatic mixer from its enthalpy balance, or of one that loses
    ``heat_loss`` (kW, one value per scenario) to its surroundings; with no flow at all, the mean
    of the inlet temperatures (any value balances a zero flow)."""
    total = sum_last(inlets.m)
    flows = total > 0.0
    lost = 0.0 if heat_loss is None else np.where(flows, heat_loss, 0.0)
    if all(f.constant_cp for f in inlets.fluids):
        capacities = np.stack([inlets.capacity(j) for j in range(inlets.t.shape[1])], axis=1)
        t_mix = balances.mix_temperature(inlets.t, capacities)
        if heat_loss is None:
            return t_mix
        rate = sum_last(capacities)
        return t_mix - lost / np.where(rate > 0.0, rate, 1.0)
    h_in = sum(inlets.enthalpy_flow(j) for j in range(inlets.t.shape[1])) - lost
    fractions = inlets.m / np.where(flows, total, 1.0)[:, None]
    blend = Blend(inlets.fluids, [fractions[:, j] for j in range(inlets.t.shape[1])])
    guess = balances.mix_temperature(inlets.t, np.where(flows[:, None], inlets.m, 1.0))
    t_out = blend.temperature(h_in / np.where(flows, total, 1.0), guess=guess)
    return np.where(flows, t_out, mean_last(inlets.t))
