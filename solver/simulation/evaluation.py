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

import time

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from hxtrain.network import Case, Network, build_network, case_from_mapping, load_case
from hxtrain.units.protocol import TOTALS, Finding, Inlets, check, reports_together, splits_by_state
from hxtrain.units.properties import PHYSICAL_RANGE

from hxtrain.solver.simulation.engine import TemperatureSolution, solve_temperatures, unit_groups
from hxtrain.solver.simulation.sequencing import plan_calculation

SUCCESS, NOT_CONVERGED, NOT_VALID, CHECK_FAILED = 0, 1, 2, 3
STATUS_NAMES = {SUCCESS: "success", NOT_CONVERGED: "not converged", NOT_VALID: "not valid",
                CHECK_FAILED: "check failed"}
BALANCE_TOLERANCE = 1e-6
"""Largest relative imbalance of the units' enthalpy balances (the overall imbalance less what
the tears hold back) accepted as an answer. Units close their own balances to about 1e-12; a
larger imbalance means a unit did not meet its own balance."""
SPLIT_TOLERANCE = 1e-7
"""kg/kg: the outer iteration of a network with flash drums stops where no drum's vapour
fraction changes by more than this from one pass to the next."""
MAX_OUTER_ITERATIONS = 50
"""Most passes (flows, then states) of the outer iteration before a scenario whose drums have
not settled is called not converged."""


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
    planning_seconds: float = 0.0
    """CPU seconds spent finding the calculation order (0 where it was given): a batch's timing
    leaves it out (:func:`.batch._timed_here`)."""

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


def evaluate(case, values: dict | None = None, *, tolerance=None, max_iterations=None, plan=None) -> Evaluation:
    """Evaluate the scenarios of ``case`` given by ``values`` (key path -> one value per
    scenario; none: the case as written, a batch of one). Bad input in the case itself raises
    CaseError; each scenario's own trouble becomes its status and message. ``plan``: the
    calculation order of this case found before (:func:`.sequencing.plan_calculation`), which
    scenarios do not change."""
    case = as_case(case)
    tolerance = case.settings.tolerance if tolerance is None else tolerance
    max_iterations = case.settings.max_iterations if max_iterations is None else max_iterations
    net = build_network(case, values or {})
    planning = time.process_time()
    plan = plan_calculation(net.graph) if plan is None else plan
    planning = time.process_time() - planning
    drums = [name for name, unit in net.units.items() if splits_by_state(unit)]
    with np.errstate(all="ignore"):  # rows that are not valid may hold NaN; they are masked in assess
        if not drums:  # flows first, once: nothing they carry depends on the states
            solution = solve_temperatures(net, tolerance=tolerance, max_iterations=max_iterations, batch=net.batch,
                                          plan=plan)
            evaluation = assess(net, solution, tolerance)
        else:
            solution, unsettled = settle_splits(net, drums, plan, tolerance, max_iterations)
            evaluation = assess(net, solution, tolerance, unsettled)
    evaluation.planning_seconds = planning
    return evaluation


def settle_splits(net: Network, drums, plan, tolerance, max_iterations):
    """The outer iteration of a network whose flows follow the states (flash drums): solve the
    states with the drums' current vapour fractions, take each drum's fraction from its inlet
    state, solve the flows with it, until no fraction moves by more than :data:`SPLIT_TOLERANCE`
    (at most :data:`MAX_OUTER_ITERATIONS` passes). Successive substitution, accelerated per drum
    and scenario by Wegstein's secant step (its factor bounded to [0.2, 5]; fractions kept in
    [0, 1]). Returns the solution at the last flows and, over the batch, the reason a scenario's
    drums did not settle ("" where they did)."""
    from hxtrain.network.graph import resolve_flows

    units = [net.units[name] for name in drums]
    upstream, downstream, feed_forward = _parts(net, drums, plan)
    last_x = last_g = solution = None
    for passes in range(1, MAX_OUTER_ITERATIONS + 1):
        if solution is None:  # what no drum's split reaches is solved once, in the first pass
            part = upstream if feed_forward else plan
        else:
            part = downstream
        solution = _solved(net, plan, part, solution, tolerance, max_iterations)
        complete = part is not upstream
        x = np.stack([np.broadcast_to(u.split, (net.batch,)) for u in units], axis=1)
        g = np.stack([_split_at_state(net, name, unit, solution) for name, unit in zip(drums, units)], axis=1)
        change = np.abs(g - x)
        moving = np.isfinite(change) & (change > SPLIT_TOLERANCE)
        if not np.any(moving):
            if complete:
                break
            continue
        step = np.ones_like(x)
        if last_x is not None:  # Wegstein: w = 1 / (1 - s), s the secant slope of g over x
            with np.errstate(all="ignore"):
                slope = (g - last_g) / (x - last_x)
            step = np.where(np.isfinite(slope) & (np.abs(x - last_x) > 0.0), np.clip(1.0 / (1.0 - slope), 0.2, 5.0),
                            1.0)
        following = np.where(moving, np.clip(x + step * (g - x), 0.0, 1.0), x)
        last_x, last_g = x, g
        for j, unit in enumerate(units):
            unit.set_split(following[:, j], passes)
        resolve_flows(net)
    for unit in units:
        unit.set_split(unit.split, passes)
    unsettled = np.full(net.batch, "", dtype=object)
    for k in np.flatnonzero(np.any(moving, axis=1)):
        j = int(np.argmax(np.where(moving[k], change[k], -1.0)))
        unsettled[k] = (f"flash drum {drums[j]}: its vapour fraction did not settle in {MAX_OUTER_ITERATIONS} outer "
                        f"iterations of flows and states (last change {change[k, j]:.2g} kg/kg, tolerance "
                        f"{SPLIT_TOLERANCE:g})")
    return solution, unsettled


def _parts(net, drums, plan):
    """The blocks of ``plan`` that no drum's split reaches (their flows and so their states do not
    depend on it: solved once), the blocks at or below a drum (solved again in each pass), and
    whether every drum's inlet lies in the first part (then the first pass solves only that part:
    it is all the drums' fractions need)."""
    import networkx as nx

    below = set(drums).union(*(nx.descendants(net.graph, name) for name in drums))
    upstream = [block for block in plan if not below.intersection(block.units)]
    downstream = [block for block in plan if below.intersection(block.units)]
    feed_forward = all(net.segments[net.inlets[name][0]].source not in below for name in drums)
    return upstream, downstream, feed_forward


def _solved(net, plan, part, previous, tolerance, max_iterations):
    """The states with the blocks of ``part`` solved (again) and the rest as in ``previous``; the
    outcomes of all blocks solved so far, in ``plan``'s order."""
    solution = solve_temperatures(net, tolerance=tolerance, max_iterations=max_iterations, batch=net.batch,
                                  plan=part, start=previous)
    if previous is None or part is plan:
        return solution
    position = {id(block): k for k, block in enumerate(plan)}

    def places(outcome):  # a run of blocks (block_runs) stands where its blocks stood
        return [position[id(b)] for b in (outcome.block.parts or (outcome.block,))]

    again = {position[id(block)] for block in part}
    kept = [o for o in previous.blocks if again.isdisjoint(places(o))]
    solution.blocks = sorted(kept + list(solution.blocks), key=lambda outcome: places(outcome)[0])
    solution.converged = solution.converged & previous.converged
    return solution


def _split_at_state(net, name, unit, solution):
    """(batch,) the vapour fraction drum ``name`` takes from its inlet state in ``solution``."""
    seg = net.inlets[name][0]
    flow = np.broadcast_to(net.flow, (net.batch, len(net.segments)))
    inlets = Inlets(solution.temperature[:, [seg]], flow[:, [seg]], (net.fluids[seg],))
    return np.broadcast_to(unit.split_from_state(inlets), (net.batch,))


def assess(net: Network, solution: TemperatureSolution, tolerance, unsettled=None) -> Evaluation:
    """The rest of an evaluation once temperatures are solved: unit reports, totals, findings,
    the balance and each scenario's status (the stages are apart for the size benchmark).
    ``unsettled``: over the batch, why the flash drums' split did not settle ("" where it did)."""
    with np.errstate(all="ignore"):
        t = solution.temperature
        flow = np.broadcast_to(net.flow, t.shape)
        reports = unit_reports(net, solution, flow)
        heat_added = sum(np.broadcast_to(np.asarray(r.heat_added, float), (net.batch,)) for r in reports.values())
        balance = enthalpy_balance(net, solution, flow, heat_added)
        units_imbalance = balance["imbalance_kw"] - tear_holdback(net, solution, flow)
        scale = sum(np.abs(balance[k]) for k in ("enthalpy_in_supplies_kw", "heat_added_net_kw",
                                                  "enthalpy_out_products_kw"))
        units_relative = np.abs(units_imbalance) / np.where(scale > 0, scale, 1.0)
    status = np.full(net.batch, SUCCESS)
    message = np.full(net.batch, "", dtype=object)
    reason_key = np.full(net.batch, None, dtype=object)

    def fail(where, code, text, key):
        """Give scenarios ``where`` (not yet failed) status ``code``; ``text`` and ``key`` are
        a value for all or one per scenario (``text`` may be a function of the scenario, worded
        only where one fails)."""
        where = np.asarray(where, bool) & (status == SUCCESS)
        for k in np.flatnonzero(where):
            status[k] = code
            message[k] = text if isinstance(text, str) else text(k) if callable(text) else text[k]
            reason_key[k] = key[k] if isinstance(key, np.ndarray) else key

    fail(~net.valid, NOT_VALID, net.message, net.reason_key)
    findings = [(name, f) for name, r in reports.items() for f in r.findings]
    for name, finding in findings:
        if finding.severity == "input":
            fail(finding.active, NOT_VALID, finding.messages, tuple(finding.key.split(".")))
    # a supply outside its fluid's data is the reason first: an iteration it sent off the numbers is its consequence
    supplies = [net.outlets[name][0] for name, unit in net.units.items() if not unit.inlets]
    _temperature_checks(net, t, flow, fail, supplies)
    lost = solution.left_the_numbers(net.batch)
    fail(~solution.converged, NOT_CONVERGED, lambda k: _not_converged_text(t[k], lost[k]), None)
    if unsettled is not None:
        fail(unsettled != "", NOT_CONVERGED, unsettled, None)
    range_findings = _temperature_checks(net, t, flow, fail)
    with np.errstate(invalid="ignore"):
        fail(~(units_relative <= BALANCE_TOLERANCE), CHECK_FAILED,
             lambda k: f"the units' energy balance does not close: imbalance {units_imbalance[k]:.3g} kW besides "
                       f"what the tear tolerance admits (relative {units_relative[k]:.1e}, more than "
                       f"{BALANCE_TOLERANCE:g}); no results are reported", None)
    ok = status == SUCCESS
    everywhere = bool(np.all(ok))  # then no finding needs masking
    shown = [(unit, f if everywhere else _masked(f, ok)) for unit, f in findings + range_findings
             if f.severity != "input"]
    sums = {name: 0.0 for name in TOTALS}
    for r in reports.values():  # in unit order, as a sum over all units (adding 0 changes nothing)
        for name, value in r.totals.items():
            if name in sums:
                sums[name] = sums[name] + value
    totals = {name: np.where(ok, np.broadcast_to(value, (net.batch,)), np.nan) for name, value in sums.items()}
    highlights = {k: np.where(ok, v, np.nan) for r in reports.values() for k, v in r.highlights.items()}
    balance = {k: np.where(ok, v, np.nan) for k, v in balance.items()}
    return Evaluation(net, solution, reports, shown, totals, highlights, balance, status, message, reason_key,
                      tolerance)


def unit_reports(net, solution: TemperatureSolution, flow) -> dict:
    """Every unit's report at the solution, in unit order; units of one class are asked
    together (one stacked rating where their class has one). A unit that touches a segment
    carrying enthalpy gets its inlets' enthalpies too."""
    found = {}
    t, layout = solution.temperature, solution.layout
    for group in unit_groups(net, net.units):
        inlets = group.inlets_from(t, flow)
        if layout is not None and layout.units.intersection(group.names):
            inlets.h = np.stack([layout.temperature_and_enthalpy(net, segs, solution.state[:, segs])[1]
                                 for segs in group.segments[0]])
        found.update(zip(group.names, reports_together(group.units, inlets)))
    return {name: found[name] for name in net.units}


def _masked(finding: Finding, ok) -> Finding:
    return Finding(finding.kind, finding.severity, finding.active & ok, finding.template, finding.values, finding.key,
                   finding.excess)


def _not_converged_text(t, lost=False):
    """Why a scenario with temperatures ``t`` (segments,) did not converge (worded only where one
    did not); ``lost``: its iteration stopped on a value that is not a number."""
    if np.all(np.isfinite(t)) and not lost:
        return "temperatures did not converge"
    return ("temperatures did not converge (some left the physical range on the way: a duty or target that no "
            "temperature can meet?)")


def enthalpy_balance(net, solution: TemperatureSolution, flow, heat_added):
    """Overall balance (reference 0 °C, or a curve's own), each entry an array over the batch:
    enthalpy in with the supplies, heat added from outside (heaters + / coolers -), enthalpy out
    with the products, the imbalance and the imbalance relative to the sum of the magnitudes."""
    def enthalpy(seg):
        return flow[:, seg] * enthalpies(net, [seg], solution.state[:, [seg]], solution.layout)[:, 0]

    supplied = sum(enthalpy(net.outlets[n][0]) for n, u in net.units.items() if not u.inlets)
    delivered = sum(enthalpy(net.inlets[n][0]) for n, u in net.units.items() if not u.outlets)
    imbalance = supplied + heat_added - delivered
    scale = np.abs(supplied) + np.abs(heat_added) + np.abs(delivered)
    relative = np.abs(imbalance) / np.where(scale > 0, scale, 1.0)
    return {"enthalpy_in_supplies_kw": supplied, "heat_added_net_kw": heat_added + 0.0 * supplied,
            "enthalpy_out_products_kw": delivered, "imbalance_kw": imbalance, "relative_imbalance": relative}


def tear_holdback(net, solution, flow):
    """Enthalpy (kW, over the batch) that the tear segments hold back from the overall balance:
    for each tear, its flow times the enthalpy at the temperature its producing unit computes
    from the answer, less that at the temperature the tear holds (equal to within the tear
    tolerance, not to round-off). With every unit closing its own balance this is the overall
    imbalance exactly (supplies + heat added - products)."""
    held = np.zeros(net.batch)
    state, layout = solution.state, solution.layout
    for outcome in solution.blocks:
        if outcome.tears is None:
            continue
        if outcome.tears.computed is not None:  # what the producing units compute at the answer is known
            segments = outcome.tears.held if outcome.tears.held is not None else outcome.block.tears
            held = held + np.sum(flow[:, segments] * (enthalpies(net, segments, outcome.tears.computed, layout)
                                                      - enthalpies(net, segments, state[:, segments], layout)), axis=1)
            continue
        for seg in outcome.block.tears:
            source = net.segments[seg].source
            inlet, outlet = net.inlets[source], net.outlets[source]
            produced = layout.outlets(net, source, inlet, outlet, state[:, inlet], flow[:, inlet])
            computed = produced[:, [outlet.index(seg)]]
            held = held + flow[:, seg] * (enthalpies(net, [seg], computed, layout)
                                          - enthalpies(net, [seg], state[:, [seg]], layout))[:, 0]
    return held


def enthalpies(net, segments, state, layout=None):
    """h (kJ/kg) of each segment in ``segments`` at the solver's ``state`` (batch,
    len(segments)): temperatures, or enthalpy over its scale where a segment carries enthalpy
    (:mod:`.segment_state`). One call per fluid model, so a long block costs a few calls, not
    one per segment."""
    result = np.empty(state.shape)
    temperature = state
    columns: dict = {}
    for j, seg in enumerate(segments):
        if layout is not None and layout.enthalpy[seg]:
            result[:, j] = state[:, j] * layout.scale[seg]
            continue
        columns.setdefault(id(net.fluids[seg]), []).append(j)
    for where in columns.values():
        fluid = net.fluids[segments[where[0]]]
        if len(where) == 1:
            result[:, where[0]] = fluid.enthalpy(temperature[:, where[0]])
        else:
            result[:, where] = fluid.enthalpy(temperature[:, where])
    return result


def _temperature_checks(net, t, flow, fail, segments=None):
    """Temperatures that no answer may have: not found (NaN), below absolute zero or above the
    physical range; or outside a fluid's data range (not valid, unless the fluid allows
    extrapolation: then a warning finding, returned). The tests run on all segments at once
    (one call per fluid), or on ``segments`` only where given; only the segments where one fails
    are looked at one by one, in segment order."""
    low, high = PHYSICAL_RANGE
    checked = np.arange(t.shape[1]) if segments is None else np.asarray(segments, int)
    t_checked = t if segments is None else t[:, checked]
    flowing = (flow if segments is None else flow[:, checked]) > 0.0
    with np.errstate(invalid="ignore"):
        lost = flowing & ~((t_checked >= low) & (t_checked <= high))
    attention = np.any(lost, axis=0)
    by_member: dict = {}
    for j, index in enumerate(checked):
        for member in net.fluids[index].members():
            by_member.setdefault(id(member), (member, []))[1].append(j)
    for member, columns in by_member.values():
        with np.errstate(invalid="ignore"):
            outside = flowing[:, columns] & member.outside_range(t_checked[:, columns])
        attention[np.array(columns)[np.any(outside, axis=0)]] = True
    warnings = []
    for j in np.flatnonzero(attention):
        index = int(checked[j])
        seg, fluid = net.segments[index], net.fluids[index]
        column = t_checked[:, j]
        fail(lost[:, j], NOT_VALID, f"segment {seg.label} has no possible temperature: its enthalpy lies outside "
                                        f"{low:g} to {high:g} °C (a duty too large for the flow it acts on?)",
             (*net.case.keys.get(seg.source, (seg.source,)),))
        for member in fluid.members():
            with np.errstate(invalid="ignore"):
                outside = flowing[:, j] & member.outside_range(column)
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
                # a supply outside its own fluid's data is the supply temperature's fault, not the data's
                supply = net.case.keys.get(seg.source, ())[:1] == ("streams",)
                key = (*net.case.keys[seg.source], "supply_temperature") if supply else \
                    tuple(member.range_key.split("."))
                finding = check("property_range", "input", outside, ".".join(key),
                                text + ("; give a supply temperature within it, or widen the data" if supply else
                                        "; widen the data") + " (or set 'extrapolate: true' on the fluid to accept "
                                                              "extrapolated properties)", **values)
                fail(outside, NOT_VALID, finding.messages, key)
    return warnings
