"""A worker process's part of a batch, sent back through shared memory.

Most of a part's result is floats: the temperature of every segment and the table's numeric
columns, about 480 bytes a scenario on the crude demo. Sent back through the process pool's pipe
(pickled, then read in chunks) 50,000 scenarios of them took ~145 ms on the 2-core VM, as long
as solving them in the crude demo's fixed-property form, so a second process could not pay for
such a batch. Here the parent process makes one shared-memory block per part, sized after
the case's earlier results (:func:`reserve`); the worker writes its floats into it (:func:`solve_into`) and
sends only the rest of its table through the pipe; the parent copies the floats out and frees
the block (:func:`collect`; the blocks are freed when :func:`reserve`'s block ends).

A part whose table does not have the columns or rows the block was sized for (the block is sized
after the same case's earlier batch, whose columns a part's have unless the case differs) is sent
back whole, through the pipe: slower, never read from the wrong place.
"""

from __future__ import annotations

from contextlib import contextmanager
from dataclasses import dataclass
from multiprocessing.shared_memory import SharedMemory

import numpy as np
import pandas as pd


@dataclass(frozen=True)
class SharedPart:
    """Where a worker writes its part: the shared block's ``name``, the part's ``rows``
    (scenarios), the ``segments`` of its temperatures and the table's float ``columns``."""

    name: str
    rows: int
    segments: int
    columns: tuple

    @property
    def width(self) -> int:
        return self.segments + len(self.columns)

    def view(self, block: SharedMemory) -> np.ndarray:
        return np.ndarray((self.rows, self.width), dtype=float, buffer=block.buf)


@dataclass
class _Rest:
    """What goes through the pipe besides the shared block: the table's other columns, the
    order of all columns, and the rest of the result."""

    table: object
    order: list
    fields: dict


def float_columns(table) -> tuple:
    """The table's columns of floats: those that go through the shared block."""
    return tuple(c for c in table.columns if table[c].dtype == np.float64)


@contextmanager
def reserve(rows_by_part, segments, columns):
    """One shared block per part (``rows_by_part``: scenarios in each) for ``segments``
    temperatures and the float ``columns``; yields (blocks, parts) and frees the blocks after."""
    blocks, parts = [], []
    try:
        for rows in rows_by_part:
            block = SharedMemory(create=True, size=max(8, int(rows) * (segments + len(columns)) * 8))
            blocks.append(block)
            parts.append(SharedPart(block.name, int(rows), int(segments), tuple(columns)))
        yield blocks, parts
    finally:
        for block in blocks:
            block.close()
            block.unlink()


def solve_into(part: SharedPart, result):
    """In the worker: write ``result`` (a batch result of ``part.rows`` scenarios) into the
    shared block and return what goes through the pipe; the whole result where its shape is
    not the one the block was sized for."""
    table = result.table
    if (len(table) != part.rows or result.temperature.shape != (part.rows, part.segments)
            or float_columns(table) != part.columns):
        return result
    block = SharedMemory(name=part.name)
    try:
        view = part.view(block)
        view[:, :part.segments] = result.temperature
        if part.columns:
            view[:, part.segments:] = table[list(part.columns)].to_numpy(dtype=float)
        del view  # the block's buffer cannot close while an array looks at it
    finally:
        block.close()
    fields = {k: v for k, v in vars(result).items() if k not in ("table", "temperature")}
    return _Rest(table.drop(columns=list(part.columns)), list(table.columns), fields)


def collect(block: SharedMemory, part: SharedPart, sent, result_type):
    """In the parent: the worker's result rebuilt from its block and what it ``sent``
    (:func:`solve_into`); the floats are copied out, so the block may be freed after."""
    if not isinstance(sent, _Rest):
        return sent
    values = part.view(block).copy()
    floats = pd.DataFrame(values[:, part.segments:], columns=list(part.columns), index=sent.table.index)
    table = pd.concat([sent.table, floats], axis=1)[sent.order]
    return result_type(table=table, temperature=values[:, :part.segments], **sent.fields)
