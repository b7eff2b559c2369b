"""Writing results to CSV, XLSX or JSON, chosen by the file extension, atomically.

Each file is written to a temporary file in the target's folder and renamed over the target
only when every file of the set is complete, so an existing output is never left half-written.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path

import pandas as pd

from hxtrain.network import CaseError

from .results import SimulationResult

FORMATS = (".csv", ".xlsx", ".json")


def _tables(result: SimulationResult) -> dict[str, pd.DataFrame]:
    return {
        "units": result.units,
        "streams": result.streams,
        "findings": result.findings,
        "tears": result.tears,
        "summary": pd.concat([result.summary, result.balance]).rename("value").to_frame(),
    }


def check_output_path(path) -> Path:
    """Reject an output path that cannot be written before any work is done (exit 2)."""
    path = Path(path)
    if path.suffix.lower() not in FORMATS:
        raise CaseError(f"the output file must end in {', '.join(FORMATS)} (the format follows the extension)",
                        file=str(path))
    if not path.parent.exists() or not path.parent.is_dir():
        raise CaseError("the folder for the output file does not exist", file=str(path))
    if path.is_dir():
        raise CaseError("the output path is a directory", file=str(path))
    return path


def _clean(value):
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _records(frame: pd.DataFrame):
    reset = frame.reset_index()
    return [{k: _clean(v) for k, v in row.items()} for row in reset.astype(object).to_dict(orient="records")]


def _write_json(document, handle):
    handle.write(json.dumps(document, indent=2, allow_nan=False, default=str).encode("utf-8"))


def _write_xlsx(tables, notes, handle):
    with pd.ExcelWriter(handle, engine="openpyxl") as writer:
        about = pd.DataFrame({"item": list(notes), "value": [str(v) for v in notes.values()]})
        about.to_excel(writer, sheet_name="about", index=False)
        for name, frame in tables.items():
            frame.to_excel(writer, sheet_name=name[:31])


def write_results(result: SimulationResult, path) -> list[Path]:
    """Write the result tables to ``path`` by its extension; returns the files written."""
    notes = {"title": result.title, "case_file": result.case_file, "caution": result.caution,
             "converged": result.converged, "message": result.message,
             "summary": {k: _clean(float(v)) for k, v in result.summary.items()},
             "balance": {k: _clean(float(v)) for k, v in result.balance.items()}}
    return write_tables(_tables(result), path, notes)


def write_tables(tables: dict, path, notes: dict) -> list[Path]:
    """Write named DataFrames to ``path`` by its extension (.csv: one file per table, the first
    at ``path``; .xlsx: one sheet per table; .json: one document with ``notes`` and the tables).
    Atomic: temporary files renamed over the targets only when all are complete."""
    path = check_output_path(path)
    names = list(tables)
    suffix = path.suffix.lower()
    if suffix == ".csv":
        targets = [path] + [path.with_name(f"{path.stem}_{name}.csv") for name in names[1:]]
        writers = [lambda h, f=frame: h.write(f.to_csv().encode("utf-8")) for frame in tables.values()]
    elif suffix == ".json":
        targets = [path]
        document = dict(notes)  # the notes' own summary (a mapping) wins over a table of that name
        for name, frame in tables.items():
            document.setdefault(name, _records(frame))
        writers = [lambda h: _write_json(document, h)]
    else:
        targets = [path]
        writers = [lambda h: _write_xlsx(tables, notes, h)]
    temporaries = []
    try:
        _write_all(targets, writers, temporaries)
    except OSError as exc:
        raise CaseError(f"the output cannot be written ({exc.strerror or exc}); no file was left half-written",
                        file=str(path)) from None
    finally:
        for temporary in temporaries:
            if temporary.exists():
                temporary.unlink()
    return targets


def _write_all(targets, writers, temporaries):
    """Write every file to a temporary name, then rename them all over their targets."""
    for target, write in zip(targets, writers):
        fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
        temporaries.append(Path(name))
        with os.fdopen(fd, "wb") as handle:
            write(handle)
            handle.flush()
            os.fsync(handle.fileno())
    for temporary, target in zip(temporaries, targets):
        os.replace(temporary, target)
