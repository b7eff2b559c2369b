"""Reading a fluid given as an enthalpy curve, or as water and steam at one pressure.

Two forms beside ``cp`` and ``petroleum`` (:mod:`.fluids`)::

    enthalpy_curve:                 # what an assay or a process simulator exports
      pressure: 1200 kPa            # the pressure the table holds at (absolute)
      rows: [[150, 310.5, 0], [230, 520.0, 0], [260, 640.0, 0.08], ...]   # T (°C), h (kJ/kg), vapour fraction
      # or instead of rows:  file: crude_curve.csv  (next to the case; columns temperature_c,
      #                      enthalpy_kj_kg, vapour_fraction, a header row first)
    water_steam: {pressure: 10 bar, temperature_range: [20, 300]}   # IAPWS-IF97

Rows: h strictly increasing, T non-decreasing (a plateau holds T over a range of h), vapour
mass fraction in [0, 1]; each value within the plausible range of its kind. The table's span is
the fluid's valid range. Enthalpies may be on any reference: a fluid on a curve mixes with no
other fluid (:func:`.graph.check_enthalpy_fluids`), so only differences along one stream enter
a balance; water and steam keep the IAPWS reference.
"""

from __future__ import annotations

import csv
from pathlib import Path

from hxtrain.units.enthalpy_curves import EnthalpyCurve

from . import quantities as q
from .fields import Fields, describe
from .quantities import QuantityError, to_default_unit

CURVE_FORMS = ("enthalpy_curve", "water_steam")
MAX_ROWS = 2000
"""An exported curve has tens to a few hundred points; thousands is a pasted time series."""
CSV_COLUMNS = ("temperature_c", "enthalpy_kj_kg", "vapour_fraction")
ROW_KINDS = (q.TEMPERATURE, q.SPECIFIC_ENTHALPY, q.FRACTION)


def read_curve(f: Fields, transport) -> EnthalpyCurve:
    """The fluid of entry ``f`` whose form is one of :data:`CURVE_FORMS`."""
    if transport.pop("valid_range", None) is not None:
        raise f.error("valid_range", "a fluid on an enthalpy curve holds over its table's span: leave out 'valid_range'")
    kept = {k: v for k, v in transport.items() if v is not None}
    if f.has("water_steam"):
        return _water_steam(f.mapping("water_steam"), kept)
    form = f.mapping("enthalpy_curve")
    pressure = form.quantity("pressure", q.PRESSURE)
    if form.has("rows") == form.has("file"):
        raise form.one_of_error(("rows", "file"), "give exactly one of 'rows' ([[temperature, enthalpy, vapour "
                                                  "fraction], ...]) and "
                               "'file' (a CSV file next to the case)")
    inline = form.has("rows")
    rows, source = (_rows(form), None) if inline else _csv_rows(form)
    form.finish()
    try:
        return EnthalpyCurve(*zip(*rows), pressure=pressure, name=f.path[-1], **kept)
    except ValueError as exc:  # a rule of the curve broken: name the row (inline) or the file's line
        head, _, rule = str(exc).partition(": ")
        row = int(head.rsplit(" ", 1)[1]) if head.startswith("enthalpy curve row ") else None
        if row is None:
            raise form.error("rows" if inline else "file", str(exc)) from None
        if inline:
            raise form.doc.error(form.path + ("rows", row), rule) from None
        raise form.error("file", f"{source} line {row + 2}: {rule}") from None


def _rows(form: Fields):
    rows = form.raw("rows")
    if not isinstance(rows, list) or not 2 <= len(rows) <= MAX_ROWS:
        raise form.error("rows", f"expected 2 to {MAX_ROWS} rows [temperature, enthalpy, vapour fraction], got "
                                 f"{describe(rows)}")
    values = []
    for i, row in enumerate(rows):
        if not isinstance(row, list) or len(row) != 3:
            raise form.doc.error(form.path + ("rows", i), "expected [temperature, specific enthalpy, vapour mass "
                                                           f"fraction], e.g. [230, 520.0, 0], got {describe(row)}")
        try:
            values.append(tuple(to_default_unit(v, kind) for v, kind in zip(row, ROW_KINDS)))
        except QuantityError as exc:
            raise form.doc.error(form.path + ("rows", i), str(exc)) from None
    return values


def _csv_rows(form: Fields):
    """Rows of the CSV file the entry names (relative to the case file), and how to name a row."""
    name = form.text("file", required=True)
    path = Path(name) if Path(name).is_absolute() else Path(form.doc.file).parent / name
    try:
        with open(path, newline="", encoding="utf-8-sig") as handle:
            lines = list(csv.reader(handle))
    except (OSError, UnicodeDecodeError, csv.Error) as exc:
        raise form.error("file", f"cannot read {path}: {exc}") from None
    header = [h.strip() for h in lines[0]] if lines else []
    if header != list(CSV_COLUMNS):
        raise form.error("file", f"{path}: the first row must be the header {','.join(CSV_COLUMNS)}; got "
                                 f"{','.join(header) or 'an empty file'}")
    body = [line for line in lines[1:] if any(cell.strip() for cell in line)]
    if not 2 <= len(body) <= MAX_ROWS:
        raise form.error("file", f"{path}: expected 2 to {MAX_ROWS} rows below the header, found {len(body)}")
    rows = []
    for i, line in enumerate(body):
        if len(line) != 3:
            raise form.error("file", f"{path} line {i + 2}: expected 3 values, found {len(line)}")
        try:
            rows.append(tuple(to_default_unit(float(cell), kind) for cell, kind in zip(line, ROW_KINDS)))
        except (ValueError, QuantityError) as exc:
            column = next(c for c, cell in zip(CSV_COLUMNS, line) if not _number_in(cell, ROW_KINDS[CSV_COLUMNS.index(c)]))
            raise form.error("file", f"{path} line {i + 2}, column {column}: {exc}") from None
    return rows, path


def _number_in(cell, kind) -> bool:
    try:
        to_default_unit(float(cell), kind)
        return True
    except (ValueError, QuantityError):
        return False


def _water_steam(form: Fields, kept) -> EnthalpyCurve:
    from hxtrain.units.water_steam import IF97_RANGE, water_steam_curve

    pressure = form.quantity("pressure", q.PRESSURE)
    low, high = form.temperature_span("temperature_range")
    if not IF97_RANGE[0] <= low < high <= IF97_RANGE[1]:
        raise form.error("temperature_range", f"expected a rising span within {IF97_RANGE[0]:g} to {IF97_RANGE[1]:g} °C "
                                              f"(IAPWS-IF97 regions 1 to 3), got {low:g} to {high:g} °C")
    form.finish()
    curve = water_steam_curve(pressure, low, high)
    for key, value in kept.items():
        setattr(curve, {"viscosity": "viscosity_model", "conductivity": "conductivity_value",
                        "density": "density_value"}[key], value)
    return curve
