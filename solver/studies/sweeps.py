"""Sweeps: a study's case over a grid of one or two key paths, one row per point, every point a
scenario of one batch where the paths can vary within a batch, else a batch of one per point;
the same table either way."""

from __future__ import annotations

import itertools
import sys

import numpy as np
import pandas as pd

from hxtrain.network import CaseError
from hxtrain.network.batch import check_values, is_batchable
from hxtrain.network.changes import WHOLE_NUMBER, key_kind
from hxtrain.network.study import Study, check_point_count
from hxtrain.solver.simulation.batch import simulate_batch

from .specifications import adjust_changes


def _progress(iterable, total, label):
    """A progress bar on a terminal (tqdm), nothing otherwise."""
    if not sys.stderr.isatty():
        return iterable
    from tqdm import tqdm

    return tqdm(iterable, total=total, desc=label, leave=False)


def run_sweep(study: Study, sweep) -> pd.DataFrame:
    """Simulate every point of a one- or two-dimensional grid: one row per point, the swept
    values first, then the columns of :func:`hxtrain.solver.simulation.batch.scenario_table`.

    When every swept key path can vary within a batch (see :mod:`hxtrain.network.batch`), all
    points are one batch; otherwise each point is a batch of one scenario of its own changed
    case. Either way a point that asks for the impossible or does not converge gets a row that
    is not a success, with its reason, instead of stopping the sweep; values the case reader
    refuses (a negative flow, 1.5 shells) are errors naming the study file and the point.
    """
    paths = list(sweep.grid)
    grid_key = sweep.key + ("grid",)
    check_point_count(study, grid_key, sweep.grid)
    bases = {p: study.base_value(p, grid_key + (p,)) for p in paths} if sweep.scale else {}
    points = list(itertools.product(*(sweep.grid[p] for p in paths)))
    grid = np.asarray(points, dtype=float).reshape(len(points), len(paths))
    if len(points) > 1 and all(is_batchable(p) for p in paths):
        table = _one_batch(study, sweep, paths, bases, grid)
    else:
        table = pd.concat([_one_point(study, sweep, paths, bases, point) for point in
                           _progress(points, len(points), sweep.name)], ignore_index=True)
    for k, p in enumerate(paths):
        table[p] = grid[:, k].astype(int) if np.all(grid[:, k] == np.round(grid[:, k])) and _whole(p) else grid[:, k]
    return table[paths + [c for c in table.columns if c not in paths]]


def grid_columns_with_units(sweep, table) -> dict:
    """{swept key path: the same with its unit's column ending} for the swept values of a
    sweep's table that are in the key's own unit (not factors of the base: ``scale``), so that
    a report shows them with their unit, converted like any result column."""
    from hxtrain.solver.reporting.display_units import ending_of_key

    if sweep.scale:
        return {}
    return {p: f"{p}{ending}" for p in sweep.grid if p in table and (ending := ending_of_key(p))}


def _whole(path: str) -> bool:
    """The key counts things (shells, tubes): its grid values are shown as whole numbers."""
    return key_kind(path) is WHOLE_NUMBER


def _one_batch(study: Study, sweep, paths, bases, grid) -> pd.DataFrame:
    values = {p: grid[:, k] * bases.get(p, 1.0) for k, p in enumerate(paths)}
    try:
        check_values(study.base, values)
    except CaseError as exc:
        raise study.error(sweep.key + ("grid",), f"a grid point is not valid: {exc.describe()}") from None
    return simulate_batch(study.case(), values).table.drop(columns=paths)


def _one_point(study: Study, sweep, paths, bases, point) -> pd.DataFrame:
    """One grid point as a batch of one scenario of its changed case."""
    grid_key = sweep.key + ("grid",)
    values = {p: (v * bases[p] if sweep.scale else v) for p, v in zip(paths, point)}
    at = "the point " + ", ".join(f"{p} = {v:g}" for p, v in values.items())
    changes = [c for p, v in values.items() for c in adjust_changes(study, p, v, grid_key + (p,))]
    case = study.case((), sweep.key, changes, grid_key, context=f"at {at}")
    table = simulate_batch(case, {}).table
    table["message"] = [f"at {at}: {m}" if m else m for m in table["message"]]
    return table
