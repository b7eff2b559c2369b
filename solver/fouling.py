"""The case as fouled and as clean, side by side: what fouling costs per exchanger and at the
furnace."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from hxtrain.network import Case, load_case, without_fouling

from .results import SimulationResult, simulate


@dataclass
class FoulingComparison:
    fouled: SimulationResult
    clean: SimulationResult
    exchangers: pd.DataFrame
    """Per exchanger: duty and U fouled and clean, the duty lost to fouling."""
    totals: pd.Series
    """Heat recovered, heater (furnace) and cooler duties fouled and clean; heater inlet temperatures."""


def compare_clean_and_fouled(case) -> FoulingComparison:
    """Simulate ``case`` as it is (fouled) and with every fouling resistance at zero (clean)."""
    if not isinstance(case, Case):
        case = load_case(Path(case))
    fouled = simulate(case)
    clean = simulate(without_fouling(case))
    f = fouled.units[fouled.units["type"] == "exchanger"]
    c = clean.units.loc[f.index]
    table = pd.DataFrame({"duty_fouled_kw": f["duty_kw"], "duty_clean_kw": c["duty_kw"]})
    table["duty_lost_kw"] = table["duty_clean_kw"] - table["duty_fouled_kw"]
    for column in ("u_service_w_m2k", "u_clean_w_m2k"):
        if column in f:
            table[column] = f[column]
    table = table.rename_axis("exchanger")
    totals = {}
    for key in fouled.summary.index:
        if key.endswith("_kw") or key.endswith("_inlet_c"):
            totals[f"{key}_fouled"] = fouled.summary[key]
            totals[f"{key}_clean"] = clean.summary[key]
    totals["heater_duty_penalty_kw"] = fouled.summary["heater_duty_kw"] - clean.summary["heater_duty_kw"]
    return FoulingComparison(fouled, clean, table, pd.Series(totals))


def comparison_text(comparison: FoulingComparison) -> str:
    t = comparison.totals
    lines = ["", "Fouled against clean (every fouling resistance set to zero)",
             "-----------------------------------------------------------",
             comparison.exchangers.to_string(float_format=lambda v: f"{v:,.1f}", na_rep=""),
             f"  heater (furnace) duty: fouled {t['heater_duty_kw_fouled']:,.1f} kW, clean {t['heater_duty_kw_clean']:,.1f} kW;"
             f" fouling costs {t['heater_duty_penalty_kw']:,.1f} kW"]
    for key in t.index:
        if key.endswith("_inlet_c_fouled"):
            name = key.removesuffix("_inlet_c_fouled")
            lines.append(f"  {name} inlet temperature: fouled {t[key]:.2f} °C, clean {t[name + '_inlet_c_clean']:.2f} °C")
    return "\n".join(lines)
