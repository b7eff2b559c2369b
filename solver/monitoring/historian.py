"""Plant historian exports read into checked samples, and averaged into steady-state windows.

The export is a CSV file (comma-separated, UTF-8) or the first sheet of an XLSX workbook: a
header on row 1, a time column, one column per tag. :func:`read_history` converts each tag's
column to the default unit (°C, kg/s, kW) through the tag's unit (temperatures as levels: degF
-> °C with the offset).

Times are ISO 8601 (2026-03-14, 2026-03-14 06:00, seconds optional, 'T' allowed) unless the
monitoring file gives ``time_format`` (strftime codes); a workbook's date-time cells are read as
they are. A time in another form (01/02/2026: the 1st of February to some, the 2nd of January to
others) is never guessed: the file is refused naming the row and column, with the hint to write
ISO times or give ``time_format``. A time with a time-zone offset (+01:00, Z) is refused too:
times are taken as the plant's clock shows them, so that daily windows run from the plant's
midnight (converting to UTC would shift every window by the offset).

Bad data are skipped, never guessed, and every skip is reported in ``History.skipped`` (the file
row, header = row 1; the time; the column, empty where the whole row was skipped; the reason,
one of :data:`REASONS`; a detail):

* a row whose time is missing, cannot be read, repeats an earlier row's time or goes back before
  it is skipped whole: its readings cannot be placed in time;
* a bad cell (missing, not a number, not finite, physically impossible: a temperature below
  absolute zero or above 2000 °C, a negative or implausibly large flow or duty) blanks that tag
  in that row only, and the row's other tags stay: one failed instrument must not discard the
  others, and the reconciliation treats a missing reading as unmeasured;
* an isolated spike, one reading far beyond both of its neighbours (:mod:`.spikes`), is blanked
  the same way: a glitch that would move a window's mean and fail its steady-state test (but not
  where another tag spikes in the same row: that is the process moving); so is a value held
  unchanged far longer than the tag repeats by chance (a frozen transmitter, or the historian
  logging a tag's last good value), each run reported with its first and last time.

Errors (:class:`CaseError`, exit 2) name the file and, where it applies, the row and column:
a data file that is missing, unreadable or empty; no time column; a tag with no column in the
data (named by the tag's key path in the monitoring file, with the data file); a tag's column
with no usable value; more than :data:`MAX_BAD_SHARE` of the rows bad (with the likely cause: the
time column's form or order, else a unit or the wrong file); a logged cleaning after the data's
last time (``cleanings[i].date``: the data cannot show it; one before the data starts is kept, the
exchanger's history starting there); a tag whose readings disagree grossly with the case (a unit
slip, :func:`screen_unit_slips`). Columns no tag names are ignored and listed in
``History.unused_columns``.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd

from hxtrain.network import quantities as q
from hxtrain.network.errors import CaseError
from hxtrain.network.fields import nearest
from hxtrain.network.monitoring_file import ISO_TIME, MonitoringFile, Tag
from hxtrain.network.quantities import shorten

from .spikes import HELD, SPIKE, without_glitches
from .windows import Windows, average_windows

__all__ = ["History", "Windows", "read_history", "screen_unit_slips", "MAX_BAD_SHARE", "MAX_DATA_BYTES", "REASONS",
           "PHYSICAL_LIMITS", "SLIP_RATIO", "SLIP_KELVIN", "fired_limit_slip"]

MAX_BAD_SHARE = 0.5
"""More than half the rows bad (skipped, or with a cell that is bad other than merely missing) is
no longer noise: a unit in the monitoring file or the file itself is probably wrong."""
MAX_DATA_BYTES = 1 << 30
"""A year of one-minute data for a hundred tags is a few hundred MB; a larger file is the wrong one."""
PHYSICAL_LIMITS = {"temperature": (q.TEMPERATURE.low, q.TEMPERATURE.high), "flow": (0.0, q.MASS_FLOW.high),
                   "duty": (0.0, q.DUTY.high)}
"""Readings outside these (default units) are impossible: absolute zero to 2000 °C, no negative
flow or duty, nothing above the plausible maxima of the case format (network/quantities.py)."""
SLIP_RATIO = 10.0
"""Unit-slip screen (common practice): a flow or duty tag whose median reading lies outside
[1/10, 10] times the base case's simulated value at its point is refused: wider than any turndown
or case-to-plant gap, narrower than the usual slips (kcal/h for kW: x 0.001; lb/h for kg/s: x 8e3)."""
SLIP_KELVIN = 150.0
"""... and a temperature tag whose median lies more than 150 K from the simulated value (K read as
°C is 273 K off; °F read as °C at 300 °C, 272 K; common practice)."""
OFFSET = r"(?:Z|[+-]\d{2}(?::?\d{2})?)"
OTHER_DATE = re.compile(r"\d{1,4}[/.\-]\d{1,2}[/.\-]\d{1,4}|(?i:jan|feb|mar|apr|may|jun|jul|aug|sep|oct|nov|dec)")
"""A date in some form other than ISO 8601 (day/month/year, month names, ...)."""
TIME_MISSING, TIME_UNREADABLE, TIME_REPEATED, TIME_BACKWARDS = (
    "time missing", "time unreadable", "time repeated", "time goes backwards")
MISSING, NOT_A_NUMBER, NOT_FINITE, IMPOSSIBLE = "missing value", "not a number", "not a finite number", "impossible"
REASONS = (TIME_MISSING, TIME_UNREADABLE, TIME_REPEATED, TIME_BACKWARDS, MISSING, NOT_A_NUMBER, NOT_FINITE, IMPOSSIBLE,
           SPIKE, HELD)
"""The values of ``History.skipped.reason``; the first four skip the whole row."""
ROW_REASONS = REASONS[:4]
MAX_PEEK = 1 << 16
SKIPPED_COLUMNS = ["row", "time", "column", "reason", "detail"]
_SHOWN_UNIT = {"temperature": "°C", "flow": "kg/s", "duty": "kW"}


@dataclass
class History:
    """Checked historian samples. ``samples``: DatetimeIndex (strictly increasing), one column
    per tag (named by tag) in default units, NaN where a cell was skipped; ``skipped``: one row
    per row skipped whole (column: empty) or per blanked cell (column: its data column), columns
    :data:`SKIPPED_COLUMNS`; ``rows``: data rows in the file; ``sheet``: the sheet read from a
    workbook."""

    file: str
    samples: pd.DataFrame
    skipped: pd.DataFrame
    unused_columns: list[str]
    rows: int
    sheet: str | None = None

    @property
    def skipped_rows(self) -> int:
        """Rows skipped whole (their time was bad)."""
        return int(self.skipped["reason"].isin(ROW_REASONS).sum())

    @property
    def blanked_cells(self) -> int:
        """Cells blanked in rows that were kept."""
        return len(self.skipped) - self.skipped_rows

    def skipped_counts(self) -> pd.Series:
        """The number of skips per (column, reason)."""
        return self.skipped.groupby(["column", "reason"], sort=False).size()

    def windows(self, monitoring: MonitoringFile) -> Windows:
        """The samples averaged over the monitoring file's window, with the steady-state test
        (:func:`.windows.average_windows`)."""
        return average_windows(self.samples, monitoring)


def read_history(monitoring: MonitoringFile) -> History:
    """Read and check the historian export the monitoring file names (see the module text)."""
    path = Path(monitoring.data_path)
    _check_file(monitoring, path)
    name = str(path)
    table, sheet = _read_table(path)
    if table.shape[0] == 0 or table.shape[1] == 0:
        where = f"the first sheet ({sheet!r}) of the workbook" if sheet is not None else "the file"
        raise CaseError(f"{where} is empty; hxtrain reads a header on row 1 and the data below it", file=name)
    header = [_header_name(v) for v in table.iloc[0]]
    body = table.iloc[1:].reset_index(drop=True)
    filled = np.flatnonzero(body.notna().any(axis=1).to_numpy())
    body = body.iloc[: filled[-1] + 1 if filled.size else 0]  # blank lines at the end are no rows
    position = _check_header(header, name, monitoring, ",".join(map(str, body.iloc[0].dropna())) if len(body) else "")
    if body.empty:
        raise CaseError("the file has a header but no data rows", file=name)
    rows = np.arange(len(body)) + 2  # file rows: the header is row 1
    skips = _Skips()
    columns = [t.column for t in monitoring.tags.values()]
    places = [position[c] for c in columns]  # the rows of a repeated time are compared only where one is
    times, keep = _times(body.iloc[:, position[monitoring.time_column]], rows, skips.column(""), monitoring, name,
                         lambda i, j: [(c, x, y) for c, x, y in zip(columns, body.iloc[i, places], body.iloc[j, places])
                                       if not _same(x, y)])
    values = {tag.name: _readings(body.iloc[:, position[tag.column]], tag, keep, skips.column(tag.column))
              for tag in monitoring.tags.values()}
    values = without_glitches(values, monitoring.tags.values(), keep, times, skips.column)
    skipped = skips.table(rows, times)
    samples = pd.DataFrame({k: v[keep] for k, v in values.items()}, index=pd.DatetimeIndex(times[keep], name="time"))
    samples = samples[samples.notna().any(axis=1)]
    used = {monitoring.time_column, *(t.column for t in monitoring.tags.values())}
    history = History(name, samples, skipped, [h for h in header if h and h not in used], len(body), sheet)
    _check_bad_share(history, monitoring)
    _check_cleanings(history, monitoring)
    screen_unit_slips(history, monitoring)
    return history


# ----------------------------------------------------------------------------- the file


def _check_file(monitoring: MonitoringFile, path: Path):
    if not path.exists():
        raise monitoring.error(("data",), f"the data file {path} does not exist")
    if not path.is_file():
        raise monitoring.error(("data",), f"the data file {path} is not a regular file (a directory?)")
    if path.stat().st_size > MAX_DATA_BYTES:
        raise monitoring.error(("data",), f"the data file {path} is over the {MAX_DATA_BYTES >> 20} MiB limit")


def _read_table(path: Path) -> tuple[pd.DataFrame, str | None]:
    """Every cell of the file (row 0 is the header), and the sheet's name for a workbook."""
    name = str(path)
    try:
        if path.suffix.lower() == ".xlsx":
            try:
                with pd.ExcelFile(path, engine="openpyxl") as book:
                    sheet = book.sheet_names[0]
                    return pd.read_excel(book, sheet_name=sheet, header=None, dtype=object), sheet
            except (PermissionError, MemoryError):
                raise
            except Exception as exc:  # zipfile and openpyxl fail in many ways on what is no workbook
                raise CaseError(f"cannot be read as an XLSX workbook ({type(exc).__name__}: "
                                f"{shorten(str(exc), 120)})", file=name) from None
        return pd.read_csv(path, header=None, dtype=str, skip_blank_lines=False, encoding="utf-8-sig"), None
    except pd.errors.EmptyDataError:  # nothing, or (pandas' reading) a blank first line
        if path.read_bytes()[:MAX_PEEK].strip():
            raise CaseError("row 1 is empty: the header (the names of the time column and the tags) must be on "
                            "row 1", file=name) from None
        return pd.DataFrame(), None
    except UnicodeDecodeError as exc:
        raise CaseError(f"byte {exc.start} is not valid UTF-8; export the data as UTF-8 CSV", file=name) from None
    except pd.errors.ParserError as exc:
        match = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(exc))
        if match:
            header, _, first = path.read_bytes()[:MAX_PEEK].decode("utf-8", "replace").partition("\n")
            raise CaseError(f"row {match.group(2)} has {match.group(3)} cells, more than the {match.group(1)} "
                            f"columns of the rows before it{_separator_hint(header, first)}", file=name) from None
        raise CaseError(f"cannot be read as CSV ({shorten(str(exc), 160)})", file=name) from None
    except PermissionError:
        raise CaseError("the file cannot be read (permission denied)", file=name) from None
    except OSError as exc:
        raise CaseError(f"the file cannot be read ({exc.strerror or exc})", file=name) from None


def _header_name(value) -> str:
    return "" if pd.isna(value) else str(value).strip()


def _check_header(header: list[str], name: str, monitoring: MonitoringFile, first_row="") -> dict[str, int]:
    """Column name -> position; errors for an empty or repeated name and missing columns."""
    if not any(header):
        raise CaseError("row 1 is empty: the header (the names of the time column and the tags) must be on "
                        "row 1", file=name)
    position: dict[str, int] = {}
    for i, column in enumerate(header):
        if column and column in position:
            raise CaseError(f"row 1: column {column!r} appears twice (columns {position[column] + 1} and {i + 1})",
                            file=name)
        position.setdefault(column, i)
    named = [h for h in header if h]
    time = monitoring.time_column
    if time not in position:
        raise CaseError(f"row 1: no column {time!r} holding the time (time_column in {monitoring.file})"
                        f"{nearest(time, named)}; the columns are {shorten(', '.join(named), 300)}"
                        f"{_separator_hint(','.join(named), first_row) if len(named) <= 2 else ''}", file=name)
    taken = {tag.column for tag in monitoring.tags.values()} | {time}
    for tag in monitoring.tags.values():
        if tag.column not in position:  # a column another tag reads is no suggestion
            raise monitoring.error(tag.key, f"the data file {name} has no column {tag.column!r} for tag {tag.name}"
                                            f"{nearest(tag.column, [h for h in named if h not in taken])}")
    return position


def _separator_hint(header: str, row: str) -> str:
    """Why a header read as one or two columns: another separator; with semicolons, decimal
    commas in the numbers too (a European spreadsheet's CSV)."""
    for mark, word in ((";", "semicolons"), ("\t", "tabs"), ("|", "bars")):
        if header.count(mark) > header.count(","):
            commas = mark == ";" and re.search(r"\d,\d", row)
            return (f" (the file seems to separate its columns with {word}"
                    + (" and to write decimal commas: export it with commas between columns and points in numbers)"
                       if commas else ": export it with commas)"))
    return ""


# ----------------------------------------------------------------------------- rows and cells


class _Skips:
    """Skips gathered as arrays, made one table at the end (a table per tag and reason would
    cost more than the reading)."""

    def __init__(self):
        self.parts: list[tuple[np.ndarray, str, str, list]] = []

    def column(self, column: str):
        def add(mask: np.ndarray, reason: str, details):
            index = np.flatnonzero(mask)
            if index.size:
                self.parts.append((index, column, reason, list(details)))
        return add

    def table(self, rows: np.ndarray, times: np.ndarray) -> pd.DataFrame:
        if not self.parts:
            return pd.DataFrame({"row": np.array([], dtype=int), "time": np.array([], dtype="datetime64[ns]"),
                                 "column": [], "reason": [], "detail": []})
        index = np.concatenate([p[0] for p in self.parts])
        sizes = [p[0].size for p in self.parts]
        table = pd.DataFrame({"row": rows[index], "time": times[index],
                              "column": np.repeat([p[1] for p in self.parts], sizes),
                              "reason": np.repeat([p[2] for p in self.parts], sizes),
                              "detail": [d for p in self.parts for d in p[3]]})
        return table.iloc[np.argsort(index, kind="stable")].reset_index(drop=True)


def _parse_times(raw: pd.Series, rows: np.ndarray, monitoring: MonitoringFile, name: str) -> np.ndarray:
    """Each cell's time (datetime64[ns], NaT where unreadable): ISO 8601 text, or text in the
    monitoring file's ``time_format``; a workbook's date-time cells as they are. Text in another
    date form, or with a time-zone offset, refuses the file (module text)."""
    column, fmt = monitoring.time_column, monitoring.time_format
    text = raw.where(raw.map(lambda v: isinstance(v, str))).str.strip()
    stamped = raw.where(raw.map(lambda v: isinstance(v, date)))  # datetime cells of a workbook
    if fmt is None:
        iso = text.str.fullmatch(ISO_TIME.pattern).fillna(False).to_numpy(bool)
        offset = text.str.fullmatch(ISO_TIME.pattern + OFFSET).fillna(False).to_numpy(bool)
        other = ~iso & ~offset & text.str.contains(OTHER_DATE).fillna(False).to_numpy(bool)
        if offset.any():
            k = np.flatnonzero(offset)[0]
            raise CaseError(f"row {rows[k]}, column {column!r}: {shorten(text.iloc[k])} carries a time-zone offset; "
                            "hxtrain takes times as the plant's clock shows them, so that daily windows run from "
                            "the plant's midnight: export the times without the offset", file=name)
        if other.any():
            k = np.flatnonzero(other)[0]
            raise CaseError(f"row {rows[k]}, column {column!r}: {shorten(text.iloc[k])} is not an ISO 8601 time such "
                            "as 2026-03-14 06:00, and hxtrain does not guess the order of day and month (01/02/2026 "
                            "is the 1st of February to some and the 2nd of January to others): write the times as "
                            f"ISO 8601, or give their form as time_format in {monitoring.file} (strftime codes, "
                            "e.g. '%d/%m/%Y %H:%M')", file=name)
        parsed = pd.to_datetime(text.where(iso), errors="coerce", format="ISO8601")
    else:
        parsed = pd.to_datetime(text, errors="coerce", format=fmt)
    times = parsed.to_numpy().astype("datetime64[ns]")
    if stamped.notna().any():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # mixed date and datetime objects are parsed cell by cell
            cells = pd.to_datetime(stamped, errors="coerce")
        if getattr(cells.dt, "tz", None) is not None:
            raise CaseError(f"column {column!r}: the workbook's times carry a time zone; export them as the plant's "
                            "clock shows them", file=name)
        times = np.where(stamped.notna().to_numpy(), cells.to_numpy().astype("datetime64[ns]"), times)
    return times


def _times(raw: pd.Series, rows: np.ndarray, skip, monitoring: MonitoringFile, name: str, differing):
    """(times, keep): the time of each row (NaT where unreadable) and the rows kept, whose
    times increase strictly; ``skip`` is told every other row. A row is compared with the
    latest time of the rows kept before it. A row repeating a kept row's time is skipped, the
    first copy kept; ``differing(i, j)`` gives (column, reading in i, reading in j) where rows i
    and j (positions) read differently, for the skipped row's detail."""
    times = _parse_times(raw, rows, monitoring, name)
    missing = raw.isna().to_numpy()
    valid = ~np.isnat(times)
    lowest = np.iinfo(np.int64).min
    stamp = np.where(valid, times.view("int64"), lowest)
    latest = np.concatenate([[lowest], np.maximum.accumulate(stamp)[:-1]])
    keep = valid & (stamp > latest)
    latest_row = np.concatenate([[-1], np.maximum.accumulate(np.where(keep, np.arange(len(keep)), -1))[:-1]])
    repeated, backwards = valid & (stamp == latest), valid & (stamp < latest)
    unreadable = ~missing & ~valid
    text = raw.to_numpy(dtype=object)
    skip(missing, TIME_MISSING, [""] * int(missing.sum()))
    expected = (f"does not follow time_format {monitoring.time_format!r}" if monitoring.time_format else
                "is not a date and time (ISO 8601: 2026-03-14 06:00)")
    skip(unreadable, TIME_UNREADABLE, [f"{shorten(str(t))} {expected}" for t in text[unreadable]])
    skip(repeated, TIME_REPEATED, [_repeat_detail(rows[b], differing(b, r))
                                   for r, b in zip(np.flatnonzero(repeated), latest_row[repeated])])
    skip(backwards, TIME_BACKWARDS, [f"before row {rows[b]}'s {pd.Timestamp(times[b])}"
                                     for b in latest_row[backwards]])
    return times, keep


def _repeat_detail(kept_row, differ: list) -> str:
    """Why a row repeating row ``kept_row``'s time is left out, and whether its readings agree
    (``differ``: column, kept reading, this row's reading, where they do not)."""
    if not differ:
        return f"the time of row {kept_row}, whose readings are kept; this row's are the same"
    shown = ", ".join(f"{c} {_cell(y)} against {_cell(x)}" for c, x, y in differ[:3])
    more = f" and {len(differ) - 3} more" if len(differ) > 3 else ""
    return (f"the time of row {kept_row}, whose readings are kept; this row's differ: {shown}{more}: which copy is "
            "right?")


def _cell(value) -> str:
    """A cell as the file wrote it (empty: 'empty'; a long text cut at 24 characters)."""
    text = "empty" if pd.isna(value) else str(value).strip()
    return text if len(text) <= 24 else text[:21] + "..."


def _same(x, y) -> bool:
    """Whether two cells read the same: equal numbers, or the same text, or both empty."""
    if pd.isna(x) or pd.isna(y):
        return bool(pd.isna(x) and pd.isna(y))
    a, b = pd.to_numeric(pd.Series([x, y], dtype=object), errors="coerce")
    return bool(a == b) if not (np.isnan(a) or np.isnan(b)) else str(x).strip() == str(y).strip()


def _readings(raw: pd.Series, tag: Tag, keep: np.ndarray, skip) -> np.ndarray:
    """The values in the default unit, NaN where bad; ``skip`` is told the kept rows' bad cells."""
    numbers = pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float)
    missing = raw.isna().to_numpy() & keep
    not_number = ~raw.isna().to_numpy() & np.isnan(numbers) & keep
    not_finite = np.isinf(numbers) & keep
    values = tag.to_default_unit(numbers)
    low, high = PHYSICAL_LIMITS[tag.quantity]
    with np.errstate(invalid="ignore"):
        impossible = np.isfinite(values) & ((values < low) | (values > high)) & keep
    text = raw.to_numpy(dtype=object)
    unit = _SHOWN_UNIT[tag.quantity]
    skip(missing, MISSING, [""] * int(missing.sum()))
    skip(not_number, NOT_A_NUMBER, [shorten(str(t)) for t in text[not_number]])
    skip(not_finite, NOT_FINITE, [shorten(str(t)) for t in text[not_finite]])
    skip(impossible, IMPOSSIBLE, [f"{n:g} {tag.unit} = {v:.6g} {unit}, {_why(v, tag.quantity)}"
                                  for n, v in zip(numbers[impossible], values[impossible])])
    values[missing | not_number | not_finite | impossible] = np.nan
    return values


def _why(value: float, quantity: str) -> str:
    low, high = PHYSICAL_LIMITS[quantity]
    if value < low:
        return "below absolute zero" if quantity == "temperature" else f"a negative {quantity}"
    return f"above {high:g} {_SHOWN_UNIT[quantity]}"


def _likely_cause(reason: str, monitoring: MonitoringFile) -> str:
    """What a file mostly bad for ``reason`` probably has wrong."""
    if reason == TIME_BACKWARDS:
        return "the rows are not in time order (is the file newest first? sort it oldest first)"
    if reason == TIME_REPEATED:
        return "the times repeat (rows written twice, or times without their hours?)"
    if reason in ROW_REASONS:
        return (f"the times do not follow time_format {monitoring.time_format!r} in {monitoring.file}"
                if monitoring.time_format else "the time column cannot be read: write ISO 8601 times "
                f"(2026-03-14 06:00) or give their form as time_format in {monitoring.file}")
    return f"probably a wrong unit in {monitoring.file} or the wrong file"


def _check_cleanings(history: History, monitoring: MonitoringFile):
    """A logged cleaning after the data's last time cannot be seen in them: a slip in its date,
    or the wrong data file. (One before the data starts is kept: the history starts there.)"""
    last = history.samples.index.max()
    for (exchanger, when), key in monitoring.cleaning_keys.items():
        if when > last:
            raise monitoring.error(key, f"the cleaning of {exchanger} on {when:%Y-%m-%d %H:%M} lies after the data's "
                                        f"last time ({last:%Y-%m-%d %H:%M}, in {Path(history.file).name}): the data "
                                        "cannot show it; is the date or the data file wrong?")


def screen_unit_slips(history: History, monitoring: MonitoringFile):
    """Refuse a tag whose readings disagree grossly with the case: its median reading (default
    unit) against the base case's simulated value at its point, flows and duties outside
    [1/:data:`SLIP_RATIO`, :data:`SLIP_RATIO`] times it, temperatures more than
    :data:`SLIP_KELVIN` from it (screens of common practice: a unit slip, or a tag on the wrong
    point). Skipped where the base case does not solve or the simulated value is zero."""
    from hxtrain.solver.simulation.evaluation import evaluate

    base = evaluate(monitoring.case)
    if not base.success[0]:
        return
    for tag in monitoring.tags.values():
        median = float(np.nanmedian(history.samples[tag.name].to_numpy()))
        if tag.quantity == "temperature":
            simulated = float(base.solution.temperature[0, tag.segment])
            off = abs(median - simulated) > SLIP_KELVIN
            how = f"{abs(median - simulated):.0f} K from"
        else:
            simulated = abs(float(np.atleast_2d(base.net.flow)[0, tag.segment] if tag.quantity == "flow"
                                  else base.reports[tag.point].metrics["duty"][0]))
            ratio = median / simulated if simulated > 0.0 else 1.0
            off = not 1.0 / SLIP_RATIO <= ratio <= SLIP_RATIO
            how = f"{ratio:.3g} times"
        if off:
            unit = _SHOWN_UNIT[tag.quantity]
            reading = tag.from_default_unit(median)
            same = f" = {median:.6g} {unit}" if tag.unit != unit else ""
            raise monitoring.error(tag.key, f"the median reading of {tag.name}, {reading:.6g} {tag.unit}{same}, "
                                            f"is {how} the base case's {tag.quantity} at {tag.point} "
                                            f"({simulated:.6g} {unit}): a unit slip (check its unit), or the wrong "
                                            f"point? (a screen of common practice: flows and duties within "
                                            f"{1 / SLIP_RATIO:g} to {SLIP_RATIO:g} times the case, temperatures "
                                            f"within {SLIP_KELVIN:g} K)")
    for heater, limit in monitoring.limits["fired_duty"].items():
        slip = fired_limit_slip(limit, heater, base)
        if slip:
            raise monitoring.error(("limits", "fired_duty", heater), slip)


def fired_limit_slip(limit: float, heater: str, base) -> str:
    """Why a fired-duty limit (kW) looks like a unit slip against the base case's evaluation
    ``base`` (more than :data:`SLIP_RATIO` times away from the heater's fired duty there: a bare
    number is kW, and 40 meant as MW is a slip); "" where it does not, or the base has no answer."""
    if not base.success[0]:
        return ""
    simulated = abs(float(base.reports[heater].metrics["duty"][0]))
    ratio = limit / simulated if simulated > 0.0 else 1.0
    if 1.0 / SLIP_RATIO <= ratio <= SLIP_RATIO:
        return ""
    return (f"the limit, {limit:.6g} kW, is {ratio:.3g} times the base case's fired duty of {heater} "
            f"({simulated:.6g} kW): a unit slip? (a bare number is kW; write the unit, e.g. '40 MW'; a screen of "
            f"common practice: within {1 / SLIP_RATIO:g} to {SLIP_RATIO:g} times the case)")


def _check_bad_share(history: History, monitoring: MonitoringFile):
    """Refuse a file with more than MAX_BAD_SHARE of its rows skipped whole (their time), or of
    one tag's readings impossible (a unit slip), or a tag with no usable value. A tag whose
    readings are mostly text or blank (a transmitter out of service, "comm fail") is not refused:
    it is unmeasured where it has no reading, as the report's count of skipped cells says."""
    skipped, name = history.skipped, history.file
    bad = skipped[skipped["reason"] != MISSING]
    whole = bad[bad["reason"].isin(ROW_REASONS)]
    impossible = bad[bad["reason"] == IMPOSSIBLE]
    by_column = impossible.groupby("column", sort=False)
    for cells, where in ((whole, f"whole rows, for the time in column {monitoring.time_column!r}"),
                         *((part, f"in column {column!r}") for column, part in by_column)):
        bad_rows = cells["row"].nunique()
        if bad_rows > MAX_BAD_SHARE * history.rows:
            reason = cells["reason"].value_counts().index[0]
            first = cells[cells["reason"] == reason].iloc[0]
            raise CaseError(
                f"{bad_rows} of {history.rows} data rows ({bad_rows / history.rows:.0%}) are bad, more than the "
                f"{MAX_BAD_SHARE:.0%} accepted: {_likely_cause(reason, monitoring)}. They are {where}: {reason}, first "
                f"at row {first['row']}{': ' + first['detail'] if first['detail'] else ''}", file=name)
    for tag in monitoring.tags.values():
        if history.samples.empty or history.samples[tag.name].notna().sum() == 0:
            cells = skipped[skipped["column"] == tag.column]
            detail = cells["detail"].iloc[0] if len(cells) else ""
            separator = re.fullmatch(r"'?[+-]?\d{1,3}(,\d{3})+(\.\d*)?'?", detail)
            first = (f"; row {cells['row'].iloc[0]}: {cells['reason'].iloc[0]}" + (f" ({detail})" if detail else "")
                     + ("; a thousands separator? hxtrain reads numbers written without one" if separator else "")
                     if len(cells) else "")
            raise CaseError(f"column {tag.column!r} (tag {tag.name}) holds no usable value in its "
                            f"{history.rows} rows{first}", file=name)
