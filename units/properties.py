r"""Fluid property models: cp(T), enthalpy, its inverse, and optional transport properties.

Every model gives, on arrays of temperatures in °C:

* ``cp(t)`` in kJ/kg·K and ``enthalpy(t)`` in kJ/kg referred to 0 °C (the exact integral of cp);
* ``temperature(h)``, the inverse of ``enthalpy`` (Newton's method from the constant-cp guess,
  safeguarded by bisection, to 1e-10 K);
* ``viscosity(t)`` in Pa·s, ``conductivity(t)`` in W/m·K, ``density(t)`` in kg/m³ where the case
  gives them (None otherwise);
* ``valid_range`` (t_min, t_max) in °C or None: where the data hold. Using a model outside it is
  an extrapolation; the unit models flag it.

References
----------
.. [1] Watson, K. M., E. F. Nelson. "Improved methods for approximating critical and thermal
       properties of petroleum fractions." Ind. Eng. Chem. 25 (1933) 880-887: the
       characterization factor :math:`K_W = T_b^{1/3}/SG` (T_b in °R) and the liquid heat
       capacity of fractions, commonly fitted as
       :math:`c_p = (0.6811 - 0.308\,SG + (0.000815 - 0.000306\,SG)\,T)(0.35 + 0.055\,K_W)`
       in Btu/lb·°F with T in °F (attribution of this fitted form from memory).
.. [2] Kesler, M. G., B. I. Lee. "Improve prediction of enthalpy of fractions." Hydrocarbon
       Processing 55(3) (1976) 153-158: a quadratic liquid cp (as given by Riazi, ASTM MNL50,
       2005, ch. 7; from memory), used in the tests as a second reference (the two agree within
       about 5 % over SG 0.80-0.95, K_W 11.5-12, 20-300 °C, as measured there).
.. [3] Andrade's form for liquid viscosity, :math:`\ln\mu = A + B/T` (T in K): two points fix A
       and B (common practice for interpolating viscosity data).
"""

from __future__ import annotations

import numpy as np

from .arrays import select

__all__ = ["stacking_key", "stacked", "PHYSICAL_RANGE", "FluidModel", "ConstantCp", "PolynomialCp", "TabulatedCp", "petroleum_fraction", "api_to_specific_gravity",
           "AndradeViscosity", "Blend"]

PHYSICAL_RANGE = (-273.15, 2000.0)
"""Temperatures (°C) any stream may take: absolute zero to 2000 °C, the highest temperature a
case file accepts anywhere (no process stream in a heat-exchanger network comes near it)."""

BTU_PER_LB_F = 4.1868
"""kJ/kg·K in one Btu/lb·°F (International Table Btu)."""


def _t(t):
    return np.asarray(t, dtype=float)


class FluidModel:
    """Base of the property models: transport properties, range, and the enthalpy inverse."""

    valid_range: tuple[float, float] | None = None
    name: str = "fluid"
    range_key: str = ""
    """Where the range comes from in the case file, for messages."""
    extrapolate: bool = False
    """Whether use outside ``valid_range`` is allowed (with a warning) rather than refused."""
    conductivity_follows_temperature: bool = False
    """Whether :meth:`conductivity` changes with temperature: not here, where a fluid has one
    conductivity (the case file's value); a film's property correction then skips its ratio."""

    def __init__(self, viscosity=None, conductivity=None, density=None, valid_range=None):
        self.viscosity_model = viscosity
        self.conductivity_value = conductivity
        self.density_value = density
        self.valid_range = valid_range

    @property
    def constant_cp(self) -> bool:
        return False

    state_by_enthalpy = False
    """Whether T fails to fix the state somewhere (a saturation plateau): a stream of such a
    fluid carries its specific enthalpy rather than its temperature."""

    def viscosity(self, t):
        return None if self.viscosity_model is None else self.viscosity_model(t)

    def log_viscosity(self, t):
        """ln μ (μ in Pa·s), or None without viscosity data: the form a film's property
        correction takes (:func:`.films.log_property_correction`). A viscosity model is a
        function of °C; one that knows its logarithm directly (:meth:`AndradeViscosity.log`)
        spares an exp and a log over the batch."""
        model = self.viscosity_model
        if model is None:
            return None
        return model.log(t) if hasattr(model, "log") else np.log(model(t))

    def conductivity(self, t):
        return None if self.conductivity_value is None else np.broadcast_to(self.conductivity_value, np.shape(t)) * 1.0

    def density(self, t):
        return None if self.density_value is None else np.broadcast_to(self.density_value, np.shape(t)) * 1.0

    def outside_range(self, t):
        """True where ``t`` lies outside the model's valid range."""
        t = _t(t)
        if self.valid_range is None:
            return np.zeros(t.shape, bool)
        low, high = self.valid_range
        return (t < low - 1e-9) | (t > high + 1e-9)

    def members(self):
        """The plain fluids this model is made of (itself; a blend's constituents)."""
        return [self]

    def mean_cp(self, t1, t2, h1=None):
        """Mean cp between two temperatures, (h2 - h1)/(t2 - t1); cp(t1) where they coincide.
        ``h1``: the enthalpy at ``t1`` where the caller has it already (an iteration on ``t2``)."""
        t1, t2 = _t(t1), _t(t2)
        if t1.shape != t2.shape:
            t1, t2 = np.broadcast_arrays(t1, t2)
        dt = t2 - t1
        close = np.abs(dt) < 1e-9
        mean = (self.enthalpy(t2) - (self.enthalpy(t1) if h1 is None else h1)) / select(close, 1.0, dt)
        if not close.any():  # the usual case: no cp to evaluate
            return mean
        return np.where(close, self.cp(0.5 * (t1 + t2)), mean)

    def temperature(self, h, guess=None):
        """Temperature (°C) at enthalpy ``h`` (kJ/kg): Newton steps, bisection as a safeguard,
        within :data:`PHYSICAL_RANGE`. Where no temperature in that range has the enthalpy
        ``h`` (a duty that would take the stream below absolute zero or past the range), or the
        search does not meet ``h``, the result is NaN: never a clamped value posing as an answer."""
        h = _t(h)
        low_limit, high_limit = PHYSICAL_RANGE
        t = h / self.cp(0.0) if guess is None else np.broadcast_to(_t(guess), h.shape).copy()
        t = np.where(np.isfinite(t), np.clip(t, low_limit, high_limit), 0.0)
        low, high = np.full(h.shape, low_limit), np.full(h.shape, high_limit)
        tolerance = 1e-13 * np.maximum(1.0, np.abs(h))
        met = np.zeros(h.shape, bool)
        unknown = ~np.isfinite(h)  # no temperature to search for: NaN below
        for _ in range(200):
            error = self.enthalpy(t) - h
            met = np.abs(error) <= tolerance
            if np.all(met | unknown):
                break
            high = np.where(error > 0, np.minimum(high, t), high)
            low = np.where(error <= 0, np.maximum(low, t), low)
            with np.errstate(divide="ignore", invalid="ignore"):
                t_new = t - error / self.cp(t)
            outside = (t_new <= low) | (t_new >= high) | ~np.isfinite(t_new)
            t = np.where(met, t, np.where(outside, 0.5 * (low + high), t_new))
        else:
            met = np.abs(self.enthalpy(t) - h) <= tolerance
        # bisection converges to a bound when h lies beyond it; a point within 1e-9 K of the
        # true root may still miss the 1e-13 relative target on a steep cp: accept those
        reached = met | (np.abs(self.enthalpy(t) - h) <= 1e-9 * np.abs(self.cp(t)) + tolerance)
        return np.where(reached & np.isfinite(h), t, np.nan)


class ConstantCp(FluidModel):
    """cp independent of temperature.

    >>> water = ConstantCp(4.18)
    >>> float(water.enthalpy(50.0)), float(water.temperature(209.0))
    (209.0, 50.0)
    """

    def __init__(self, cp, **properties):
        super().__init__(**properties)
        self.value = float(cp)

    @property
    def constant_cp(self) -> bool:
        return True

    def cp(self, t):
        return np.full(np.shape(t), self.value)

    def mean_cp(self, t1, t2, h1=None):
        return np.full(np.broadcast_shapes(np.shape(t1), np.shape(t2)), self.value)

    def enthalpy(self, t):
        return self.value * _t(t)

    def temperature(self, h, guess=None):
        t = _t(h) / self.value
        low, high = PHYSICAL_RANGE
        return np.where((t >= low) & (t <= high), t, np.nan)


class PolynomialCp(FluidModel):
    r"""cp as a polynomial in T (°C): :math:`c_p = \sum_k a_k T^k`, so
    :math:`h = \sum_k a_k T^{k+1}/(k+1)` exactly.

    >>> oil = PolynomialCp([1.8, 0.004])
    >>> float(oil.cp(100.0)), float(oil.enthalpy(100.0))
    (2.2, 200.0)
    >>> round(float(oil.temperature(200.0)), 9)
    100.0
    """

    def __init__(self, coefficients, **properties):
        super().__init__(**properties)
        self.coefficients = np.asarray(coefficients, dtype=float)
        powers = np.arange(1, len(self.coefficients) + 1)
        # highest power first for np.polyval; the enthalpy's constant term is 0: h(0 °C) = 0
        self._cp_high_first = self.coefficients[::-1].copy()
        self._h_high_first = np.concatenate([(self.coefficients / powers)[::-1], [0.0]])

    def cp(self, t):
        return _horner(self._cp_high_first, _t(t))

    def enthalpy(self, t):
        return _horner(self._h_high_first, _t(t))

    def temperature(self, h, guess=None):
        r"""Temperature (°C) at enthalpy ``h`` (kJ/kg). A cp linear in T (the petroleum-fraction
        correlations' form) makes h quadratic, :math:`h = a_0T + a_1T^2/2`, and T its root on the
        rising branch (cp = a_0 + a_1T = \sqrt{a_0^2 + 2a_1h} > 0 there), taken in the form that
        subtracts no near-equal numbers; NaN where no T within the physical range has ``h``.
        Higher degrees: Newton's iteration (:meth:`FluidModel.temperature`).

        >>> oil = PolynomialCp([1.8, 0.004])
        >>> round(float(oil.temperature(oil.enthalpy(250.0))), 9), float(PolynomialCp([-0.5, 0.01]).temperature(37.5))
        (250.0, 150.0)
        """
        if len(self.coefficients) > 2:
            return super().temperature(h, guess)
        a0, a1 = self.coefficients[0], self.coefficients[1] if len(self.coefficients) == 2 else 0.0
        h = _t(h)
        with np.errstate(invalid="ignore", divide="ignore"):
            root = np.sqrt(a0 * a0 + 2.0 * a1 * h)
            t = 2.0 * h / (a0 + root) if a0 > 0.0 else (root - a0) / a1
        low, high = PHYSICAL_RANGE
        return np.where((t >= low) & (t <= high) & (root > 0.0), t, np.nan)


def _horner(high_first, t):
    """The polynomial with coefficients ``high_first`` (highest power first) at ``t``: what
    ``np.polyval`` gives for finite ``t``, to the last digit, without its array of zeros and
    first multiplication (these run in every pass of every rating), and in place: one new array,
    not two a coefficient (the same operations in the same order: the same numbers).

    >>> _horner(np.array([2.0, -1.0, 3.0]), np.array([0.0, 1.0, 2.0])).tolist()  # 2t² - t + 3
    [3.0, 4.0, 9.0]
    """
    if len(high_first) == 1:
        return np.full(np.shape(t), high_first[0])
    y = high_first[0] * t
    y += high_first[1]
    for c in high_first[2:]:
        y *= t
        y += c
    return y


class TabulatedCp(FluidModel):
    """cp given at temperatures, linear between the points; enthalpy integrated exactly.

    Beyond the table cp is held at the end values; the table's span is the valid range unless
    another is given.

    >>> table = TabulatedCp([[0.0, 2.0], [100.0, 2.4]])
    >>> float(table.cp(50.0)), round(float(table.enthalpy(100.0)), 9)
    (2.2, 220.0)
    """

    def __init__(self, points, **properties):
        points = np.asarray(points, dtype=float)
        properties.setdefault("valid_range", (float(points[0, 0]), float(points[-1, 0])))
        super().__init__(**properties)
        self.t_points, self.cp_points = points[:, 0], points[:, 1]
        areas = np.diff(self.t_points) * 0.5 * (self.cp_points[1:] + self.cp_points[:-1])
        self._cumulative = np.concatenate([[0.0], np.cumsum(areas)])
        self._offset = self._from_first_point(0.0)

    def cp(self, t):
        return np.interp(_t(t), self.t_points, self.cp_points)

    def _from_first_point(self, t):
        """Integral of cp from the first table temperature to t (held cp beyond the ends)."""
        t = _t(t)
        tp, cp = self.t_points, self.cp_points
        inside = np.clip(t, tp[0], tp[-1])
        i = np.clip(np.searchsorted(tp, inside, side="right") - 1, 0, len(tp) - 2)
        within = self._cumulative[i] + (inside - tp[i]) * 0.5 * (cp[i] + np.interp(inside, tp, cp))
        return within + (t - inside) * np.where(t < tp[0], cp[0], cp[-1])

    def enthalpy(self, t):
        return self._from_first_point(t) - self._offset


def api_to_specific_gravity(api):
    r"""Specific gravity 60/60 °F from API gravity: :math:`SG = 141.5/(API + 131.5)`.

    >>> round(float(api_to_specific_gravity(10.0)), 12)
    1.0
    """
    return 141.5 / (np.asarray(api, dtype=float) + 131.5)


def petroleum_fraction(specific_gravity, watson_k, **properties) -> PolynomialCp:
    r"""Liquid petroleum fraction with the Watson–Nelson liquid cp [1]_, linear in T:

    .. math:: c_p = (0.6811 - 0.308\,SG + (0.000815 - 0.000306\,SG)\,T_F)(0.35 + 0.055\,K_W)

    in Btu/lb·°F with :math:`T_F = 1.8\,T + 32`, converted here to kJ/kg·K against T in °C.
    For liquids well below their critical region: keep ``valid_range`` there.

    >>> crude = petroleum_fraction(0.86, 11.9)
    >>> round(float(crude.cp(150.0)), 4)
    2.4514
    """
    sg, k = float(specific_gravity), float(watson_k)
    scale = BTU_PER_LB_F * (0.35 + 0.055 * k)
    slope_f = 0.000815 - 0.000306 * sg
    a0 = scale * (0.6811 - 0.308 * sg + slope_f * 32.0)
    a1 = scale * slope_f * 1.8
    return PolynomialCp([a0, a1], **properties)


class AndradeViscosity:
    r"""Liquid viscosity through two points, :math:`\ln\mu = A + B/T` with T in K [3]_.

    >>> mu = AndradeViscosity((40.0, 8e-3), (100.0, 2e-3))
    >>> round(float(mu(40.0)), 12), round(float(mu(100.0)), 12)
    (0.008, 0.002)
    """

    def __init__(self, point_1, point_2):
        (t1, mu1), (t2, mu2) = point_1, point_2
        x1, x2 = 1.0 / (t1 + 273.15), 1.0 / (t2 + 273.15)
        self.b = (np.log(mu1) - np.log(mu2)) / (x1 - x2)
        self.a = np.log(mu1) - self.b * x1

    def __call__(self, t):
        return np.exp(self.log(t))

    def log(self, t):
        """ln μ (μ in Pa·s) at ``t`` (°C)."""
        return self.a + self.b / (_t(t) + 273.15)


class Blend(FluidModel):
    """A mixture of fluids by mass fraction (ideal mixing: enthalpies add); viscosity by the
    logarithmic mass-fraction rule (common practice for blending similar liquids)."""

    def __init__(self, fluids, fractions):
        super().__init__()
        self.fluids = list(fluids)
        self.fractions = [np.asarray(f, dtype=float) for f in fractions]
        ranges = [f.valid_range for f in self.fluids if f.valid_range is not None]
        self.valid_range = (max(r[0] for r in ranges), min(r[1] for r in ranges)) if ranges else None

    @property
    def constant_cp(self) -> bool:
        return all(f.constant_cp for f in self.fluids)

    def members(self):
        return [m for f in self.fluids for m in f.members()]

    @property
    def state_by_enthalpy(self) -> bool:
        return any(f.state_by_enthalpy for f in self.fluids)

    def cp(self, t):
        return sum(w * f.cp(t) for f, w in zip(self.fluids, self.fractions))

    def enthalpy(self, t):
        return sum(w * f.enthalpy(t) for f, w in zip(self.fluids, self.fractions))

    def _weighted(self, name, t):
        values = [getattr(f, name)(t) for f in self.fluids]
        if any(v is None for v in values):
            return None
        return sum(w * v for v, w in zip(values, self.fractions))

    def viscosity(self, t):
        log_mu = self.log_viscosity(t)
        return None if log_mu is None else np.exp(log_mu)

    def log_viscosity(self, t):
        return self._weighted("log_viscosity", t)

    def conductivity(self, t):
        return self._weighted("conductivity", t)

    @property
    def conductivity_follows_temperature(self) -> bool:
        return any(f.conductivity_follows_temperature for f in self.fluids)

    def density(self, t):
        values = [f.density(t) for f in self.fluids]
        if any(v is None for v in values):
            return None
        return 1.0 / sum(w / v for v, w in zip(values, self.fractions))


def stacking_key(fluid):
    """What fluids must share to be rated stacked along one batch axis (:func:`stacked`): the
    model itself, or for a blend of plain fluids the constituents, whatever the fractions."""
    if isinstance(fluid, Blend) and not any(isinstance(f, Blend) for f in fluid.fluids):
        return ("blend", tuple(id(f) for f in fluid.fluids))
    return id(fluid)


def stacked(fluids, size):
    """One fluid model for a batch axis made of ``len(fluids)`` shares of ``size`` each, share k
    of ``fluids[k]`` (all of one :func:`stacking_key`): the model itself where all are one, else
    a blend of the shared constituents with each share's fractions laid along the axis. Every
    property is elementwise, so each share gets the numbers of its own model."""
    first = fluids[0]
    if all(f is first for f in fluids):
        return first
    fractions = [np.concatenate([np.broadcast_to(f.fractions[i], (size,)) for f in fluids])
                 for i in range(len(first.fluids))]
    return Blend(first.fluids, fractions)

