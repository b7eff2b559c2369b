r"""Fouling resistance against time: linear, asymptotic and threshold models, each as a rate and
as its integral, and one integrator for any of them over a time grid with per-step conditions.

Units: time in **days** (plant monitoring and cleaning plans count days; literature rates per
hour or per second convert by 24 or 86 400), fouling resistance :math:`R_f` in m²·K/W (as in
:mod:`.resistances`), rates in m²·K/W per day, temperatures in K where a model has an
Arrhenius term.

Every model is also described by a :class:`FoulingModel` (in :data:`MODELS`): its rate, an exact
step over an interval with its conditions held constant, and a table of its parameters and
conditions (name, unit, bounds, meaning), so that a fitter or a network can treat all models
alike. Parameters belong to an exchanger (constant in time); conditions (film temperature,
Reynolds number, wall shear stress) are set by the network at each step. :func:`integrate_fouling`
steps any model over a grid, vectorized over exchangers and scenarios (the leading axes).

References
----------
.. [1] Kern, D. Q., and R. E. Seaton. "A theoretical analysis of thermal surface fouling."
       British Chemical Engineering 4 (1959) 258-262: deposition at a constant rate, removal in
       proportion to the deposit, hence the asymptotic curve. From memory.
.. [2] Epstein, N. "Thinking about heat transfer fouling: a 5 x 5 matrix." Heat Transfer
       Engineering 4 (1983) 43-56: linear, falling-rate and asymptotic fouling curves. From
       memory.
.. [3] Ebert and Panchal (1997), Polley et al. (2002): see :mod:`.fouling_threshold`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from . import fouling_threshold as threshold
from .arrays import as_floats

__all__ = [
    "linear_fouling",
    "linear_fouling_rate",
    "asymptotic_fouling",
    "asymptotic_fouling_rate",
    "asymptotic_fouling_time",
    "Quantity",
    "FoulingModel",
    "MODELS",
    "integrate_fouling",
]


def linear_fouling_rate(r_f, rate):
    r"""Rate of the linear model, m²·K/W per day: constant, :math:`dR_f/dt = \dot R`, whatever
    :math:`R_f` (m²·K/W) is. Common practice for short windows; [2]_.

    >>> float(linear_fouling_rate(3e-4, 2e-6))
    2e-06
    """
    r_f, rate = as_floats(r_f, rate)
    return np.broadcast_to(rate, np.broadcast_shapes(r_f.shape, rate.shape)).astype(float)


def linear_fouling(t, rate, r_f0=0.0):
    r"""Fouling resistance of the linear model after ``t`` days, m²·K/W:
    :math:`R_f(t) = R_{f0} + \dot R\,t` (``rate`` in m²·K/W per day). [2]_

    >>> round(float(linear_fouling(365.0, 2e-6, 1e-4)), 12)
    0.00083
    """
    t, rate, r_f0 = as_floats(t, rate, r_f0)
    return r_f0 + rate * t


def asymptotic_fouling_rate(r_f, r_inf, tau, r_f0=0.0):
    r"""Rate of the asymptotic model (Kern & Seaton [1]_), m²·K/W per day:

    .. math:: \frac{dR_f}{dt} = \frac{R_{f0} + R_\infty - R_f}{\tau}

    deposition at a constant rate :math:`R_\infty/\tau` less removal in proportion to the
    deposit. ``r_inf``: the rise from :math:`R_{f0}` reached as t -> inf, m²·K/W; ``tau``: time
    constant, days.

    >>> round(float(asymptotic_fouling_rate(0.0, 5e-4, 100.0)), 12)
    5e-06
    """
    r_f, r_inf, tau, r_f0 = as_floats(r_f, r_inf, tau, r_f0)
    return (r_f0 + r_inf - r_f) / tau


def asymptotic_fouling(t, r_inf, tau, r_f0=0.0):
    r"""Fouling resistance of the asymptotic model after ``t`` days, m²·K/W [1]_:

    .. math:: R_f(t) = R_{f0} + R_\infty\,\big(1 - e^{-t/\tau}\big)

    (``-expm1`` for the bracket: exact for t << tau). Half the rise is reached at
    :math:`t = \tau\ln 2`.

    >>> round(float(asymptotic_fouling(100.0 * np.log(2.0), 5e-4, 100.0)), 15)
    0.00025
    """
    t, r_inf, tau, r_f0 = as_floats(t, r_inf, tau, r_f0)
    return r_f0 - r_inf * np.expm1(-t / tau)


def asymptotic_fouling_time(r_f, r_inf, tau, r_f0=0.0):
    r"""Days the asymptotic model takes to reach ``r_f``: the inverse of
    :func:`asymptotic_fouling`, :math:`t = -\tau\ln[1 - (R_f - R_{f0})/R_\infty]`.

    NaN where ``r_f`` is never reached (at or beyond :math:`R_{f0} + R_\infty`, or before
    :math:`R_{f0}`).

    >>> round(float(asymptotic_fouling_time(2.5e-4, 5e-4, 100.0)), 12)   # tau ln 2
    69.314718055995
    """
    r_f, r_inf, tau, r_f0 = as_floats(r_f, r_inf, tau, r_f0)
    fraction = (r_f - r_f0) / r_inf
    with np.errstate(invalid="ignore", divide="ignore"):
        t = -tau * np.log1p(-fraction)
    return np.where((fraction >= 0.0) & (fraction < 1.0), t, np.nan)


@dataclass(frozen=True)
class Quantity:
    """One parameter or condition of a fouling model: ``name`` (the keyword), ``unit``,
    physically admissible ``bounds`` (lower, upper; a fitter may narrow them) and ``meaning``."""

    name: str
    unit: str
    bounds: tuple[float, float]
    meaning: str


@dataclass(frozen=True)
class FoulingModel:
    """A fouling model as the integrator and a fitter see it.

    ``rate(r_f, **values)``: dR_f/dt, m²·K/W per day, as integrated (the threshold models'
    net rate floored at zero). ``step(r_f, dt, **values)``: R_f after ``dt`` days with the
    values held constant, exact. ``parameters``: per exchanger, constant in time (``r_f0``, the
    resistance at t = 0, first); ``conditions``: set at each step by the network.
    """

    name: str
    rate: Callable
    step: Callable
    parameters: tuple[Quantity, ...]
    conditions: tuple[Quantity, ...]
    reference: str

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(q.name for q in self.parameters + self.conditions)


R_F0 = Quantity("r_f0", "m2.K/W", (-1e-2, 1e-2),
                "fouling resistance at t = 0 (after the last cleaning); negative only where a clean "
                "model is optimistic")
ACTIVATION = Quantity("activation_energy", "J/mol", (1e4, 3e5), "activation energy of deposition")
PRANDTL = Quantity("pr", "-", (0.5, 1e4), "Prandtl number of the fouling stream")
REYNOLDS = Quantity("re", "-", (1e2, 1e7), "Reynolds number of the fouling stream")


def _linear_step(r_f, dt, *, rate, r_f0=0.0):
    return r_f + rate * dt


def _linear_rate(r_f, *, rate, r_f0=0.0):
    return linear_fouling_rate(r_f, rate)


def _asymptotic_step(r_f, dt, *, r_inf, tau, r_f0=0.0):
    # exact: the distance to the asymptote decays by exp(-dt/tau) over the step
    target = r_f0 + r_inf
    return target + (r_f - target) * np.exp(-dt / tau)


def _asymptotic_rate(r_f, *, r_inf, tau, r_f0=0.0):
    return asymptotic_fouling_rate(r_f, r_inf, tau, r_f0)


def _ebert_panchal_rate(r_f, *, alpha, beta, activation_energy, gamma, re, pr, t_film, tau_w, r_f0=0.0):
    net = threshold.ebert_panchal_rate(re, pr, t_film, tau_w, alpha, beta, activation_energy, gamma)
    return np.maximum(net, 0.0) + 0.0 * np.asarray(r_f)


def _ebert_panchal_step(r_f, dt, **values):
    return r_f + _ebert_panchal_rate(r_f, **values) * dt


def _polley_rate(r_f, *, alpha, activation_energy, gamma, re, pr, t_wall, r_f0=0.0):
    net = threshold.polley_rate(re, pr, t_wall, alpha, activation_energy, gamma)
    return np.maximum(net, 0.0) + 0.0 * np.asarray(r_f)


def _polley_step(r_f, dt, **values):
    return r_f + _polley_rate(r_f, **values) * dt


MODELS = {
    "linear": FoulingModel(
        "linear", _linear_rate, _linear_step,
        (R_F0, Quantity("rate", "m2.K/W/day", (0.0, 1e-4), "constant fouling rate")),
        (), "common practice; Epstein 1983 (from memory)"),
    "asymptotic": FoulingModel(
        "asymptotic", _asymptotic_rate, _asymptotic_step,
        (R_F0, Quantity("r_inf", "m2.K/W", (0.0, 1e-2), "rise of R_f from r_f0 as t -> inf"),
         Quantity("tau", "day", (0.1, 1e4), "time constant")),
        (), "Kern & Seaton 1959 (from memory)"),
    "ebert_panchal": FoulingModel(
        "ebert_panchal", _ebert_panchal_rate, _ebert_panchal_step,
        (R_F0, Quantity("alpha", "m2.K/W/day", (0.0, np.inf),
                        "deposition constant (spans decades with E: fit its logarithm, or refer "
                        "it to a temperature inside the data)"),
         Quantity("beta", "-", (-1.5, 0.0), "Reynolds exponent of deposition"),
         ACTIVATION, Quantity("gamma", "m2.K/W/day/Pa", (0.0, np.inf), "removal constant")),
        (REYNOLDS, PRANDTL, Quantity("t_film", "K", (250.0, 900.0), "film temperature"),
         Quantity("tau_w", "Pa", (0.0, 1e3), "wall shear stress")),
        "Ebert & Panchal 1997 (from memory)"),
    "polley": FoulingModel(
        "polley", _polley_rate, _polley_step,
        (R_F0, Quantity("alpha", "m2.K/W/day", (0.0, np.inf), "deposition constant"),
         ACTIVATION, Quantity("gamma", "m2.K/W/day", (0.0, np.inf), "removal constant (of Re^0.8)")),
        (REYNOLDS, PRANDTL, Quantity("t_wall", "K", (250.0, 900.0), "wall temperature")),
        "Polley, Wilson, Yeap & Pugh 2002 (from memory)"),
}
"""The fouling models by name."""


def integrate_fouling(model, times, parameters=None, conditions=None):
    r"""Fouling resistance at every time of a grid, for any model of :data:`MODELS`.

    The interval from ``times[..., k]`` to ``times[..., k + 1]`` is step k; over it the
    conditions are held at their values for step k and R_f advances by the model's exact step
    (so a grid of any spacing gives the closed form where conditions do not change). Where a
    threshold model is below its threshold R_f is held, not reduced.

    Parameters
    ----------
    model : FoulingModel or str
        A model or its name in :data:`MODELS`.
    times : array_like, shape (..., n + 1)
        Days, non-decreasing along the last axis; leading axes (exchangers, scenarios) broadcast.
    parameters : dict, optional
        The model's parameters, each broadcast to the leading shape; ``r_f0`` (the value at
        ``times[..., 0]``) defaults to 0. A parameter may instead be given per step in
        ``conditions``.
    conditions : dict, optional
        The model's conditions, each of shape (..., n) (or (..., 1): the same at every step).

    Returns
    -------
    ndarray, shape (..., n + 1)
        R_f in m²·K/W at each time, the first being ``r_f0``.

    >>> r = integrate_fouling("asymptotic", [0.0, 50.0, 100.0], {"r_inf": 5e-4, "tau": 100.0})
    >>> np.allclose(r, asymptotic_fouling(np.array([0.0, 50.0, 100.0]), 5e-4, 100.0), rtol=1e-15)
    True
    """
    model = MODELS[model] if isinstance(model, str) else model
    parameters, conditions = dict(parameters or {}), dict(conditions or {})
    parameters.setdefault("r_f0", 0.0)
    given = set(parameters) | set(conditions)
    missing = [n for n in model.names if n not in given]
    unknown = sorted(given - set(model.names))
    twice = sorted(set(parameters) & set(conditions))
    if missing or unknown or twice:
        raise ValueError(f"{model.name} model: missing {missing}, unknown {unknown}, given twice {twice}")
    (times,) = as_floats(times)
    steps = np.diff(times, axis=-1)
    if np.any(steps < 0.0):
        raise ValueError("times must not decrease along the last axis")
    fixed = {k: np.asarray(v, dtype=float) for k, v in parameters.items()}
    varying = {k: np.asarray(v, dtype=float) for k, v in conditions.items()}
    for name, value in varying.items():
        if value.ndim == 0 or value.shape[-1] not in (1, steps.shape[-1]):
            raise ValueError(f"condition {name!r} needs a last axis of {steps.shape[-1]} steps (or 1)")
    lead = np.broadcast_shapes(times.shape[:-1], *(v.shape for v in fixed.values()),
                               *(v.shape[:-1] for v in varying.values()))
    r_f = np.broadcast_to(fixed["r_f0"], lead).astype(float)
    history = np.empty(lead + (steps.shape[-1] + 1,))
    history[..., 0] = r_f
    for k in range(steps.shape[-1]):
        values = dict(fixed, **{n: v[..., k if v.shape[-1] > 1 else 0] for n, v in varying.items()})
        r_f = model.step(r_f, steps[..., k], **values)
        history[..., k + 1] = r_f
    return history
