"""The units values are shown in: SI or US customary, with per-quantity choices from a case's
``settings.display_units``, for every report (console, HTML, CSV, XLSX, JSON).

Values are SI inside (the result tables hold °C, K, kW, kg/s, kW/K, W/m²·K, m²·K/W, kPa, m²) and
are converted only on their way out, through one table, :data:`DISPLAY_TABLE`: for each quantity
the column-name endings that hold it, the unit the tables store it in, its SI and US units, their
labels and the decimals shown. A column's quantity is read from its name's ending (``duty_kw``,
``hot_in_c``, ``ua_kw_k``): the convention every result table follows. A column whose name
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
    Shown("heat_capacity_rate", "_kw_k", "kW/K", "kW/K", "Btu/h/degF", (2, 0)),
    Shown("heat_transfer_coefficient", "_w_m2_k", "W/m^2/K", "W/m^2/K", "Btu/h/ft^2/degF", (1, 1)),
    Shown("fouling", "_m2_k_w", "m^2*K/W", "m^2*K/W", "h*ft^2*degF/Btu", (5, 5)),
    Shown("mass_flow", "_kg_s", "kg/s", "kg/s", "lb/h", (2, 0)),
    Shown("pressure_drop", "_kpa", "kPa", "kPa", "psi", (1, 2)),
    Shown("area", "_m2", "m^2", "m^2", "ft^2", (1, 0)),
    Shown("duty", "_kw", "kW", "kW", "MMBtu/h", (1, 3)),
    Shown("temperature", "_c", "degC", "degC", "degF", (1, 1)),
    Shown("temperature_difference", "_k", "K", "K", "degF", (2, 2)),
    Shown("energy", "_gj", "GJ", "GJ", "MMBtu", (1, 1)),
)
"""Quantity -> column ending, stored unit, SI and US units, decimals. Longer endings come first
(``_kw_k`` before ``_k``)."""

LABELS = {"degC": "°C", "degF": "°F", "K": "K", "kW/K": "kW/K", "Btu/h/degF": "Btu/h·°F", "W/m^2/K": "W/m²·K",
          "Btu/h/ft^2/degF": "Btu/h·ft²·°F", "m^2*K/W": "m²·K/W", "h*ft^2*degF/Btu": "h·ft²·°F/Btu",
          "kg/s": "kg/s", "lb/h": "lb/h", "kPa": "kPa", "psi": "psi", "m^2": "m²", "ft^2": "ft²", "kW": "kW",
          "MMBtu/h": "MMBtu/h", "GJ": "GJ", "MMBtu": "MMBtu"}
"""How the table's units are printed; any other unit (a case's choice) is printed as written,
with ^2, ^3 and * typeset."""


MESSAGE_UNITS = {"°C": "temperature", "K": "temperature_difference", "kW": "duty", "kg/s": "mass_flow",
                 "kPa": "pressure_drop", "kW/K": "heat_capacity_rate", "W/m²/K": "heat_transfer_coefficient",
                 "W/m²·K": "heat_transfer_coefficient", "m²·K/W": "fouling", "m²": "area"}
"""Units the units' messages write their numbers in ("reaches 281.1 °C"), and their quantity (a
specification's messages write the adjusted key's default unit: a UA in kW/K, a U in W/m²/K)."""
COUNT_COLUMNS = frozenset({"samples"})
"""Columns of a table listing quantities in its rows that count things (the samples behind a
percentile): left as they are when the rows are converted."""


def holds_words(values) -> bool:
    """Whether a column holds words (text that may carry numbers with units: a finding's message,
    a steam heater's "steam at 1000 kPa (absolute)", the limits a cleaning would bring): such
    columns are shown through :meth:`Display.message`."""
    return str(values.dtype) in ("object", "str", "string") and any(isinstance(v, str) for v in values)


_NUMBER = r"-?\d[\d,]*(?:\.\d+)?(?:[eE][+-]?\d+)?"
_MESSAGE_UNIT = "|".join(re.escape(u) for u in sorted(MESSAGE_UNITS, key=len, reverse=True))
_MESSAGE_NUMBER = re.compile(rf"(?<![\w.])(?<![eE][+-])(?:({_NUMBER}) to )?({_NUMBER}) ({_MESSAGE_UNIT})(?![\w/²·])")
"""A number with its unit ("280.8 °C", "1.6e-08 K"), or a range of two sharing one unit ("174 to
348.4 °C")."""


def ending_of_stored_unit(unit: str) -> str:
    """The column-name ending for a value stored in ``unit`` (pint's spelling, as a case-file
    key's kind has it: "kg/s", "degC", "kW/delta_degC"); "" for a unit no column shows (a
    fraction, a count).

    >>> ending_of_stored_unit("kg/s"), ending_of_stored_unit("m^2*delta_degC/W"), ending_of_stored_unit("dimensionless")
    ('_kg_s', '_m2_k_w', '')
    """
    stored = unit.replace("delta_degC", "K")
    return next((row.ending for row in DISPLAY_TABLE if row.stored == stored), "")


def ending_of_key(path: str) -> str:
    """The column-name ending of the value at a case-file key path, in its default unit
    (``streams.crude.flow`` -> "_kg_s"); "" for a key without a shown unit (a fraction)."""
    from hxtrain.network.changes import key_kind

    return ending_of_stored_unit(key_kind(path).unit)


def _message_unit_row(label: str):
    """The quantity (its :data:`DISPLAY_TABLE` row) a message unit stands for ("°C": a
    temperature); None for a unit that is not one of :data:`MESSAGE_UNITS` (a fraction)."""
    quantity = MESSAGE_UNITS.get(label.strip())
    return by_quantity()[quantity] if quantity else None


def ending_of_unit(label: str) -> str:
    """The column-name ending of the quantity a message unit stands for ("°C" -> "_c"); "" for a
    unit that is not one of :data:`MESSAGE_UNITS` (a fraction, a count)."""
    row = _message_unit_row(label)
    return row.ending if row else ""


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
        """A unit's message with its numbers in the shown units ("281.1 °C" -> "538.0 °F"), each
        with the decimals it has (a duty at least the shown duty's). Where the message was worded
        with its exact values beside it (:class:`hxtrain.units.protocol.Worded`), those are
        converted, not the rounded ones, so that the message agrees with the tables.

        >>> Display("us").message("reaches 100.0 °C; approach 5.0 K; within 20 to 30 °C; off 1.5e-08 K")
        'reaches 212.0 °F; approach 9.0 Δ°F; within 68 to 86 °F; off 2.7e-08 Δ°F'
        """
        if not isinstance(text, str):
            return text
        exact = [(m.group(1), m.group(2)) for m in _MESSAGE_NUMBER.finditer(getattr(text, "exact", ""))]
        rounded = list(_MESSAGE_NUMBER.finditer(text))
        known = len(exact) == len(rounded)
        if not known:
            exact = [(m.group(1), m.group(2)) for m in rounded]
        pieces, end = [], 0
        for match, values in zip(rounded, exact):
            pieces += [text[end:match.start()], self._shown_number(match, values, known)]
            end = match.end()
        return "".join(pieces) + text[end:]

    def _shown_number(self, match, values, exact=False) -> str:
        """One matched number (or range) of a message in the shown unit; ``values``: the exact
        texts of its number(s), shown in the unit's own decimals where ``exact`` (as the tables
        show them), else with the decimals the message wrote."""
        unit = match.group(3)
        column = self.column(f"x{ending_of_unit(unit)}")
        if column.label == unit:
            return match.group(0)
        shown = [_converted(column, value, written, exact) for value, written in zip(values, match.groups()[:2])
                 if written]
        return f"{' to '.join(shown)} {column.label}"

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
            for position in range(frame.shape[1]):
                if holds_words(frame.iloc[:, position]):
                    frame.isetitem(position, frame.iloc[:, position].map(self.message))
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
                if name in COUNT_COLUMNS:
                    continue
                value = frame.iat[i, position]
                if isinstance(value, (int, float, np.number)) and not isinstance(value, (bool, np.bool_)):
                    frame.iat[i, position] = float(column.convert([float(value)], name in differences)[0])
        return frame.set_axis(pd.Index(names, name=frame.index.name))


def _converted(column, value: str, written: str, exact=False) -> str:
    """``value`` (a number's text, exact) in the column's unit, written like ``written`` (its
    rounded text in the message): as many decimals, or in exponent form where it is; with
    ``exact`` (the value is the full number) in the column's own decimals."""
    number = float(column.convert([float(value.replace(",", ""))])[0])
    if "e" in written.lower():
        mantissa = written.lower().partition("e")[0]
        return f"{number:.{len(mantissa.partition('.')[2])}e}"
    if exact:
        decimals = column.digits
    else:
        decimals = max(len(written.partition(".")[2]), column.digits if column.quantity == "duty" else 0)
    text = f"{number:,.{decimals}f}"
    return text[1:] if text.startswith("-") and not text.strip("-0.,") else text


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
    return sum(_ending(n) is not None or _metric_row(n) is not None for n in names) * 2 > len(names)


def _ending(name: str):
    for row in DISPLAY_TABLE:
        if name.endswith(row.ending) and len(name) > len(row.ending):
            return row
    return None


def _metric_row(name: str):
    """The quantity of a unit's named result ``TAG.metric`` (``E-101.duty``: a duty), by
    :data:`hxtrain.units.protocol.METRIC_UNITS`; None for other names."""
    from hxtrain.units.protocol import METRIC_UNITS

    tag, dot, metric = name.rpartition(".")
    return _message_unit_row(METRIC_UNITS.get(metric, "")) if tag and dot else None


@lru_cache(maxsize=512)
def _column(display: Display, name: str) -> Column | None:
    row = _ending(name)
    stem = name[: -len(row.ending)] if row is not None else name
    if row is None:
        row = _metric_row(name)  # a unit's named result: its unit from the protocol, its name as it is
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


def adopt_case_units(case) -> Display:
    """The command's units with ``case``'s ``settings.display_units`` over them, made the choice
    for the rest of the :func:`using` block the command runs in (that block's end restores what
    was before it): a command on a case or a study shows every report and file as ``run`` does."""
    display = current().with_case(case)
    _CURRENT.set(display)
    return display


@contextlib.contextmanager
def using(display: Display):
    """Reports made inside this block show ``display``'s units and width."""
    token = _CURRENT.set(display)
    try:
        yield display
    finally:
        _CURRENT.reset(token)
