"""Physical values in case files: a bare number in the documented default unit, or a string with
units parsed by pint ("480 degF", "310 t/h", "85 Btu/h/ft^2/degF").

Temperatures are levels (degC, degF, K). In every other quantity a temperature unit means a
temperature *difference* ("Btu/h/ft^2/degF" is per degree Fahrenheit of difference), so degC and
degF there are read as delta_degC and delta_degF.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache


@dataclass(frozen=True)
class Kind:
    """A kind of quantity: its name in messages, its default unit and an example."""

    name: str
    unit: str
    example: str
    level_temperature: bool = False


TEMPERATURE = Kind("a temperature", "degC", '350 or "660 degF"', level_temperature=True)
TEMPERATURE_DIFFERENCE = Kind("a temperature difference", "delta_degC", '10 or "18 delta_degF"')
MASS_FLOW = Kind("a mass flow", "kg/s", '85 or "310 t/h"')
SPECIFIC_HEAT = Kind("a specific heat capacity", "kJ/kg/delta_degC", '2.3 or "0.55 Btu/lb/degF"')
DUTY = Kind("a heat duty", "kW", '2500 or "25 MW"')
HEAT_TRANSFER_COEFFICIENT = Kind("a heat-transfer coefficient", "W/m^2/delta_degC", '350 or "60 Btu/h/ft^2/degF"')
AREA = Kind("an area", "m^2", '250 or "2700 ft^2"')
CONDUCTANCE = Kind("a conductance UA", "kW/delta_degC", '85 or "160000 Btu/h/degF"')
FRACTION = Kind("a fraction", "dimensionless", '0.4 or "40 %"')
NUMBER = Kind("a number", "dimensionless", "1e-6")

_DIFFERENCE = re.compile(r"(?<![A-Za-z_])deg(C|F)\b")


@lru_cache(maxsize=1)
def registry():
    """The one pint registry (built lazily: it takes a moment to load)."""
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=False)


class QuantityError(ValueError):
    """A value that is not a valid quantity of the expected kind (message says why)."""


def to_default_unit(value, kind: Kind) -> float:
    """Convert a case-file value to a float in ``kind``'s default unit.

    >>> round(to_default_unit("212 degF", TEMPERATURE), 9)
    100.0
    >>> round(to_default_unit("360 t/h", MASS_FLOW), 9)
    100.0
    >>> to_default_unit(2.1, SPECIFIC_HEAT)
    2.1
    """
    if isinstance(value, bool) or value is None:
        raise QuantityError(f"expected {kind.name} such as {kind.example}, got {shorten(value)}")
    if isinstance(value, (int, float)):
        number = float(value)
    elif isinstance(value, str):
        number = _parse(value, kind)
    else:
        raise QuantityError(f"expected {kind.name} such as {kind.example}, got {type(value).__name__} {shorten(value)}")
    if not math.isfinite(number):
        raise QuantityError(f"expected a finite value for {kind.name}, got {shorten(value)}")
    if kind.level_temperature and number < -273.15:
        raise QuantityError(f"{shorten(value)} °C is below absolute zero")
    return number


def shorten(value, limit=60) -> str:
    """repr of a value for a message, cut to ``limit`` characters."""
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 15] + f"... ({len(text)} characters)"


_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def _parse(text: str, kind: Kind) -> float:
    import pint

    match = _NUMBER.match(text)
    if not match:
        raise QuantityError(f"expected {kind.name} such as {kind.example}; {shorten(text)} does not start with a number")
    magnitude, unit_text = float(match.group(1)), match.group(2)
    if not unit_text:
        return magnitude
    if unit_text == "%":
        unit_text = "percent"
    if not kind.level_temperature:
        unit_text = _DIFFERENCE.sub(r"delta_deg\1", unit_text)
    ureg = registry()
    try:
        quantity = ureg.Quantity(magnitude, ureg.parse_units(unit_text))
        number = float(quantity.to(kind.unit).magnitude)
    except pint.DimensionalityError:
        raise QuantityError(
            f"expected {kind.name} such as {kind.example}, got {shorten(text)}, whose units are not of that kind"
        ) from None
    except Exception:  # pint's expression parser fails in many ways (even AssertionError) on junk
        raise QuantityError(f"expected {kind.name} such as {kind.example}; cannot read the units of {shorten(text)}") from None
    return number
