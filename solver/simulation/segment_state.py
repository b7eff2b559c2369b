"""What the solver carries on each segment: temperature, or enthalpy where temperature cannot say.

A segment whose fluid has a saturation plateau (``fluid.state_by_enthalpy``: water and steam, a
pure fluid on an enthalpy curve) cannot be described by its temperature: at the plateau's
temperature the stream may be anything from saturated liquid to saturated vapour. Such a segment
carries its specific enthalpy; every other segment carries its temperature exactly as before
(for a fluid whose h(T) is a function, T and h are one state, and the temperature path needs no
inverse, so the numbers and the speed of networks without such fluids do not change).

The solver's arrays hold one number per segment and scenario, the *state*: the temperature (°C)
of a temperature segment, and h / c (kJ/kg over kJ/kg·K, so in K) of an enthalpy segment, with c
the fluid's :attr:`~hxtrain.units.enthalpy_curves.EnthalpyCurve.enthalpy_scale` (its smallest
single-phase cp). So the tear tolerance stays in kelvin and means, on an enthalpy segment, a
distance in enthalpy that is no more than that many kelvin on any single-phase part of the curve
(on the plateau, a vapour fraction within tolerance·c/h_fg). The tear iteration, the block
Newton and the balance check work on the state unchanged.

Units reach enthalpy segments only through ``outlet_states`` (:mod:`hxtrain.units.protocol`):
the network refuses a fluid with a plateau at a unit that has none.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hxtrain.units.protocol import Inlets


@dataclass
class SegmentState:
    """Per segment: whether it carries enthalpy and its scale; the units that touch one."""

    enthalpy: np.ndarray
    """(segments,) bool: the segment carries h / scale rather than T."""
    scale: np.ndarray
    """(segments,) kJ/kg·K (1 on temperature segments)."""
    units: frozenset
    """Names of the units with an inlet or outlet that carries enthalpy."""

    @property
    def any(self) -> bool:
        return bool(self.units)

    def outlets(self, net, name, inlet_segments, outlet_segments, x_in, m_in):
        """Outlet states (batch, outlets) of unit ``name`` from its inlets' states and flows."""
        unit = net.units[name]
        fluids = tuple(net.fluids[s] for s in inlet_segments)
        if name not in self.units:
            return unit.outlet_temperatures(Inlets(x_in, m_in, fluids))
        t_in, h_in = self.temperature_and_enthalpy(net, inlet_segments, x_in)
        t, h = unit.outlet_states(Inlets(t_in, m_in, fluids, h_in), tuple(net.fluids[s] for s in outlet_segments))
        carried = self.enthalpy[outlet_segments]
        return np.where(carried, h / self.scale[outlet_segments], t)

    def temperature_and_enthalpy(self, net, segments, x):
        """Temperatures and specific enthalpies (batch, len(segments)) of ``segments`` at states ``x``."""
        t, h = np.array(x, dtype=float), np.empty(np.shape(x))
        for j, seg in enumerate(segments):
            fluid = net.fluids[seg]
            if self.enthalpy[seg]:
                h[:, j] = x[:, j] * self.scale[seg]
                t[:, j] = fluid.temperature(h[:, j])
            else:
                h[:, j] = fluid.enthalpy(t[:, j])
        return t, h

    def temperatures(self, net, state):
        """Temperatures (batch, segments) from the states of every segment."""
        if not self.any:
            return state
        t = np.array(state, dtype=float, order="F")
        for seg in np.flatnonzero(self.enthalpy):
            t[:, seg] = net.fluids[seg].temperature(state[:, seg] * self.scale[seg])
        return t

    def guess(self, net, segments, t):
        """First states of ``segments`` from a guessed temperature ``t`` (batch,): on an enthalpy
        segment the middle of what the fluid may hold at t (its plateau's middle there)."""
        x = np.repeat(np.asarray(t, float)[:, None], len(segments), axis=1)
        for j, seg in enumerate(segments):
            if self.enthalpy[seg]:
                curve = net.fluids[seg]
                low, high = curve.enthalpy_bounds(x[:, j])
                h = 0.5 * (low + high)
                x[:, j] = np.where(np.isfinite(h), h, np.mean(curve.h_points)) / self.scale[seg]
        return x

    def start(self, net, segments, point: StartingPoint):
        """First states of ``segments`` (batch, len(segments)) from ``point``: a previous solution's
        states where it holds them, else :meth:`guess` at its mean."""
        fresh = self.guess(net, segments, point.mean)
        if point.previous is None:
            return fresh
        held = point.previous[:, segments]
        return np.where(np.isfinite(held), held, fresh)


@dataclass
class StartingPoint:
    """Where the iterations of a solve start. ``mean`` (batch,) °C: a guess for any segment (the
    mean of the supply temperatures); ``previous`` (batch, segments): the states of a solution
    given to start from (an outer pass of flows and states solving its blocks again, nearer the
    answer than any guess), or None."""

    mean: np.ndarray
    previous: np.ndarray | None = None


def segment_state(net) -> SegmentState:
    """Which segments of ``net`` carry enthalpy (their fluid has a saturation plateau)."""
    carried = np.array([bool(f.state_by_enthalpy) for f in net.fluids], bool)
    scale = np.array([f.enthalpy_scale if c else 1.0 for f, c in zip(net.fluids, carried)])
    units = frozenset(name for name in net.units if any(carried[s] for s in (*net.inlets[name], *net.outlets[name])))
    return SegmentState(carried, scale, units)
