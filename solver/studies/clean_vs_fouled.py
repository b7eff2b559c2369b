"""The case as fouled and as clean, side by side: what fouling costs per exchanger and at the
furnace, with the limits each state violates (cleaning can push a downstream exchanger past
its design temperature or into a temperature cross)."""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from hxtrain.network import CaseError, without_fouling
from hxtrain.units.protocol import FIRED_HEATERS, TOTALS, Worded

from hxtrain.solver.simulation.engine import ConvergenceError
from hxtrain.solver.simulation.evaluation import as_case
from hxtrain.solver.reporting.files import with_whole_counts
from hxtrain.solver.reporting.text import boxed, fitted
from hxtrain.solver.simulation.results import SimulationResult, simulate, worded_column


FOULING_TABLES = ("fouling_by_exchanger", "fouling_totals", "fouling_findings")
"""The comparison's tables, as named in output files."""


@dataclass
class FoulingComparison:
    fouled: SimulationResult
    clean: SimulationResult
    exchangers: pd.DataFrame
    """Per exchanger: duty and U fouled and clean; ``duty_lost_to_fouling_kw`` = clean - fouled
    (negative where fouling upstream moves duty onto this exchanger)."""
    totals: pd.DataFrame
    """Rows: the totals and furnace inlet temperatures, limits and warnings; columns ``fouled``,
    ``clean`` and ``clean - fouled``."""
    limits: pd.DataFrame
    """Every limit violated and warning, with the state (``fouled``/``clean``) it belongs to."""

    @property
    def fired_duty_penalty_kw(self) -> float:
        """Fired-heater duty that fouling costs: fouled minus clean, kW."""
        return float(-self.totals.loc[FIRED_HEATERS, "clean - fouled"])

    def tables(self) -> dict:
        """The comparison's tables for file output."""
        return dict(zip(FOULING_TABLES, (self.exchangers, self.totals, self.limits)))


def compare_clean_and_fouled(case) -> FoulingComparison:
    """Simulate ``case`` as it is (fouled) and with every fouling resistance at zero (clean)."""
    case = as_case(case)
    fouled = simulate(case)
    clean = simulate_state(without_fouling(case), "clean (every fouling resistance at zero)")
    exchangers = fouled.units.index[fouled.units["group"] == "exchangers"]
    f, c = fouled.units.loc[exchangers], clean.units.loc[exchangers]
    table = pd.DataFrame({"duty_fouled_kw": f["duty_kw"], "duty_clean_kw": c["duty_kw"]})
    table["duty_lost_to_fouling_kw"] = table["duty_clean_kw"] - table["duty_fouled_kw"]
    for column in ("u_service_w_m2_k", "u_clean_w_m2_k"):
        if column in f:
            table[column] = f[column]
    for column, result in (("limits_fouled", fouled), ("limits_clean", clean)):
        table[column] = worded_column((_limit_text(result, tag) for tag in exchangers), index=table.index)
    keys = [k for k in fouled.summary.index if k in TOTALS or k.endswith("_inlet_c")] + ["limit_violations", "warnings"]
    totals = pd.DataFrame({"fouled": fouled.summary[keys].astype(float), "clean": clean.summary[keys].astype(float)})
    totals["clean - fouled"] = totals["clean"] - totals["fouled"]
    limits = pd.concat([fouled.findings.assign(state="fouled"), clean.findings.assign(state="clean")],
                       ignore_index=True)
    return FoulingComparison(fouled, clean, table.rename_axis("exchanger"), totals.rename_axis("quantity"),
                             limits[["state", *fouled.findings.columns]])


def simulate_state(case, name: str) -> SimulationResult:
    """Simulate a derived case; an error names the scenario it comes from."""
    try:
        return simulate(case)
    except CaseError as exc:
        raise CaseError(f"scenario '{name}': {exc.message}", file=exc.file, path=exc.path, line=exc.line) from None
    except ConvergenceError as exc:
        raise ConvergenceError(f"scenario '{name}': {exc}", exc.diagnostics) from None


def _limit_text(result: SimulationResult, unit: str) -> str:
    limits = result.limits
    return Worded.joined("; ", limits.loc[limits["unit"] == unit, "message"])


def comparison_text(comparison: FoulingComparison) -> str:
    """Printed form: per exchanger, the totals, and each state's violated limits (in the
    command's units and width, :func:`hxtrain.solver.reporting.display_units.current`)."""
    from hxtrain.solver.reporting.console_tables import render, render_any
    from hxtrain.solver.reporting.display_units import current

    display = current()
    exchangers = comparison.exchangers.drop(columns=["limits_fouled", "limits_clean"])
    duty = display.column("x_kw")
    lines = ["", "Fouled against clean (every fouling resistance set to zero)",
             "-----------------------------------------------------------",
             *fitted("duty lost to fouling = clean - fouled: positive where fouling costs duty; negative where "
                     "fouling upstream leaves more duty to this exchanger.", display, ""),
             render(exchangers, display), "",
             render_any(with_whole_counts(comparison.totals), display),
             f"  fouling costs {display.value('duty', comparison.fired_duty_penalty_kw):,.{duty.digits}f} {duty.label} "
             "of fired-heater duty"]
    clean_limits = comparison.limits[(comparison.limits["state"] == "clean") & (comparison.limits["severity"] == "limit")]
    lines += boxed("LIMITS VIOLATED WHEN CLEAN", (f"{r.unit}: {display.message(r.message)}  [{r.key}]"
                                                  for r in clean_limits.itertuples()), display=display)
    if not len(clean_limits):
        lines.append("  clean: no limit violated")
    return "\n".join(lines)
