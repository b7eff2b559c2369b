"""``simulate(case)``: one call from a case (file or object) to one result object with tables.

Like a power-flow run that fills result tables matching the network's tables, a simulation
returns :class:`SimulationResult` with pandas DataFrames: ``units`` (one row per unit),
``streams`` (one row per stream segment), ``tears``, ``findings`` (limits violated, warnings)
and ``balance`` (the overall energy balance).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from hxtrain.network import Case, Network, build_network, load_case

from .checks import enthalpy_balance, out_of_range
from .engine import TemperatureSolution, inlets_of, solve_temperatures, tear_labels

UNIT_COLUMNS = {
    "duty": "duty_kw",
    "t_hot_in": "hot_in_c",
    "t_hot_out": "hot_out_c",
    "t_cold_in": "cold_in_c",
    "t_cold_out": "cold_out_c",
    "ua": "ua_kw_per_k",
    "ntu": "ntu_hot",
    "p": "p_hot",
    "r": "r_hot",
    "effectiveness": "effectiveness",
    "f": "f",
    "lmtd": "lmtd_k",
    "approach": "min_approach_k",
    "u_service": "u_service_w_m2k",
    "u_clean": "u_clean_w_m2k",
    "h_shell": "h_shell_w_m2k",
    "h_tube": "h_tube_w_m2k",
    "fouling_shell": "fouling_shell_m2k_w",
    "fouling_tube": "fouling_tube_m2k_w",
    "re_tube": "re_tube",
    "dp_shell": "dp_shell_kpa",
    "dp_tube": "dp_tube_kpa",
    "deviation": "target_deviation_k",
    "t_in": "inlet_c",
    "t_out": "outlet_c",
}
SCALE = {"dp_shell": 1e-3, "dp_tube": 1e-3}
"""Report quantities converted for the table (Pa -> kPa)."""
"""Report quantity -> column of the units table (P, R and NTU on the hot-side basis)."""

CAUTION = (
    "Screening estimates. Mechanical limits, safety and operating decisions rest with qualified "
    "engineers and the applicable codes and standards."
)


@dataclass
class SimulationResult:
    """Result of one converged simulation (a failed one raises instead; see :func:`simulate`)."""

    converged: bool
    message: str
    iterations: int
    units: pd.DataFrame
    streams: pd.DataFrame
    tears: pd.DataFrame
    findings: pd.DataFrame
    balance: pd.Series
    summary: pd.Series
    title: str = ""
    case_file: str = ""
    caution: str = CAUTION
    network: Network | None = field(default=None, repr=False)

    @property
    def success(self) -> bool:
        return self.converged

    @property
    def limits(self) -> pd.DataFrame:
        """Only the violated limits (design temperature, temperature cross)."""
        return self.findings[self.findings["severity"] == "limit"]


def simulate(case, *, tolerance=None, max_iterations=None) -> SimulationResult:
    """Simulate a case (a path to a YAML file, or a :class:`Case`).

    Raises :class:`CaseError` for bad input (including a target no unit can meet) and
    :class:`~.engine.ConvergenceError` when a block's tears do not converge.
    """
    if not isinstance(case, Case):
        case = load_case(Path(case))
    net = build_network(case)
    tolerance = tolerance if tolerance is not None else case.settings.tolerance
    max_iterations = max_iterations if max_iterations is not None else case.settings.max_iterations
    solution = solve_temperatures(net, tolerance=tolerance, max_iterations=max_iterations)
    return tabulate(net, solution, tolerance)


def tabulate(net: Network, solution: TemperatureSolution, tolerance) -> SimulationResult:
    """Fill the result tables from a solved network (scenario 0 of the batch)."""
    t = solution.temperature
    flow = np.broadcast_to(net.flow, t.shape)
    rows, findings, heat_added = {}, [], 0.0
    for name, unit in net.units.items():
        report = unit.report(inlets_of(net, name, t, flow))
        row = {"type": unit.kind, **report.labels}
        for quantity, column in UNIT_COLUMNS.items():
            if quantity in report.quantities:
                row[column] = float(np.asarray(report.quantities[quantity])[0]) * SCALE.get(quantity, 1.0)
        notes = []
        for finding in report.findings:
            if finding.active[0]:
                findings.append({"unit": name, "severity": finding.severity, "kind": finding.kind,
                                 "key": finding.key, "message": finding.messages[0]})
                notes.append(finding.kind)
        row["findings"] = ", ".join(notes)
        rows[name] = row
        heat_added += float(np.asarray(report.heat_added).reshape(-1)[0])
    findings += _extrapolation_findings(net, t, flow)
    _stop_on_bad_input(net, findings)
    units = pd.DataFrame.from_dict(rows, orient="index", columns=["type", "u_source", *UNIT_COLUMNS.values(), "findings"])
    units.index.name = "unit"
    units = units.dropna(axis=1, how="all")
    streams = _stream_table(net, t[0])
    balance = _balance(net, t, flow, heat_added)
    tears = _tear_table(net, solution)
    findings_table = pd.DataFrame(findings, columns=["unit", "severity", "kind", "key", "message"])
    findings_table = findings_table.sort_values("severity", key=lambda s: s.map({"limit": 0, "warning": 1}), kind="stable")
    summary = _summary(units, balance, solution, findings_table)
    message = (f"converged: {len(tears)} tear stream(s), {solution.iterations} iterations, "
               f"energy balance closes to {balance['relative_imbalance']:.1e}")
    return SimulationResult(True, message, solution.iterations, units, streams, tears,
                            findings_table.reset_index(drop=True), balance, summary,
                            net.case.title, net.case.file, network=net)


def _stop_on_bad_input(net, findings):
    for f in findings:
        if f["severity"] == "input":
            raise net.case.error(tuple(f["key"].split(".")), f["message"])


def _extrapolation_findings(net: Network, t, flow):
    """A segment whose temperature lies outside a fluid's data range is refused (bad input, naming
    the fluid's range) unless that fluid allows extrapolation, which is then flagged, never silent."""
    found = []
    for seg, member, where in out_of_range(net, t, flow):
        if not where[0]:
            continue
        low, high = member.valid_range
        message = (f"segment {seg.label} reaches {t[0, seg.index]:.1f} °C, outside the data range "
                   f"{low:g} to {high:g} °C of fluid '{member.name}'")
        if member.extrapolate:
            found.append({"unit": seg.target, "severity": "warning", "kind": "property_extrapolation",
                          "key": member.range_key, "message": message + ": properties extrapolated"})
        else:
            found.append({"unit": seg.target, "severity": "input", "kind": "property_range",
                          "key": member.range_key, "message": message + "; widen the data (or set "
                          "'extrapolate: true' on the fluid to accept extrapolated properties)"})
    return found


def _capacity_rates(net: Network, t):
    return np.array([m * fluid.cp(temperature) for m, fluid, temperature in zip(net.flow, net.fluids, t)])


def _stream_table(net: Network, t) -> pd.DataFrame:
    table = pd.DataFrame(
        {
            "segment": [s.label for s in net.segments],
            "path_of": [s.origin for s in net.segments],
            "from_unit": [s.source for s in net.segments],
            "to_unit": [s.target for s in net.segments],
            "flow_kg_s": net.flow,
            "heat_capacity_rate_kw_per_k": _capacity_rates(net, t),
            "temperature_c": t,
        }
    )
    table.index.name = "segment_id"
    return table


def _balance(net: Network, t, flow, heat_added) -> pd.Series:
    """Overall enthalpy balance (reference 0 °C) from the stream table and the external duties."""
    return pd.Series({k: float(np.asarray(v).reshape(-1)[0]) for k, v in enthalpy_balance(net, t, flow, heat_added).items()})


def _tear_table(net: Network, solution: TemperatureSolution) -> pd.DataFrame:
    rows = []
    for outcome in solution.blocks:
        if outcome.tears is None:
            continue
        for label, seg, residual in zip(tear_labels(net, outcome.block), outcome.block.tears, outcome.tears.residual[0]):
            rows.append({"tear_stream": label, "segment_id": seg, "block_units": len(outcome.block.units),
                         "tear_method": outcome.block.method, "iterations": outcome.tears.iterations,
                         "accelerators": " -> ".join(outcome.tears.methods), "final_residual_k": float(residual)})
    return pd.DataFrame(rows, columns=["tear_stream", "segment_id", "block_units", "tear_method", "iterations",
                                       "accelerators", "final_residual_k"])


def _summary(units, balance, solution, findings) -> pd.Series:
    def total(kind):
        return float(units.loc[units["type"] == kind, "duty_kw"].sum()) if "duty_kw" in units else 0.0

    heaters = units[units["type"] == "heater"]
    furnace_inlet = heaters["cold_in_c"].to_dict() if "cold_in_c" in heaters else {}
    return pd.Series(
        {
            "heat_recovered_kw": total("exchanger"),
            "heater_duty_kw": total("heater"),
            "cooler_duty_kw": total("cooler"),
            **{f"{name}_inlet_c": value for name, value in furnace_inlet.items()},
            "limit_violations": int((findings["severity"] == "limit").sum()),
            "warnings": int((findings["severity"] == "warning").sum()),
            "iterations": solution.iterations,
            "relative_imbalance": balance["relative_imbalance"],
        }
    )
