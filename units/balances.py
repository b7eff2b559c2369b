"""Energy balance of adiabatic mixing at constant cp (the fast path of the mixer; with cp(T) the
mixer balances enthalpy through its fluids, see :func:`hxtrain.units.protocol.mix`).

Enthalpy is referred to 0 °C (h = cp·T), so a heat-capacity rate C = m·cp in kW/K times a
temperature in °C is an enthalpy flow in kW. Every function works on numpy arrays with a
leading batch axis.
"""

from __future__ import annotations

import numpy as np

from .arrays import mean_last, sum_last

__all__ = ["mix_temperature"]


def mix_temperature(t_in, c_in):
    r"""Outlet temperature of an adiabatic mixer, from an enthalpy balance.

    .. math:: T_{out} = \frac{\sum_i C_i T_i}{\sum_i C_i}

    ``t_in`` and ``c_in`` have the inlets on the last axis. With no flow at all the result is
    the plain mean of the inlet temperatures (any value balances a zero flow; the mean keeps it
    inside the envelope).

    >>> float(mix_temperature([100.0, 200.0], [1.0, 3.0]))
    175.0
    """
    t_in = np.asarray(t_in, dtype=float)
    c_in = np.asarray(c_in, dtype=float)
    total = sum_last(c_in)
    flows = total > 0.0
    weighted = sum_last(c_in * t_in) / np.where(flows, total, 1.0)
    return weighted if flows.all() else np.where(flows, weighted, mean_last(t_in))
