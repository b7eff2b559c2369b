"""The units values are shown in: SI or US customary, with per-quantity choices from a case's
``settings.display_units``, for every report (console, HTML, CSV, XLSX, JSON).

Values are SI inside (the result tables hold °C, K, kW, kg/s, kW/K, W/m²·K, m²·K/W, kPa, m²) and
are converted only on their way out, through one table, :data:`DISPLAY_TABLE`: for each quantity
the column-name endings that hold it, the unit the tables store it in, its SI and US units, their
labels and the decimals shown. A column's quantity is read from its name's ending (``duty_kw``,
``hot_in_c``, ``ua_kw_per_k``): the convention every result table follows. A column whose name
carries no unit ending (P, R, NTU, F, counts, text) is shown as it is.

A difference of two temperatures (a comparison's "variant - base" of an outlet temperature) is
converted as a difference: scaled, never offset.
"""

from __future__ import annotations

import contextlib
import contextvars
import math
import re
import sys
from dataclasses import dataclass, field
from functools import lru_cache
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

if TYPE_CHECKING:  # pandas loads where a table is shown: `hxtrain check` shows none
    import pandas as pd

from hxtrain.network import quantities as q
from hxtrain.network.case import DISPLAY_KINDS

SYSTEMS = ("si", "us")


@dataclass(frozen=True)
class Shown:
    """One quantity as reports show it."""

    quantity: str
    """Its name: a key of ``settings.display_units`` (network/case.py: DISPLAY_KINDS)."""
    ending: str
    """The ending of the column names that hold it (``_kw``)."""
    stored: str
    """The unit the result tables hold it in (pint's spelling)."""
    si: str
    us: str
    digits: tuple
    """Decimals shown in SI and in US units."""


DISPLAY_TABLE = (
    Shown("heat_capacity_rate", "_kw_per_k", "kW/K", "kW/K", "Btu/h/degF", (2, 0)),
    Shown("heat_transfer_coefficient", "_w_m2k", "W/m^2/K", "W/m^2/K", "Btu/h/ft^2/degF", (1, 1)),
    Shown("fouling", "_m2k_w", "m^2*K/W", "m^2*K/W", "h*ft^2*degF/Btu", (5, 5)),
    Shown("mass_flow", "_kg_s", "kg/s", "kg/s", "lb/h", (2, 0)),
    Shown("pressure_drop", "_kpa", "kPa", "kPa", "psi", (1, 2)),
    Shown("area", "_m2", "m^2", "m^2", "ft^2", (1, 0)),
    Shown("duty", "_kw", "kW", "kW", "MMBtu/h", (1, 3)),
    Shown("temperature", "_c", "degC", "degC", "degF", (1, 1)),
    Shown("temperature_difference", "_k", "K", "K", "degF", (2, 2)),
    Shown("energy", "_gj", "GJ", "GJ", "MMBtu", (1, 1)),
)
"""Quantity -> column ending, stored unit, SI and US units, decimals. Longer endings come first
(``_kw_per_k`` before ``_k``)."""

LABELS = {"degC": "°C", "degF": "°F", "K": "K", "kW/K": "kW/K", "Btu/h/degF": "Btu/h·°F", "W/m^2/K": "W/m²·K",
          "Btu/h/ft^2/degF": "Btu/h·ft²·°F", "m^2*K/W": "m²·K/W", "h*ft^2*degF/Btu": "h·ft²·°F/Btu",
          "kg/s": "kg/s", "lb/h": "lb/h", "kPa": "kPa", "psi": "psi", "m^2": "m²", "ft^2": "ft²", "kW": "kW",
          "MMBtu/h": "MMBtu/h", "GJ": "GJ", "MMBtu": "MMBtu"}
"""How the table's units are printed; any other unit (a case's choice) is printed as written,
with ^2, ^3 and * typeset."""


MESSAGE_UNITS = {"°C": "temperature", "K": "temperature_difference", "kW": "duty", "kg/s": "mass_flow",
                 "kPa": "pressure_drop"}
"""Units the units' messages write their numbers in ("reaches 281.1 °C"), and their quantity."""
WORDED_COLUMNS = frozenset({"message", "heat_source"})
"""Columns of words that may carry numbers with units (a finding's message; a steam heater's
"steam at 1000 kPa (absolute)"): shown through :meth:`Display.message`."""
_MESSAGE_NUMBER = re.compile(r"(?<![\w.])(-?\d[\d,]*(?:\.\d+)?) (°C|K|kW|kg/s|kPa)(?![\w/])")


class Column(NamedTuple):
    """How one column is shown."""

    quantity: str
    stem: str
    """The name without its unit ending (``hot_in``)."""
    name: str
    """The name for files: the stem with the shown unit's ending (``hot_in_f``)."""
    label: str
    """The shown unit as printed (``°F``)."""
    scale: float
    offset: float
    digits: int

    def convert(self, values, difference=False):
        """Stored values in the shown unit (a difference: scaled only)."""
        pandas = sys.modules.get("pandas")  # a Series can exist only once pandas is loaded
        if pandas is not None and isinstance(values, pandas.Series):
            values = pandas.to_numeric(values, errors="coerce")
        else:
            values = np.asarray(values, float)
        return values * self.scale + (0.0 if difference else self.offset)


def by_quantity() -> dict:
    return {row.quantity: row for row in DISPLAY_TABLE}


@dataclass(frozen=True)
class Display:
    """A choice of units (``system``, with ``overrides``: quantity -> unit) and of width."""

    system: str = "si"
    overrides: dict = field(default_factory=dict)
    wide: bool = False

    def __post_init__(self):
        if self.system not in SYSTEMS:
            raise ValueError(f"units are one of {', '.join(SYSTEMS)}, not {self.system!r}")

    def __hash__(self):
        return hash((self.system, tuple(sorted(self.overrides.items())), self.wide))

    def with_case(self, case) -> "Display":
        """These units with a case's ``settings.display_units`` applied over them."""
        chosen = getattr(getattr(case, "settings", None), "display_units", None) or {}
        return Display(self.system, {**self.overrides, **chosen}, self.wide)

    def for_result(self, result) -> "Display":
        """These units for a simulation result (its case's choices applied)."""
        network = getattr(result, "network", None)
        return self.with_case(getattr(network, "case", None))

    def unit(self, quantity: str) -> str:
        row = by_quantity()[quantity]
        return self.overrides.get(quantity) or (row.us if self.system == "us" else row.si)

    def label(self, quantity: str) -> str:
        return unit_label(self.unit(quantity))

    def column(self, name) -> Column | None:
        """How the column ``name`` is shown; None for a column without a unit ending."""
        return _column(self, str(name))

    def shown_column(self, name) -> Column | None:
        """How a column already converted for files is shown (``hot_in_f`` under US units): its
        unit's label and decimals; None for a name without a shown unit's ending."""
        for row in DISPLAY_TABLE:
            column = self.column(f"x{row.ending}")
            ending = column.name[1:]
            if str(name).endswith(ending) and len(str(name)) > len(ending):
                return column._replace(stem=str(name)[: -len(ending)], name=str(name))
        return None

    def value(self, quantity: str, stored, difference=False):
        """A stored value (or array) of ``quantity`` in the shown unit."""
        row = by_quantity()[quantity]
        return _column(self, f"x{row.ending}").convert(stored, difference)

    def heading(self, name, words: str | None = None) -> str:
        """A column's heading for people: its words (default: the stem in words) and its unit."""
        column = self.column(name)
        stem = column.stem if column else str(name)
        text = words if words is not None else stem.replace("_", " ")
        return f"{text} {column.label}" if column else text

    def message(self, text: str) -> str:
        """A unit's message with its numbers in the shown units ("281.1 °C" -> "538.0 °F").

        >>> Display("us").message("reaches 100.0 °C; approach 5.0 K")
        'reaches 212.0 °F; approach 9.0 Δ°F'
        """
        def shown(match):
            column = self.column(f"x{by_quantity()[MESSAGE_UNITS[match.group(2)]].ending}")
            if column.label == match.group(2):
                return match.group(0)
            decimals = max(len(match.group(1).partition(".")[2]), column.digits if column.quantity == "duty" else 0)
            value = float(column.convert([float(match.group(1).replace(",", ""))])[0])
            text = f"{value:,.{decimals}f}"
            return f"{text[1:] if text.startswith('-') and not text.strip('-0.,') else text} {column.label}"
        return _MESSAGE_NUMBER.sub(shown, text) if isinstance(text, str) else text

    def frame(self, frame: pd.DataFrame, differences=()) -> pd.DataFrame:
        """A table in the shown units, each converted column renamed with its unit ending
        (``hot_in_c`` -> ``hot_in_f``); ``differences``: columns holding differences. A table
        listing quantities in its rows (a summary, a comparison) is converted row by row."""
        import pandas as pd

        frame = frame.copy()
        renamed = {}
        for position, name in enumerate(frame.columns):
            column = self.column(name)
            if column is None or not pd.api.types.is_numeric_dtype(frame.iloc[:, position]):
                continue
            if column.scale == 1.0 and column.offset == 0.0 and column.name == name:
                continue  # shown as stored: left exactly as it is
            frame.isetitem(position, column.convert(frame.iloc[:, position], name in differences))
            renamed[name] = column.name
        frame = frame.rename(columns=renamed)
        if self.system != "si" or self.overrides:
            for words in WORDED_COLUMNS.intersection(frame.columns):
                frame[words] = frame[words].map(self.message)
        if lists_quantities(frame):
            frame = self.rows(frame, differences)
        return frame

    def rows(self, frame: pd.DataFrame, differences=()) -> pd.DataFrame:
        """A table whose row names are quantities (``heat_recovered_kw``, ``E-101 duty_kw``),
        converted row by row and its row names given the shown units' endings."""
        import pandas as pd

        frame = frame.astype(object).copy()
        names = []
        for i, row_name in enumerate(frame.index):
            column = self.column(row_name)
            names.append(row_name if column is None else column.name)
            for position, name in enumerate(frame.columns if column is not None else ()):
                value = frame.iat[i, position]
                if isinstance(value, (int, float, np.number)) and not isinstance(value, (bool, np.bool_)):
                    frame.iat[i, position] = float(column.convert([float(value)], name in differences)[0])
        return frame.set_axis(pd.Index(names, name=frame.index.name))


def difference_columns(frame) -> list:
    """Columns that hold differences between scenarios ('variant - base', as a comparison names
    them): a temperature there is a temperature difference."""
    return [c for c in getattr(frame, "columns", ()) if isinstance(c, str) and " - " in c]


def lists_quantities(frame: pd.DataFrame) -> bool:
    """Does the table list quantities in its rows (most of its row names carry a unit ending)?"""
    import pandas as pd

    if isinstance(frame.index, pd.RangeIndex) or not len(frame):
        return False
    names = [str(n) for n in frame.index]
    return sum(_ending(n) is not None for n in names) * 2 > len(names)


def _ending(name: str):
    for row in DISPLAY_TABLE:
        if name.endswith(row.ending) and len(name) > len(row.ending):
            return row
    return None


@lru_cache(maxsize=512)
def _column(display: Display, name: str) -> Column | None:
    row = _ending(name)
    if row is None:
        return None
    kind = DISPLAY_KINDS[row.quantity]
    shown = display.unit(row.quantity)
    stored_scale, stored_offset = q.conversion_to(row.stored, kind)
    shown_scale, shown_offset = q.conversion_to(shown, kind)
    # 12 significant digits: pint's offset units carry round-off (1.800000000000041 for °C to °F)
    scale = float(f"{stored_scale / shown_scale:.12g}")
    offset = float(f"{(stored_offset - shown_offset) / shown_scale:.12g}")
    table_unit = row.us if display.system == "us" else row.si
    digits = row.digits[SYSTEMS.index(display.system)] if shown == table_unit else _digits(row.digits[0], scale)
    stem = name[: -len(row.ending)]
    label = unit_label(shown)
    if row.quantity == "temperature_difference" and label.startswith("°"):
        label = f"Δ{label}"  # a difference in degrees (×1.8, no offset), not a temperature
    return Column(row.quantity, stem, f"{stem}_{unit_slug(shown, row.quantity)}", label, scale, offset, digits)


def _digits(si_digits: int, scale: float) -> int:
    """Decimals for a unit of a case's choosing: the SI decimals moved by the unit's size."""
    return int(min(6, max(0, si_digits - round(math.log10(abs(scale))))))


def unit_label(unit: str) -> str:
    """A unit as printed: 'Btu/h/ft^2/degF' -> 'Btu/h·ft²·°F'.

    >>> unit_label("t/h"), unit_label("h*ft^2*degF/Btu"), unit_label("MW")
    ('t/h', 'h·ft²·°F/Btu', 'MW')
    """
    if unit in LABELS:
        return LABELS[unit]
    text = unit.replace("delta_deg", "deg").replace("degC", "°C").replace("degF", "°F")
    return text.replace("^2", "²").replace("^3", "³").replace("*", "·")


def unit_slug(unit: str, quantity: str) -> str:
    """A unit as the ending of a column name in files: 'MMBtu/h' -> 'mmbtu_h'; a temperature
    difference in °F -> 'delta_f'.

    >>> unit_slug("degF", "temperature"), unit_slug("degF", "temperature_difference"), unit_slug("MMBtu/h", "duty")
    ('f', 'delta_f', 'mmbtu_h')
    """
    text = unit.replace("delta_deg", "deg").replace("°", "deg").replace("^", "")
    text = re.sub(r"deg(C|F)", lambda m: m.group(1), text)
    slug = re.sub(r"[^0-9A-Za-z]+", "_", text).strip("_").lower()
    if quantity == "temperature_difference" and slug in ("f", "c", "r"):
        slug = f"delta_{slug}"
    return slug


# ----------------------------------------------------------------------------- the run's choice
_CURRENT = contextvars.ContextVar("display", default=Display())


def current() -> Display:
    """The units and width the command was asked for (SI, fitted to 120 columns, by default)."""
    return _CURRENT.get()


@contextlib.contextmanager
def using(display: Display):
    """Reports made inside this block show ``display``'s units and width."""
    token = _CURRENT.set(display)
    try:
        yield display
    finally:
        _CURRENT.reset(token)
