"""Reading a fluid's properties from a case file into a property model.

cp takes one of four forms::

    cp: 2.3                                    # constant, kJ/kg·K
    cp: {polynomial: [1.75, 0.0042]}           # a0 + a1·T + ..., T in °C
    cp: {table: [[40, 1.95], [150, 2.28], [300, 2.71]]}   # °C, kJ/kg·K; linear between points
    petroleum: {api_gravity: 31, watson_k: 11.9}          # or specific_gravity; Watson–Nelson cp

plus optional ``viscosity`` (a value, or ``points`` through two temperatures), ``conductivity``
(W/m·K), ``density`` (kg/m³) and ``valid_range`` ([low, high] °C: where the data hold; a table's
span by default). A stream outside its fluid's range is bad input unless ``extrapolate: true``
lets the run go on with a warning.
"""

from __future__ import annotations

import math

from hxtrain.units import properties as props

from . import quantities as q
from .fields import Fields, describe
from .quantities import QuantityError, to_default_unit

VISCOSITY = q.Kind("a viscosity", "Pa*s", '"2.5 cP" or 0.0025')
CONDUCTIVITY = q.Kind("a thermal conductivity", "W/m/delta_degC", '0.12 or "0.07 Btu/h/ft/degF"')
DENSITY = q.Kind("a density", "kg/m^3", '850 or "53 lb/ft^3"')


def read_fluid(f: Fields) -> props.FluidModel:
    model = _read_model(f)
    model.name = f.path[-1]
    range_key = "valid_range" if f.has("valid_range") else "cp"
    model.range_key = ".".join(map(str, f.path + (range_key,)))
    model.extrapolate = bool(_flag(f, "extrapolate"))
    f.finish()
    return model


def _flag(f: Fields, key):
    value = f.raw(key, required=False, default=False)
    if not isinstance(value, bool):
        raise f.error(key, f"expected true or false, got {describe(value)}")
    return value


def _read_model(f: Fields) -> props.FluidModel:
    transport = {
        "viscosity": _viscosity(f),
        "conductivity": f.quantity("conductivity", CONDUCTIVITY, required=False, above=0.0, maximum=1e3),
        "density": f.quantity("density", DENSITY, required=False, above=0.0, maximum=3e4),
        "valid_range": _range(f),
    }
    f.text("description")
    if f.has("petroleum") == f.has("cp"):
        raise f.error(None, "give exactly one of 'cp' and 'petroleum'")
    if f.has("petroleum"):
        model = _petroleum(f.mapping("petroleum"), transport)
    else:
        model = _cp(f, transport)
    _check_positive_cp(f, model)
    return model


def _cp(f: Fields, transport):
    raw = f.raw("cp")
    if not isinstance(raw, dict):
        return props.ConstantCp(f.quantity("cp", q.SPECIFIC_HEAT, above=0.0, maximum=100.0), **transport)
    form = Fields(f.doc, f.path + ("cp",), raw)
    if form.has("polynomial") == form.has("table"):
        raise form.error(None, "give exactly one of 'polynomial' (coefficients) and 'table' ([[T, cp], ...])")
    if form.has("polynomial"):
        values = form.raw("polynomial")
        if not isinstance(values, list) or not values or not all(_is_number(v) for v in values):
            raise form.error("polynomial", f"expected a list of numbers a0, a1, ... (cp = a0 + a1·T + ..., kJ/kg·K, "
                                           f"T in °C), got {describe(values)}")
        model = props.PolynomialCp(values, **transport)
    else:
        model = props.TabulatedCp(_table(form), **{k: v for k, v in transport.items() if v is not None})
    form.finish()
    return model


def _table(form: Fields):
    rows = form.raw("table")
    if not isinstance(rows, list) or len(rows) < 2:
        raise form.error("table", "expected at least two [temperature, cp] pairs")
    points = []
    for i, row in enumerate(rows):
        if not isinstance(row, list) or len(row) != 2:
            raise form.doc.error(form.path + ("table", i), f"expected a [temperature, cp] pair, got {describe(row)}")
        try:
            points.append([to_default_unit(row[0], q.TEMPERATURE), to_default_unit(row[1], q.SPECIFIC_HEAT)])
        except QuantityError as exc:
            raise form.doc.error(form.path + ("table", i), str(exc)) from None
    temperatures = [p[0] for p in points]
    if any(b <= a for a, b in zip(temperatures, temperatures[1:])):
        raise form.error("table", "the temperatures must increase from row to row")
    return points


def _petroleum(f: Fields, transport):
    if f.has("api_gravity") == f.has("specific_gravity"):
        raise f.error(None, "give exactly one of 'api_gravity' and 'specific_gravity'")
    if f.has("api_gravity"):
        sg = float(props.api_to_specific_gravity(f.quantity("api_gravity", q.NUMBER, minimum=-5.0, maximum=100.0)))
    else:
        sg = f.quantity("specific_gravity", q.NUMBER, minimum=0.55, maximum=1.2)
    k = f.quantity("watson_k", q.NUMBER, minimum=9.5, maximum=13.5)
    f.finish()
    return props.petroleum_fraction(sg, k, **transport)


def _viscosity(f: Fields):
    raw = f.raw("viscosity", required=False)
    if raw is None:
        return None
    if not isinstance(raw, dict):
        value = f.quantity("viscosity", VISCOSITY, above=0.0, maximum=1e4)
        return lambda t, value=value: value + 0.0 * t
    v = Fields(f.doc, f.path + ("viscosity",), raw)
    points = v.raw("points")
    if not isinstance(points, list) or len(points) != 2 or not all(isinstance(p, list) and len(p) == 2 for p in points):
        raise v.error("points", "expected two [temperature, viscosity] pairs, e.g. [[40, \"8 cP\"], [150, \"1.1 cP\"]]")
    try:
        pairs = [(to_default_unit(t, q.TEMPERATURE), to_default_unit(mu, VISCOSITY)) for t, mu in points]
    except QuantityError as exc:
        raise v.error("points", str(exc)) from None
    if pairs[0][0] == pairs[1][0] or min(p[1] for p in pairs) <= 0.0:
        raise v.error("points", "the two temperatures must differ and the viscosities be positive")
    v.finish()
    return props.AndradeViscosity(*pairs)


def _range(f: Fields):
    raw = f.raw("valid_range", required=False)
    if raw is None:
        return None
    if not isinstance(raw, list) or len(raw) != 2:
        raise f.error("valid_range", f"expected [lowest, highest] temperature, got {describe(raw)}")
    try:
        low, high = (to_default_unit(v, q.TEMPERATURE) for v in raw)
    except QuantityError as exc:
        raise f.error("valid_range", str(exc)) from None
    if high <= low:
        raise f.error("valid_range", "the highest temperature must be above the lowest")
    return (low, high)


def _check_positive_cp(f: Fields, model):
    import numpy as np

    low, high = model.valid_range or (-50.0, 600.0)
    grid = np.linspace(low, high, 101)
    if np.any(model.cp(grid) <= 0.0):
        raise f.error("cp", f"cp is not positive everywhere between {low:g} and {high:g} °C")


def _is_number(value):
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
