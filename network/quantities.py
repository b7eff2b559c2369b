"""Physical values in case files: a bare number in the documented default unit, or a string with
units parsed by pint ("480 degF", "310 t/h", "85 Btu/h/ft^2/degF").

Temperatures are levels (degC, degF, K). In every other quantity a temperature unit means a
temperature *difference* ("Btu/h/ft^2/degF" is per degree Fahrenheit of difference), so degC and
degF there are read as delta_degC and delta_degF.
"""

from __future__ import annotations

import logging
import math
import re
import warnings
from dataclasses import dataclass
from functools import lru_cache

from hxtrain.units.properties import PHYSICAL_RANGE
from hxtrain.units.protocol import LARGEST_DUTY


@dataclass(frozen=True)
class Kind:
    """A kind of quantity: its name in messages, its default unit, an example, and the range of
    values that are plausible for it in a case file (in the default unit; see the table below)."""

    name: str
    unit: str
    example: str
    level_temperature: bool = False
    low: float = -math.inf
    high: float = math.inf
    basis: str = ""
    """Where the range comes from: a named source, physics, or "common practice"."""
    least_nonzero: float = 0.0
    """Smallest magnitude accepted other than exactly 0 (a smaller one is a rounding error)."""

    @property
    def shown_unit(self) -> str:
        """The default unit as messages show it ("kJ/kg/K", "m²·K/W")."""
        text = self.unit.replace("delta_degC", "K").replace("degC", "°C").replace("^2", "²").replace("^3", "³")
        return "" if text == "dimensionless" else text.replace("*", "·")


# ----------------------------------------------------------------------------- the plausibility table
# The one table of plausible ranges for every physical value of the case format, in the default
# units. A value outside its range is refused naming the key: a range is chosen so that no real
# plant lies outside it and a slip (a wrong unit, a missing exponent, a denormal) lands outside.
# Each range says where it comes from; "from memory" marks published values recalled rather than
# looked up, "common practice" a rule of thumb without a single source.

_COLDEST, _HOTTEST = PHYSICAL_RANGE
TEMPERATURE = Kind("a temperature", "degC", '350 or "660 degF"', level_temperature=True, low=_COLDEST, high=_HOTTEST,
                   basis="absolute zero to 2000 °C, above any process stream, flue gases included: common practice")
TEMPERATURE_DIFFERENCE = Kind("a temperature difference", "delta_degC", '10 or "18 delta_degF"', low=0.0, high=500.0,
                              basis="an approach beyond 500 K is no approach: common practice")
TOLERANCE = Kind("a convergence tolerance", "delta_degC", '1e-6 or "1e-6 delta_degF"', low=1e-9, high=1.0,
                 basis="below 1e-9 K round-off decides the test; looser than 1 K, tear temperatures are less "
                       "certain than a plant thermocouple reads them: common practice")
"""On the tear temperatures only. The energy-balance check allows for what the tolerance admits
(see :mod:`hxtrain.solver.simulation.evaluation`), so any tolerance in this range gives either an
answer or a non-convergence, never a failed balance check for its looseness."""
MASS_FLOW = Kind("a mass flow", "kg/s", '85 or "310 t/h"', low=1e-6, high=1e5,
                 basis="3.6 g/h to 360,000 t/h: below any process stream and above the largest cooling-water "
                       "circuit, and far from floating-point underflow: common practice")
SPECIFIC_HEAT = Kind("a specific heat capacity", "kJ/kg/delta_degC", '2.3 or "0.55 Btu/lb/degF"', low=0.1, high=20.0,
                     basis="liquid metals ~0.14 (mercury) to hydrogen gas ~14.3 kJ/kg·K, from memory")
DUTY = Kind("a heat duty", "kW", '2500 or "25 MW"', low=0.0, high=LARGEST_DUTY,
            basis="1 GW: above the largest fired heaters, ~100-300 MW: common practice")
HEAT_TRANSFER_COEFFICIENT = Kind("a heat-transfer coefficient U", "W/m^2/delta_degC", '350 or "60 Btu/h/ft^2/degF"',
                                 low=0.0, high=3e4, basis="condensing steam against boiling water reaches "
                                                          "~5,000-10,000 W/m²·K: common practice")
CLEAN_COEFFICIENT = Kind("a clean heat-transfer coefficient U", "W/m^2/delta_degC", '450 or "80 Btu/h/ft^2/degF"',
                         low=1.0, high=3e4, basis="gas to gas ~5-35 to condensing steam against boiling water "
                                                  "~5,000-10,000 W/m²·K: common practice")
FILM_COEFFICIENT = Kind("a film coefficient", "W/m^2/delta_degC", '1500 or "250 Btu/h/ft^2/degF"', low=1.0, high=1e6,
                        basis="free convection in gases ~2-25 to dropwise condensation ~1e5 W/m²·K "
                              "(Incropera, Table 1.1, from memory)")
AREA = Kind("an area", "m^2", '250 or "2700 ft^2"', low=0.01, high=5e4,
            basis="a small hairpin ~0.5 m² to the largest shells, a few thousand m²: common practice")
CONDUCTANCE = Kind("a conductance UA", "kW/delta_degC", '85 or "160000 Btu/h/degF"', low=0.0, high=1e6,
                   basis="100 times the largest exchanger banks (~1e4 kW/K): common practice")
STEAM_PRESSURE = Kind("an absolute steam pressure", "kPa", '1000 or "10 bar"', low=1.0, high=22000.0,
                      basis="saturated steam by IAPWS-IF97 from 1 kPa (7 °C) to just below the critical pressure "
                            "of water, 22 064 kPa")
SPECIFIC_ENTHALPY = Kind("a specific enthalpy", "kJ/kg", '2778 or "1194 Btu/lb"', low=-2e4, high=2e4,
                         basis="steam at 800 °C is ~4100 kJ/kg above liquid at 0 °C; 20 MJ/kg is beyond any "
                               "process stream's heat content, combustion included: common practice")
PRESSURE = Kind("an absolute pressure", "kPa", '1000 or "10 bar"', low=0.611657, high=1e5,
                basis="the triple-point pressure of water to 100 MPa, the span of IAPWS-IF97")
FRACTION = Kind("a fraction", "dimensionless", '0.4 or "40 %"', low=0.0, high=1.0, basis="a share lies from 0 to 1",
                least_nonzero=2.2e-16)
"""A share below the spacing of floating-point numbers at 1 vanishes against its complement
(1 - 1e-20 == 1) and, as a flow, runs into denormal numbers: write 0."""
NUMBER = Kind("a number", "dimensionless", "1e-6")
FOULING = Kind("a fouling resistance", "m^2*delta_degC/W", '0.00035 or "0.002 h*ft^2*degF/Btu"', low=0.0, high=0.02,
               basis="ten times the largest of TEMA's recommended resistances (~0.002 m²·K/W, from memory)")
TUBE_DIAMETER = Kind("a tube diameter", "m", '0.01905 or "19.05 mm" or "0.75 in"', low=1e-3, high=0.6,
                     basis="1 mm (micro-tube bundles) to 0.6 m (a double pipe's 24 in inner pipe): common practice")
TUBE_LENGTH = Kind("a tube length", "m", '6.1 or "20 ft"', low=0.1, high=30.0,
                   basis="TEMA's standard lengths run 2.4-7.3 m, long feed-effluent bundles ~20 m: common practice")
SHELL_DIAMETER = Kind("a shell diameter", "m", '0.75 or "29 in"', low=0.05, high=5.0,
                      basis="TEMA's scope reaches 2.5 m (from memory); 5 m is above any shell: common practice")
SPACING = Kind("a tube pitch or baffle spacing", "m", '0.0254 or "1 in"', low=1e-3, high=30.0,
               basis="from a tube diameter to a tube length: the consistency checks of the geometry do the rest")
WALL_CONDUCTIVITY = Kind("a tube-wall conductivity", "W/m/delta_degC", '45 or "26 Btu/h/ft/degF"', low=0.1, high=500.0,
                         basis="PTFE ~0.25 to copper ~400 W/m·K, from memory")
FLUID_CONDUCTIVITY = Kind("a fluid's thermal conductivity", "W/m/delta_degC", '0.12 or "0.07 Btu/h/ft/degF"',
                          low=0.003, high=100.0, basis="heavy vapours ~0.006 to liquid sodium ~80 W/m·K, from memory")
VISCOSITY = Kind("a viscosity", "Pa*s", '"2.5 cP" or 0.0025', low=1e-6, high=1e5,
                 basis="gases ~1e-5 Pa·s (hydrogen 9e-6) to bitumen ~1e5 Pa·s, from memory")
DENSITY = Kind("a density", "kg/m^3", '850 or "53 lb/ft^3"', low=1e-3, high=2e4,
               basis="vapours under vacuum ~0.01 to mercury 13 500 kg/m³, from memory")
PRESSURE_DROP = Kind("a pressure drop", "Pa", '"0.7 bar" or 70000 or "10 psi"', low=1.0, high=1e7,
                     basis="exchangers run ~1e3-2e5 Pa; 100 bar is above any: common practice")
FLOW_EXPONENT = Kind("a film exponent on flow", "dimensionless", "0.6 or 0.8", low=0.2, high=1.0,
                     basis="laminar 1/3 to turbulent 0.8; the model's range")
REYNOLDS = Kind("a Reynolds number", "dimensionless", "12000", low=1.0, high=1e8,
                basis="creeping flow of heavy oil to fast gas in large pipes: common practice")
SHELL_SHARE = Kind("a share of the film resistance", "dimensionless", "0.5", low=0.001, high=0.999,
                   basis="each side keeps some film resistance")
CORRECTION_FACTOR = Kind("an F factor", "dimensionless", "0.75", low=0.0, high=1.0, basis="F lies in [0, 1]")
API_GRAVITY = Kind("an API gravity", "dimensionless", "31", low=-5.0, high=100.0,
                   basis="residues to natural gasolines: the petroleum cp correlation's inputs")
SPECIFIC_GRAVITY = Kind("a specific gravity", "dimensionless", "0.86", low=0.55, high=1.2,
                        basis="light naphtha to vacuum residue: the petroleum cp correlation's inputs")
WATSON_K = Kind("a Watson K", "dimensionless", "11.9", low=9.5, high=13.5,
                basis="aromatic to paraffinic fractions: the petroleum cp correlation's inputs")
DURATION = Kind("a duration", "s", '"1 day" or "6 h"', low=1.0, high=100 * 365.25 * 86400.0,
                basis="a one-second sample to a century of projection: common practice")
"""Averaging windows and projection horizons of plant data. Monitoring files ask for the unit
("1 day", "6 h"): a bare number here would be seconds, which nobody means."""
ENERGY = Kind("an energy", "GJ", '"240 GJ" or "230 MMBtu"', low=0.0, high=1e12,
              basis="fuel over a cleaning horizon; no case value reads it: only reports show it")
"""Fuel energy (a schedule's fuel over its horizon, a day's fuel): shown in GJ or MMBtu."""
EMISSION_FACTOR = Kind("an emission factor", "kg/GJ", '56.1 or "0.0561 t/GJ"', low=0.0, high=500.0,
                       basis="natural gas ~56, fuel oil ~77, coal ~95-100 kg CO2 per GJ (IPCC 2006 "
                             "defaults, from memory); 500 is above any fuel")

_DIFFERENCE = re.compile(r"(?<![A-Za-z_])deg(C|F)\b")
_DEGREE_WORDS = re.compile(r"(?:[°º]\s*|(?<![A-Za-z_])deg(?:ree)?s?\s+)(C|F|[Cc]elsius|[Ff]ahrenheit)(?![A-Za-z_])")
"""Degrees written in words or with the sign before a separate letter ("°F", "deg F", "degrees
C", "° C"): unambiguous, so read as degC/degF."""
_DEGREE_SIGNS = {"\u2103": "degC", "\u2109": "degF"}
"""The single characters ℃ and ℉."""
_BARE_DEGREE = re.compile(r"(?<![A-Za-z_°])(C|F)(?![A-Za-z_])")
"""A bare C or F: to pint the coulomb and the farad, never meant in a case file."""


@lru_cache(maxsize=1)
def registry():
    """The one pint registry (built lazily: it takes a moment to load)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=False)
    # the trade's Btu is the International Table Btu, 1055.05585262 J exactly (pint's plain "Btu"
    # is the rounded ISO 1055.056 J); redefining a unit makes pint say so, which no user needs
    logger = logging.getLogger("pint")
    level = logger.level
    logger.setLevel(logging.ERROR)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ureg.define("Btu = Btu_it = BTU")
    finally:
        logger.setLevel(level)
    ureg.define("MMBtu = 1e6 * Btu")  # the trade's million Btu (pint alone reads MM as mega-mega)
    return ureg


class QuantityError(ValueError):
    """A value that is not a valid quantity of the expected kind (message says why)."""


def to_default_unit(value, kind: Kind) -> float:
    """Convert a case-file value to a float in ``kind``'s default unit, refusing values outside
    the kind's plausible range (:func:`check_plausible`).

    >>> round(to_default_unit("212 degF", TEMPERATURE), 9)
    100.0
    >>> round(to_default_unit("360 t/h", MASS_FLOW), 9)
    100.0
    >>> to_default_unit(2.1, SPECIFIC_HEAT)
    2.1
    >>> round(to_default_unit("90 °F", TEMPERATURE), 9)
    32.222222222
    """
    if isinstance(value, bool) or value is None:
        raise QuantityError(f"expected {kind.name} such as {kind.example}, got {shorten(value)}")
    if isinstance(value, (int, float)):
        number = as_float(value, kind)
    elif isinstance(value, str):
        number = _parse(value, kind)
    else:
        raise QuantityError(f"expected {kind.name} such as {kind.example}, got {type(value).__name__} {shorten(value)}")
    check_plausible(number, kind, value)
    return number


def as_float(value, kind: Kind = NUMBER) -> float:
    """A YAML number as a float; a whole number beyond the floating-point range is refused."""
    try:
        return float(value)
    except OverflowError:
        raise QuantityError(f"expected {kind.name} such as {kind.example}; {shorten(value)} is beyond the range "
                            "of numbers") from None


def check_plausible(number: float, kind: Kind, value=None) -> None:
    """Refuse ``number`` (in ``kind``'s default unit; ``value`` as written, for the message)
    when it is not finite or lies outside the kind's plausible range."""
    shown = shorten(number if value is None else value)
    noun = kind.name.split(" ", 1)[1] if kind.name.startswith(("a ", "an ")) else kind.name
    unit = f" {kind.shown_unit}" if kind.shown_unit else ""
    if not math.isfinite(number):
        raise QuantityError(f"expected a finite value for {kind.name}, got {shown}")
    if kind.level_temperature and number < kind.low:
        raise QuantityError(f"{shown} is below absolute zero ({kind.low:g} °C)")
    if number < kind.low == 0.0:
        raise QuantityError(f"{shown}: {kind.name} cannot be negative")
    if number < kind.low:
        raise QuantityError(f"{shown} is below the smallest plausible {noun}, {kind.low:g}{unit} ({kind.basis})")
    if number > kind.high:
        raise QuantityError(f"{shown} is above the largest plausible {noun}, {kind.high:g}{unit} ({kind.basis})")
    if 0.0 < abs(number) < kind.least_nonzero:
        raise QuantityError(f"{shown} is too small for {kind.name} to mean anything (its complement rounds to 1): "
                            f"write 0, or at least {kind.least_nonzero:g}")


def shorten(value, limit=60) -> str:
    """repr of a value for a message, cut to ``limit`` characters (a huge whole number is
    described by its length: its decimal text may not even be computable)."""
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 200:
        return f"a whole number of about {int(value.bit_length() * math.log10(2)) + 1} digits"
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 15] + f"... ({len(text)} characters)"


NUMBER_AT_START = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
MAX_UNIT_CHARACTERS = 80
"""Units longer than this are not units (and would only cost the parser time)."""


def _parse(text: str, kind: Kind) -> float:
    text = text.replace("\u2212", "-")  # the minus sign of data sheets and word processors: unambiguous
    match = NUMBER_AT_START.match(text)
    if not match:
        raise QuantityError(f"expected {kind.name} such as {kind.example}; {shorten(text)} does not start with a number")
    magnitude, unit_text = float(match.group(1)), match.group(2)
    if not unit_text:
        return magnitude
    density = None
    if kind is MASS_FLOW and _AT_DENSITY.search(unit_text):
        unit_text, density_text = _AT_DENSITY.split(unit_text, maxsplit=1)
        density = to_default_unit(density_text, DENSITY)
    unit_text = unit_spelling(unit_text, kind)
    factor = PLAIN_FACTORS.get((unit_text, kind.unit)) if density is None else None
    if factor is not None:
        return magnitude * factor
    import pint

    ureg = registry()
    try:
        if len(unit_text) > MAX_UNIT_CHARACTERS:
            raise ValueError("too long")
        quantity = ureg.Quantity(magnitude, ureg.parse_units(unit_text))
        if density is not None:
            quantity = quantity.to("m^3/s") * ureg.Quantity(density, "kg/m^3")
        number = float(quantity.to(kind.unit).magnitude)
    except pint.DimensionalityError:
        if kind is MASS_FLOW and density is None and _is_volume_flow(ureg, unit_text):
            raise QuantityError(f"expected {kind.name}, got {shorten(text)}, whose units are not of that kind: a "
                                f"volume flow; give the density after it, e.g. '{text.strip()} at 870 kg/m^3'") from None
        raise QuantityError(f"expected {kind.name} such as {kind.example}, got {shorten(text)}, whose units are not "
                            f"of that kind{_hints(text, kind)}") from None
    except Exception:  # pint's expression parser fails in many ways (even AssertionError) on junk
        raise QuantityError(f"expected {kind.name} such as {kind.example}; cannot read the units of "
                            f"{shorten(text)}{_hints(text, kind)}") from None
    return number


PLAIN_FACTORS = {
    **{(unit, "Pa*s"): factor for unit, factor in (("cP", 1e-3), ("mPa*s", 1e-3), ("Pa*s", 1.0))},
    **{(unit, "kg/s"): factor for unit, factor in (("t/h", 1 / 3.6), ("kg/h", 1 / 3600), ("kg/s", 1.0))},
    **{(unit, "Pa"): factor for unit, factor in (("bar", 1e5), ("kPa", 1e3), ("MPa", 1e6), ("Pa", 1.0))},
    **{(unit, "kPa"): factor for unit, factor in (("bar", 100.0), ("kPa", 1.0), ("MPa", 1e3))},
    **{(unit, "kW"): factor for unit, factor in (("kW", 1.0), ("MW", 1e3), ("W", 1e-3))},
    **{(unit, "m"): factor for unit, factor in (("mm", 1e-3), ("cm", 1e-2), ("m", 1.0))},
    **{(unit, "s"): factor for unit, factor in (("s", 1.0), ("min", 60.0), ("h", 3600.0), ("day", 86400.0))},
    **{(unit, "kg/GJ"): factor for unit, factor in (("kg/GJ", 1.0), ("t/GJ", 1e3))},
    ("percent", "dimensionless"): 1e-2,
    ("m^2", "m^2"): 1.0,
    ("kg/m^3", "kg/m^3"): 1.0,
    ("K", "delta_degC"): 1.0,
    ("m^2*K/W", "m^2*delta_degC/W"): 1.0,
    ("W/m^2/K", "W/m^2/delta_degC"): 1.0,
    ("kJ/kg/K", "kJ/kg/delta_degC"): 1.0,
    ("kW/K", "kW/delta_degC"): 1.0,
    ("W/m/K", "W/m/delta_degC"): 1.0,
}
"""(unit as spelt, a kind's default unit) -> the factor between them, for the units case files
use most. Pint and its registry take ~0.7 s to load, more than the rest of `hxtrain check`;
these are read without them. Each factor is the very float pint computes, and pint, too,
converts a value in a multiplicative unit by multiplying it by that factor, so a value converts
to the same number either way (tests/test_input_surface.py compares them). Temperature levels,
whose conversion has an offset, and every other unit go through pint."""

_AT_DENSITY = re.compile(r"\s+at\s+")
"""'50000 bbl/d at 870 kg/m^3': a volume flow with the density that makes it a mass flow."""
_TYPESET = {"\u00b7": "*", "\u22c5": "*", "\u00b2": "^2", "\u00b3": "^3"}
"""Data sheets' middle dot and superscripts ('Btu/h·ft²·°F') in pint's spelling."""


_DATA_SHEET_POWER = re.compile(r"(?<![A-Za-z_])(ft|in|m|cm|mm)([23])(?![\w^])")
"""An area or a volume as data sheets write it: 'ft2', 'm2', 'in3'."""
_DATA_SHEET_PRODUCT = re.compile(r"[\u00b7\u22c5]|(?<=[A-Za-z0-9\u00b2\u00b3°])-(?=[A-Za-z°])")
"""A middle dot, or a hyphen between two units ('hr-ft2-°F'; not the minus of an exponent, 's^-1')."""
_THOUSAND_OR_MEGA = re.compile(r"(?<![A-Za-z_])M(btu|lbm?|lbs)(?![A-Za-z_])", re.IGNORECASE)
"""'MBtu', 'Mlb': M is a thousand in the trade's old usage (MBtu/h, Mlb/h) and mega in SI."""


def unit_spelling(unit_text: str, kind: Kind) -> str:
    """Units as written ('°F', 'Btu/h·ft²·°F', '%') in pint's spelling; outside temperature
    levels a degree is a difference (delta_degF). 'MBtu' and 'Mlb' are refused as ambiguous.

    >>> unit_spelling("Mlb/h", MASS_FLOW)
    Traceback (most recent call last):
    ...
    hxtrain.network.quantities.QuantityError: 'Mlb/h': M means a thousand in the trade's 'Mlb' and a million in SI; write 'klb' for a thousand or 'lb' times 1e6
    """
    ambiguous = _THOUSAND_OR_MEGA.search(unit_text)
    if ambiguous:
        what = "Btu" if ambiguous.group(1).lower() == "btu" else "lb"
        instead = "'kBtu' for a thousand or 'MMBtu' for a million" if what == "Btu" else \
            "'klb' for a thousand or 'lb' times 1e6"
        raise QuantityError(f"{shorten(unit_text)}: M means a thousand in the trade's '{ambiguous.group(0)}' and a "
                            f"million in SI; write {instead}")
    if unit_text == "%":
        return "percent"
    if kind.unit in ("kPa", "Pa") and unit_text in _ABSOLUTE_PRESSURE:
        return _ABSOLUTE_PRESSURE[unit_text]
    unit_text = _DATA_SHEET_POWER.sub(r"\1^\2", unit_text)  # 'ft2' for ft²
    over, slash, under = unit_text.partition("/")
    if slash and "/" not in under and _DATA_SHEET_PRODUCT.search(under):
        # 'Btu/h·ft²·°F', 'BTU/hr-ft2-°F': the units joined after the slash are all below it
        unit_text = f"{over}/({_DATA_SHEET_PRODUCT.sub('*', under)})"
    for sign, spelt in _TYPESET.items():
        unit_text = unit_text.replace(sign, spelt)
    unit_text = _spell_degrees(unit_text)
    return unit_text if kind.level_temperature else _DIFFERENCE.sub(r"delta_deg\1", unit_text)


def _is_volume_flow(ureg, unit_text: str) -> bool:
    try:
        return ureg.parse_units(unit_text).dimensionality == ureg.parse_units("m^3/s").dimensionality
    except Exception:  # pint's parser fails in many ways on junk
        return False


def in_written_terms(written, number: float, kind: Kind, digits: int = 2) -> str:
    """``number`` (in ``kind``'s default unit) as a message gives it beside a value written
    ``written``: in the default unit, and in the written value's unit too where it has another
    one, so that a file in US units reads its own terms.

    >>> in_written_terms("10 psia", 89.53, TEMPERATURE)
    '89.53 °C'
    >>> in_written_terms("200 degF", 89.53, TEMPERATURE)
    '89.53 °C (193.15 degF)'
    """
    shown = f"{number:.{digits}f} {kind.shown_unit}".strip()
    match = NUMBER_AT_START.match(written) if isinstance(written, str) else None
    unit = match.group(2) if match else ""
    try:
        scale, offset = conversion_to(unit, kind) if unit else (1.0, 0.0)
    except QuantityError:
        return shown
    if (scale, offset) == (1.0, 0.0):
        return shown
    return f"{shown} ({(number - offset) / scale:.{digits}f} {unit})"


def conversion_to(unit_text: str, kind: Kind) -> tuple[float, float]:
    """(scale, offset) with value in ``kind``'s default unit = scale · value in ``unit_text`` +
    offset: how reports show values in a chosen unit (settings.display_units). Raises
    :class:`QuantityError` for a unit that is not of that kind.

    >>> [round(v, 6) for v in conversion_to("degF", TEMPERATURE)]
    [0.555556, -17.777778]
    >>> round(conversion_to("MMBtu/h", DUTY)[0], 6)
    293.07107
    """
    spelt = unit_spelling(str(unit_text).strip(), kind)
    if spelt == kind.unit:  # a report in the stored units (SI) needs no registry
        return 1.0, 0.0
    factor = PLAIN_FACTORS.get((spelt, kind.unit))
    if factor is not None:  # the very float pint gives (tests/test_input_surface.py)
        return factor, 0.0
    import pint

    ureg = registry()
    try:
        units = ureg.parse_units(spelt)
        zero, one = (float(ureg.Quantity(v, units).to(kind.unit).magnitude) for v in (0.0, 1.0))
    except pint.DimensionalityError:
        example = kind.shown_unit or "a fraction"
        raise QuantityError(f"{shorten(unit_text)} is not a unit of {kind.name} (such as {example})"
                            f"{_degree_hint('1 ' + str(unit_text))}") from None
    except Exception:  # pint's expression parser fails in many ways on junk
        raise QuantityError(f"cannot read the unit {shorten(unit_text)}{_degree_hint('1 ' + str(unit_text))}") from None
    return one - zero, zero


def _spell_degrees(unit_text: str) -> str:
    """'°F', '° C', 'deg F', 'degrees Celsius', '℃' -> degF / degC (pint's names)."""
    for sign, name in _DEGREE_SIGNS.items():
        unit_text = unit_text.replace(sign, name)
    return _DEGREE_WORDS.sub(lambda m: "deg" + m.group(1)[0].upper(), unit_text)


_ABSOLUTE_PRESSURE = {"psia": "psi", "bara": "bar", "kPaa": "kPa", "MPaa": "MPa"}
"""The trade's spellings of absolute pressure units (pressures in a case are absolute)."""
_GAUGE = re.compile(r"^(psig|barg|kPag|MPag|kPa\(?g\)?|bar\(?g\)?|psi\(?g\)?)$")


TRADE_SPELLINGS = {"kW": ("Btu/h", "MMBtu/h", "kcal/h", "Gcal/h"), "kg/s": ("lb/h", "klb/h", "t/d"),
                   "degC": ("degF", "K"), "kPa": ("psi", "psia"), "Pa": ("psi", "psia")}
"""Units the trade writes for a kind besides those of PLAIN_FACTORS: the spellings a unit written
in another case is matched against (:func:`_case_hint`)."""


def _hints(text: str, kind: Kind) -> str:
    return _degree_hint(text) + _gauge_hint(text, kind) + _case_hint(text, kind)


def _case_hint(text: str, kind: Kind) -> str:
    """For '2500 kw', '8.5 MMBTU/h' or '108 T/h': units are read case by case (T is the tesla, m
    the metre, M mega): the spelling of the same letters in another case that is a unit of the kind."""
    written = NUMBER_AT_START.match(text).group(2).strip()
    known = [u for u, default in PLAIN_FACTORS if default == kind.unit] + list(TRADE_SPELLINGS.get(kind.unit, ()))
    meant = next((u for u in known if u.lower() == written.lower() and u != written), None)
    return "" if meant is None else f" (letter case matters in units: write {meant!r})"


def _gauge_hint(text: str, kind: Kind) -> str:
    """For '150 psig' where an absolute pressure is asked: the local atmosphere is not known."""
    if "absolute" not in kind.name or not _GAUGE.match(NUMBER_AT_START.match(text).group(2).strip()):
        return ""
    return (" (a gauge pressure: give the absolute pressure, gauge plus the local atmospheric pressure, e.g. psia "
            "or bara)")


def _degree_hint(text: str) -> str:
    """For '90 F' or '2.1 kJ/kg/C': the bare letter is the farad or the coulomb to pint."""
    if not _BARE_DEGREE.search(NUMBER_AT_START.match(text).group(2)):
        return ""
    suggestion = _BARE_DEGREE.sub(r"deg\1", text)
    return f" (a bare C or F is the coulomb or the farad: write {suggestion!r})"
