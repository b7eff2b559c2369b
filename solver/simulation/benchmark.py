"""Throughput benchmark: scenario-solves per second on the crude preheat demo, the batch path
against a Python loop of single solves, measured in one run (``hxtrain benchmark``).

Two forms of the same 12-exchanger train are timed:

* the demo as shipped: cp(T) from the petroleum-fraction correlation and U from film
  coefficients scaled with flow and viscosity, so every exchanger is itself an iteration;
* its fixed-property form (:func:`fixed_property_variant`): constant cp and each exchanger's
  UA fixed at its value in the base case, so every exchanger is a closed-form P–NTU evaluation
  and the network is linear in temperature.

Each is timed as one batch in this process, as the same batch split over ``workers``
processes, and as a loop of single solves; the largest temperature difference between the
batch and the single solves is printed with the rates. Then the linear limit: the
fixed-property batch against the structured direct solve of :mod:`.linear_limit` on the same
scenarios, and the command's start-up against ``python -c pass``. The size ladder is
:mod:`.size_benchmark` (``--sizes``).
"""

from __future__ import annotations

import copy
import os
import platform
import time

import numpy as np

from hxtrain.network import load_case
from hxtrain.network.case import case_from_document
from hxtrain.network.fields import counted
from hxtrain.network.reading import Document, read_document

from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.simulation.linear_limit import direct_solve
from hxtrain.solver.demos import demo_case_path
from hxtrain.solver.simulation.results import simulate

KEPT_WITH_FIXED_UA = ("arrangement", "shells", "shells_in_parallel", "tube_passes", "shell_side", "mixed_side",
                      "bypass", "design_temperature", "maximum_flow", "description")
"""Exchanger keys a fixed-property variant keeps; the U model, geometry and pressure drop go."""


def fixed_property_variant(path):
    """The case at ``path`` with constant cp and fixed UA: each fluid gets the cp of its model at
    the middle of its valid range (150 °C without one); each exchanger keeps its arrangement,
    shells, passes, sides, bypass and limits, and gets as fixed ``ua`` the UA it has in the
    original case's solution. Topology, flows, splits, recycles and heaters are unchanged, but
    for flash drums: a drum's split follows its inlet state, which no linear network has, so
    each becomes a splitter at the vapour fraction it has in the original solution."""
    document = read_document(path)
    case = case_from_document(document)
    original = simulate(case)
    data = copy.deepcopy(document.data)
    for name in data["fluids"]:
        model = case.fluids[name]
        low, high = getattr(model, "valid_range", None) or (100.0, 200.0)
        data["fluids"][name] = {"cp": float(np.asarray(model.cp(0.5 * (low + high))))}
    for tag, entry in data.get("exchangers", {}).items():
        kept = {k: v for k, v in entry.items() if k in KEPT_WITH_FIXED_UA}
        kept["ua"] = float(original.units.loc[tag, "ua_kw_k"])
        data["exchangers"][tag] = kept
    for tag, entry in data.pop("flash_drums", {}).items():
        q = float(original.units.loc[tag, "inlet_vapour_fraction"])
        data.setdefault("splitters", {})[tag] = {"branches": {
            port: {"fraction": share, "path": entry[port]["path"]} for port, share in (("vapour", q), ("liquid", 1.0 - q))}}
    return case_from_document(Document(data, f"{document.file} (constant cp, fixed UA)"))


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


def time_case(case, label, scenarios, loop, workers, repeats=3):
    """Rates for one case: one batch in this process and the batch allowed ``workers``
    processes, the best of ``repeats`` runs each, alternated (:func:`_alternated`), after one
    untimed run of the first; and ``loop`` single solves (picked evenly over the scenarios)."""
    stream = next(iter(case.streams))
    path = f"streams.{stream}.flow"
    flows = case.streams[stream]["flow"] * np.linspace(0.7, 1.15, scenarios)
    runs = [lambda: simulate_batch(case, {path: flows})]
    # untimed: a process's first batch also loads what the batch path imports when first needed
    # and grows the heap (the crude demo's first batch of 20,000 took 0.70 s, the next 0.39 s):
    # start-up, which `startup` times, not the batch's rate
    runs[0]()
    if workers > 1:
        runs.append(lambda: simulate_batch(case, {path: flows}, workers=workers))
    rounds = []
    timed = _alternated(runs, repeats, rounds)
    (one_process, batch), (several, split) = timed[0], timed[-1]  # one process allowed: the same run
    worst = float(np.nanmax(np.abs(split.temperature - batch.temperature)))
    start = time.perf_counter()
    for i in np.linspace(0, scenarios - 1, loop).astype(int):
        single_case = copy.deepcopy(case)
        single_case.streams[stream]["flow"] = flows[i]
        single = simulate(single_case)
        worst = max(worst, float(np.max(np.abs(single.streams["temperature_c"].to_numpy() - batch.temperature[i]))))
    loop_seconds = time.perf_counter() - start
    return {"label": label, "batch_seconds": one_process, "batch_rate": scenarios / one_process,
            "workers_seconds": several, "workers_rate": scenarios / several, "processes": split.processes,
            "round_ratios": [(one[0] / allowed[0], allowed[1].processes) for one, *_, allowed in rounds]
            if workers > 1 else [],
            "loop_seconds": loop_seconds,
            "loop_rate": loop / loop_seconds, "largest_difference_k": worst,
            "all_converged": bool(batch.table["converged"].all() and split.table["converged"].all()),
            "iterations": batch.iterations}


def _alternated(functions, repeats, rounds=None):
    """[(the shortest of ``repeats`` timings, the result of that run)] for each of ``functions``,
    run in turn ``repeats`` times: on a shared machine a run is disturbed now and then, and
    alternating lets the disturbances fall on both sides alike. ``rounds``, where given, gets each
    round's (timing, result) pairs (a case's first split-allowed batch is solved in one process
    and timed; later ones are decided by what it measured, and the first split measures the
    processes' speed)."""
    best = [(float("inf"), None) for _ in functions]
    for _ in range(repeats):
        timings = []
        for k, function in enumerate(functions):
            start = time.perf_counter()
            result = function()
            timings.append((time.perf_counter() - start, result))
            best[k] = min(best[k], timings[-1], key=lambda pair: pair[0])
        if rounds is not None:
            rounds.append(timings)
    return best


def linear_limit(case, scenarios, repeats=3) -> dict:
    """``simulate_batch`` against the structured direct solve of :mod:`.linear_limit` on the
    same crude-flow scenarios of a fixed-property case, the best of ``repeats`` runs each,
    alternated; and the largest temperature difference between them."""
    stream = next(iter(case.streams))
    values = {f"streams.{stream}.flow": case.streams[stream]["flow"] * np.linspace(0.7, 1.15, scenarios)}
    (batch_best, batch), (direct_best, direct) = _alternated(
        [lambda: simulate_batch(case, values), lambda: direct_solve(case, values)], repeats)
    return {"scenarios": scenarios, "batch_seconds": batch_best, "direct_seconds": direct_best,
            "ratio": batch_best / direct_best, "largest_difference_k": float(np.nanmax(np.abs(direct - batch.temperature)))}


def startup(repeats=5) -> dict:
    """Wall time of ``python -c pass``, ``hxtrain --help`` and ``hxtrain check`` on the crude
    demo, each the best of ``repeats`` fresh processes."""
    import subprocess
    import sys

    demo = str(demo_case_path("crude_preheat"))
    commands = {"python -c pass": [sys.executable, "-c", "pass"],
                "hxtrain --help": [sys.executable, "-m", "hxtrain.solver.cli.main", "--help"],
                "hxtrain check (crude demo)": [sys.executable, "-m", "hxtrain.solver.cli.main", "check", demo]}
    runs = _alternated([lambda c=command: subprocess.run(c, capture_output=True, check=True)
                        for command in commands.values()], repeats)
    return {label: seconds for label, (seconds, _) in zip(commands, runs)}


def run_benchmark(scenarios=20000, loop=5, workers=None, case_name="crude_preheat"):
    """Time ``scenarios`` crude-flow scenarios (70-115 % of the base) of the demo as shipped and
    of its fixed-property variant, the linear limit and the start-up; returns a dict of the
    figures."""
    workers = workers or os.cpu_count() or 1
    path = demo_case_path(case_name)
    shipped = load_case(path)
    fixed = fixed_property_variant(path)
    rows = [time_case(shipped, "as shipped: cp(T), film U", scenarios, loop, workers),
            time_case(fixed, "fixed properties: constant cp, fixed UA", scenarios, loop, workers)]
    return {"case": case_name, "exchangers": len(shipped.exchangers), "scenarios": scenarios, "loop_solves": loop,
            "workers": workers, "rows": rows, "linear_limit": linear_limit(fixed, scenarios), "startup": startup(),
            "machine": machine()}


def _split_label(processes, asked):
    """What the batch asked to use up to ``asked`` processes did: the processes it used."""
    used = f"{processes} process{'es' if processes != 1 else ''}"
    return used if processes == asked else f"{used} of {asked} allowed"


def _round_ratios(ratios) -> str:
    """Each split-allowed run's speed against the one-process run before it, with the processes it used."""
    return ", ".join(f"{ratio:.2f} x ({_split_label(used, used)})" for ratio, used in ratios)


def benchmark_text(figures) -> str:
    f = figures
    lines = [f"hxtrain benchmark: {f['case']} demo ({f['exchangers']} exchangers), crude flow 70-115 %, "
             f"{f['scenarios']:,} scenarios a batch (the batches: best of 3 runs, alternated, after one untimed run), "
             f"{f['loop_solves']} single solves"]
    for row in f["rows"]:
        split = _split_label(row["processes"], f["workers"])
        lines += [
            f"  {row['label']}",
            f"    batch, 1 process:  {row['batch_seconds']:7.2f} s = {row['batch_rate']:10,.0f} scenario-solves/s "
            f"({counted(row['iterations'], 'tear iteration')})",
            *([f"    batch, {split}: {row['workers_seconds']:7.2f} s = {row['workers_rate']:10,.0f} "
               f"scenario-solves/s ({row['workers_rate'] / row['batch_rate']:.2f} x 1 process; each run against the "
               f"one-process run before it: {_round_ratios(row['round_ratios'])}; the first is solved in one process "
               "and timed)"]
              if f["workers"] > 1 else []),
            f"    loop of single solves:       {row['loop_rate']:10,.2f} scenario-solves/s",
            f"    batch / loop: {row['batch_rate'] / row['loop_rate']:,.0f} x (1 process)"
            + (f", {row['workers_rate'] / row['loop_rate']:,.0f} x ({split})" if f["workers"] > 1 else "")
            + "; all converged: "
            f"{row['all_converged']}; largest temperature difference from the batch: "
            f"{row['largest_difference_k']:.1e} K",
        ]
    limit = f.get("linear_limit")
    if limit:
        lines += [f"  linear limit (fixed properties, {limit['scenarios']:,} scenarios, best of 3): simulate_batch "
                  f"{limit['batch_seconds']:.3f} s, structured direct solve {limit['direct_seconds']:.3f} s: ratio "
                  f"{limit['ratio']:.2f}; largest temperature difference {limit['largest_difference_k']:.1e} K"]
    if f.get("startup"):
        base = f["startup"]["python -c pass"]
        lines.append("  start-up (best of 5): " + ", ".join(f"{label} {seconds:.2f} s ({seconds / base:.1f}x)"
                                                          for label, seconds in f["startup"].items()))
    lines.append(f"  machine: {f['machine']}")
    return "\n".join(wrapped(lines))


def wrapped(lines) -> list[str]:
    """Each line within the console width (:func:`.reporting.text.fitted`), its continuations
    indented four past it."""
    from hxtrain.solver.reporting.display_units import current
    from hxtrain.solver.reporting.text import fitted

    return [part for line in lines
            for part in fitted(line, current(), " " * (len(line) - len(line.lstrip()) + 4), break_on_hyphens=False)]
