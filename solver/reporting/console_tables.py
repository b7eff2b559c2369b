"""Tables for the terminal that fit its width: words on the first heading line, the shown unit
on the second, numbers right-aligned in their unit's decimals; columns that do not fit in the
width go to a continuation block that repeats the row names. ``wide`` prints every table whole,
whatever its width."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from .display_units import Display, difference_columns, holds_words, lists_quantities

WIDTH = 120
"""The width the console report keeps to unless asked for everything (``--wide``)."""
GAP = 2
"""Spaces between columns."""
DIMENSIONLESS_DIGITS = 2
"""Decimals of a number without a unit (NTU, P, R, F)."""
TELL_APART = "tell apart"
"""``digits`` of a column of inputs (a sweep's grid): as many decimals as show each nonzero
value to two significant digits and every two different values differently
(:func:`decimals_to_tell_apart`), at least the column's own."""
MOST_DECIMALS = 8


def decimals_to_tell_apart(values, least: int) -> int:
    """The fewest decimals, at least ``least`` and at most :data:`MOST_DECIMALS`, that show each
    nonzero finite value of ``values`` to two significant digits and no two different values
    alike.

    >>> decimals_to_tell_apart([0.0, 0.001, 0.002], 2), decimals_to_tell_apart([1.0, 1.005, 1.01], 2)
    (4, 3)
    """
    finite = np.asarray(values, dtype=float)
    finite = finite[np.isfinite(finite)]
    distinct, nonzero = np.unique(finite), np.abs(finite[finite != 0.0])
    places = max(least, int(np.max(1 - np.floor(np.log10(nonzero))))) if nonzero.size else least
    while places < MOST_DECIMALS and np.unique(np.round(distinct, places)).size < distinct.size:
        places += 1
    return min(places, MOST_DECIMALS)


def fixed(value: float, digits: int) -> str:
    """``value`` with ``digits`` decimals and thousands separators; a value that rounds to zero
    is shown without a sign (an idle cooler's duty is -0.0 in floating point, "0.0" to a reader).

    >>> fixed(-0.0, 1), fixed(-0.004, 2), fixed(-1234.5, 1)
    ('0.0', '0.00', '-1,234.5')
    """
    text = f"{value:,.{digits}f}"
    return text[1:] if text.startswith("-") and not text.strip("-0.,") else text


def _number_or_missing(value) -> bool:
    if isinstance(value, (bool, np.bool_)):
        return False
    return value is None or value is pd.NA or isinstance(value, (int, float, np.integer, np.floating))


def _cell(value, digits) -> str:
    if value is None or value is pd.NA or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return f"{value:,}"
    if isinstance(value, (float, np.floating)):
        if isinstance(digits, str):  # a format of its own ('.2e' for residuals)
            return format(float(value), digits)
        return fixed(float(value), digits) if math.isfinite(value) else str(value)
    return str(value)


def cells(frame: pd.DataFrame, display: Display, words: dict | None = None, digits: dict | None = None):
    """(headings, units, columns of cell text) of ``frame`` in ``display``'s units: converted
    where a column's name carries a unit ending, its decimals from the units table (or
    ``digits``: column -> decimals, or a format such as '.2e')."""
    words, digits = words or {}, digits or {}
    headings, units, columns = [], [], []
    for position, name in enumerate(frame.columns):
        values = frame.iloc[:, position]
        column = display.column(name)
        numeric = (pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values)) or (
            values.dtype == object and values.map(_number_or_missing).all())  # numbers held as objects
        if column is not None and numeric:
            values = column.convert(values)
        elif holds_words(values):
            values = values.map(display.message)
        places = digits.get(name, column.digits if column is not None else DIMENSIONLESS_DIGITS)
        if places == TELL_APART:
            places = decimals_to_tell_apart(pd.to_numeric(values, errors="coerce"),
                                            column.digits if column is not None else DIMENSIONLESS_DIGITS)
        stem = column.stem if column else str(name)
        headings.append(words.get(name, stem if "." in stem else stem.replace("_", " ")))  # a key path as written
        units.append(column.label if column is not None and numeric else "")  # a unit only over converted numbers
        columns.append([_cell(v, places) for v in values])
    return headings, units, columns


def render_any(frame: pd.DataFrame, display: Display, digits: dict | None = None, index: str | None = None,
               words: dict | None = None) -> str:
    """:func:`render` of any result table: one listing quantities in its rows (a comparison, a
    summary) converted row by row first, each row name given its shown unit's ending."""
    if lists_quantities(frame):
        frame = display.rows(frame, difference_columns(frame))
    return render(frame, display, words, digits=digits, index=index)


def render(frame: pd.DataFrame, display: Display, words: dict | None = None, digits: dict | None = None,
           index: str | None = None, width: int = WIDTH) -> str:
    """The table as text within ``width`` columns (all of it on one block with ``display.wide``).
    ``index``: the heading of the row names (default: the index's name; none for a plain
    numbering, which is then left out)."""
    headings, units, columns = cells(frame, display, words, digits)
    numbered = isinstance(frame.index, pd.RangeIndex) and frame.index.name is None
    row_names = [] if numbered else [str(n) for n in frame.index]
    index_heading = "" if numbered else (index if index is not None else (frame.index.name or ""))
    if row_names:
        headings, units = [index_heading, *headings], ["", *units]
        columns = [row_names, *columns]
    text_columns = [not any(_is_number(c) for c in column if c) for column in columns]
    if not display.wide:
        limit = width - (max(map(len, [index_heading, *row_names])) + GAP if row_names else 0)
        columns = [[_cut(c, limit) for c in column] for column in columns]
    sizes = [max(len(h), len(u), *(len(c) for c in column)) if column else max(len(h), len(u))
             for h, u, column in zip(headings, units, columns)]
    keep = 1 if row_names else 0
    blocks = _blocks(sizes, keep, None if display.wide else width)
    lines = []
    for block in blocks:
        chosen = list(range(keep)) + block
        if lines:
            lines.append("")
        for line in (headings, units):
            if any(line[k] for k in chosen):
                lines.append(_joined(line, chosen, sizes, text_columns, heading=True))
        for r in range(len(columns[0]) if columns else 0):
            lines.append(_joined([column[r] for column in columns], chosen, sizes, text_columns))
    return "\n".join(lines)


def _is_number(text: str) -> bool:
    try:
        float(text.replace(",", ""))
    except ValueError:
        return False
    return True


def _cut(text: str, limit: int) -> str:
    return text if len(text) <= limit else text[: max(limit - 1, 1)] + "…"


def _blocks(sizes, keep, width) -> list[list[int]]:
    """Columns (after the ``keep`` first, repeated in every block) grouped so that each block
    fits ``width`` (None: one block)."""
    fixed_width = sum(sizes[:keep]) + GAP * keep
    blocks, current, used = [], [], fixed_width
    for k in range(keep, len(sizes)):
        if width is not None and current and used + sizes[k] > width:
            blocks.append(current)
            current, used = [], fixed_width
        current.append(k)
        used += sizes[k] + GAP
    return blocks + [current] if current else blocks or [[]]


def _joined(values, chosen, sizes, text_columns, heading=False) -> str:
    parts = []
    for k in chosen:
        left = text_columns[k] or (k == 0 and heading)
        parts.append(values[k].ljust(sizes[k]) if left else values[k].rjust(sizes[k]))
    return (" " * GAP).join(parts).rstrip()
