"""Reading a fluid's properties from a case file into a property model.

A fluid is given by its cp, or on an enthalpy curve (``enthalpy_curve``, ``water_steam``: see
:mod:`.fluid_curves`). cp takes one of four forms::

    cp: 2.3                                    # constant, kJ/kg·K
    cp: {polynomial: [1.75, 0.0042]}           # a0 + a1·T + ..., T in °C
    cp: {table: [[40, 1.95], [150, 2.28], [300, 2.71]]}   # °C, kJ/kg·K; linear between points
    petroleum: {api_gravity: 31, watson_k: 11.9}          # or specific_gravity; Watson–Nelson cp

plus optional ``viscosity`` (a value, or ``points`` through two temperatures), ``conductivity``
(W/m·K), ``density`` (kg/m³) and ``valid_range`` ([low, high] °C: where the data hold; by
default a table's span, −50 to 600 °C for a polynomial or the petroleum correlation, and
everywhere for a constant). A stream outside its fluid's range is bad input unless ``extrapolate: true``
lets the run go on with a warning.
"""

from __future__ import annotations

from hxtrain.units import properties as props

from . import quantities as q
from .fields import Fields, describe
from .fluid_curves import CURVE_FORMS, read_curve
from .quantities import QuantityError, to_default_unit

DEFAULT_SPAN = (-50.0, 600.0)
"""°C: the valid range of a cp polynomial (given, or the petroleum correlation) without
``valid_range``: the temperatures of process heat exchange, with margin (common practice). A
polynomial has no span of its own, and a fit is good only near the data it was fitted to: far
outside, any polynomial of degree one or more leaves every plausible cp, and below zero it makes
the enthalpy fall as temperature rises (no temperature follows from it). So the span where the
polynomial is checked is the span where it may be used: a stream outside it is outside the
fluid's data range, refused unless ``extrapolate: true`` (then used, with a warning). A
constant cp holds everywhere (there is nothing to extrapolate); a table spans its rows."""
MAX_COEFFICIENTS = 10
"""cp fits in data books have up to five terms; more is not a fit but a pasted list."""


def read_fluid(f: Fields) -> props.FluidModel:
    model = _read_model(f)
    model.name = f.path[-1]
    # a message about the data range names the key the range comes from: the range given, or the
    # form the fluid is given in
    forms = ("petroleum",) + CURVE_FORMS
    range_key = "valid_range" if f.has("valid_range") else next((k for k in forms if f.has(k)), "cp")
    model.range_key = ".".join(map(str, f.path + (range_key,)))
    model.extrapolate = f.flag("extrapolate")
    f.finish()
    return model


def _read_model(f: Fields) -> props.FluidModel:
    transport = {
        "viscosity": _viscosity(f),
        "conductivity": f.quantity("conductivity", q.FLUID_CONDUCTIVITY, required=False),
        "density": f.quantity("density", q.DENSITY, required=False),
        "valid_range": f.temperature_span("valid_range", required=False),
    }
    f.text("description")
    forms = [k for k in ("cp", "petroleum") + CURVE_FORMS if f.has(k)]
    if len(forms) != 1:
        raise f.one_of_error(("cp", "petroleum") + CURVE_FORMS, "give exactly one of 'cp', 'petroleum', "
                             f"'enthalpy_curve' and 'water_steam' (found {' and '.join(forms) or 'none'})", forms)
    if forms[0] in CURVE_FORMS:
        return read_curve(f, transport)
    if f.has("petroleum"):
        model = _petroleum(f.mapping("petroleum"), transport)
    else:
        model = _cp(f, transport)
    if model.valid_range is None and isinstance(model, props.PolynomialCp):
        model.valid_range = DEFAULT_SPAN
    _check_over_span(f, model)
    return model


def _cp(f: Fields, transport):
    raw = f.raw("cp")
    if not isinstance(raw, dict):
        return props.ConstantCp(f.quantity("cp", q.SPECIFIC_HEAT), **transport)
    form = Fields(f.doc, f.path + ("cp",), raw)
    if form.has("polynomial") == form.has("table"):
        raise form.one_of_error(("polynomial", "table"), "give exactly one of 'polynomial' (coefficients) and 'table' "
                                                         "([[T, cp], ...])")
    if form.has("polynomial"):
        model = props.PolynomialCp(_coefficients(form), **transport)
    else:
        model = props.TabulatedCp(_table(form), **{k: v for k, v in transport.items() if v is not None})
    form.finish()
    return model


def _coefficients(form: Fields) -> list[float]:
    values = form.raw("polynomial")
    if (not isinstance(values, list) or not 1 <= len(values) <= MAX_COEFFICIENTS
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in values)):
        raise form.error("polynomial", f"expected a list of 1 to {MAX_COEFFICIENTS} numbers a0, a1, ... (cp = a0 + "
                                       f"a1·T + ..., kJ/kg·K, T in °C), got {describe(values)}")
    coefficients = []
    for i, value in enumerate(values):
        try:
            coefficients.append(q.as_float(value))
            q.check_plausible(coefficients[-1], q.NUMBER, value)
        except QuantityError as exc:
            raise form.doc.error(form.path + ("polynomial", i), str(exc)) from None
    return coefficients


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
        raise f.one_of_error(("api_gravity", "specific_gravity"),
                             "give exactly one of 'api_gravity' and 'specific_gravity'")
    if f.has("api_gravity"):
        sg = float(props.api_to_specific_gravity(f.quantity("api_gravity", q.API_GRAVITY)))
    else:
        sg = f.quantity("specific_gravity", q.SPECIFIC_GRAVITY)
    k = f.quantity("watson_k", q.WATSON_K)
    f.finish()
    return props.petroleum_fraction(sg, k, **transport)


def _viscosity(f: Fields):
    raw = f.raw("viscosity", required=False)
    if raw is None:
        return None
    if not isinstance(raw, dict):
        value = f.quantity("viscosity", q.VISCOSITY)
        return props.AndradeViscosity((0.0, value), (100.0, value))  # constant: picklable, unlike a lambda
    v = Fields(f.doc, f.path + ("viscosity",), raw)
    points = v.raw("points")
    if not isinstance(points, list) or len(points) != 2 or not all(isinstance(p, list) and len(p) == 2 for p in points):
        raise v.error("points", "expected two [temperature, viscosity] pairs, e.g. [[40, \"8 cP\"], [150, \"1.1 cP\"]]")
    try:
        pairs = [(to_default_unit(t, q.TEMPERATURE), to_default_unit(mu, q.VISCOSITY)) for t, mu in points]
    except QuantityError as exc:
        raise v.error("points", str(exc)) from None
    if pairs[0][0] == pairs[1][0]:
        raise v.error("points", "the two temperatures must differ")
    v.finish()
    return props.AndradeViscosity(*pairs)


def _check_over_span(f: Fields, model):
    """cp plausible (the table's range) over the fluid's valid range, or over DEFAULT_SPAN when it
    has none; viscosity from two points plausible over the valid range where one is given. A
    polynomial's extremes are found exactly (the roots of its derivative), not only on a grid."""
    import numpy as np

    low, high = model.valid_range or DEFAULT_SPAN
    grid = np.linspace(low, high, 101)
    with np.errstate(all="ignore"):
        grid = np.sort(np.concatenate([grid, _turning_points(getattr(model, "coefficients", None), low, high)]))
        checks = [("cp", q.SPECIFIC_HEAT, model.cp(grid), "check the coefficients (T in °C) or give 'valid_range', "
                                                          "the temperatures where they hold")]
        if isinstance(model.viscosity_model, props.AndradeViscosity) and model.valid_range:
            checks.append(("viscosity", q.VISCOSITY, model.viscosity(grid), "check the two points"))
    for key, kind, values, advice in checks:
        slack = 1e-9 * np.maximum(np.abs(values), 1e-300)  # a constant rebuilt as exp(log(v)) may differ by an ulp
        bad = ~np.isfinite(values) | (values < kind.low - slack) | (values > kind.high + slack)
        if np.any(bad):
            t, value = grid[bad][0], values[bad][0]
            raise f.error(key, f"{key} is {value:.4g} {kind.shown_unit} at {t:g} °C, outside the plausible "
                               f"{kind.low:g} to {kind.high:g} {kind.shown_unit} ({kind.basis}) between {low:g} "
                               f"and {high:g} °C; {advice}")


def _turning_points(coefficients, low, high):
    """Where a cp polynomial (a0, a1, ...) has its extremes inside (low, high) °C. Terms too small
    to matter anywhere in the span are dropped first (a denormal leading coefficient would
    overflow the root finder)."""
    import numpy as np

    if coefficients is None or len(coefficients) < 3:
        return np.empty(0)
    derivative = np.polynomial.polynomial.polyder(np.asarray(coefficients, dtype=float))
    scale = max(abs(low), abs(high), 1.0)
    sizes = np.abs(derivative) * scale ** np.arange(len(derivative))
    kept = derivative[: np.nonzero(sizes > 1e-15 * sizes.max())[0].max() + 1] if sizes.max() > 0 else derivative[:1]
    if len(kept) < 2:
        return np.empty(0)
    roots = np.polynomial.polynomial.polyroots(kept)
    return roots.real[(np.abs(roots.imag) < 1e-9) & (roots.real > low) & (roots.real < high)]
