"""Plant-data benchmark: a year of hourly windows of the crude demo reconciled and back-calculated,
timed beside the batch solve of the same windows (``hxtrain benchmark --plant-data``).

The windows are synthetic: the crude demo simulated as one batch at hourly throughputs (70-115 %)
with each exchanger's fouling rising through the year, read at the points of the demo's
monitoring file (its tags and uncertainties) with that noise added. Both timings are taken in
one run, so their ratio is what to quote (the machine is printed beside them).
"""

from __future__ import annotations

import time

import numpy as np

from hxtrain.network.monitoring_file import load_monitoring
from hxtrain.solver.simulation.evaluation import evaluate

from .monitor import _measured_variable
from .plant_state import conditions, reconcile_windows

MONITORING_DEMO = "plant_data/crude_monitoring.yaml"


def synthetic_year(monitoring, windows, seed=0):
    """(readings (W, tags), sigma (W, tags), seconds the batch solve took)."""
    rng = np.random.default_rng(seed)
    case = monitoring.case
    days = np.linspace(0.0, 365.0, windows)
    values = {"streams.crude.flow": case.streams["crude"]["flow"] * (0.7 + 0.45 * rng.random(windows))}
    for k, tag in enumerate(case.exchangers):
        values[f"exchangers.{tag}.fouling.shell"] = 2e-4 + (2e-6 + 2e-7 * k) * days
        values[f"exchangers.{tag}.fouling.tube"] = np.zeros(windows)
    started = time.perf_counter()
    plant = evaluate(case, values)
    solve_seconds = time.perf_counter() - started
    t = plant.solution.temperature
    m = np.broadcast_to(plant.net.flow, t.shape)
    exact = np.stack([_reading(plant, tag, t, m) for tag in monitoring.tags.values()], axis=1)
    sigma = np.stack([np.asarray(tag.sigma_of(exact[:, j]), float) * np.ones(windows)
                      for j, tag in enumerate(monitoring.tags.values())], axis=1)
    return exact + rng.normal(size=exact.shape) * sigma, sigma, solve_seconds


def _reading(plant, tag, t, m):
    if tag.quantity == "temperature":
        return t[:, tag.segment]
    if tag.quantity == "flow":
        return m[:, tag.segment]
    return plant.reports[tag.point].metrics["duty"]


def run_plant_data_benchmark(windows=8760, seed=0) -> dict:
    """Seconds to reconcile and back-calculate ``windows`` hourly windows, and to solve them as a
    batch, in one run."""
    from hxtrain.solver.simulation.benchmark import machine

    monitoring = load_monitoring(_demo_file())
    readings, sigma, solve_seconds = synthetic_year(monitoring, windows, seed)
    base = evaluate(monitoring.case)
    measured = [_measured_variable(t) for t in monitoring.tags.values()]
    started = time.perf_counter()
    states = reconcile_windows(base.net, base, measured, readings, sigma, monitoring.significance)
    reconciled = time.perf_counter()
    table = conditions(states, np.arange(windows))
    finished = time.perf_counter()
    return {"windows": windows, "tags": len(measured), "batch_solve_seconds": solve_seconds,
            "reconcile_seconds": reconciled - started, "back_calculate_seconds": finished - reconciled,
            "total_seconds": finished - started, "ratio_to_batch_solve": (finished - started) / solve_seconds,
            "reconciled": int(states.success.sum()), "passed_global_test": int(states.passed.sum()),
            "identifiable_share": float(table["identifiable"].mean()), "machine": machine()}


def _demo_file():
    from importlib import resources

    return resources.files("hxtrain.cases") / MONITORING_DEMO


def plant_data_benchmark_text(r: dict) -> str:
    return "\n".join([
        f"hxtrain benchmark (plant data): {r['windows']:,} hourly windows of the crude demo, {r['tags']} tags",
        f"    batch solve of the same windows: {r['batch_solve_seconds']:8.2f} s",
        f"    reconcile (with gross-error and persistent-bias removal): {r['reconcile_seconds']:8.2f} s",
        f"    back-calculate U and fouling with uncertainty:           {r['back_calculate_seconds']:8.2f} s",
        f"    reconcile + back-calculate: {r['total_seconds']:.2f} s = {r['ratio_to_batch_solve']:.1f} x the batch solve",
        f"    windows reconciled: {r['reconciled']:,}; passing the global test: {r['passed_global_test']:,}; "
        f"fouling identifiable in {100 * r['identifiable_share']:.1f} % of exchanger-windows",
        f"  machine: {r['machine']}"])
