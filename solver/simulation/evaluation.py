"""One evaluation for one scenario or many: flows, temperatures, unit reports, totals, findings,
the energy balance and a status per scenario.

Every way of running hxtrain goes through :func:`evaluate`: ``simulate`` is its view of a batch
of one (raising where the scenario is not valid), ``simulate_batch`` its view as one row per
scenario. Nothing here raises for a scenario's own trouble; each scenario gets a status and a
reason, like a scipy.optimize result:

====== ============================================================================
status meaning
====== ============================================================================
0      success: converged, every check passed
1      the tear temperatures did not converge
2      not valid: the scenario asks for the impossible (a value out of its bounds, flows
       that cannot balance, a duty that takes a stream below absolute zero, a fluid out
       of its data range, a unit finding of severity ``input``)
3      a check failed: the units' energy balances do not close to
       :data:`BALANCE_TOLERANCE` (see below)
====== ============================================================================

A scenario that is not a success has no numbers: its temperatures, totals and findings are
masked (NaN / inactive) in every view.

Two checks, each of one thing. The tear tolerance (``settings.tolerance``, K) bounds how far
each tear temperature may lie from what its producing unit computes at the answer. The balance
check tests the units: the overall imbalance (supplies + heat added - products) less the
enthalpy the tears hold back (each tear's flow times h(T computed) - h(T held), which is what
the tolerance admits) must be within :data:`BALANCE_TOLERANCE` of the enthalpy flows. So a
converged answer never fails the balance check for its tolerance alone, whatever the tolerance,
and a unit that creates or loses heat fails it at any tolerance. The reported imbalance is the
overall one, tears included.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from hxtrain.network import Case, Network, build_network, case_from_mapping, load_case
from hxtrain.units.protocol import TOTALS, Finding, check
from hxtrain.units.properties import PHYSICAL_RANGE

from hxtrain.solver.simulation.engine import TemperatureSolution, inlets_of, solve_temperatures
from hxtrain.solver.simulation.sequencing import plan_calculation

SUCCESS, NOT_CONVERGED, NOT_VALID, CHECK_FAILED = 0, 1, 2, 3
STATUS_NAMES = {SUCCESS: "success", NOT_CONVERGED: "not converged", NOT_VALID: "not valid",
                CHECK_FAILED: "check failed"}
BALANCE_TOLERANCE = 1e-6
"""Largest relative imbalance of the units' enthalpy balances (the overall imbalance less what
the tears hold back) accepted as an answer. Units close their own balances to about 1e-12; a
larger imbalance means a unit did not meet its own balance."""


@dataclass
class Evaluation:
    """Everything one evaluation found, each array over the scenarios (the batch axis)."""

    net: Network
    solution: TemperatureSolution
    reports: dict
    """unit name -> UnitReport over the batch."""
    findings: list
    """(unit name, Finding) over the batch, masked to successful scenarios."""
    totals: dict
    highlights: dict
    balance: dict
    status: np.ndarray
    message: np.ndarray
    """(batch,) why a scenario is not a success ("" where it is)."""
    reason_key: np.ndarray
    """(batch,) the case-file key path (a tuple) the reason is about, where one is known."""
    tolerance: float = 0.0
    labels: dict = field(default_factory=dict)

    @property
    def success(self) -> np.ndarray:
        return self.status == SUCCESS

    @property
    def batch(self) -> int:
        return self.net.batch

    @property
    def iterations(self) -> int:
        return self.solution.iterations

    def reason(self, k) -> str:
        """Why scenario ``k`` is not a success, with the key path it is about ("" if it is)."""
        key = self.reason_key[k]
        return f"{'.'.join(map(str, key))}: {self.message[k]}" if key else self.message[k]

    @property
    def temperature(self) -> np.ndarray:
        """(batch, segments) °C, NaN where a scenario is not a success."""
        return np.where(self.success[:, None], self.solution.temperature, np.nan)


def as_case(case) -> Case:
    """A checked case from a file path, a mapping with the case-file keys, or a Case."""
    if isinstance(case, Case):
        return case
    if isinstance(case, dict):
        return case_from_mapping(case)
    return load_case(Path(case))


def evaluate(case, values: dict | None = None, *, tolerance=None, max_iterations=None) -> Evaluation:
    """Evaluate the scenarios of ``case`` given by ``values`` (key path -> one value per
    scenario; none: the case as written, a batch of one). Bad input in the case itself raises
    CaseError; each scenario's own trouble becomes its status and message."""
    case = as_case(case)
    tolerance = case.settings.tolerance if tolerance is None else tolerance
    max_iterations = case.settings.max_iterations if max_iterations is None else max_iterations
    net = build_network(case, values or {})
    with np.errstate(all="ignore"):  # rows that are not valid may hold NaN; they are masked below
        solution = solve_temperatures(net, tolerance=tolerance, max_iterations=max_iterations, batch=net.batch,
                                      plan=plan_calculation(net.graph))
        t = solution.temperature
        flow = np.broadcast_to(net.flow, t.shape)
        reports = {name: unit.report(inlets_of(net, name, t, flow)) for name, unit in net.units.items()}
        heat_added = sum(np.broadcast_to(np.asarray(r.heat_added, float), (net.batch,)) for r in reports.values())
        balance = enthalpy_balance(net, t, flow, heat_added)
        units_imbalance = balance["imbalance_kw"] - tear_holdback(net, solution, t, flow)
        scale = sum(np.abs(balance[k]) for k in ("enthalpy_in_supplies_kw", "heat_added_net_kw",
                                                  "enthalpy_out_products_kw"))
        units_relative = np.abs(units_imbalance) / np.where(scale > 0, scale, 1.0)
    status = np.full(net.batch, SUCCESS)
    message = np.full(net.batch, "", dtype=object)
    reason_key = np.full(net.batch, None, dtype=object)

    def fail(where, code, text, key):
        """Give scenarios ``where`` (not yet failed) status ``code``; ``text`` and ``key`` are
        a value for all or one per scenario."""
        where = np.asarray(where, bool) & (status == SUCCESS)
        for k in np.flatnonzero(where):
            status[k] = code
            message[k] = text if isinstance(text, str) else text[k]
            reason_key[k] = key[k] if isinstance(key, np.ndarray) else key

    fail(~net.valid, NOT_VALID, net.message, net.reason_key)
    findings = [(name, f) for name, r in reports.items() for f in r.findings]
    for name, finding in findings:
        if finding.severity == "input":
            fail(finding.active, NOT_VALID, finding.messages, tuple(finding.key.split(".")))
    fail(~solution.converged, NOT_CONVERGED, _not_converged_text(net, solution, t), None)
    range_findings = _temperature_checks(net, t, flow, fail)
    with np.errstate(invalid="ignore"):
        fail(~(units_relative <= BALANCE_TOLERANCE), CHECK_FAILED,
             [f"the units' energy balance does not close: imbalance {b:.3g} kW besides what the tear tolerance "
              f"admits (relative {r:.1e}, more than {BALANCE_TOLERANCE:g}); no results are reported"
              for b, r in zip(units_imbalance, units_relative)], None)
    ok = status == SUCCESS
    shown = [(unit, _masked(f, ok)) for unit, f in findings + range_findings if f.severity != "input"]
    totals = {name: np.where(ok, sum(np.broadcast_to(r.totals.get(name, 0.0), (net.batch,)) for r in reports.values()),
                             np.nan) for name in TOTALS}
    highlights = {k: np.where(ok, v, np.nan) for r in reports.values() for k, v in r.highlights.items()}
    balance = {k: np.where(ok, v, np.nan) for k, v in balance.items()}
    return Evaluation(net, solution, reports, shown, totals, highlights, balance, status, message, reason_key,
                      tolerance)


def _masked(finding: Finding, ok) -> Finding:
    return Finding(finding.kind, finding.severity, finding.active & ok, finding.template, finding.values, finding.key)


def _not_converged_text(net, solution, t):
    lost = ~np.all(np.isfinite(t), axis=1)
    return np.where(lost, "temperatures did not converge (some left the physical range on the way: a duty or "
                          "target that no temperature can meet?)", "temperatures did not converge")


def enthalpy_balance(net, temperature, flow, heat_added):
    """Overall balance (reference 0 °C), each entry an array over the batch: enthalpy in with the
    supplies, heat added from outside (heaters + / coolers -), enthalpy out with the products,
    the imbalance and the imbalance relative to the sum of the magnitudes."""
    def enthalpy(seg):
        return flow[:, seg] * net.fluids[seg].enthalpy(temperature[:, seg])

    supplied = sum(enthalpy(net.outlets[n][0]) for n, u in net.units.items() if not u.inlets)
    delivered = sum(enthalpy(net.inlets[n][0]) for n, u in net.units.items() if not u.outlets)
    imbalance = supplied + heat_added - delivered
    scale = np.abs(supplied) + np.abs(heat_added) + np.abs(delivered)
    relative = np.abs(imbalance) / np.where(scale > 0, scale, 1.0)
    return {"enthalpy_in_supplies_kw": supplied, "heat_added_net_kw": heat_added + 0.0 * supplied,
            "enthalpy_out_products_kw": delivered, "imbalance_kw": imbalance, "relative_imbalance": relative}


def tear_holdback(net, solution, t, flow):
    """Enthalpy (kW, over the batch) that the tear segments hold back from the overall balance:
    for each tear, its flow times the enthalpy at the temperature its producing unit computes
    from the answer, less that at the temperature the tear holds (equal to within the tear
    tolerance, not to round-off). With every unit closing its own balance this is the overall
    imbalance exactly (supplies + heat added - products)."""
    held = np.zeros(net.batch)
    for outcome in solution.blocks:
        if outcome.tears is None:
            continue
        for seg in outcome.block.tears:
            source = net.segments[seg].source
            produced = net.units[source].outlet_temperatures(inlets_of(net, source, t, flow))
            computed = produced[:, net.outlets[source].index(seg)]
            fluid = net.fluids[seg]
            held = held + flow[:, seg] * (fluid.enthalpy(computed) - fluid.enthalpy(t[:, seg]))
    return held


def _temperature_checks(net, t, flow, fail):
    """Temperatures that no answer may have: not found (NaN), below absolute zero or above the
    physical range; or outside a fluid's data range (not valid, unless the fluid allows
    extrapolation: then a warning finding, returned)."""
    low, high = PHYSICAL_RANGE
    warnings = []
    for seg, fluid in zip(net.segments, net.fluids):
        column = t[:, seg.index]
        flowing = flow[:, seg.index] > 0.0
        with np.errstate(invalid="ignore"):
            lost = flowing & ~((column >= low) & (column <= high))
        fail(lost, NOT_VALID, f"segment {seg.label} has no possible temperature: its enthalpy lies outside "
                              f"{low:g} to {high:g} °C (a duty too large for the flow it acts on?)",
             (*net.case.keys.get(seg.source, (seg.source,)),))
        for member in fluid.members():
            with np.errstate(invalid="ignore"):
                outside = flowing & member.outside_range(column)
            if not np.any(outside):
                continue
            range_low, range_high = member.valid_range
            text = ("segment {label} reaches {t:.1f} °C, outside the data range {low:g} to {high:g} °C of fluid "
                    "'{fluid}'")
            values = dict(label=seg.label, t=column, low=range_low, high=range_high, fluid=member.name)
            if member.extrapolate:
                warnings.append((seg.target, check("property_extrapolation", "warning", outside, member.range_key,
                                                   text + ": properties extrapolated", **values)))
            else:
                finding = check("property_range", "input", outside, member.range_key,
                                text + "; widen the data (or set 'extrapolate: true' on the fluid to accept "
                                       "extrapolated properties)", **values)
                fail(outside, NOT_VALID, finding.messages, tuple(member.range_key.split(".")))
    return warnings
