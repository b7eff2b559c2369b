"""Writing result tables to CSV, XLSX or JSON, chosen by the file extension, atomically.

* Every file of a set is written to a temporary file in the target's folder and renamed over its
  target only when every file of the set is complete, so an existing output is never left
  half-written; an error or an interrupt removes the temporary files. Workbooks are built in
  memory and written in one piece, so a failed write leaves no half-closed archive behind.
* A new file gets the mode an ordinary tool gives it (0666 less the umask); a file replaced
  keeps its mode.
* CSV: one file per table, the first at PATH, the others ``PATH_<table>.csv`` beside it, and the
  list of the set's files with their SHA-256 (``sha256sum`` format) in the hidden file
  ``.PATH.sha256``. Writing PATH again removes those companions of the earlier set that are not
  part of the new one, but only files that list names and whose content is still what hxtrain
  wrote; any other file is left alone (and named when it looks like a companion).
* An output file that is an input of the run (the case, the study, its base case) is refused.
* Tables are written for readers without Python: counts as whole numbers, each quantity once,
  sheet names unique within Excel's rules, the "about" sheet as rows of words and values.
"""

from __future__ import annotations

import datetime
import hashlib
import json
import math
import os
import re
import stat
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from hxtrain.network import CaseError

from hxtrain.solver import package_version
from hxtrain.solver.simulation.results import SimulationResult

from .display_units import Display, current, difference_columns
from .spreadsheet import RESERVED_SHEETS, SHEET_NAME_LIMIT, about_table, workbook_bytes, words  # noqa: F401

FORMATS = (".csv", ".xlsx", ".json")
RUN_TABLES = ("units", "streams", "findings", "tears", "summary")
"""The tables of one run, in file order (with .csv: PATH, then PATH_streams.csv, ...)."""
COUNTS = ("limit_violations", "warnings", "iterations", "evaluations")
"""Quantities that are counts: written as whole numbers in every format."""
UNSAFE_CHARACTERS = re.compile(r'[\[\]:*?/\\<>"|\x00-\x1f]')
"""Characters Excel forbids in sheet names and file systems in file names."""


@dataclass
class WrittenSet:
    """The files written and, for CSV, what became of the earlier set's other companions."""

    files: list
    removed: list = field(default_factory=list)
    """Companions of the earlier set, written by hxtrain and unchanged since, that were removed."""
    kept: list = field(default_factory=list)
    """Companions of the earlier set left in place because they changed since hxtrain wrote them."""

    def describe(self) -> str:
        lines = [f"wrote {', '.join(str(p) for p in self.files)}"]
        if self.removed:
            lines.append(f"removed {', '.join(str(p) for p in self.removed)} (left from an earlier set written there)")
        if self.kept:
            lines.append(f"left {', '.join(str(p) for p in self.kept)} in place: part of an earlier set, changed "
                         "since hxtrain wrote it, not part of this one")
        return "\n".join(lines)


# ----------------------------------------------------------------------------- names and checks


def unique_names(names, limit=None, reserved=()) -> list[str]:
    """``names`` made safe for sheets and files (unsafe characters to '_'), cut to ``limit``
    characters and unique ignoring case (as Excel and some file systems compare them): a name
    already taken gets a counter, ``~2``, ``~3``, ... within the limit."""
    taken = {name.casefold() for name in reserved}
    result = []
    for name in names:
        safe = UNSAFE_CHARACTERS.sub("_", str(name)).strip("'") or "table"
        candidate, counter = safe[:limit], 1
        while candidate.casefold() in taken:
            counter += 1
            tail = f"~{counter}"
            candidate = safe[:limit - len(tail) if limit else None] + tail
        taken.add(candidate.casefold())
        result.append(candidate)
    return result


def output_files(path: Path, names) -> list[Path]:
    """The files a set of tables named ``names`` is written to at ``path``."""
    if path.suffix.lower() != ".csv":
        return [path]
    return [path] + [path.with_name(f"{path.stem}_{name}.csv") for name in unique_names(list(names)[1:])]


def check_output_path(path, inputs=None, tables=None, formats=FORMATS) -> Path:
    """Reject an output path that cannot be written before any work is done (exit 2).

    ``inputs``: role -> path of the run's input files (``{"case file": ...}``); with ``tables``
    (the names of the tables to be written) every file of the set is checked against them.
    ``formats``: the extensions allowed."""
    path = Path(path)
    if path.suffix.lower() not in formats:
        raise CaseError(f"the output file must end in {', '.join(formats)} (the format follows the extension)",
                        file=str(path))
    if not path.parent.exists() or not path.parent.is_dir():
        raise CaseError("the folder for the output file does not exist", file=str(path))
    if path.is_dir():
        raise CaseError("the output path is a directory", file=str(path))
    for target in output_files(path, tables or [None]):
        for role, source in (inputs or {}).items():
            if source is not None and _same_file(target, Path(source)):
                where = "" if target == path else f" (its companion file {target})"
                raise CaseError(f"the output{where} would replace an input of this run, the {role} {source}; "
                                "choose another output name", file=str(path))
    return path


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except (OSError, RuntimeError):
        return False


# ----------------------------------------------------------------------------- table contents


def _whole(value) -> bool:
    return isinstance(value, (int, float, np.integer, np.floating)) and math.isfinite(value) and float(value).is_integer()


def with_whole_counts(frame: pd.DataFrame) -> pd.DataFrame:
    """Count columns (and the rows of a table listing quantities) as whole numbers."""
    frame = frame.copy()
    for column in frame.columns.intersection(COUNTS):
        values = frame[column]
        if pd.api.types.is_numeric_dtype(values) and values.dropna().map(_whole).all():
            frame[column] = values.astype("Int64")
    rows = [row for row in COUNTS if row in frame.index]
    if rows:
        frame = frame.astype(object)
        for row in rows:
            frame.loc[row] = [int(v) if _whole(v) else v for v in frame.loc[row]]
    return frame


def _text(value) -> str:
    """A value inside a cell as plain text: lists as 'a, b', mappings as 'key: value; ...'."""
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_text(v)}" for k, v in value.items())
    if isinstance(value, (list, tuple)):
        return ", ".join(_text(v) for v in value)
    return "" if value is None else str(value)


def _readable(frame: pd.DataFrame) -> pd.DataFrame:
    """For CSV and XLSX: rows numbered from 1 under 'row' where the table has no row names of
    its own; lists and mappings inside cells as text."""
    frame = with_whole_counts(frame)
    if isinstance(frame.index, pd.RangeIndex) and frame.index.name is None:
        frame = frame.set_axis(pd.RangeIndex(1, len(frame) + 1, name="row"))
    for column in frame.columns[frame.dtypes == object]:
        if frame[column].map(lambda v: isinstance(v, (dict, list, tuple))).any():
            frame[column] = frame[column].map(lambda v: _text(v) if isinstance(v, (dict, list, tuple)) else v)
    return frame


def _plain(value, name=""):
    """A value as JSON and the about sheet want it: Python numbers (counts whole), no NaN."""
    if isinstance(value, dict):
        return {k: _plain(v, k) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if value is pd.NA or value is pd.NaT or (isinstance(value, float) and not math.isfinite(value)):
        return None
    if name in COUNTS and _whole(value):
        return int(value)
    return value


def _records(frame: pd.DataFrame) -> list[dict]:
    frame = with_whole_counts(frame)
    keep_index = not (isinstance(frame.index, pd.RangeIndex) and frame.index.name is None)
    rows = (frame.reset_index() if keep_index else frame).astype(object).to_dict(orient="records")
    return [{k: _plain(v, k) for k, v in row.items()} for row in rows]


def summary_values(result: SimulationResult) -> dict:
    """The run's summary without the quantities its energy balance holds (each appears once)."""
    return _plain({k: v for k, v in result.summary.items() if k not in result.balance.index})


def summary_table(result: SimulationResult) -> pd.DataFrame:
    """Summary and energy balance as one column of values, one row per quantity."""
    values = {**summary_values(result), **_plain(result.balance.to_dict())}
    return pd.DataFrame({"value": pd.Series(values, dtype=object)}).rename_axis("quantity")


# ----------------------------------------------------------------------------- the formats


def _json_bytes(tables, notes) -> bytes:
    document = _plain(dict(notes))  # a note (the run's summary mapping) wins over a table of that name
    for name, frame in tables.items():
        document.setdefault(name, _records(frame))
    return json.dumps(document, indent=2, allow_nan=False, default=str).encode("utf-8")


def _csv_bytes(frame) -> bytes:
    return _readable(frame).to_csv().encode("utf-8")


def _stamped(notes: dict) -> dict:
    """The notes with the date written and the hxtrain version after the title and input file."""
    front = {k: notes[k] for k in ("title", "study", "case_file") if k in notes}
    now = datetime.datetime.now().astimezone().isoformat(sep=" ", timespec="seconds")
    return {**front, "written": now, "hxtrain_version": package_version(), **notes}


def write_results(result: SimulationResult, path, inputs=None, extra=None, display: Display | None = None) -> WrittenSet:
    """Write the result tables, and the named ``extra`` tables after them (a fouling
    comparison), to ``path`` by its extension, in ``display``'s units (default: the command's
    choice, with the case's ``settings.display_units``)."""
    display = (display or current()).for_result(result)
    notes = {"title": result.title, "case_file": result.case_file, "caution": result.caution,
             "converged": result.converged, "message": result.message,
             "summary": shown_mapping(summary_values(result), display),
             "balance": shown_mapping(_plain(result.balance.to_dict()), display)}
    tables = dict(zip(RUN_TABLES, (result.units, result.streams, result.findings, result.tears,
                                   summary_table(result))))
    tables.update(extra or {})
    return write_tables(tables, path, notes, inputs, display, converted_notes=True)


def shown_mapping(values: dict, display: Display) -> dict:
    """A mapping of quantities (``heat_recovered_kw``: value) in the shown units, keys renamed."""
    shown = {}
    for name, value in values.items():
        column = display.column(name)
        if column is None or not isinstance(value, (int, float)) or isinstance(value, bool):
            shown[name] = value
        else:
            shown[column.name] = float(column.convert([value])[0])
    return shown


def units_note(display: Display) -> dict:
    """For JSON: the units' system and, per quantity, the unit and the ending of its keys."""
    from .display_units import DISPLAY_TABLE

    note = {"system": display.system}
    for row in DISPLAY_TABLE:
        column = display.column(f"x{row.ending}")
        note[row.quantity] = {"unit": column.label, "key_ending": column.name[1:]}
    return note


def write_tables(tables: dict, path, notes: dict, inputs=None, display: Display | None = None,
                 converted_notes=False) -> WrittenSet:
    """Write named DataFrames to ``path`` by its extension (.csv: one file per table, the first
    at ``path``; .xlsx: an "about" sheet with ``notes``, then one sheet per table; .json: one
    document with ``notes`` and the tables). Atomic: temporary files renamed over the targets
    only when all are complete. ``inputs`` (role -> path) may not be among the files written.
    Values are written in ``display``'s units (default: the command's choice), each converted
    column renamed with its unit's ending."""
    path = check_output_path(path, inputs, list(tables))
    targets = output_files(path, tables)
    display = display or current()
    tables = {name: display.frame(frame, difference_columns(frame)) for name, frame in tables.items()}
    if not converted_notes:
        notes = {k: shown_mapping(v, display) if isinstance(v, dict) else v for k, v in notes.items()}
    notes = _stamped(notes)
    suffix = path.suffix.lower()
    if suffix == ".csv":
        contents = [lambda f=frame: _csv_bytes(f) for frame in tables.values()]
    elif suffix == ".json":
        contents = [lambda: _json_bytes(tables, {**notes, "display_units": units_note(display)})]
    else:
        sheets = unique_names(tables, SHEET_NAME_LIMIT, RESERVED_SHEETS)
        contents = [lambda: workbook_bytes(tables, notes, display, sheets, _readable, _plain)]
    return write_atomically(path, targets, contents)


def write_atomically(path: Path, targets: list, contents: list) -> WrittenSet:
    """Write each of ``contents`` (callables giving bytes) to its target, all or none: temporary
    files renamed over the targets only when all are complete, removed on any error."""
    temporaries = []
    try:
        return _write_set(path, targets, contents, temporaries)
    except OSError as exc:
        failed = f"{exc.filename}: " if exc.filename and str(exc.filename) != str(path) else ""
        raise CaseError(f"the output cannot be written ({failed}{exc.strerror or exc}); no file was left "
                        "half-written and the files there before are as they were", file=str(path)) from None
    finally:
        for temporary in temporaries:
            temporary.unlink(missing_ok=True)


# ----------------------------------------------------------------------------- writing the files


def _new_file_mode() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def _write_set(path, targets, contents, temporaries) -> WrittenSet:
    """Write every file to a temporary name, then rename them all over their targets; for CSV,
    then remove the earlier set's stale companions and rename the new list of the set into place."""
    new_mode = _new_file_mode()
    digests = {}
    for target, content in zip(targets, contents):
        data = content()
        _write_temporary(target, data, new_mode, temporaries)
        digests[target.name] = hashlib.sha256(data).hexdigest()
    listing = _listing_path(path) if path.suffix.lower() == ".csv" else None
    if listing is not None:
        previous = _read_listing(listing, path)
        text = "".join(f"{digest}  {name}\n" for name, digest in digests.items())
        _write_temporary(listing, text.encode("utf-8"), new_mode, temporaries)
    _replace_all(list(zip(temporaries, targets)))
    written = WrittenSet(list(targets))
    if listing is not None:
        for name, digest in previous.items():
            if name not in digests:
                _remove_if_unchanged(path.parent / name, digest, written)
        os.replace(temporaries[-1], listing)
    return written


def _replace_all(pairs):
    """Rename each (temporary, target) over its target, all or none: each file already there is
    first moved aside, and where one rename fails (a file that may not be replaced) the targets
    done so far get their earlier files back, or are removed where there was none."""
    done = []  # (target, the earlier file moved aside, or None)
    try:
        for temporary, target in pairs:
            aside = None
            if os.path.lexists(target):
                aside = target.with_name(f".{target.name}.{os.getpid()}.earlier")
                os.replace(target, aside)
            done.append((target, aside))
            os.replace(temporary, target)
    except OSError:
        for target, aside in reversed(done):
            if aside is not None:
                os.replace(aside, target)
            elif os.path.lexists(target):
                target.unlink()
        raise
    for _, aside in done:
        if aside is not None:
            aside.unlink(missing_ok=True)


def _write_temporary(target: Path, data: bytes, new_mode: int, temporaries: list):
    """Write ``data`` to a new temporary file beside ``target`` (listed in ``temporaries`` before
    anything can fail) with the mode ``target`` will have."""
    fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    temporary = Path(name)
    temporaries.append(temporary)
    with os.fdopen(fd, "wb") as handle:
        handle.write(data)
        handle.flush()
        os.fsync(handle.fileno())
    try:
        mode = stat.S_IMODE(target.stat().st_mode)
    except OSError:  # no file there yet
        mode = new_mode
    os.chmod(temporary, mode)


def _listing_path(path: Path) -> Path:
    return path.with_name(f".{path.name}.sha256")


def _read_listing(listing: Path, path: Path) -> dict:
    """The companions an earlier write of ``path`` listed: name -> SHA-256. Only names of the
    form ``STEM_*.csv`` in the same folder count; a missing or unreadable list lists nothing."""
    companion = re.compile(re.escape(path.stem) + r"_[^/\\]+\.csv")
    try:
        lines = listing.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError):
        return {}
    entries = (line.split("  ", 1) for line in lines)
    return {name: digest for digest, name in (e for e in entries if len(e) == 2) if companion.fullmatch(name)}


def _remove_if_unchanged(file: Path, digest: str, written: WrittenSet):
    if file.is_symlink() or not file.is_file():
        return
    if hashlib.sha256(file.read_bytes()).hexdigest() == digest:
        file.unlink()
        written.removed.append(file)
    else:
        written.kept.append(file)
