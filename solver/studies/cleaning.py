"""The cleaning ranking: each fouled exchanger (or air cooler) cleaned alone, ranked by the fired-heater duty saved,
with the limits each cleaned case violates beside its numbers."""

from __future__ import annotations

import numpy as np
import pandas as pd

from hxtrain.network import fouled_units, without_fouling
from hxtrain.solver.simulation.evaluation import as_case
from hxtrain.solver.simulation.results import simulate, worded_column
from hxtrain.units.protocol import FIRED_HEATERS, Worded

from .compare import try_scenario


def cleaning_ranking(case, fouled=None) -> pd.DataFrame:
    """For each fouled exchanger, what cleaning it alone gains: fired-heater (furnace) duty saved,
    the exchanger's own duty gained and the heater inlet temperatures gained, with the limits
    the cleaned case violates; ranked by the duty saved. A cleaned case with no answer stays in
    the table, last, with its reason. ``fouled``: the case's own result, where already at hand."""
    case = as_case(case)
    fouled = simulate(case) if fouled is None else fouled
    heaters = [k for k in fouled.summary.index if k.endswith("_inlet_c")]
    standing = {(r.unit, r.kind, r.key): str(r.message) for r in fouled.limits.itertuples()}  # limits as it is
    rows = []
    for tag in fouled_units(case):
        clean, reason = try_scenario(f"{tag} clean", lambda tag=tag: without_fouling(case, [tag]))
        row = {"exchanger": tag}
        if clean is None:
            rows.append({**row, "answer": reason})
            continue
        row.update({"fired_duty_saved_kw": fouled.summary[FIRED_HEATERS] - clean.summary[FIRED_HEATERS],
                    "exchanger_duty_gained_kw": clean.units.loc[tag, "duty_kw"] - fouled.units.loc[tag, "duty_kw"]})
        row.update({f"{h.removesuffix('_inlet_c')}_inlet_gain_k": clean.summary[h] - fouled.summary[h] for h in heaters})
        # a limit is new where the fouled train keeps it (the same unit, kind and key), whatever
        # its numbers: a design temperature already passed fouled is standing, not new; a standing
        # one the cleaning moves (a cleaning warms the train downstream) is given in its new words
        limits = list(clean.limits.itertuples())
        row["limits_when_clean"] = len(limits)
        row["new_limits_when_clean"] = _listed(r for r in limits if (r.unit, r.kind, r.key) not in standing)
        row["standing_limits_when_clean"] = _listed(r for r in limits if standing.get((r.unit, r.kind, r.key),
                                                                                      str(r.message)) != str(r.message))
        row["answer"] = "ok"
        rows.append(row)
    table = pd.DataFrame(rows)
    for column in ("new_limits_when_clean", "standing_limits_when_clean"):
        if column in table:
            table[column] = worded_column(r.get(column) for r in rows)
    if table.empty:
        return table
    if "fired_duty_saved_kw" in table:
        table = table.sort_values("fired_duty_saved_kw", ascending=False, na_position="last", kind="stable")
    table = table.reset_index(drop=True)
    table.index = np.arange(1, len(table) + 1)
    return table.rename_axis("rank")


def _listed(limits) -> Worded:
    """Limit rows (unit, message) as one text: "E-105: temperature cross ...; E-107: ..."."""
    return Worded.joined("; ", (Worded.joined(": ", (r.unit, r.message)) for r in limits))
