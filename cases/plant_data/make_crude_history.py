"""Regenerate the invented year of historian data of the crude demo, with hxtrain itself.

Run from the repository root:

    python cases/plant_data/make_crude_history.py [FOLDER]

It writes, beside this script (or into FOLDER), ``crude_monitoring.yaml`` (the monitoring file), ``crude_history.csv``
(daily averages for 2026, one column per tag) and ``crude_history_truth.csv`` (the fouling laws
that made the data). Seeded and deterministic; it takes about 5 s on one core (the year is
solved as one batch of 365 scenarios, a few times over: see "Threshold laws" below).

Everything here is invented: the site, the tags, the operation and the fouling.

The year (days counted from 2026-01-01, one row a day at midnight)
------------------------------------------------------------------
- Crude throughput 342 t/h with a slow wander of about 1 %, and a two-week cut to 75 % from
  2026-05-11 to 2026-05-24 (two-day ramps either side); the products and pumparounds follow the
  crude. Crude from the tanks 24-36 °C with the seasons; other supplies wander about 1 K;
  the branch split 50/50 +- 2 %; the furnace outlet held at 365 °C.
- Fouling (total resistance on the outside-area basis, set on the shell side with none on the
  tube side, as it is back-calculated; m²K/W, time in days since 2026-01-01):

  ========  =============  ===================================================================
  E-101     linear         r_f0 2.0e-4, rate 0.8e-6 per day
  E-102     asymptotic     r_f0 1.5e-4, r_inf 4.0e-4, tau 120 days
  E-103     linear         r_f0 3.0e-4, rate 1.2e-6
  E-104     asymptotic     r_f0 4.0e-4, r_inf 9.0e-4, tau 150
  E-105     linear         r_f0 2.5e-4, rate 1.0e-6
  E-106     asymptotic     r_f0 2.0e-4, r_inf 6.0e-4, tau 90
  E-107     linear         r_f0 3.0e-4, rate 1.5e-6
  E-108     asymptotic     r_f0 5.0e-4, r_inf 1.0e-3, tau 100; CLEANED on 2026-07-02 (day 182):
                           back to 5.0e-5, then the same law from there (logged in the file)
  E-109     asymptotic     r_f0 3.0e-4, r_inf 7.0e-4, tau 200
  E-110     linear         r_f0 4.0e-4, rate 2.0e-6
  E-111     Polley         r_f0 3.0e-4, alpha 8.8e4 per day, E 68 kJ/mol, gamma 3.1e-10 per day
  E-112     Ebert-Panchal  r_f0 5.0e-4, alpha 1.8e4 per day, beta -0.66, E 68 kJ/mol,
                           gamma 3.4e-7 per day per Pa
  ========  =============  ===================================================================

  Threshold laws: the crude (tube) side's conditions each day — Re, Pr, film and wall
  temperatures, wall shear — are those the network sets that day
  (:func:`hxtrain.solver.monitoring.fouling_fits.fouling_side_conditions`), and the fouling grows
  over each day at that day's rate (explicit Euler, one-day steps): the year is marched by
  hxtrain's own projection (:func:`hxtrain.solver.monitoring.projection.project_network`) with
  the day's operation as a schedule. Alpha and gamma were chosen so that on 1 January
  deposition is about 2.5e-6 (E-111) and 3e-6 (E-112) per day and removal 1e-6: the throughput
  cut (slower, hotter crude) speeds both up.

The instruments
---------------
- Standard deviations of the daily averages: temperatures 0.5 K (RTDs), 1.0 K for the
  thermocouples on streams above 250 °C; flows 1.5 % of reading; the fired duty 3 %.
- TI-206 (E-106 crude outlet) drifts from 2026-05-01 to 2026-10-27 down to -4 K, then stays
  there (a thermocouple fault).
- Unmeasured: the diesel out of E-103 and the bottom pumparound out of E-109 (so redundancy
  varies from exchanger to exchanger); the pre-flash drum has a thermocouple on each side (TI-212
  at E-112's crude outlet, its inlet, and the furnace's own TI-401 on the topped crude), and the
  desalter's wash water is metered (FI-109, TI-109) with the desalted crude's temperature (TI-213).
- Gaps: a historian outage leaves 2026-03-17 to 2026-03-19 empty, the row of 2026-09-08 is
  missing, and six cells hold text the historian wrote instead of a number.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

from hxtrain.network import load_case
from hxtrain.network.monitoring_file import load_monitoring
from hxtrain.solver import demo_case_path
from hxtrain.solver.monitoring.projection import FoulingLaw, project_network
from hxtrain.units.fouling_models import MODELS

HERE = Path(__file__).resolve().parent
SEED = 20260101
DAYS = 365
START = pd.Timestamp("2026-01-01")
CUT = (130, 143)            # 2026-05-11 .. 2026-05-24 at 75 %
CLEANED, CLEANED_DAY, AFTER_CLEANING = "E-108", 182, 5.0e-5
DRIFT = ("TI-206", 120, 299, -4.0)   # tag, first day, last day of the ramp, K
OUTAGE, MISSING_ROW = range(75, 78), 250

LAWS = {  # exchanger -> (model, parameters); see the module text
    "E-101": ("linear", {"r_f0": 2.0e-4, "rate": 0.8e-6}),
    "E-102": ("asymptotic", {"r_f0": 1.5e-4, "r_inf": 4.0e-4, "tau": 120.0}),
    "E-103": ("linear", {"r_f0": 3.0e-4, "rate": 1.2e-6}),
    "E-104": ("asymptotic", {"r_f0": 4.0e-4, "r_inf": 9.0e-4, "tau": 150.0}),
    "E-105": ("linear", {"r_f0": 2.5e-4, "rate": 1.0e-6}),
    "E-106": ("asymptotic", {"r_f0": 2.0e-4, "r_inf": 6.0e-4, "tau": 90.0}),
    "E-107": ("linear", {"r_f0": 3.0e-4, "rate": 1.5e-6}),
    "E-108": ("asymptotic", {"r_f0": 5.0e-4, "r_inf": 1.0e-3, "tau": 100.0}),
    "E-109": ("asymptotic", {"r_f0": 3.0e-4, "r_inf": 7.0e-4, "tau": 200.0}),
    "E-110": ("linear", {"r_f0": 4.0e-4, "rate": 2.0e-6}),
    "E-111": ("polley", {"r_f0": 3.0e-4, "alpha": 8.8e4, "activation_energy": 68e3, "gamma": 3.1e-10}),
    "E-112": ("ebert_panchal", {"r_f0": 5.0e-4, "alpha": 1.8e4, "beta": -0.66, "activation_energy": 68e3,
                                "gamma": 3.4e-7}),
}

HOT_SUPPLIES = {"residue": 345.0, "bottom_pumparound": 305.0, "middle_pumparound": 240.0, "diesel": 265.0,
                "heavy_gas_oil": 300.0, "top_pumparound": 160.0, "kerosene": 205.0,
                "desalter_wash_water": 110.0}
FLOWS_TH = {"crude": 342.0, "residue": 150.0, "bottom_pumparound": 135.0, "middle_pumparound": 170.0, "diesel": 80.0,
            "heavy_gas_oil": 32.0, "top_pumparound": 200.0, "kerosene": 50.0, "desalter_wash_water": 17.0}

# tag -> (quantity, point, unit, standard deviation or None for the file's default)
TAGS = {
    "FI-101": ("flow", "crude", "t/h", None), "FI-102": ("flow", "residue", "t/h", None),
    "FI-103": ("flow", "bottom_pumparound", "t/h", None), "FI-104": ("flow", "middle_pumparound", "kg/s", None),
    "FI-105": ("flow", "diesel", "t/h", None), "FI-106": ("flow", "heavy_gas_oil", "t/h", None),
    "FI-107": ("flow", "top_pumparound", "t/h", None), "FI-108": ("flow", "kerosene", "t/h", None),
    "FI-111": ("flow", "crude_split.north", "t/h", None), "FI-112": ("flow", "crude_split.south", "t/h", None),
    "TI-101": ("temperature", "crude", "degC", None), "TI-102": ("temperature", "residue", "degC", 1.0),
    "TI-103": ("temperature", "bottom_pumparound", "degC", 1.0),
    "TI-104": ("temperature", "middle_pumparound", "degC", None),
    "TI-105": ("temperature", "diesel", "degC", 1.0), "TI-106": ("temperature", "heavy_gas_oil", "degC", 1.0),
    "TI-107": ("temperature", "top_pumparound", "degC", None), "TI-108": ("temperature", "kerosene", "degC", None),
    **{f"TI-2{n:02d}": ("temperature", f"E-1{n:02d}.cold_out", "degC", 1.0 if n in (11, 12) else None)
       for n in range(1, 13)},
    "TI-220": ("temperature", "crude_mix", "degC", None),
    **{f"TI-3{n:02d}": ("temperature", f"E-1{n:02d}.hot_out", "degC", 1.0 if n in (11, 12) else None)
       for n in range(1, 13) if n not in (3, 9)},
    "TI-401": ("temperature", "F-101.inlet", "degC", 1.0), "TI-402": ("temperature", "F-101.outlet", "degF", 1.8),
    "JI-401": ("duty", "F-101", "MW", None),
    "FI-109": ("flow", "desalter_wash_water", "t/h", None), "TI-109": ("temperature", "desalter_wash_water", "degC", None),
    "TI-213": ("temperature", "D-101.crude_out", "degC", None),
}
TEXT_CELLS = [(33, "TI-204", "---"), (101, "FI-105", "comm fail"), (158, "TI-310", "#VALUE!"), (203, "JI-401", "---"),
              (288, "TI-101", "comm fail"), (331, "FI-111", "#VALUE!")]


def wander(rng, size, scale, memory=0.9):
    """A slow AR(1) wander of standard deviation ``scale``."""
    out, shocks = np.zeros(size), rng.normal(size=size) * scale * np.sqrt(1 - memory**2)
    for k in range(1, size):
        out[k] = memory * out[k - 1] + shocks[k]
    return out


def operation(rng):
    """Key path -> one value a day: the supplies, the split and the furnace outlet."""
    days = np.arange(DAYS)
    throughput = 1.0 + wander(rng, DAYS, 0.01)
    throughput[CUT[0]:CUT[1] + 1] = 0.75
    throughput[[CUT[0] - 2, CUT[0] - 1, CUT[1] + 1, CUT[1] + 2]] = [0.92, 0.84, 0.84, 0.92]
    values = {}
    for stream, flow in FLOWS_TH.items():
        values[f"streams.{stream}.flow"] = flow / 3.6 * throughput * (1.0 + wander(rng, DAYS, 0.005))
    seasons = 6.0 * np.sin(2 * np.pi * (days - 110) / 365)  # warmest in late July
    values["streams.crude.supply_temperature"] = 30.0 + seasons + wander(rng, DAYS, 0.5)
    for stream, t in HOT_SUPPLIES.items():
        values[f"streams.{stream}.supply_temperature"] = t + wander(rng, DAYS, 1.0)
    values["splitters.crude_split.branches.north.fraction"] = 0.5 + wander(rng, DAYS, 0.01)
    values["heaters.F-101.outlet_temperature"] = 365.0 + wander(rng, DAYS, 0.2)
    return values


def cleaned_fouling():
    """The cleaned exchanger's fouling, one value a day: its law, reset on the cleaning day."""
    model, p = LAWS[CLEANED]
    days = np.arange(DAYS, dtype=float)
    before = MODELS[model].step(p["r_f0"], days, **p)
    after = MODELS[model].step(AFTER_CLEANING, days - CLEANED_DAY, **dict(p, r_f0=AFTER_CLEANING))
    return np.where(days < CLEANED_DAY, before, after)


def solve_year(case, values):
    """The year marched day by day with the known laws (hxtrain's projection, the day's
    operation as a schedule): the evaluation of every day and each exchanger's fouling."""
    values = dict(values, **{f"exchangers.{CLEANED}.fouling.shell": cleaned_fouling(),
                             f"exchangers.{CLEANED}.fouling.tube": np.zeros(DAYS)})
    laws = {name: FoulingLaw(model, p, p["r_f0"]) for name, (model, p) in LAWS.items() if name != CLEANED}
    year = project_network(case, laws, values, START, pd.Timedelta(days=DAYS - 1), pd.Timedelta(days=1))
    if not year.steps["success"].all():
        day = int(np.flatnonzero(~year.steps["success"].to_numpy())[0])
        raise RuntimeError(f"day {day}: {year.evaluation.reason(day)}")
    fouling = {name: year.steps[f"{name}.fouling_m2_k_w"].to_numpy() for name in laws}
    fouling[CLEANED] = values[f"exchangers.{CLEANED}.fouling.shell"]
    return year.evaluation, dict(sorted(fouling.items()))


def monitoring_text():
    lines = []
    for tag, (quantity, point, unit, sigma) in TAGS.items():
        extra = "" if sigma is None else f", uncertainty: {sigma:g}" + (" degF" if unit == "degF" else "")
        lines.append(f"  {tag}: {{{quantity}: {point}, unit: {unit}{extra}}}")
    tags = "\n".join(lines)
    return f"""# Monitoring of the Brackenmoor CU-2 crude preheat train (invented demo data).
# Written by make_crude_history.py beside it: edit that script, not this file.
title: Brackenmoor CU-2 preheat monitoring, 2026 (invented)
case: {{demo: crude_preheat}}
data: crude_history.csv
time_column: time
window: 1 day
steady_state:
  # daily means of noisy instruments: 1.5 % flow noise moves a day-to-day difference by 2.1 %,
  # 1 K thermocouples by 1.4 K, so the defaults (3 %, 3 K) would reject steady days; these
  # thresholds are 3.5 to 4 standard deviations of that difference (common practice)
  flow_change: 8 %
  temperature_change: 5
uncertainty:                 # one standard deviation of a daily average
  temperature: 0.5           # K (RTDs); thermocouples on streams above 250 °C: 1 K, given per tag
  flow: 1.5 %
  duty: 3 %
tags:
{tags}
cleanings:
  - {{exchanger: {CLEANED}, date: {(START + pd.Timedelta(days=CLEANED_DAY)).date()},
     description: hydroblasted during a planned bypass}}
economics:
  fuel_price: 9.0            # per GJ of fuel
  currency: USD
  furnace_efficiency: 0.88
  co2_per_fuel: 56.1         # kg CO2/GJ, natural gas (IPCC 2006 default, from memory)
  co2_price: 80.0            # per tonne CO2
limits:
  fired_duty: {{F-101: 31.6 MW}}       # the furnace's firing limit (burners at their largest heat release)
  inlet_temperature: {{F-101: 274.5}}  # °C: colder, and the furnace misses its outlet temperature at that limit
projection:
  horizon: 26 weeks
  step: 7 days
significance: 0.05
"""


def readings(monitoring, ev, rng):
    """Every tag's reading a day, in the tag's unit, with noise, the drift and the gaps."""
    t, flow = ev.solution.temperature, np.broadcast_to(ev.net.flow, ev.solution.temperature.shape)
    columns = {}
    for tag in monitoring.tags.values():
        if tag.quantity == "duty":
            true = ev.reports[tag.point].metrics["duty"]
        else:
            true = (t if tag.quantity == "temperature" else flow)[:, tag.segment]
        sigma = tag.sigma_of(true)
        value = true + rng.normal(size=DAYS) * sigma
        if tag.name == DRIFT[0]:
            value = value + DRIFT[3] * np.clip((np.arange(DAYS) - DRIFT[1]) / (DRIFT[2] - DRIFT[1]), 0.0, 1.0)
        columns[tag.name] = tag.from_default_unit(value)
    table = pd.DataFrame(columns, index=START + pd.to_timedelta(np.arange(DAYS), unit="D"))
    places = {"temperature": 2, "flow": 1, "duty": 3}
    decimals = {name: places[monitoring.tags[name].quantity] for name in table}
    text = table.round(decimals).astype(object)
    text.iloc[list(OUTAGE), :] = ""
    for day, tag, cell in TEXT_CELLS:
        text.loc[text.index[day], tag] = cell
    text = text.drop(text.index[MISSING_ROW])
    text.index = text.index.strftime("%Y-%m-%d %H:%M")
    return text.rename_axis("time")


def truth_table():
    rows = []
    for name, (model, p) in LAWS.items():
        pieces = [(START, p)]
        if name == CLEANED:
            pieces.append((START + pd.Timedelta(days=CLEANED_DAY), dict(p, r_f0=AFTER_CLEANING)))
        for since, params in pieces:
            for parameter, value in params.items():
                unit = next(q.unit for q in MODELS[model].parameters if q.name == parameter)
                rows.append((name, model, since.date(), parameter, value, unit))
    return pd.DataFrame(rows, columns=["exchanger", "model", "since", "parameter", "value", "unit"])


def main(folder=None) -> int:
    """Write the three files into ``folder`` (default: beside this script)."""
    clock = time.perf_counter()
    folder = HERE if folder is None else Path(folder)
    rng = np.random.default_rng(SEED)
    case = load_case(demo_case_path("crude_preheat"))
    (folder / "crude_monitoring.yaml").write_text(monitoring_text(), encoding="utf-8")
    monitoring = load_monitoring(folder / "crude_monitoring.yaml")
    ev, fouling = solve_year(case, operation(rng))
    readings(monitoring, ev, rng).to_csv(folder / "crude_history.csv", lineterminator="\n")
    truth_table().to_csv(folder / "crude_history_truth.csv", index=False, lineterminator="\n")
    print(f"wrote {DAYS} days of {len(monitoring.tags)} tags to {folder} ({time.perf_counter() - clock:.1f} s); "
          "fouling on 31 December: "
          + ", ".join(f"{n} {r[-1]:.2e}" for n, r in fouling.items()))
    return 0


if __name__ == "__main__":
    sys.exit(main(*sys.argv[1:2]))
