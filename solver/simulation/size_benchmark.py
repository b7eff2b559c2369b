"""The size ladder of ``hxtrain benchmark --sizes``: networks of 10 to 10,000 units in each shape
of :mod:`.size_ladder`, each stage timed with its peak memory, and the exponent of the cost.

Each (shape, size) runs in a child process of its own, so that one network's memory does not
inflate the next one's. The stages, in order: ``check`` (the case mapping read and checked),
``flows`` (the network built: units, segments, flows, fluids), ``plan`` (blocks and tear sets),
``converge`` (temperatures), ``tabulate`` (unit reports, totals, checks, status, result tables).
Peak memory is the process's peak resident set during the stage (Linux: the peak is reset
through ``/proc/self/clear_refs`` before each stage; elsewhere the peak so far). The libraries
are imported before the clock starts (a first import is start-up, measured by ``hxtrain
benchmark`` on its own). The exponent is the slope of log(total time) against log(units) over
the sizes of 1,000 units and more, by least squares (below that fixed costs dominate); n log n
over 1,000 to 10,000 units shows as about 1.1.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time

STAGES = ("check", "flows", "plan", "converge", "tabulate")
SIZES = (10, 100, 1000, 3000, 10000)
CHILD_TIMEOUT = 600


def _reset_peak() -> bool:
    try:
        with open("/proc/self/clear_refs", "w", encoding="ascii") as refs:
            refs.write("5")
        return True
    except OSError:
        return False


def _status_mb(field) -> float | None:
    """A memory figure of ``/proc/self/status`` (Linux: ``VmHWM`` the peak, ``VmRSS`` now) in
    MB; None where there is none."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith(f"{field}:"):
                    return int(line.split()[1]) / 1024.0
    except OSError:
        pass
    return None


def _peak_mb() -> float:
    peak = _status_mb("VmHWM")
    if peak is not None:
        return peak
    import resource

    scale = 1.0 if sys.platform == "darwin" else 1024.0
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / scale / 1024.0


def _resident_mb() -> float:
    """The process's resident memory now (Linux); NaN elsewhere."""
    now = _status_mb("VmRSS")
    return float("nan") if now is None else now


def measure(shape, units, properties="varying") -> dict:
    """Stage times (s) and peaks (MB) of one network, in this process."""
    from hxtrain.network import build_network, case_from_mapping
    from hxtrain.solver.simulation.engine import solve_temperatures
    from hxtrain.solver.simulation.evaluation import assess
    from hxtrain.solver.simulation.results import tabulate
    from hxtrain.solver.simulation.sequencing import plan_calculation
    from hxtrain.solver.simulation.size_ladder import ladder_case, unit_count

    import scipy.optimize  # noqa: F401  (imports before the clock: see the module notes)
    import scipy.sparse.linalg  # noqa: F401

    mapping = ladder_case(shape, units, properties)
    state, times, peaks = {}, {}, {}
    steps = {
        "check": lambda: state.setdefault("case", case_from_mapping(mapping, f"<{shape} {units}>")),
        "flows": lambda: state.setdefault("net", build_network(state["case"])),
        "plan": lambda: state.setdefault("plan", plan_calculation(state["net"].graph)),
        "converge": lambda: state.setdefault("solution", solve_temperatures(
            state["net"], tolerance=state["case"].settings.tolerance,
            max_iterations=state["case"].settings.max_iterations, plan=state["plan"])),
        "tabulate": lambda: state.setdefault("result", tabulate(assess(state["net"], state["solution"],
                                                                       state["case"].settings.tolerance), 0)),
    }
    resettable = _reset_peak()
    start_mb = _resident_mb()  # the interpreter and the libraries, before the network
    for stage in STAGES:
        _reset_peak()
        start = time.perf_counter()
        steps[stage]()
        times[stage] = time.perf_counter() - start
        peaks[stage] = _peak_mb()
    solution = state["solution"]
    tears = sum(len(b.tears) for b in state["plan"])
    bounds = [b.lower_bound for b in state["plan"] if b.tears]
    return {"shape": shape, "properties": properties, "units": unit_count(mapping), "times": times, "peaks": peaks,
            "total": sum(times.values()), "peak": max(peaks.values()), "peak_per_stage": resettable,
            "start": start_mb,
            "tears": tears, "tears_at_least": sum(b for b in bounds if b is not None),
            "iterations": solution.iterations, "converged": bool(solution.converged.all()),
            "balance": float(state["result"].balance["relative_imbalance"])}


def ladder(sizes=SIZES, shapes=None, properties="varying", timeout=CHILD_TIMEOUT) -> list:
    """Every (shape, size) measured in a child process; a child that fails or runs out of time
    gives a row with its reason."""
    from hxtrain.solver.simulation.size_ladder import SHAPES

    rows = []
    for shape in shapes or SHAPES:
        for size in sizes:
            command = [sys.executable, "-m", "hxtrain.solver.simulation.size_benchmark", shape, str(size), properties]
            try:
                done = subprocess.run(command, capture_output=True, text=True, timeout=timeout,
                                      env={**os.environ, "PYTHONWARNINGS": "ignore"})
                row = json.loads(done.stdout.strip().splitlines()[-1]) if done.returncode == 0 else \
                    {"shape": shape, "units": size, "error": (done.stderr.strip().splitlines() or ["failed"])[-1]}
            except subprocess.TimeoutExpired:
                row = {"shape": shape, "units": size, "error": f"more than {timeout} s"}
            rows.append(row)
    return rows


def exponent(rows, shape, smallest=1000) -> float:
    """Slope of log(total time) against log(units) for ``shape``, sizes of ``smallest`` and up
    (a shape builds whole trains, so a network asked for 1,000 units may have 923: within 10 %
    counts); NaN with fewer than two such sizes."""
    import numpy as np

    points = [(r["units"], r["total"]) for r in rows
              if r["shape"] == shape and "total" in r and r["units"] >= 0.9 * smallest]
    if len(points) < 2:
        return float("nan")
    x, y = np.log([p[0] for p in points]), np.log([p[1] for p in points])
    return float(np.polyfit(x, y, 1)[0])


def _shown(value) -> str:
    return "n/a (fewer than two sizes)" if value != value else f"{value:.2f}"


def ladder_text(rows, properties) -> str:
    stages = " ".join(f"{s:>9}" for s in STAGES)
    lines = [f"size ladder ({properties} properties): seconds per stage, peak resident memory (MB) of the "
             "largest stage and that peak above the process's memory before the network (the interpreter and "
             "the libraries)", f"{'shape':<15}{'units':>7} {stages} {'total':>8} {'peak MB':>8} {'above':>6} "
             f"{'tears':>12} {'iter':>5}"]
    for r in rows:
        if "error" in r:
            lines.append(f"{r['shape']:<15}{r['units']:>7}  {r['error']}")
            continue
        times = " ".join(f"{r['times'][s]:9.3f}" for s in STAGES)
        tears = f"{r['tears']} (>={r['tears_at_least']})"
        above = r["peak"] - r.get("start", float("nan"))
        above = f"{above:6.0f}" if above == above else f"{'':>6}"  # not known off Linux
        lines.append(f"{r['shape']:<15}{r['units']:>7} {times} {r['total']:8.2f} {r['peak']:8.0f} {above} "
                     f"{tears:>12} "
                     f"{r['iterations']:>5}{'' if r['converged'] else '  NOT CONVERGED'}")
    shapes = list(dict.fromkeys(r["shape"] for r in rows))
    lines.append("fitted exponent of the total time (sizes >= 1000 units): " +
                 ", ".join(f"{s} {_shown(exponent(rows, s))}" for s in shapes))
    from hxtrain.solver.simulation.benchmark import wrapped  # not in the ladder's child processes, which time imports

    return "\n".join(wrapped(lines))


if __name__ == "__main__":  # a child of :func:`ladder`: one network, one JSON line
    shape_arg, size_arg, properties_arg = sys.argv[1], int(sys.argv[2]), sys.argv[3]
    print(json.dumps(measure(shape_arg, size_arg, properties_arg)))
