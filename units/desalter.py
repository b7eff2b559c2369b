"""A desalter: crude and wash water in, desalted crude and brine out.

Assumptions (stated, not modelled further): the wash water mixes with the crude and leaves as
brine, all of it except an optional ``carry_over`` fraction that stays in the desalted crude;
salt and any oil in the brine are ignored (mass is the crude and the water). The two outlets
leave at the one temperature the enthalpy balance of the mixture gives (the crude and water
reach mixing equilibrium in the vessel), less an optional stated heat loss to the surroundings
(kW). So the crude's temperature drop across the desalter comes from the balance:

    ṁ_crude·h_crude(T_crude) + ṁ_water·h_water(T_water) − loss = (ṁ_crude + ṁ_water)·h_mix(T_out)

with h_mix the two fluids blended by mass; each outlet then carries its share of the mixture at
T_out, which closes the balance exactly whatever the carry-over.
"""

from __future__ import annotations

import numpy as np

from .protocol import HEAT_LOST, Parameter, UnitBase, UnitReport, check
from .stream_units import mix

__all__ = ["Desalter"]


class Desalter(UnitBase):
    """Crude (``crude`` side) washed with water (``water`` side, leaving as brine)."""

    kind = "desalter"
    group = "separators"
    inlets = ("crude", "water")
    outlets = ("crude", "water")

    def __init__(self, name, key, carry_over=0.0, heat_loss=0.0):
        self.name, self.key = name, key
        self.carry_over = np.asarray(carry_over, dtype=float)
        self.heat_loss = np.asarray(heat_loss, dtype=float)

    def flow_coefficients(self):
        """Desalted crude = crude + carry-over x water; brine = the rest of the water."""
        c = self.carry_over
        one, zero = np.ones_like(c), np.zeros_like(c)
        return np.stack([np.stack([one, c], axis=-1), np.stack([zero, 1.0 - c], axis=-1)], axis=-2)

    def balance_identities(self):
        """Desalted crude and brine leave at one temperature (the vessel's mixing equilibrium);
        mass and energy are :meth:`balances`."""
        return (("temperature", ("outlet", "crude"), "water"),)

    def parameters(self):
        return (Parameter("carry_over", "fraction", 0.0, 1.0), Parameter("heat_loss", "duty", 0.0))

    def set_parameter(self, name, values):
        if name in ("carry_over", "heat_loss"):
            setattr(self, name, np.asarray(values, dtype=float))
        else:
            super().set_parameter(name, values)

    def _outlet(self, inlets):
        return mix(inlets, heat_loss=np.broadcast_to(self.heat_loss, (inlets.batch,)))

    def outlet_temperatures(self, inlets):
        return np.repeat(self._outlet(inlets)[:, None], 2, axis=1)

    def balances(self, states, unknowns):
        """Mass of the mixture, and energy with the stated heat loss, kW."""
        mass = states.m_out.sum(axis=1) - states.m_in.sum(axis=1)
        energy = states.enthalpy_out() - states.enthalpy_in() + np.broadcast_to(self.heat_loss, mass.shape)
        return np.stack([mass, energy], axis=1)

    def report(self, inlets):
        t_crude, t_water = inlets.t[:, 0], inlets.t[:, 1]
        m = inlets.m
        flows = m.sum(axis=1) > 0.0
        t_out = self._outlet(inlets)
        loss = np.broadcast_to(self.heat_loss, t_out.shape)
        brine = m[:, 1] * (1.0 - self.carry_over)
        findings = [check("heat_loss_without_flow", "input", ~flows & (loss > 0.0), f"{self.key}.heat_loss",
                          "the desalter has a heat loss but no flow through it")]
        return UnitReport({"t_in": t_crude, "t_out": t_out, "wash_water_in": t_water, "brine_flow": brine,
                           "crude_drop": t_crude - t_out},
                          findings, heat_added=np.where(flows, -loss, 0.0), totals={HEAT_LOST: np.where(flows, loss, 0.0)},
                          metrics={"inlet": t_crude, "outlet": t_out, "brine_flow": brine})
