"""What fouling costs, window by window: the network simulated at each window's conditions as
fouled (the back-calculated fouling) and as clean, the fired duty between the two, and with the
monitoring file's economics the fuel, money and CO₂ it stands for.

Each window becomes a scenario through the units' own ``settings_from_states``: the supplies'
flows and temperatures, the heaters' and coolers' settings, the splitters' shares and the
exchangers' fouling, all from the reconciled states. Fouled and clean scenarios of every window
are one batch (:func:`hxtrain.solver.simulation.batch.simulate_batch`). A setting the plant data
do not determine in any window (an unmeasured cooler outlet, say) keeps the case's value; where
it is determined in some windows only, the others have no cost, with the reason.

Fuel = fired duty / furnace efficiency; CO₂ = fuel energy × emission factor (see
:data:`hxtrain.network.monitoring_file` for the factors' defaults and sources).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.units.protocol import FIRED_HEATERS

from .plant_state import WindowStates, unit_states

__all__ = ["window_settings", "fouling_cost"]

SECONDS_PER_DAY = 86_400.0
FOULING = "fouling_resistance"


def window_settings(states: WindowStates):
    """(values, fouling keys, undetermined): key path -> one value per window that reproduces each
    window's reconciled state, the key paths of fouling resistances among them, and per window
    the first key path the data leave undetermined ("" where none)."""
    net = states.balances.net
    values, fouling = {}, []
    undetermined = np.full(states.values.shape[0], "", dtype=object)
    for name, unit in net.units.items():
        own = [states.balances.column(("unknown", name, k)) for k in unit.balance_unknowns()]
        unknowns = states.values[:, own] if own else np.empty((states.values.shape[0], 0))
        kinds = {p.name: p.quantity for p in unit.parameters()}
        for parameter, array in unit.settings_from_states(unit_states(states, name), unknowns).items():
            array = np.asarray(array, dtype=float)
            missing = ~np.isfinite(array)
            if missing.all() and kinds.get(parameter) != FOULING:
                continue  # the data never determine it: the case's value stands (a fouling's never does: what it
                # costs would be left out of the penalty unsaid)
            path = ".".join(net.case.keys[name]) + "." + parameter
            undetermined[missing & (undetermined == "")] = path
            values[path] = array
            if kinds.get(parameter) == FOULING:
                fouling.append(path)
    return values, fouling, undetermined


def fouling_cost(case, states: WindowStates, index, window_days, economics=None, not_costed=None) -> pd.DataFrame:
    """Per window: fired duty as fouled and as clean (kW), the penalty, the largest difference
    between the simulated fouled temperatures and the reconciled ones (model against plant), and
    with ``economics`` fuel (GJ/day), cost (per day and cumulative) and CO₂ (t/day and
    cumulative). ``window_days`` is each window's length in days; ``not_costed``: window time ->
    why that window's fouling is not to be costed (an excursion, :mod:`.excursions`)."""
    values, fouling, undetermined = window_settings(states)
    windows = states.values.shape[0]
    clean = {k: (np.zeros(windows) if k in fouling else v) for k, v in values.items()}
    both = {k: np.concatenate([np.nan_to_num(values[k], nan=-1.0), np.nan_to_num(clean[k], nan=-1.0)]) for k in values}
    result = simulate_batch(case, both)
    table = result.table
    fouled_rows, clean_rows = table.iloc[:windows], table.iloc[windows:]
    answered = (fouled_rows["success"].to_numpy() & clean_rows["success"].to_numpy() & states.success
                & (undetermined == ""))
    reason = np.where(states.success, "", "no reconciled data in this window")
    reason = np.where((reason == "") & (undetermined != ""),
                      [f"{u} is not determined by the plant data" for u in undetermined], reason)
    if not_costed is not None and len(not_costed):
        set_aside = not_costed.reindex(index).fillna("").to_numpy(object)
        answered &= set_aside == ""
        reason = np.where((reason == "") & (set_aside != ""), set_aside, reason)
    failed = ~fouled_rows["success"].to_numpy() | ~clean_rows["success"].to_numpy()
    messages = np.where(fouled_rows["success"], clean_rows["message"], fouled_rows["message"])
    reason = np.where((reason == "") & failed, messages, reason)
    fired_fouled = np.where(answered, fouled_rows[FIRED_HEATERS].to_numpy(), np.nan)
    fired_clean = np.where(answered, clean_rows[FIRED_HEATERS].to_numpy(), np.nan)
    out = pd.DataFrame({"fired_duty_fouled_kw": fired_fouled, "fired_duty_clean_kw": fired_clean,
                        "fouling_penalty_kw": fired_fouled - fired_clean,
                        "model_mismatch_k": _mismatch(states, result.temperature[:windows]),
                        "answer": np.where(answered, "ok", reason)}, index=index)
    if economics:
        fuel = out["fouling_penalty_kw"].to_numpy() * SECONDS_PER_DAY / 1e6 / economics["furnace_efficiency"]
        days = np.asarray(window_days, dtype=float)
        out["fuel_gj_per_day"] = fuel
        out["cost_per_day"] = fuel * economics["fuel_price"]
        out["co2_t_per_day"] = fuel * economics["co2_per_fuel"] / 1000.0
        if economics.get("co2_price"):
            out["cost_per_day"] += out["co2_t_per_day"] * economics["co2_price"]
        out["cost_cumulative"] = np.nancumsum(out["cost_per_day"].to_numpy() * days)
        out["co2_t_cumulative"] = np.nancumsum(out["co2_t_per_day"].to_numpy() * days)
    return out


def _mismatch(states: WindowStates, simulated) -> np.ndarray:
    """Largest |simulated - reconciled| over the segment temperatures the data determine (K)."""
    balances = states.balances
    columns = balances.slot_column[:balances.segments]
    reconciled = states.values[:, columns]
    difference = np.abs(simulated - reconciled)
    with np.errstate(invalid="ignore"):
        return np.where(np.isfinite(difference).any(axis=1), np.nanmax(np.where(np.isfinite(difference), difference, -np.inf),
                                                                        axis=1), np.nan)

