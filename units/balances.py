"""Energy balances of the one-stream units: mixing, heating and cooling at constant cp.

Enthalpy is referred to 0 °C (h = cp·T), so a heat-capacity rate C = m·cp in kW/K times a
temperature in °C is an enthalpy flow in kW. Every function works on numpy arrays with a
leading batch axis.
"""

from __future__ import annotations

import numpy as np

from .arrays import as_arrays

__all__ = ["mix_temperature", "temperature_after_duty", "duty_to_reach"]


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
    total = c_in.sum(axis=-1)
    flows = total > 0.0
    weighted = (c_in * t_in).sum(axis=-1) / np.where(flows, total, 1.0)
    return np.where(flows, weighted, t_in.mean(axis=-1))


def temperature_after_duty(t_in, c, duty):
    r"""Outlet temperature of a stream of heat-capacity rate C after receiving ``duty`` (kW).

    .. math:: T_{out} = T_{in} + Q / C

    A stream without flow keeps its inlet temperature (the caller flags a duty without flow).

    >>> float(temperature_after_duty(150.0, 200.0, 10000.0))
    200.0
    """
    t_in, c, duty = as_arrays(t_in, c, duty)
    flows = c > 0.0
    return np.where(flows, t_in + duty / np.where(flows, c, 1.0), t_in)


def duty_to_reach(t_in, c, t_target):
    r"""Duty (kW) that brings a stream of heat-capacity rate C from T_in to T_target.

    .. math:: Q = C\,(T_{target} - T_{in})

    >>> float(duty_to_reach(250.0, 180.0, 360.0))
    19800.0
    """
    t_in, c, t_target = as_arrays(t_in, c, t_target)
    return c * (t_target - t_in)
