r"""A condensing steam heater: one process stream heated by steam condensing at a stated pressure.

The steam side is isothermal at the saturation temperature of its pressure (IAPWS-IF97,
:mod:`.water_steam`); the steam enters saturated and leaves as saturated condensate, so each
kilogram gives up the latent heat :math:`h_{fg} = h''(p) - h'(p)` and the steam used is
:math:`\dot m_{steam} = Q / h_{fg}` (no superheat, no subcooling). The heater is set by one of:

* ``outlet_temperature``: the steam valve holds the process outlet (the duty follows);
* ``duty``: a fixed heat input (the outlet follows from the process side's enthalpy);
* ``ua``: the exchanger rated with an isothermal hot side, where the heat-capacity rate ratio is
  R = 0 and every flow arrangement gives :math:`\varepsilon = 1 - e^{-NTU}` [1]_, with
  NTU = UA / (ṁ·cp) on the process side and cp its mean over the process side's range (found by
  iterating to the enthalpy balance; exact in one pass for a constant cp).

Condensing steam cannot heat a stream to or above its saturation temperature: an outlet
temperature at or above it, or a duty that would need one, is an input error (an ``input``
finding: that scenario is not valid), never a number; so is a stream entering above it.

References
----------
.. [1] Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S. Fundamentals of Heat and
       Mass Transfer, ε–NTU relations: for Cr = 0, ε = 1 − exp(−NTU) for all arrangements.
"""

from __future__ import annotations

import numpy as np

from .protocol import OTHER_HEATERS, Parameter, check
from .stream_units import Heater
from .water_steam import saturation_enthalpies, saturation_temperature

__all__ = ["SteamHeater", "isothermal_effectiveness"]


def isothermal_effectiveness(ntu):
    """ε = 1 − exp(−NTU): an exchanger one of whose sides stays at one temperature (R = 0), any
    flow arrangement [1]_; ``expm1`` keeps it exact for small NTU. NTU >= 0.

    >>> round(float(isothermal_effectiveness(1.0)), 12)
    0.632120558829
    """
    return -np.expm1(-np.asarray(ntu, dtype=float))


class SteamHeater(Heater):
    """A process stream heated by condensing steam at ``steam_pressure`` (kPa, absolute), set by
    exactly one of ``outlet_temperature`` (°C), ``duty`` (kW) or ``ua`` (kW/K)."""

    kind = "steam heater"

    def __init__(self, name, key, *, steam_pressure, outlet_temperature=None, duty=None, ua=None,
                 design_temperature=None):
        if sum(v is not None for v in (outlet_temperature, duty, ua)) != 1:
            raise ValueError("give exactly one of outlet_temperature, duty and ua")
        super().__init__(name, key, duty=0.0 if ua is not None else duty, outlet_temperature=outlet_temperature,
                         design_temperature=design_temperature, heat_source="utility")
        self.kind = SteamHeater.kind
        self.ua = None if ua is None else np.asarray(ua, dtype=float)
        if self.ua is not None:
            self.duty = None
        self.steam_pressure = float(steam_pressure)
        self.t_sat = saturation_temperature(self.steam_pressure)
        h_liquid, h_vapour = saturation_enthalpies(self.steam_pressure)
        self.latent_heat = h_vapour - h_liquid
        self.total = OTHER_HEATERS

    def parameters(self):
        return (Parameter("ua", "conductance", 0.0),) if self.ua is not None else super().parameters()

    def set_parameter(self, name, values):
        if name == "ua" and self.ua is not None:
            self.ua = np.asarray(values, dtype=float)
        else:
            super().set_parameter(name, values)

    def settings_from_states(self, states, unknowns):
        """Its outlet temperature or duty as the heater; with UA, the UA that gives the measured
        outlet (NTU = −ln(1 − ε) with ε the process side's share of the steam's approach)."""
        if self.ua is None:
            return super().settings_from_states(states, unknowns)
        t_in, t_out, m = states.t_in[:, 0], states.t_out[:, 0], states.m_in[:, 0]
        fluid = states.fluids_in[0]
        rise = t_out - t_in
        cp = np.where(np.abs(rise) > 1e-9, (fluid.enthalpy(t_out) - fluid.enthalpy(t_in)) / np.where(
            np.abs(rise) > 1e-9, rise, 1.0), fluid.cp(t_in))
        with np.errstate(divide="ignore", invalid="ignore"):
            ntu = -np.log1p(-rise / (self.t_sat - t_in))
        return {"ua": ntu * m * cp}

    def _rated(self, t, m, fluid):
        """Outlet temperature and heat added (kW) of the UA rating: ε = 1 − exp(−NTU) with the
        process side's mean cp, iterated until the outlet moves less than 1e-12 K. A stream at or
        above the saturation temperature gets no heat (it is refused in the report)."""
        ua = np.broadcast_to(self.ua, t.shape)
        approach = np.maximum(self.t_sat - t, 0.0)
        flows = m > 0.0
        cp = fluid.cp(t)
        t_out = t
        for _ in range(100):
            ntu = ua / np.where(flows, m * cp, 1.0)
            new = np.where(flows, t + isothermal_effectiveness(ntu) * approach, t)
            rise = new - t
            moving = np.abs(rise) > 1e-12 * (1.0 + np.abs(t))
            h_rise = fluid.enthalpy(new) - fluid.enthalpy(t)
            cp = np.where(moving, h_rise / np.where(moving, rise, 1.0), cp)
            done = np.all(np.abs(new - t_out) <= 1e-12 * (1.0 + np.abs(new)))
            t_out = new
            if done:
                break
        return t_out, m * (fluid.enthalpy(t_out) - fluid.enthalpy(t))

    def _heat_added(self, inlets):
        t, m, fluid = inlets.t[:, 0], inlets.m[:, 0], inlets.fluids[0]
        if self.ua is None:
            return super()._heat_added(inlets)
        t_out, added = self._rated(t, m, fluid)
        return added, t_out, np.zeros(t.shape, bool)

    def report(self, inlets):
        report = super().report(inlets)
        t, m = inlets.t[:, 0], inlets.m[:, 0]
        t_out = report.quantities["t_cold_out"]
        steam = np.where(m > 0.0, report.quantities["duty"], 0.0) / self.latent_heat
        # the steam condenses whole: the condensate leaves at the steam's flow, saturated at t_sat
        report.quantities.update(steam_flow=steam, condensate_flow=steam, t_sat=np.full(t.shape, self.t_sat))
        if self.ua is not None:
            approach = self.t_sat - t
            report.quantities["ua"] = np.broadcast_to(self.ua, t.shape)
            report.quantities["effectiveness"] = np.where(
                approach > 0.0, (t_out - t) / np.where(approach > 0.0, approach, 1.0), 0.0)
        report.metrics["steam_flow"] = steam
        report.labels = {"heat_source": f"steam at {self.steam_pressure:.1f} kPa (absolute)"}
        return report

    def _findings(self, t, m, t_out, idle):
        return super()._findings(t, m, t_out, idle) + self._saturation_findings(t, m, t_out)

    def _saturation_findings(self, t, m, t_out):
        """Input errors: what condensing steam at its saturation temperature cannot do."""
        pressure, t_sat = self.steam_pressure, self.t_sat
        tolerance = 1e-9 * (1.0 + abs(t_sat))
        flows = m > 0.0
        if self.target is not None:
            target = np.broadcast_to(self.target, t.shape)
            return [check("above_steam_saturation", "input", (target >= t_sat) & flows,
                          f"{self.key}.outlet_temperature",
                          "the outlet temperature {target:.2f} °C is at or above the saturation temperature of the "
                          f"steam ({t_sat:.2f} °C at {pressure:g} kPa): condensing steam cannot heat the stream "
                          "there; raise the steam pressure or lower the outlet temperature", target=target)]
        if self.ua is None:
            return [check("above_steam_saturation", "input", (t_out > t_sat + tolerance) & flows, f"{self.key}.duty",
                          "the duty would take the stream to {t_out:.2f} °C, above the saturation temperature of the "
                          f"steam ({t_sat:.2f} °C at {pressure:g} kPa): condensing steam cannot give it",
                          t_out=t_out)]
        return [check("above_steam_saturation", "input", (t > t_sat + tolerance) & flows, f"{self.key}.steam_pressure",
                      "the stream enters at {t:.2f} °C, above the saturation temperature of the steam "
                      f"({t_sat:.2f} °C at {pressure:g} kPa): the steam cannot heat it", t=t)]
