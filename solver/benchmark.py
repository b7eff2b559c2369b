"""Throughput benchmark: scenario-solves per second on the crude preheat demo, the batch path
against a Python loop of single solves, measured in one run (``hxtrain benchmark``)."""

from __future__ import annotations

import os
import platform
import time

import numpy as np

from hxtrain.network import load_case

from .batch import simulate_batch
from .demos import demo_case_path
from .results import simulate


def machine() -> str:
    cpu = platform.processor() or platform.machine()
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as info:
            names = [line.split(":", 1)[1].strip() for line in info if line.startswith("model name")]
        cpu = names[0] if names else cpu
    except OSError:
        pass
    return (f"{cpu}; {os.cpu_count()} logical CPUs; Python {platform.python_version()}; "
            f"numpy {np.__version__}; {platform.system()} {platform.release()}")


def run_benchmark(scenarios=2000, loop=5, case_name="crude_preheat"):
    """Time ``scenarios`` crude-flow scenarios (70-115 % of the base) in one batch and ``loop``
    of them one by one; returns a dict of the figures."""
    path = demo_case_path(case_name)
    base = load_case(path)
    stream = next(iter(base.streams))
    flows = base.streams[stream]["flow"] * np.linspace(0.7, 1.15, scenarios)
    start = time.perf_counter()
    batch = simulate_batch(path, {f"streams.{stream}.flow": flows})
    batch_seconds = time.perf_counter() - start
    picks = np.linspace(0, scenarios - 1, loop).astype(int)
    start = time.perf_counter()
    worst = 0.0
    for i in picks:
        case = load_case(path)
        case.streams[stream]["flow"] = flows[i]
        single = simulate(case)
        worst = max(worst, float(np.max(np.abs(single.streams["temperature_c"].to_numpy() - batch.temperature[i]))))
    loop_seconds = time.perf_counter() - start
    batch_rate, loop_rate = scenarios / batch_seconds, loop / loop_seconds
    return {"case": case_name, "exchangers": len(base.exchangers), "scenarios": scenarios,
            "batch_seconds": batch_seconds, "batch_rate": batch_rate, "loop_solves": loop,
            "loop_seconds": loop_seconds, "loop_rate": loop_rate, "ratio": batch_rate / loop_rate,
            "largest_difference_k": worst, "all_converged": bool(batch.table["converged"].all()),
            "machine": machine()}


def benchmark_text(figures) -> str:
    f = figures
    return "\n".join([
        f"hxtrain benchmark: {f['case']} demo ({f['exchangers']} exchangers), crude flow 70-115 %",
        f"  batch: {f['scenarios']} scenarios in {f['batch_seconds']:.2f} s = {f['batch_rate']:,.0f} scenario-solves/s"
        f" (all converged: {f['all_converged']})",
        f"  loop:  {f['loop_solves']} single solves in {f['loop_seconds']:.2f} s = {f['loop_rate']:,.2f} scenario-solves/s",
        f"  batch / loop: {f['ratio']:,.0f} x; largest temperature difference batch vs single: "
        f"{f['largest_difference_k']:.1e} K",
        f"  machine: {f['machine']}",
    ])
