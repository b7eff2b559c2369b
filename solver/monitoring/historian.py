"""Plant historian exports read into checked samples, and averaged into steady-state windows.

The export is a CSV file (comma-separated, UTF-8) or the first sheet of an XLSX workbook: a
header on row 1, a time column, one column per tag. :func:`read_history` converts each tag's
column to the default unit (°C, kg/s, kW) through the tag's unit (temperatures as levels: degF
-> °C with the offset).

Bad data are skipped, never guessed, and every skip is reported in ``History.skipped`` (the file
row, header = row 1; the time; the column; the reason, one of :data:`REASONS`; a detail):

* a row whose time is missing, cannot be read, repeats an earlier row's time or goes back before
  it is skipped whole: its readings cannot be placed in time;
* a bad cell (missing, not a number, not finite, physically impossible: a temperature below
  absolute zero or above 2000 °C, a negative or implausibly large flow or duty) blanks that tag
  in that row only, and the row's other tags stay: one failed instrument must not discard the
  others, and the reconciliation treats a missing reading as unmeasured.

Errors (:class:`CaseError`, exit 2) name the file and, where it applies, the row and column:
a data file that is missing, unreadable or empty; no time column; a tag with no column in the
data (named by the tag's key path in the monitoring file, with the data file); a tag's column
with no usable value; more than :data:`MAX_BAD_SHARE` of the rows bad. Columns no tag names are
ignored and listed in ``History.unused_columns``. Times with a UTC offset are converted to UTC;
times without one are taken as written.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from hxtrain.network import quantities as q
from hxtrain.network.errors import CaseError
from hxtrain.network.fields import nearest
from hxtrain.network.monitoring_file import MonitoringFile, Tag
from hxtrain.network.quantities import shorten

from .windows import Windows, average_windows

__all__ = ["History", "Windows", "read_history", "MAX_BAD_SHARE", "MAX_DATA_BYTES", "REASONS", "PHYSICAL_LIMITS"]

MAX_BAD_SHARE = 0.5
"""More than half the rows bad (skipped, or with a cell that is bad other than merely missing) is
no longer noise: a unit in the monitoring file or the file itself is probably wrong."""
MAX_DATA_BYTES = 1 << 30
"""A year of one-minute data for a hundred tags is a few hundred MB; a larger file is the wrong one."""
PHYSICAL_LIMITS = {"temperature": (q.TEMPERATURE.low, q.TEMPERATURE.high), "flow": (0.0, q.MASS_FLOW.high),
                   "duty": (0.0, q.DUTY.high)}
"""Readings outside these (default units) are impossible: absolute zero to 2000 °C, no negative
flow or duty, nothing above the plausible maxima of the case format (network/quantities.py)."""
TIME_MISSING, TIME_UNREADABLE, TIME_REPEATED, TIME_BACKWARDS = (
    "time missing", "time unreadable", "time repeated", "time goes backwards")
MISSING, NOT_A_NUMBER, NOT_FINITE, IMPOSSIBLE = "missing value", "not a number", "not a finite number", "impossible"
REASONS = (TIME_MISSING, TIME_UNREADABLE, TIME_REPEATED, TIME_BACKWARDS, MISSING, NOT_A_NUMBER, NOT_FINITE, IMPOSSIBLE)
"""The values of ``History.skipped.reason``; the first four skip the whole row."""
ROW_REASONS = REASONS[:4]
MAX_PEEK = 1 << 16
SKIPPED_COLUMNS = ["row", "time", "column", "reason", "detail"]
_SHOWN_UNIT = {"temperature": "°C", "flow": "kg/s", "duty": "kW"}


@dataclass
class History:
    """Checked historian samples. ``samples``: DatetimeIndex (strictly increasing), one column
    per tag (named by tag) in default units, NaN where a cell was skipped; ``skipped``: one row
    per row skipped whole (column: the time column) or per blanked cell, columns
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
    position = _check_header(header, name, monitoring)
    if body.empty:
        raise CaseError("the file has a header but no data rows", file=name)
    rows = np.arange(len(body)) + 2  # file rows: the header is row 1
    skips = _Skips()
    times, keep = _times(body.iloc[:, position[monitoring.time_column]], rows, skips.column(monitoring.time_column))
    values = {tag.name: _readings(body.iloc[:, position[tag.column]], tag, keep, skips.column(tag.column))
              for tag in monitoring.tags.values()}
    skipped = skips.table(rows, times)
    samples = pd.DataFrame({k: v[keep] for k, v in values.items()}, index=pd.DatetimeIndex(times[keep], name="time"))
    samples = samples[samples.notna().any(axis=1)]
    used = {monitoring.time_column, *(t.column for t in monitoring.tags.values())}
    history = History(name, samples, skipped, [h for h in header if h and h not in used], len(body), sheet)
    _check_bad_share(history, monitoring)
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
            raise CaseError(f"row {match.group(2)} has {match.group(3)} cells, more than the {match.group(1)} "
                            "columns of the rows before it", file=name) from None
        raise CaseError(f"cannot be read as CSV ({shorten(str(exc), 160)})", file=name) from None
    except PermissionError:
        raise CaseError("the file cannot be read (permission denied)", file=name) from None
    except OSError as exc:
        raise CaseError(f"the file cannot be read ({exc.strerror or exc})", file=name) from None


def _header_name(value) -> str:
    return "" if pd.isna(value) else str(value).strip()


def _check_header(header: list[str], name: str, monitoring: MonitoringFile) -> dict[str, int]:
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
                        f"{_delimiter_hint(named)}", file=name)
    for tag in monitoring.tags.values():
        if tag.column not in position:
            raise monitoring.error(tag.key, f"the data file {name} has no column {tag.column!r} for tag {tag.name}"
                                            f"{nearest(tag.column, named)}")
    return position


def _delimiter_hint(header: list[str]) -> str:
    for mark, word in ((";", "semicolons"), ("\t", "tabs"), ("|", "bars")):
        if len(header) <= 2 and any(mark in h for h in header):
            return f" (the file seems to separate its columns with {word}: export it with commas)"
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


def _times(raw: pd.Series, rows: np.ndarray, skip):
    """(times, keep): the time of each row (NaT where unreadable) and the rows kept, whose
    times increase strictly; ``skip`` is told every other row. A row is compared with the
    latest time of the rows kept before it."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # pandas warns when it falls back to parsing cell by cell
        parsed = pd.to_datetime(raw, errors="coerce", format="ISO8601", utc=True)
        if parsed.notna().sum() < 0.5 * raw.notna().sum():  # not ISO 8601: a format pandas infers
            inferred = pd.to_datetime(raw, errors="coerce", utc=True)
            parsed = inferred if inferred.notna().sum() > parsed.notna().sum() else parsed
    times = parsed.dt.tz_convert(None).to_numpy().astype("datetime64[ns]")
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
    skip(unreadable, TIME_UNREADABLE, [f"{shorten(str(t))} is not a date and time (ISO 8601 reads best: "
                                       "2026-03-14 06:00)" for t in text[unreadable]])
    skip(repeated, TIME_REPEATED, [f"the time of row {rows[b]}" for b in latest_row[repeated]])
    skip(backwards, TIME_BACKWARDS, [f"before row {rows[b]}'s {pd.Timestamp(times[b])}"
                                     for b in latest_row[backwards]])
    return times, keep


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


def _check_bad_share(history: History, monitoring: MonitoringFile):
    """Refuse a file with more than MAX_BAD_SHARE of its rows bad, or a tag with no usable value."""
    skipped, name = history.skipped, history.file
    bad = skipped[skipped["reason"] != MISSING]
    bad_rows = bad["row"].nunique()
    if bad_rows > MAX_BAD_SHARE * history.rows:
        column = bad["column"].value_counts().index[0]
        worst = bad[bad["column"] == column]
        reason = worst["reason"].value_counts().index[0]
        first = worst[worst["reason"] == reason].iloc[0]
        hint = " (is the file newest first? sort it oldest first)" if reason == TIME_BACKWARDS else ""
        raise CaseError(
            f"{bad_rows} of {history.rows} data rows ({bad_rows / history.rows:.0%}) are bad, more than the "
            f"{MAX_BAD_SHARE:.0%} accepted: probably a wrong unit in {monitoring.file} or the wrong file. "
            f"Most are in column {column!r}: {reason}, first at row {first['row']}"
            f"{': ' + first['detail'] if first['detail'] else ''}{hint}", file=name)
    for tag in monitoring.tags.values():
        if history.samples.empty or history.samples[tag.name].notna().sum() == 0:
            cells = skipped[skipped["column"] == tag.column]
            first = f"; row {cells['row'].iloc[0]}: {cells['reason'].iloc[0]}" if len(cells) else ""
            raise CaseError(f"column {tag.column!r} (tag {tag.name}) holds no usable value in its "
                            f"{history.rows} rows{first}", file=name)
