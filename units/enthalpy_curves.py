r"""Fluids given as an enthalpy curve: temperature, specific enthalpy and vapour mass fraction at
the stream's pressure, the table an assay or a process simulator exports.

The table is read as a piecewise-linear curve in specific enthalpy h (kJ/kg):

* h strictly increasing; T (°C) non-decreasing, so a pure fluid's saturation plateau (equal T
  over a range of h) is one interval; vapour mass fraction q in [0, 1].
* T(h), h(T) and q(h) are linear between the points. Why linear rather than a monotone cubic
  (Fritsch–Carlson PCHIP [3]_):

  - it keeps the plateau and the kinks at the bubble and dew points exactly. PCHIP sets a zero
    slope at both ends of a flat interval, which would give the liquid an infinite cp just below
    its boiling point, and bends the vapour branch the same way;
  - each interval has one cp = Δh/ΔT (infinite on a plateau), so rating an exchanger zone by
    zone on the curve's own intervals (:mod:`.zone_rating`) is exact P–NTU for the curve, with no
    further subdivision;
  - T(h) and h(T) are exact inverses, and a constant-cp fluid given as a curve reproduces
    :class:`.properties.ConstantCp` to round-off.

  Its price is a stepwise cp: where the true cp varies by dcp/dT between points Δ apart the
  enthalpy is off by at most :math:`(dc_p/dT)\,\Delta^2/8`; for a crude (dcp/dT about 0.004
  kJ/kg·K², from :func:`.properties.petroleum_fraction`) 20 K apart that is 0.2 kJ/kg in some
  500 kJ/kg. Give more points where cp changes fast.
* h(T) on a plateau is not a function: :meth:`EnthalpyCurve.enthalpy` returns NaN there (a
  value in between would pose as an answer), and :meth:`EnthalpyCurve.enthalpy_bounds` returns the
  plateau's two ends (saturated liquid and vapour for a pure fluid).
* The table's span is the valid range (like :class:`.properties.TabulatedCp`). Beyond it the
  end intervals are extended with their own slope (flagged by ``outside_range``); beyond an
  end that is a plateau nothing is known and the result is NaN.

Enthalpies are as the table gives them: any reference is fine for one fluid (balances take
differences), and ideal mixing of different fluids (:class:`.properties.Blend`) weighs each
fluid's enthalpy at the common temperature, so each fluid's constant offset cancels too.

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003: rating
       with variable properties and phase change by zones (section and page from memory).
.. [2] Hewitt, G. F. (ed.). Heat Exchanger Design Handbook. Begell House: condensation and
       vaporisation curves, zone analysis (from memory).
.. [3] Fritsch, F. N., and R. E. Carlson. "Monotone piecewise cubic interpolation." SIAM J. Numer.
       Anal. 17 (1980) 238-246.
"""

from __future__ import annotations

import numpy as np

from .properties import FluidModel

__all__ = ["EnthalpyCurve", "curve_from_model"]


def _t(values):
    return np.asarray(values, dtype=float)


class EnthalpyCurve(FluidModel):
    """A fluid at one pressure as a table of temperature, specific enthalpy and vapour fraction.

    Parameters
    ----------
    temperatures : array_like
        Temperatures of the points, °C; non-decreasing (equal on a saturation plateau).
    enthalpies : array_like
        Specific enthalpies of the points, kJ/kg; strictly increasing. Any reference.
    vapour_fractions : array_like, optional
        Vapour mass fraction at each point, kg/kg in [0, 1]; all 0 (liquid) when left out.
    pressure : float, optional
        The pressure the table holds at, kPa; carried for reports and checks, not used here.
    name : str
        The fluid's name, for messages.
    **properties
        Transport properties and ``valid_range`` as for :class:`.properties.FluidModel`; the
        valid range defaults to the table's span.

    Raises
    ------
    ValueError
        Naming the row (from 0) where the table breaks a rule: fewer than two points, h not
        strictly increasing, T decreasing, q outside [0, 1], a value not finite.

    Examples
    --------
    Water at 1 atm, rounded (liquid 90-100 °C, boiling, vapour 100-120 °C):

    >>> water = EnthalpyCurve([90.0, 100.0, 100.0, 120.0], [377.0, 419.1, 2675.6, 2716.2],
    ...                       [0.0, 0.0, 1.0, 1.0])
    >>> float(water.temperature(1547.35)), float(water.vapour_fraction(1547.35))
    (100.0, 0.5)
    >>> [float(v) for v in water.enthalpy_bounds(100.0)]
    [419.1, 2675.6]
    >>> bool(np.isnan(water.enthalpy(100.0))), round(float(water.enthalpy(110.0)), 9)
    (True, 2695.9)
    """

    def __init__(self, temperatures, enthalpies, vapour_fractions=None, *, pressure=None, name="fluid",
                 **properties):
        t, h = _t(temperatures).ravel(), _t(enthalpies).ravel()
        q = np.zeros_like(h) if vapour_fractions is None else _t(vapour_fractions).ravel()
        _check_table(t, h, q)
        properties.setdefault("valid_range", (float(t[0]), float(t[-1])))
        super().__init__(**properties)
        self.name, self.pressure = name, pressure
        self.t_points, self.h_points, self.q_points = t, h, q
        dt, dh = np.diff(t), np.diff(h)
        self.plateaus = dt == 0.0
        """Per interval: True where T is constant (a saturation plateau)."""
        with np.errstate(divide="ignore"):
            self.interval_cp = np.where(self.plateaus, np.inf, dh / np.where(self.plateaus, 1.0, dt))
        """Per interval: cp = Δh/ΔT in kJ/kg·K, infinite on a plateau."""
        finite = self.interval_cp[~self.plateaus]
        self._single_cp = (not self.plateaus.any()) and bool(np.all(np.abs(finite - finite[0]) <= 1e-12 * finite[0]))

    @property
    def constant_cp(self) -> bool:
        """True where one cp holds over the whole table (all intervals alike to 1e-12, no plateau)."""
        return self._single_cp

    @property
    def state_by_enthalpy(self) -> bool:
        """True where the curve has a saturation plateau: there T does not fix the state, so a
        stream of this fluid carries its specific enthalpy (see :mod:`.protocol`)."""
        return bool(self.plateaus.any())

    @property
    def plateau_temperatures(self) -> np.ndarray:
        """°C: the temperatures of the curve's saturation plateaus (none for a curve without).

        >>> EnthalpyCurve([90.0, 100.0, 100.0], [377.0, 419.0, 2675.0], [0.0, 0.0, 1.0]).plateau_temperatures.tolist()
        [100.0]
        """
        return self.t_points[:-1][self.plateaus]

    @property
    def holds_vapour(self) -> bool:
        """True where any row has vapour: the fluid may boil or condense along the curve."""
        return bool(np.any(self.q_points > 0.0))

    @property
    def enthalpy_scale(self) -> float:
        """kJ/kg·K: the smallest cp of the curve's sloped intervals. An enthalpy difference over
        it is a temperature difference no smaller than the true one on any single-phase part of
        the curve (the solver's tolerance in K on a stream that carries enthalpy)."""
        return float(np.min(self.interval_cp[~self.plateaus]))

    def enthalpy_at(self, t, vapour_fraction=None):
        """Specific enthalpy (kJ/kg) at ``t`` (°C); at a plateau's temperature the point of the
        plateau with ``vapour_fraction`` (kg/kg, linear along the plateau as the table is), NaN
        there without one.

        >>> water = EnthalpyCurve([90.0, 100.0, 100.0], [377.0, 419.0, 2675.0], [0.0, 0.0, 1.0])
        >>> float(water.enthalpy_at(100.0, 0.5)), float(water.enthalpy_at(95.0, 0.5))
        (1547.0, 398.0)
        """
        low, high = self.enthalpy_bounds(t)
        if vapour_fraction is None:
            return np.where(low == high, low, np.nan)
        q = np.asarray(vapour_fraction, dtype=float)
        q_low, q_high = self.vapour_fraction(low), self.vapour_fraction(high)
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.clip((q - q_low) / (q_high - q_low), 0.0, 1.0)
        return np.where(low == high, low, low + share * (high - low))

    def _interval_of_h(self, h):
        """Index of the interval holding each h (the end intervals beyond the table)."""
        return np.clip(np.searchsorted(self.h_points, h, side="right") - 1, 0, len(self.h_points) - 2)

    def temperature(self, h, guess=None):
        """Temperature (°C) at specific enthalpy ``h`` (kJ/kg), linear within each interval;
        beyond the table the end interval's slope (NaN beyond an end that is a plateau, and
        for h not finite). ``guess`` is accepted for the common interface and not needed."""
        h = _t(h)
        i = self._interval_of_h(h)
        t0, h0, cp = self.t_points[i], self.h_points[i], self.interval_cp[i]
        t = t0 + (h - h0) / cp
        beyond = ((h < self.h_points[0]) & self.plateaus[0]) | ((h > self.h_points[-1]) & self.plateaus[-1])
        return np.where(beyond | ~np.isfinite(h), np.nan, t)

    def cp_at_enthalpy(self, h):
        """cp (kJ/kg·K) of the interval holding each ``h`` (kJ/kg), infinite on a plateau; beyond
        the table that of the end interval. Pass an enthalpy inside the interval (a zone's
        middle), not a point between two.

        >>> curve = EnthalpyCurve([0.0, 10.0, 10.0], [0.0, 20.0, 50.0])
        >>> curve.cp_at_enthalpy([5.0, 30.0]).tolist()
        [2.0, inf]
        """
        return self.interval_cp[self._interval_of_h(_t(h))]

    def vapour_fraction(self, h):
        """Vapour mass fraction (kg/kg) at ``h`` (kJ/kg): linear within each interval (the lever
        rule on a pure fluid's plateau); beyond the table the end values are held."""
        return np.interp(_t(h), self.h_points, self.q_points)

    def enthalpy_bounds(self, t):
        """(lowest, highest) specific enthalpy (kJ/kg) at temperature ``t`` (°C): the same value
        off a plateau, the plateau's two ends on one; beyond the table the end intervals extended
        (NaN beyond an end that is a plateau)."""
        t = _t(t)
        tp, last = self.t_points, len(self.t_points) - 1
        first_at_or_above = np.searchsorted(tp, t, side="left")
        last_at_or_below = np.searchsorted(tp, t, side="right") - 1
        low = self._on_interval(t, first_at_or_above - 1, first_at_or_above, first_at_or_above <= last)
        high = self._on_interval(t, last_at_or_below, last_at_or_below, last_at_or_below >= 0)
        return low, high

    def _on_interval(self, t, interval, point, point_exists):
        """h at ``t``: the table's own value where ``point`` has exactly that temperature, else
        the line of ``interval`` (clipped to the ends; NaN on a plateau, which holds one T only)."""
        last = len(self.t_points) - 1
        point = np.clip(point, 0, last)
        exact = point_exists & (self.t_points[point] == t)
        i = np.clip(interval, 0, last - 1)
        with np.errstate(invalid="ignore"):
            line = self.h_points[i] + (t - self.t_points[i]) * np.where(self.plateaus[i], np.nan, self.interval_cp[i])
        return np.where(exact, self.h_points[point], line)

    def enthalpy(self, t):
        """Specific enthalpy (kJ/kg) at ``t`` (°C): NaN on a plateau, where T does not fix h (use
        :meth:`enthalpy_bounds`, or carry h)."""
        low, high = self.enthalpy_bounds(t)
        return np.where(low == high, low, np.nan)

    def cp(self, t):
        """cp (kJ/kg·K) at ``t`` (°C): that of the interval holding it, of the one above at a
        point between two, infinite at a plateau's temperature."""
        t = _t(t)
        if self._single_cp:
            return np.full(t.shape, self.interval_cp[0])
        above = np.clip(np.searchsorted(self.t_points, t, side="right") - 1, 0, len(self.t_points) - 2)
        low, high = self.enthalpy_bounds(t)
        return np.where(low < high, np.inf, self.interval_cp[above])


def _check_table(t, h, q):
    """Refuse a table that breaks a rule, naming the first row (from 0) that does."""
    if not (len(t) == len(h) == len(q)):
        raise ValueError(f"enthalpy curve: {len(t)} temperatures, {len(h)} enthalpies and {len(q)} vapour "
                         "fractions; one of each per row")
    if len(t) < 2:
        raise ValueError("enthalpy curve: at least two rows are needed")
    for label, values in (("temperature", t), ("enthalpy", h), ("vapour fraction", q)):
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            raise ValueError(f"enthalpy curve row {bad[0]}: {label} is not a finite number")
    rules = ((np.diff(h) <= 0.0, "enthalpy must rise strictly from the row before"),
             (np.diff(t) < 0.0, "temperature must not fall from the row before"))
    for broken, rule in rules:
        if broken.any():
            raise ValueError(f"enthalpy curve row {np.flatnonzero(broken)[0] + 1}: {rule}")
    outside = np.flatnonzero((q < 0.0) | (q > 1.0))
    if outside.size:
        raise ValueError(f"enthalpy curve row {outside[0]}: vapour fraction {q[outside[0]]} is outside [0, 1]")


def curve_from_model(model: FluidModel, temperatures, **properties) -> EnthalpyCurve:
    """A single-phase fluid model sampled as an enthalpy curve at ``temperatures`` (°C), liquid
    throughout, keeping the model's transport properties unless ``properties`` gives others;
    exact for :class:`.properties.ConstantCp`.

    >>> from hxtrain.units.properties import ConstantCp
    >>> curve = curve_from_model(ConstantCp(2.5), [20.0, 150.0, 300.0])
    >>> curve.constant_cp, float(curve.temperature(500.0))
    (True, 200.0)
    """
    t = _t(temperatures)
    kept = dict(viscosity=model.viscosity_model, conductivity=model.conductivity_value, density=model.density_value)
    return EnthalpyCurve(t, model.enthalpy(t), name=model.name, **{**kept, **properties})
