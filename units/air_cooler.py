"""An air cooler behind the unit protocol: one process stream cooled by air, a utility that is no
stream of the network (its inlet temperature and flow are the unit's own settings).

The bundle is rated as the registry's ``air_cooler`` arrangement (:mod:`.pntu_air_cooler`:
crossflow over the stated tube rows and process passes), in service: the process side with its
mean cp over its actual range, iterated to its own enthalpy balance (:func:`.rate_in_service`),
the air at a constant cp. U is fixed (``ua``, or ``u`` over ``area``) or a clean U with a fouling
resistance in series, 1/U = 1/U_clean + R_f, on the same area.

The air flow is fixed, or set by fan control: the flow between a minimum and a maximum for which
the process leaves at its target. The outlets the fans can reach lie between the outlets at the
two flows (the outlet falls monotonically as the air flow rises while the process is the hotter
stream), so the outlet is the target clipped to that range; at the maximum flow a process still
above its target gives a "target not reached" warning, at the minimum flow one already below it
a warning that the fans cannot turn down further. The flow that meets the target is found for
the report by bisection in ln(flow). Fan power is not modelled.

The duty counts as heat to utilities in the run totals (air is a utility).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .arrangements import arranged
from .properties import ConstantCp
from .protocol import HEAT_TO_UTILITIES, Parameter, UnitBase, UnitReport, blanked_where_idle, check, \
    design_temperature_findings, warning_line_findings
from .service_rating import ExchangerSpec, rate_in_service

__all__ = ["FanControl", "AirCooler", "AIR_CP"]

AIR_CP = 1.006
"""kJ/kg·K: dry air at 0-60 °C and atmospheric pressure, 1.005-1.008 (Incropera, Table A.4,
from memory)."""
FLOW_BISECTIONS = 60
"""Halvings of ln(max/min flow) for the flow that meets the target: a range of 1000:1 to
6e-15 relative, far inside what the outlet temperature resolves."""


@dataclass
class FanControl:
    """The air flow set between ``minimum_flow`` and ``maximum_flow`` (kg/s) so that the process
    leaves at ``outlet_temperature`` (°C)."""

    outlet_temperature: object
    minimum_flow: float
    maximum_flow: float


class AirCooler(UnitBase):
    """An air-cooled exchanger on one process stream (see the module docstring).

    ``rows``, ``passes``: tube rows and process passes (a combination of
    :data:`.pntu_air_cooler.AIR_COOLER_PASSES`). ``air_temperature`` °C; ``air_flow`` kg/s or
    ``fan`` a :class:`FanControl`; ``air_cp`` kJ/kg·K. U: ``ua`` (kW/K), or ``area`` (m²) with
    ``u`` or with ``clean_u`` and ``fouling`` (W/m²·K, m²·K/W). ``minimum_approach`` (K) and
    ``minimum_f`` are the warning lines (by default none).
    """

    kind = "air cooler"
    group = "exchangers"

    def __init__(self, name, key, *, rows, passes, air_temperature, air_flow=None, fan=None, air_cp=AIR_CP,
                 ua=None, u=None, clean_u=None, fouling=0.0, area=None, design_temperature=None,
                 minimum_approach=-np.inf, minimum_f=0.0):
        if (air_flow is None) == (fan is None):
            raise ValueError("give exactly one of air_flow and fan")
        if sum(x is not None for x in (ua, u, clean_u)) != 1 or (ua is None and area is None):
            raise ValueError("give U as ua, or as u or clean_u with area")
        self.name, self.key = name, key
        self.spec = ExchangerSpec(arranged("air_cooler", tube_rows=rows), tube_passes=passes, shell_side="cold")
        self.air = ConstantCp(air_cp)
        self.air_temperature = np.asarray(air_temperature, dtype=float)
        self.air_flow = None if air_flow is None else np.asarray(air_flow, dtype=float)
        self.fan = fan
        self.ua, self.u, self.clean_u = ua, u, clean_u
        self.fouling, self.area = np.asarray(fouling, dtype=float), area
        self.design_temperature = design_temperature
        self.minimum_approach, self.minimum_f = minimum_approach, minimum_f

    # -- settings ----------------------------------------------------------------------------
    def service_ua(self):
        """UA (kW/K) of the bundle as it is: fixed, or from U (clean U and fouling in series)."""
        if self.ua is not None:
            return np.asarray(self.ua, dtype=float)
        u = self.u if self.u is not None else 1.0 / (1.0 / self.clean_u + self.fouling)
        return np.asarray(u, dtype=float) * self.area / 1000.0

    def parameters(self):
        found = [Parameter("air.inlet_temperature", "temperature", -273.15, 2000.0)]
        if self.fan is None:
            found.append(Parameter("air.flow", "mass_flow", 0.0, low_open=True))
        else:
            found.append(Parameter("air.fan_control.outlet_temperature", "temperature", -273.15, 2000.0))
        if self.ua is not None:
            found.append(Parameter("ua", "conductance", 0.0))
        elif self.u is not None:
            found.append(Parameter("u", "heat_transfer_coefficient", 0.0))
        else:
            found.append(Parameter("fouling", "fouling_resistance", 0.0))
        return tuple(found)

    def set_parameter(self, name, values):
        values = np.asarray(values, dtype=float)
        if name not in {p.name for p in self.parameters()}:
            return super().set_parameter(name, values)
        if name == "air.inlet_temperature":
            self.air_temperature = values
        elif name == "air.flow":
            self.air_flow = values
        elif name == "air.fan_control.outlet_temperature":
            self.fan = FanControl(values, self.fan.minimum_flow, self.fan.maximum_flow)
        else:
            setattr(self, name, values)

    # -- rating --------------------------------------------------------------------------------
    def _rate(self, inlets, air_flow, details=False):
        """The bundle rated at ``air_flow`` (kg/s, per scenario): process on the hot port, air on
        the cold one (heat flows by temperature whichever is warmer)."""
        t, m = inlets.t[:, 0], inlets.m[:, 0]
        self.spec.ua = np.broadcast_to(self.service_ua(), t.shape)
        t_air = np.broadcast_to(self.air_temperature, t.shape)
        flow = np.broadcast_to(np.asarray(air_flow, dtype=float), t.shape)
        return rate_in_service(self.spec, t, t_air, m, flow, inlets.fluids[0], self.air, details=details)

    def _operating_point(self, inlets):
        """Outlet temperature, air flow and where the fans sit at a limit: ("minimum" /
        "maximum" boolean arrays), per scenario."""
        shape = inlets.t[:, 0].shape
        if self.fan is None:
            flow = np.broadcast_to(self.air_flow, shape)
            out = self._rate(inlets, flow).rating.t_hot_out
            return out, flow, np.zeros(shape, bool), np.zeros(shape, bool)
        low = np.full(shape, self.fan.minimum_flow)
        high = np.full(shape, self.fan.maximum_flow)
        out_low, out_high = self._rate(inlets, low).rating.t_hot_out, self._rate(inlets, high).rating.t_hot_out
        target = np.broadcast_to(self.fan.outlet_temperature, shape)
        # the outlets the fans can reach lie between the two; a tolerance keeps a met target met
        slack = 1e-9 * (1.0 + np.abs(target))
        falling = out_high <= out_low  # the usual case: more air, a colder process outlet
        colder = target < np.minimum(out_low, out_high) - slack  # the target lies past what either reaches
        warmer = target > np.maximum(out_low, out_high) + slack
        at_max = (colder & falling) | (warmer & ~falling)
        at_min = (warmer & falling) | (colder & ~falling)
        out = np.where(at_max, out_high, np.where(at_min, out_low, target))
        flow = np.where(at_max, high, np.where(at_min, low, np.nan))
        controlled = ~(at_max | at_min)
        if controlled.any():
            flow = np.where(controlled, self._flow_for(inlets, target, low, high, falling), flow)
        return out, flow, at_min, at_max

    def _flow_for(self, inlets, target, low, high, falling):
        """The air flow whose outlet is the target, by bisection in ln(flow) between the limits
        (``falling``: where the outlet falls as the air flow rises)."""
        lo, hi = np.log(low), np.log(high)
        for _ in range(FLOW_BISECTIONS):
            mid = 0.5 * (lo + hi)
            above = self._rate(inlets, np.exp(mid)).rating.t_hot_out > target
            more_air = above == falling
            lo, hi = np.where(more_air, mid, lo), np.where(more_air, hi, mid)
        return np.exp(0.5 * (lo + hi))

    def outlet_temperatures(self, inlets):
        return self._operating_point(inlets)[0][:, None]

    def report(self, inlets):
        t, m, fluid = inlets.t[:, 0], inlets.m[:, 0], inlets.fluids[0]
        out, flow, at_min, at_max = self._operating_point(inlets)
        service = self._rate(inlets, flow, details=True)
        x = service.rating
        duty = np.where(m > 0.0, m * (fluid.enthalpy(t) - fluid.enthalpy(out)), 0.0)
        t_air = np.broadcast_to(self.air_temperature, t.shape)
        air_out = t_air + duty / (flow * self.air.value)
        quantities = {"duty": duty, "t_hot_in": t, "t_hot_out": out, "t_cold_in": t_air, "t_cold_out": air_out,
                      "ua": service.ua, "ntu": x.ntu, "p": x.p, "r": x.r, "effectiveness": x.effectiveness, "f": x.f,
                      "lmtd": x.lmtd, "approach": x.approach, "air_flow": flow}
        quantities = blanked_where_idle(quantities, ~(m > 0.0))
        if self.area is not None:
            u_service = service.ua * 1000.0 / self.area
            clean = u_service if self.clean_u is None else np.broadcast_to(self.clean_u, t.shape)
            quantities.update(u_service=u_service, u_clean=clean)
        findings = design_temperature_findings(
            {"the process side ": (f"{self.key}.design_temperature", self.design_temperature, t, out)})
        findings += warning_line_findings(x, self.key, duty != 0.0, self.minimum_f, self.minimum_approach)
        findings.append(check("reversed_heat_flow", "warning", x.reversed, self.key,
                              "the process enters colder ({t:.1f} °C) than the air ({ta:.1f} °C): the air heats it "
                              "({q:.1f} kW)", t=t, ta=t_air, q=-duty))
        if self.fan is not None:
            where = f"{self.key}.air.fan_control"
            target = np.broadcast_to(self.fan.outlet_temperature, t.shape)
            findings.append(check("target_not_reached", "warning", at_max & (m > 0.0), f"{where}.maximum_flow",
                                  "target not reached: at the maximum air flow ({f:.1f} kg/s) the process leaves at "
                                  "{out:.2f} °C, not its target of {target:.2f} °C", f=flow, out=out, target=target))
            findings.append(check("below_target_at_minimum_air", "warning", at_min & (m > 0.0),
                                  f"{where}.minimum_flow", "at the minimum air flow ({f:.1f} kg/s) the process already "
                                  "leaves at {out:.2f} °C, past its target of {target:.2f} °C", f=flow, out=out,
                                  target=target))
        labels = {"u_source": "fixed UA" if self.ua is not None else ("fixed U" if self.u is not None
                                                                       else "clean U and fouling")}
        return UnitReport(quantities, findings, heat_added=-duty, labels=labels, totals={HEAT_TO_UTILITIES: duty},
                          metrics={"duty": duty, "inlet": t, "outlet": out, "air_flow": flow, "air_out": air_out})

    def balance_identities(self):
        return (("flow", "in", "out"),)

    def balance_unknowns(self):
        return ("duty",)

    def balances(self, states, unknowns):
        """Energy: the process loses the duty to the air (kW)."""
        return (states.enthalpy_out() - states.enthalpy_in() + unknowns[:, 0])[:, None]
