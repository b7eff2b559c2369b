r"""A flash drum: one feed in, vapour and liquid out, separated at the feed's own state.

The feed's fluid is an enthalpy curve (T, h, vapour mass fraction at its pressure, the table an
assay or a process simulator exports). The drum stands at that curve's pressure, and the vapour
and liquid leave as the fluids the case names for them: their own curves at the same pressure,
on the feed's enthalpy reference (the three tables of one flash).

A feed kept liquid under pressure upstream (the usual preheat train: any fluid model, a cp
correlation say) is let down through the drum's inlet valve at constant enthalpy; the drum is
then given the feed's curve at the drum's pressure (``feed_curve``), on the feed fluid's
reference (h = 0 for the liquid at 0 °C), which :meth:`FlashDrum.fluid_problem` checks where the
curve's first row is liquid. Then, with :math:`h_{in}` the feed's specific enthalpy as it
arrives and :math:`c` the feed's curve (the feed fluid itself, or ``feed_curve``):

* the split is the vapour mass fraction at that enthalpy, :math:`q = q_c(h_{in})`, so vapour flow
  :math:`\dot m_v = q\,\dot m` and liquid flow :math:`\dot m_l = (1-q)\,\dot m`;
* both leave at one temperature, the one at which the products carry what entered:

  .. math:: \dot m\,h_{feed}(T_{in}) = \dot m_v\,h_v(T) + \dot m_l\,h_l(T)

  Both product curves are piecewise linear in T, so their flow-weighted sum is too, and T is
  found exactly on the union of their points (beyond the tables, on the end intervals' lines,
  as each curve extends itself; the segments' range checks then apply).

With product curves that are truly the feed's two phases at the drum, T is the flash
temperature :math:`T_c(h_{in})` (the inlet temperature when the feed arrives on its curve; below
it after a let-down, as the flashing liquid cools itself); a balance temperature farther than
:data:`CONSISTENT_WITHIN` from it says the named curves are not the feed's (another reference,
another cut): a warning, and the balance is still closed on the fluids the segments carry.

The split moves the flows, and the flows move the inlet state (a liquid that heats the feed
upstream): the solver iterates flows and states until the split settles (``split_from_state``
and ``set_split``, :mod:`hxtrain.solver.simulation.evaluation`). Between outer iterations the
outlets use the split the flows were solved with, so every answer closes its energy balance to
round-off; the split the inlet state gives differs from it by less than the outer tolerance.
"""

from __future__ import annotations

import numpy as np

from .protocol import UnitBase, UnitReport, check

__all__ = ["FlashDrum", "balance_temperature", "CONSISTENT_WITHIN", "START_SPLIT"]

CONSISTENT_WITHIN = 2.0
"""K: largest distance between the balance temperature and the inlet temperature before the
drum warns that its product curves are not consistent with the feed's (common practice: an
exported flash closes to well under a kelvin)."""
START_SPLIT = 0.5
"""Vapour fraction the first flow solve uses, before any inlet state is known: a start at which
both outlets carry flow."""


def balance_temperature(h_in, q, vapour, liquid):
    r"""Temperature (°C) at which a vapour fraction ``q`` of ``vapour`` and the rest of ``liquid``
    (enthalpy curves without a plateau) carry the specific enthalpy ``h_in`` (kJ/kg), each an
    array over the batch: :math:`h_{in} = q\,h_v(T) + (1-q)\,h_l(T)`, solved exactly (the sum is
    linear between the union of the two curves' points, and on the end lines beyond).

    >>> from hxtrain.units.enthalpy_curves import EnthalpyCurve
    >>> v = EnthalpyCurve([100.0, 200.0], [500.0, 700.0], [1.0, 1.0])
    >>> l = EnthalpyCurve([100.0, 150.0, 200.0], [200.0, 300.0, 450.0])
    >>> float(balance_temperature(np.array([450.0]), np.array([0.5]), v, l)[0])
    150.0
    """
    h_in, q = np.atleast_1d(np.asarray(h_in, float)), np.atleast_1d(np.asarray(q, float))
    points = np.union1d(vapour.t_points, liquid.t_points)
    mixed = q[:, None] * vapour.enthalpy(points)[None, :] + (1.0 - q[:, None]) * liquid.enthalpy(points)[None, :]
    below = np.sum(mixed <= h_in[:, None], axis=1) - 1
    j = np.clip(below, 0, len(points) - 2)
    rows = np.arange(len(h_in))
    h0, h1 = mixed[rows, j], mixed[rows, j + 1]
    return points[j] + (h_in - h0) * (points[j + 1] - points[j]) / (h1 - h0)


class FlashDrum(UnitBase):
    """The feed (``in``) separated into ``vapour`` and ``liquid`` at its inlet state."""

    kind = "flash drum"
    group = "drums"
    inlets = ("in",)
    outlets = ("vapour", "liquid")

    def __init__(self, name, key, vapour_fluid, liquid_fluid, vapour_name, liquid_name, feed_curve=None):
        self.name, self.key = name, key
        self.vapour_fluid, self.liquid_fluid = vapour_fluid, liquid_fluid
        self.feed_curve = feed_curve
        """The feed's curve at the drum's pressure where the feed arrives as another fluid (let
        down at constant enthalpy), else None (the feed's own fluid is its curve)."""
        self.outlet_fluids = {"vapour": vapour_name, "liquid": liquid_name}
        self.split = np.asarray(START_SPLIT)
        """Vapour mass fraction the flows are solved with, () or (batch,)."""
        self.outer_iterations = np.asarray(0)

    def balance_identities(self):
        """Vapour and liquid leave at one temperature (they leave the drum in equilibrium);
        mass and energy close by the adiabatic default."""
        return (("temperature", ("outlet", "vapour"), "liquid"),)

    def flow_coefficients(self):
        q = self.split
        return np.stack([q, 1.0 - q], axis=-1)[..., None]

    def fluid_problem(self, fluids):
        """The feed must be one enthalpy curve (not a cp model, not a blend) at the pressure of
        the named products' curves: the drum stands at that pressure. With ``feed_curve`` the
        feed may be any fluid, let down onto that curve, which must then be on its reference."""
        feed = fluids[0]
        if self.feed_curve is not None:
            problem = self._reference_problem(feed)
            if problem is not None:
                return problem
            feed = self.feed_curve
        elif not hasattr(feed, "vapour_fraction") or len(feed.members()) > 1:
            return ("", f"the feed of flash drum {self.name} is fluid '{feed.name}', which is not an enthalpy curve: "
                        "a drum splits its feed by the vapour fraction the feed's curve gives at its state (give "
                        "the feed as 'enthalpy_curve' at the drum's pressure, or name that curve in 'feed_curve' "
                        "for a feed let down into the drum)")
        for port, fluid in (("vapour", self.vapour_fluid), ("liquid", self.liquid_fluid)):
            if feed.pressure is not None and fluid.pressure is not None and \
                    abs(fluid.pressure - feed.pressure) > 1e-6 * feed.pressure:
                return (f"{port}.fluid", f"fluid '{fluid.name}' is given at {fluid.pressure:g} kPa but the feed "
                                         f"'{feed.name}' at {feed.pressure:g} kPa: the drum stands at its feed "
                                         "curve's pressure, and its products' curves must be at the same one")
        return None

    def _reference_problem(self, feed):
        """Where ``feed_curve`` and the arriving feed disagree on the liquid's enthalpy at the
        curve's first row (a liquid there, inside the feed's valid range): by more than
        :data:`CONSISTENT_WITHIN` kelvin of the feed's heat capacity, the two are not on one
        reference and the let-down would flash the wrong amount."""
        curve = self.feed_curve
        t0, h0 = float(curve.t_points[0]), float(curve.h_points[0])
        low, high = getattr(feed, "valid_range", None) or (-np.inf, np.inf)
        if float(curve.vapour_fraction(np.array([h0]))[0]) > 0.0 or not low <= t0 <= high:
            return None
        h_feed = float(feed.enthalpy(np.array([t0]))[0])
        if abs(h_feed - h0) <= CONSISTENT_WITHIN * float(feed.cp(np.array([t0]))[0]):
            return None
        return ("feed_curve", f"fluid '{curve.name}' gives the liquid {h0:.1f} kJ/kg at {t0:g} °C, but the feed "
                              f"arriving as '{feed.name}' carries {h_feed:.1f} kJ/kg there: a feed let down into the "
                              "drum keeps its enthalpy, so its curve must be on the feed fluid's reference (h = 0 "
                              "for the liquid at 0 °C)")

    def _curve(self, inlets):
        return inlets.fluids[0] if self.feed_curve is None else self.feed_curve

    def split_from_state(self, inlets):
        """(batch,) the vapour mass fraction of the feed's curve at the enthalpy it arrives with."""
        return self._curve(inlets).vapour_fraction(inlets.enthalpy(0))

    def set_split(self, fraction, outer_iterations=0):
        """The vapour fraction the next flow solve uses, and how many outer iterations found it."""
        self.split = np.asarray(fraction, dtype=float)
        self.outer_iterations = np.asarray(outer_iterations)

    def _outlet(self, inlets):
        q = np.broadcast_to(self.split, (inlets.batch,))
        return balance_temperature(inlets.enthalpy(0), q, self.vapour_fluid, self.liquid_fluid)

    def outlet_temperatures(self, inlets):
        return np.repeat(self._outlet(inlets)[:, None], 2, axis=1)

    def report(self, inlets):
        t_in, m = inlets.t[:, 0], inlets.m[:, 0]
        curve, h_in = self._curve(inlets), inlets.enthalpy(0)
        q_in = curve.vapour_fraction(h_in)  # split_from_state, with h_in at hand
        q = np.broadcast_to(self.split, t_in.shape)
        t_out = self._outlet(inlets)
        t_flash = curve.temperature(h_in, guess=t_in)  # T_in on the feed's own curve
        arrives = "enters at" if self.feed_curve is None else "flashes, by its curve, at"
        findings = [check("drum_curves_inconsistent", "warning",
                          (m > 0.0) & (np.abs(t_out - t_flash) > CONSISTENT_WITHIN), f"{self.key}.vapour.fluid",
                          f"the vapour and liquid leave at {{t_out:.2f}} °C by the enthalpy balance but the feed "
                          f"{arrives} {{t_flash:.2f}} °C: the curves named for the products are not consistent with "
                          f"the feed's (another enthalpy reference or another cut?; more than {CONSISTENT_WITHIN:g} K "
                          "apart)", t_out=t_out, t_flash=t_flash)]
        iterations = np.broadcast_to(self.outer_iterations, t_in.shape)
        return UnitReport({"t_in": t_in, "q_in": q_in, "vapour_flow": q * m, "liquid_flow": (1.0 - q) * m,
                           "t_out": t_out, "outer_iterations": iterations},
                          findings, metrics={"inlet": t_in, "outlet": t_out, "vapour_fraction": q_in,
                                             "vapour_flow": q * m})
