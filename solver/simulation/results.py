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

from hxtrain.network import Network
from hxtrain.units.protocol import TOTALS

from hxtrain.solver.simulation.engine import ConvergenceError, TemperatureSolution, convergence_error, tear_labels
from hxtrain.solver.simulation.evaluation import (CHECK_FAILED, NOT_CONVERGED, NOT_VALID, SUCCESS, Evaluation,
                                                  enthalpies, evaluate)

UNIT_COLUMNS = {
    "duty": "duty_kw",
    "t_hot_in": "hot_in_c",
    "t_hot_out": "hot_out_c",
    "t_cold_in": "cold_in_c",
    "t_cold_out": "cold_out_c",
    "q_hot_out": "hot_out_vapour_fraction",
    "q_cold_out": "cold_out_vapour_fraction",
    "air_flow": "air_flow_kg_s",
    "ua": "ua_kw_k",
    "ntu": "ntu_hot",
    "p": "p_hot",
    "r": "r_hot",
    "effectiveness": "effectiveness",
    "f": "f",
    "lmtd": "lmtd_k",
    "approach": "min_approach_k",
    "approach_internal": "internal_approach_k",
    "bypass_hot": "hot_bypass_fraction",
    "t_hot_out_inside": "hot_out_inside_c",
    "bypass_cold": "cold_bypass_fraction",
    "t_cold_out_inside": "cold_out_inside_c",
    "u_service": "u_service_w_m2_k",
    "u_clean": "u_clean_w_m2_k",
    "h_shell": "h_shell_w_m2_k",
    "h_tube": "h_tube_w_m2_k",
    "fouling_shell": "fouling_shell_m2_k_w",
    "fouling_tube": "fouling_tube_m2_k_w",
    "re_tube": "re_tube",
    "dp_shell": "dp_shell_kpa",
    "dp_tube": "dp_tube_kpa",
    "deviation": "target_deviation_k",
    "t_in": "inlet_c",
    "t_out": "outlet_c",
    "wash_water_in": "wash_water_in_c",
    "crude_drop": "crude_drop_k",
    "brine_flow": "brine_kg_s",
    "t_sat": "steam_saturation_c",
    "steam_flow": "steam_kg_s",
    "condensate_flow": "condensate_kg_s",
    "q_in": "inlet_vapour_fraction",
    "vapour_flow": "vapour_kg_s",
    "liquid_flow": "liquid_kg_s",
    "outer_iterations": "outer_iterations",
}
"""Report quantity -> column of the units table (P, R and NTU on the hot-side basis). An exchanger
rated by zones gives its outlets' vapour fractions and, beside the smaller end approach, the
smallest approach anywhere inside it. A flash drum gives its feed's vapour fraction at the inlet,
its vapour and liquid flows, the one temperature both leave at and the outer iterations (flows,
then states) its split took."""
SCALE = {"dp_shell": 1e-3, "dp_tube": 1e-3}
"""Report quantities converted for the table (Pa -> kPa)."""
COUNTS = ("limit_violations", "warnings", "iterations")
"""Summary entries that are counts (whole numbers in every output)."""
UNIT_COUNTS = ("outer_iterations",)
"""Units-table columns that are counts: whole numbers in every output, empty for the units
that have none."""

def worded_column(messages, index=None) -> pd.Series:
    """A column of messages as the units worded them: objects, each carrying its exact numbers
    (:class:`hxtrain.units.protocol.Worded`), not copied into a string column that would keep the
    text only (a report in other units converts the exact numbers)."""
    return pd.Series(list(messages), index=index, dtype=object)


CAUTION = (
    "Screening estimates. Mechanical limits, safety and operating decisions rest with qualified "
    "engineers and the applicable codes and standards."
)


@dataclass
class SimulationResult:
    """Result of one successful simulation (one that is not raises instead; see :func:`simulate`)."""

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
    metrics: dict = field(default_factory=dict, repr=False)
    """Named results a study may target, ``TAG.duty``, ``TAG.cold_out``, ``TAG.inlet``, ... ->
    value (each unit declares its own)."""
    profiles: dict = field(default_factory=dict, repr=False)
    """Exchanger tag -> {``duty`` (kW from the cold end), ``hot``, ``cold`` (°C)}: the
    temperatures along an exchanger rated by zones, for its T–Q picture."""

    @property
    def success(self) -> bool:
        return self.converged

    @property
    def limits(self) -> pd.DataFrame:
        """Only the violated limits (design temperature, temperature cross, ...)."""
        return self.findings[self.findings["severity"] == "limit"]


def simulate(case, *, tolerance=None, max_iterations=None) -> SimulationResult:
    """Simulate a case (a path to a YAML file, a mapping with the case-file keys, or a
    :class:`Case`): the evaluation of a batch of one.

    Raises :class:`CaseError` for bad input (including a scenario that asks for the impossible)
    and :class:`~.engine.ConvergenceError` when the tears do not converge or the answer fails
    its energy balance: no numbers are returned that failed a check."""
    evaluation = evaluate(case, tolerance=tolerance, max_iterations=max_iterations)
    raise_unless_success(evaluation, 0)
    return tabulate(evaluation, 0)


def raise_unless_success(evaluation: Evaluation, k: int, scenario: str = ""):
    """Raise the error that scenario ``k`` of an evaluation stands for, if it is not a success;
    ``scenario`` names it in the message (a study's variant)."""
    status = int(evaluation.status[k])
    if status == SUCCESS:
        return
    net = evaluation.net
    prefix = f"scenario '{scenario}': " if scenario else ""
    if status == NOT_CONVERGED:
        if evaluation.solution.converged[k]:  # the states converged; the flash drums' split did not settle
            raise ConvergenceError(prefix + evaluation.message[k])
        error = convergence_error(net, evaluation.solution, evaluation.tolerance)
        if evaluation.batch > 1 or scenario:
            error = ConvergenceError(prefix + evaluation.message[k], error.diagnostics)
        raise error
    if status == CHECK_FAILED:
        raise ConvergenceError(prefix + evaluation.message[k])
    raise net.case.error(evaluation.reason_key[k] or (), prefix + evaluation.message[k])


def scenario_summary(evaluation: Evaluation) -> dict:
    """The headline numbers of every scenario (arrays over the batch): the totals, the units'
    highlights (furnace inlet temperatures), counts of limits and warnings, the iterations."""
    limits = sum((f.active for _, f in evaluation.findings if f.severity == "limit"), np.zeros(evaluation.batch))
    warnings = sum((f.active for _, f in evaluation.findings if f.severity == "warning"), np.zeros(evaluation.batch))
    ok = evaluation.success
    return {**evaluation.totals, **evaluation.highlights,
            "limit_violations": np.where(ok, limits, np.nan), "warnings": np.where(ok, warnings, np.nan),
            # a scenario that is not valid was not solved as asked: it took part in no iteration
            "iterations": np.where(evaluation.status == NOT_VALID, 0,
                                   evaluation.solution.scenario_iterations(evaluation.batch))}


LIMIT_SEPARATOR = "; "
"""Between the limits one scenario violates in its ``violated_limits`` text."""
SIDE_WORDS = ("shell", "tube", "hot", "cold")


def limit_label(unit: str, finding) -> str:
    """A violated limit as a scenario's row names it: the unit, the check and the side where the
    key names one ("E-102 pressure_drop (tube)", "E-301 temperature_cross")."""
    return f"{unit} {finding_label(finding)}"


def finding_label(finding) -> str:
    """A finding's check and the side where its key names one ("design_temperature (cold)")."""
    side = next((part for part in finding.key.split(".")[2:] if part in SIDE_WORDS), None)
    return finding.kind + (f" ({side})" if side else "")


def violated_limits(evaluation: Evaluation) -> np.ndarray:
    """Per scenario, the limits it violates (:func:`limit_label`, joined by
    :data:`LIMIT_SEPARATOR`); "" where none, or where the scenario has no answer."""
    return named_findings(evaluation, "limit")


def named_findings(evaluation: Evaluation, severity: str) -> np.ndarray:
    """Per scenario, its findings of ``severity`` ("limit", "warning") by unit and check
    (:func:`limit_label`), joined by :data:`LIMIT_SEPARATOR`; "" where none, or where the scenario
    has no answer."""
    ok = evaluation.success
    found = [(limit_label(unit, f), np.broadcast_to(f.active, ok.shape) & ok) for unit, f in evaluation.findings
             if f.severity == severity and f.active.any()]
    if not found:
        return np.full(evaluation.batch, "", dtype=object)
    # worded once per distinct combination (a batch has few), not once per scenario
    combinations, which = _distinct_rows(np.stack([hit for _, hit in found], axis=1))
    words = np.array([LIMIT_SEPARATOR.join(dict.fromkeys(label for (label, _), on in zip(found, row) if on))
                      for row in combinations], dtype=object)
    return words[which]


def _distinct_rows(hits):
    """(the distinct rows of boolean ``hits`` (scenarios, limits), each row's index among them).
    Each row packed into 64-bit words first: np.unique over the rows themselves sorts them as
    records of one-byte fields, ~50 times slower (0.3 s for 100,000 scenarios)."""
    packed = np.packbits(hits, axis=1)
    words = -(-packed.shape[1] // 8)
    codes = np.zeros((len(hits), 8 * words), np.uint8)
    codes[:, :packed.shape[1]] = packed
    codes = codes.view(np.uint64)
    if words == 1:
        distinct, which = np.unique(codes[:, 0], return_inverse=True)
        distinct = distinct[:, None]
    else:
        distinct, which = np.unique(codes, axis=0, return_inverse=True)
    rows = np.unpackbits(np.ascontiguousarray(distinct).view(np.uint8), axis=1)[:, :hits.shape[1]].astype(bool)
    return rows, which.reshape(-1)


def tabulate(evaluation: Evaluation, k: int = 0) -> SimulationResult:
    """The result tables of scenario ``k`` of a successful evaluation."""
    net = evaluation.net
    t = evaluation.solution.temperature[k]
    rows, findings = {}, []
    for name, unit in net.units.items():
        report = evaluation.reports[name]
        row = {"type": unit.kind, "group": unit.group, **report.labels}
        for quantity, column in UNIT_COLUMNS.items():
            if quantity in report.quantities:
                value = np.broadcast_to(report.quantities[quantity], (evaluation.batch,))[k]
                row[column] = float(value) * SCALE.get(quantity, 1.0)
        rows[name] = row
    notes = {name: [] for name in net.units}
    for name, finding in evaluation.findings:
        if finding.active[k]:
            findings.append({"unit": name, "severity": finding.severity, "kind": finding.kind,
                             "key": finding.key, "message": finding.messages[k]})
            notes.setdefault(name, []).append(finding_label(finding))
    for name, row in rows.items():  # a check hit on two sides the key does not tell apart: named once, counted
        counts = {label: notes[name].count(label) for label in dict.fromkeys(notes.get(name, []))}
        row["findings"] = ", ".join(label + (f" ×{n}" if n > 1 else "") for label, n in counts.items())
    columns = ["type", "group", "u_source", "heat_source", "outlet_fluid", *UNIT_COLUMNS.values(), "findings"]
    units = pd.DataFrame.from_dict(rows, orient="index", columns=columns).dropna(axis=1, how="all")
    units.index.name = "unit"
    for column in UNIT_COUNTS:
        if column in units:
            units[column] = units[column].round().astype("Int64")
    findings_table = pd.DataFrame(findings, columns=["unit", "severity", "kind", "key", "message"])
    findings_table["message"] = worded_column(f["message"] for f in findings)
    findings_table = findings_table.sort_values("severity", key=lambda s: s.map({"limit": 0, "warning": 1}),
                                                kind="stable").reset_index(drop=True)
    balance = pd.Series({key: float(v[k]) for key, v in evaluation.balance.items()})
    summary = pd.Series({key: (int(v[k]) if key in COUNTS else float(v[k]))
                         for key, v in scenario_summary(evaluation).items()}, dtype=object)
    tears = _tear_table(net, evaluation.solution, k)
    message = (f"converged: {len(tears)} tear stream(s), {evaluation.iterations} iterations, "
               f"energy balance closes to {balance['relative_imbalance']:.1e}")
    metrics = {f"{name}.{m}": float(np.broadcast_to(v, (evaluation.batch,))[k])
               for name, r in evaluation.reports.items() for m, v in r.metrics.items()}
    return SimulationResult(True, message, evaluation.iterations, units, _stream_table(net, evaluation.solution, t, k), tears,
                            findings_table, balance, summary, net.case.title, net.case.file, network=net,
                            metrics=metrics, profiles={name: {key: np.asarray(v)[k] for key, v in r.profile.items()}
                                                       for name, r in evaluation.reports.items() if r.profile})


def _stream_table(net: Network, solution: TemperatureSolution, t, k) -> pd.DataFrame:
    """One row per segment; where a fluid is on an enthalpy curve, a vapour fraction column (and
    no m·cp on a saturation plateau, where cp is unbounded)."""
    flow = net.flow[k]
    rates = [float(m * np.broadcast_to(fluid.cp(np.full(net.batch, temperature)), (net.batch,))[k])
             for m, fluid, temperature in zip(flow, net.fluids, t)]
    columns = {
        "segment": [s.label for s in net.segments],
        "path_of": [s.origin for s in net.segments],
        "from_unit": [s.source for s in net.segments],
        "to_unit": [s.target for s in net.segments],
        "flow_kg_s": flow,
        "heat_capacity_rate_kw_k": [r if np.isfinite(r) else np.nan for r in rates],
        "temperature_c": t,
    }
    on_curves = [j for j, fluid in enumerate(net.fluids) if hasattr(fluid, "vapour_fraction")]
    if on_curves:
        vapour = np.full(len(net.segments), np.nan)
        h = enthalpies(net, on_curves, solution.state[k:k + 1, on_curves], solution.layout)[0]
        vapour[on_curves] = [net.fluids[j].vapour_fraction(value) for j, value in zip(on_curves, h)]
        columns["vapour_fraction"] = vapour
    table = pd.DataFrame({**columns, "utility": net.utility})
    table.index.name = "segment_id"
    return table


def _tear_table(net: Network, solution: TemperatureSolution, k) -> pd.DataFrame:
    rows = []
    for outcome in solution.blocks:
        if outcome.tears is None:
            continue
        for label, seg, residual in zip(tear_labels(net, outcome.block), outcome.block.tears, outcome.tears.residual[k]):
            rows.append({"tear_stream": label, "segment_id": seg, "block_units": len(outcome.block.units),
                         "tear_method": outcome.block.method, "iterations": outcome.tears.iterations,
                         "accelerators": " -> ".join(outcome.tears.methods), "final_residual_k": float(residual)})
    return pd.DataFrame(rows, columns=["tear_stream", "segment_id", "block_units", "tear_method", "iterations",
                                       "accelerators", "final_residual_k"])


__all__ = ["SimulationResult", "simulate", "tabulate", "raise_unless_success", "scenario_summary", "CAUTION",
           "worded_column",
           "UNIT_COLUMNS", "TOTALS"]
