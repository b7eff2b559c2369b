"""Variants side by side: the base case and each variant of a study simulated, with the
differences from the base, every scenario's limits and warnings, and the scenarios with no answer.

Every scenario is the base case with changes applied by key path (see
:mod:`hxtrain.network.changes`), checked like a case file and simulated.
"""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from hxtrain.network import CaseError
from hxtrain.network.study import Study
from hxtrain.solver.reporting.files import with_whole_counts
from hxtrain.solver.reporting.text import boxed, fitted, note_lines
from hxtrain.solver.simulation.engine import ConvergenceError
from hxtrain.solver.simulation.results import SimulationResult, simulate


def metric(result: SimulationResult, name: str) -> float:
    """A named result: ``TAG.duty``, ``TAG.hot_out``, ... ``TAG.inlet``/``TAG.outlet`` (the process
    stream of a heater or cooler, or a product's inlet), as the unit declares them."""
    tag = name.rpartition(".")[0]
    if name in result.metrics:
        return result.metrics[name]
    if tag not in result.units.index:
        raise CaseError(f"no unit '{tag}' in the results (for '{name}')")
    offered = ", ".join(m for m in result.metrics if m.startswith(tag + ".")) or "none"
    raise CaseError(f"'{name}' is not a result of {tag} (a {result.units.loc[tag, 'type']}; it has {offered})")


def key_outputs(result: SimulationResult) -> pd.Series:
    """The headline numbers of a run: the totals, heater inlet temperatures, limits violated and
    warnings."""
    s = result.summary
    keys = [k for k in s.index if k not in ("iterations",)]
    return s[keys].astype(float)


@dataclass
class Comparison:
    results: dict
    """scenario name -> SimulationResult (the base first), or None where it has no answer."""
    table: pd.DataFrame
    """Rows: key outputs, then each unit's duty and outlet temperatures; columns: scenarios and
    their differences from the base."""
    findings: pd.DataFrame
    """Every scenario's limits and warnings."""
    failures: dict = None
    """scenario name -> why it has no answer (a variant asking for the impossible, or one that
    did not converge): the other scenarios are still compared."""


def _unit_rows(result: SimulationResult) -> pd.Series:
    """Each exchanger's duty and outlets, each heater's and cooler's duty and outlet, named as the
    units' results are (``E-101.hot_out``, ``H-1.outlet``; see :func:`metric`) with their unit."""
    units = result.units[result.units["group"].isin(["exchangers", "heaters_and_coolers"])]
    rows = {}
    for tag, row in units.iterrows():
        one_stream = row["group"] == "heaters_and_coolers"
        for column in ("duty_kw", "hot_out_c", "cold_out_c"):
            if column in row and not pd.isna(row[column]):
                rows[f"{tag} {'outlet_c' if one_stream and column != 'duty_kw' else column}"] = row[column]
    return pd.Series(rows, dtype=float)


def try_scenario(name: str, build, changes=(), key=()):
    """Simulate the case ``build()`` makes, as scenario ``name`` of a study: (result, None), or
    (None, reason) where the scenario has no answer. Errors in the study itself (a change that
    does not apply) still raise, naming the study file and key path. ``changes`` (at ``key`` in
    the study): the scenario's changes, of which those that wrote at or under the key path the
    case's complaint names are named beside it (the value there is the study's, not the case's)."""
    case = build()
    try:
        return simulate(case), None
    except (CaseError, ConvergenceError) as exc:
        return None, f"scenario '{name}': {exc}{_changed_here(exc, changes, key)}"


def _changed_here(exc, changes, key) -> str:
    from hxtrain.network.changes import written_path
    from hxtrain.network.errors import format_path

    blamed = tuple(getattr(exc, "path", ()))
    made = [format_path(tuple(key) + (k,)) for k, change in enumerate(changes)
            if blamed and written_path(change)[:len(blamed)] == blamed]
    return f" (a value the study set: {', '.join(made)})" if made else ""


def compare(study: Study) -> Comparison:
    """The base case and every variant, simulated and tabulated side by side; a variant with no
    answer is reported as such, beside the others."""
    results, failures = {}, {}
    scenarios = {"base": (study.case, (), ())}  # name: (the case it builds, its changes, their key)
    scenarios.update({name: (lambda changes=changes, key=key: study.case(changes, key), changes, key)
                      for name, (_, changes, key) in study.variants.items()})
    for name, (build, changes, key) in scenarios.items():
        results[name], reason = try_scenario(name, build, changes, key)
        if reason:
            failures[name] = reason
    answered = {n: r for n, r in results.items() if r is not None}
    columns = {name: (pd.concat([key_outputs(r), _unit_rows(r)]) if r is not None else pd.Series(dtype=float))
               for name, r in results.items()}
    table = pd.DataFrame(columns)
    for name in study.variants:
        table[f"{name} - base"] = table[name] - table["base"]
    columns = ["scenario", "unit", "severity", "kind", "key", "message"]
    findings = pd.concat([r.findings.assign(scenario=n) for n, r in answered.items()] or [pd.DataFrame(columns=columns)],
                         ignore_index=True)
    return Comparison(results, table.rename_axis("quantity"), findings[columns], failures)


def study_text(study: Study, comparison: Comparison, specifications) -> str:
    """Printed form of a comparison: the table, each scenario's limits and warnings, specifications
    (in the command's units and width, :func:`hxtrain.solver.reporting.display_units.current`)."""
    from hxtrain.solver.reporting.console_tables import render_any
    from hxtrain.solver.reporting.display_units import current

    display = current()
    lines = [f"hxtrain study: {study.title or study.file}", *note_lines(display), ""]
    for name, (description, _, _) in study.variants.items():
        lines.append(f"  {name}: {description}" if description else f"  {name}")
    as_named = {column: column for column in comparison.table.columns}  # scenario names as the study writes them
    lines += ["", render_any(with_whole_counts(comparison.table), display, words=as_named)]
    for spec in specifications:
        lines += ["", *fitted(f"Specification {spec.name}: {'met' if spec.success else 'NOT MET'} - "
                              f"{display.message(spec.message)} ({spec.evaluations} simulations)", display)]
    findings = comparison.findings
    limits = findings[findings["severity"] == "limit"]
    warnings = findings[findings["severity"] == "warning"]
    if len(warnings):
        lines += ["", f"Warnings: {len(warnings)}"]
        lines += [line for r in warnings.itertuples()
                  for line in fitted(f"  * [{r.scenario}] {r.unit}: {display.message(r.message)}", display)]
    lines += boxed("SCENARIOS WITH NO ANSWER", (display.message(m) for m in (comparison.failures or {}).values()),
                   display=display)
    lines += boxed("LIMITS VIOLATED", (f"[{r.scenario}] {r.unit}: {display.message(r.message)}  [{r.key}]"
                                       for r in limits.itertuples()), display=display)
    return "\n".join(lines)
