"""The XLSX workbook a colleague can use: an "about" sheet in plain words (case, date, version,
caution, the units and what the column names' endings mean), the violated limits on a sheet of
their own, highlighted, then one sheet per table with its header row and row names frozen,
number formats in each unit's decimals and columns wide enough to read.

Column headers are the tables' names, which end in their unit (``duty_kw``, ``hot_in_f``): the
same names as in CSV and JSON, so a formula or a script reads any of the three alike; each
header also carries a note with the column in words and its unit.
"""

from __future__ import annotations

import io
import re

import pandas as pd

from .console_tables import DIMENSIONLESS_DIGITS
from .display_units import DISPLAY_TABLE, Display

SHEET_NAME_LIMIT = 31
"""Excel's longest sheet name."""
RESERVED_SHEETS = ("about", "History")
"""Sheet names not available to tables: ours for the notes, Excel's own."""
LIMITS_SHEET = "limits"
LIMIT_TABLES = ("limits", "violated_limits", "limit_dates")
"""Tables that are themselves lists of limits (a schedule's, a monitor's): highlighted like the
limits sheet."""
WORKBOOK_ILLEGAL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f]")
"""Control characters a worksheet cell cannot hold (openpyxl refuses them)."""
NOTE_WORDS = {"case_file": "case file", "study": "study file", "written": "date written",
              "hxtrain_version": "hxtrain version"}
UNIT_WORDS = (("_kw_k", "kW/K"), ("_kg_s", "kg/s"), ("_kw", "kW"), ("_c", "°C"), ("_k", "K"))
HIGHLIGHT = "FFC7CE"
"""Light red: the fill of violated limits (and the limits sheet's tab)."""
HEADER_FILL = "DDE4EE"
WIDEST_COLUMN = 60


def words(name: str, display: Display | None = None) -> str:
    """A table's or note's key in words: 'heat_recovered_kw' -> 'heat recovered (kW)'; a name
    already in ``display``'s units the same way ('heat_recovered_mmbtu_h' -> 'heat recovered
    (MMBtu/h)')."""
    if name in NOTE_WORDS:
        return NOTE_WORDS[name]
    column = display.shown_column(name) if display is not None else None
    if column is not None:
        return f"{column.stem.replace('_', ' ')} ({column.label})"
    for suffix, unit in UNIT_WORDS:
        if name.endswith(suffix) and len(name) > len(suffix):
            return f"{name[:-len(suffix)].replace('_', ' ')} ({unit})"
    return name.replace("_", " ")


def about_table(notes: dict, sheets, display: Display | None = None, plain=None) -> pd.DataFrame:
    """The notes as rows of (item, value) in words: one row per note (none for an empty one, such
    as a study without a title), one per summary value, the units and the column-name endings,
    and one per sheet whose name had to differ from its table's. ``plain``: how a value is made
    a plain Python value."""
    plain = plain or (lambda value, name: value)
    rows = []
    for key, value in notes.items():
        if value is None or value == "":
            continue
        entries = value.items() if isinstance(value, dict) else [(key, value)]
        for name, entry in entries:
            entry = plain(entry, name)
            if isinstance(entry, bool):
                entry = "yes" if entry else "no"
            rows.append((words(name, display), "" if entry is None else entry))
    if display is not None:
        rows += units_rows(display)
    rows += [(f"sheet {sheet}", f"the table '{table}' (a sheet name has at most {SHEET_NAME_LIMIT} characters, "
                                "none of [ ] : * ? / \\)") for table, sheet in sheets if sheet != table]
    return pd.DataFrame(rows, columns=["item", "value"], dtype=object)


def units_rows(display: Display) -> list[tuple]:
    """The units in words: which system, and what each column-name ending stands for."""
    system = "US customary" if display.system == "us" else "SI"
    chosen = f"; chosen in the case: {', '.join(f'{k} {v}' for k, v in display.overrides.items())}" \
        if display.overrides else ""
    rows = [("units", f"{system}{chosen}. Column names end in their unit; values without a unit ending "
                      "(P, R, NTU, F, counts) have none")]
    for row in DISPLAY_TABLE:
        column = display.column(f"x{row.ending}")
        what = row.quantity.replace("_", " ")
        rows.append((f"ending _{column.name.split('_', 1)[1]}", f"{what}, {column.label}"))
    return rows


def limits_table(tables: dict) -> pd.DataFrame | None:
    """Every violated limit of the tables that list findings (a 'severity' column), with the
    table it comes from; None when no table lists findings."""
    found = [(name, frame) for name, frame in tables.items() if "severity" in getattr(frame, "columns", ())]
    if not found:
        return None
    rows = [frame[frame["severity"] == "limit"].assign(table=name) for name, frame in found]
    return pd.concat(rows, ignore_index=True) if rows else None


def _cell_safe(frame: pd.DataFrame) -> pd.DataFrame:
    """Text a workbook can hold: control characters (refused in case files, but a message may
    quote anything) written as escapes such as '\\x07' instead of failing the whole write."""
    def clean(value):
        return WORKBOOK_ILLEGAL.sub(lambda m: repr(m.group())[1:-1], value) if isinstance(value, str) else value

    frame = frame.copy()
    for position, dtype in enumerate(frame.dtypes):
        if pd.api.types.is_object_dtype(dtype) or pd.api.types.is_string_dtype(dtype):
            frame.isetitem(position, frame.iloc[:, position].map(clean))
    if not pd.api.types.is_numeric_dtype(frame.index):
        frame.index = frame.index.map(clean)
    return frame.rename(columns=clean)


def workbook_bytes(tables: dict, notes: dict, display: Display, sheets: list, readable, plain) -> bytes:
    """The workbook, built in memory (closed only when complete: an error leaves no open
    archive). ``tables`` are in the shown units already; ``sheets`` their sheet names;
    ``readable`` makes a table readable without Python (whole counts, rows numbered)."""
    from openpyxl.styles import Alignment, Font, PatternFill

    limits = limits_table(tables)
    buffer = io.BytesIO()
    writer = pd.ExcelWriter(buffer, engine="openpyxl")
    about = about_table(notes, zip(tables, sheets), display, plain)
    if limits is not None:
        about.loc[len(about)] = ("limits violated", f"{len(limits)}: see the sheet '{LIMITS_SHEET}'")
    else:  # a table of limits of its own (a sweep's, a Monte Carlo's, a cleaning ranking's; projected ones)
        for table, sheet in zip(tables, sheets):
            if table in LIMIT_TABLES:
                about.loc[len(about)] = ("limits violated", f"{len(tables[table])}: see the sheet '{sheet}'")
                break
    _cell_safe(about).to_excel(writer, sheet_name="about", index=False)
    if limits is not None:
        shown = limits if len(limits) else pd.DataFrame({"limits violated": ["none"]})
        _cell_safe(shown).to_excel(writer, sheet_name=LIMITS_SHEET, index=False)
    for frame, sheet in zip(tables.values(), sheets):
        _cell_safe(readable(frame)).to_excel(writer, sheet_name=sheet)
    book = writer.book
    bold, header = Font(bold=True), PatternFill("solid", fgColor=HEADER_FILL)
    red = PatternFill("solid", fgColor=HIGHLIGHT)
    sheet = book["about"]
    sheet.column_dimensions["A"].width, sheet.column_dimensions["B"].width = 28, 100
    for cell in sheet["B"]:
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    for cell in sheet["A"]:
        cell.font = bold
    highlighted = ([LIMITS_SHEET] if limits is not None else []) + [s for t, s in zip(tables, sheets) if t in LIMIT_TABLES]
    for name in book.sheetnames:
        _format(book[name], display, bold, header, red if name in highlighted else None)
    writer.close()
    return buffer.getvalue()


def _format(sheet, display: Display, bold, header, highlight):
    """Frozen header row (and row names), header notes, number formats, widths; a limits sheet
    filled in light red with a red tab."""
    from openpyxl.comments import Comment
    from openpyxl.utils import get_column_letter

    if sheet.title != "about":
        sheet.freeze_panes = "B2" if sheet.max_column > 1 and sheet.title != LIMITS_SHEET else "A2"
    for position, cells in enumerate(sheet.iter_cols(min_row=1, max_row=sheet.max_row), start=1):
        name = cells[0].value
        cells[0].font, cells[0].fill = bold, highlight or header
        column = display.shown_column(name) if isinstance(name, str) else None
        if column is not None and sheet.title != "about":
            cells[0].comment = Comment(f"{column.stem.replace('_', ' ')}, {column.label}", "hxtrain")
        places = column.digits if column is not None else DIMENSIONLESS_DIGITS
        number_format = "#,##0" + (f".{'0' * places}" if places else "")
        for cell in cells[1:]:
            if isinstance(cell.value, float):
                # a value the column's decimals would show as 0.00 (an energy balance's 1.2e-14) in
                # scientific form
                tiny = cell.value != 0.0 and abs(cell.value) < 0.5 * 10.0 ** -places
                cell.number_format = "0.00E+00" if tiny else number_format
            if highlight is not None:
                cell.fill = highlight
        if sheet.title != "about":
            width = max(len(str(c.value)) if c.value is not None else 0 for c in cells[: 200])
            sheet.column_dimensions[get_column_letter(position)].width = min(WIDEST_COLUMN, max(8, width + 2))
    if highlight is not None:
        sheet.sheet_properties.tabColor = "C00000"
