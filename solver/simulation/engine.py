"""Sequential-modular solution of a network's segment states, over a batch of scenarios.

Blocks (see :mod:`.sequencing`) are solved in order. An acyclic block is one sweep of its units;
a cyclic block is converged on its tear segments (see :mod:`.convergence`), or with more tears on
all its segments (:mod:`.block_newton`); a run of chained cyclic blocks is converged together
(:mod:`.block_runs`). Units are reached only through the :class:`hxtrain.units.protocol.UnitModel`
protocol. A segment's state is its temperature, or its enthalpy where its fluid has a saturation
plateau (:mod:`.segment_state`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from hxtrain.network.errors import HxtrainError
from hxtrain.units.protocol import Inlets, StackedInlets, outlet_temperatures_together

from hxtrain.solver.simulation.convergence import TearResult, converge_tears
from hxtrain.solver.simulation.segment_state import SegmentState, StartingPoint, segment_state

if TYPE_CHECKING:  # the order is found by networkx, loaded only when a network is solved
    from hxtrain.solver.simulation.sequencing import Block


LARGE_BLOCK_TEARS = 3
"""Blocks with more tears than this are converged on all their segments at once
(:mod:`.block_newton`): a dense Jacobian over the tears would cost one sweep of the block per
tear. Smaller blocks keep the tear iteration of :mod:`.convergence`."""


class ConvergenceError(HxtrainError):
    """No answer: the tears of a block did not converge, or the converged answer failed a check
    (its energy balance does not close). Carries the diagnostic, never the numbers."""

    exit_code = 3

    def __init__(self, message, diagnostics=None):
        super().__init__(message)
        self.diagnostics = diagnostics or {}


@dataclass
class BlockOutcome:
    block: Block
    tears: TearResult | None


@dataclass
class TemperatureSolution:
    temperature: np.ndarray
    """(batch, segments) °C."""
    blocks: list[BlockOutcome]
    converged: np.ndarray | None = None
    """Per scenario: every block converged."""
    state: np.ndarray | None = None
    """(batch, segments) what the solver converged (:mod:`.segment_state`): ``temperature``
    itself where no segment carries enthalpy."""
    layout: SegmentState | None = None

    @property
    def iterations(self) -> int:
        return sum(b.tears.iterations for b in self.blocks if b.tears is not None)

    def left_the_numbers(self, batch) -> np.ndarray:
        """Per scenario, whether some block's tears or their sweep stopped on a value that is not
        a number (a unit met a state no temperature has)."""
        lost = np.zeros(batch, bool)
        for b in self.blocks:
            if b.tears is not None:
                lost |= ~np.all(np.isfinite(b.tears.residual), axis=1)
        return lost

    def scenario_iterations(self, batch) -> np.ndarray:
        """Per scenario, the tear iterations it took part in, summed over the blocks (a
        scenario that converged early is not charged with another's iterations)."""
        total = np.zeros(batch, int)
        for b in self.blocks:
            if b.tears is not None:
                total = total + (b.tears.taken if b.tears.taken is not None else b.tears.iterations)
        return total


@dataclass
class UnitGroup:
    """Units of one class and port counts, evaluated together in one stacked call: their names,
    models, the columns of their inlets and outlets (units, ports) and their inlet fluids."""

    names: list
    units: list
    inlets: np.ndarray
    outlets: np.ndarray
    fluids: list
    segments: tuple = ((), ())
    """Per unit, its inlet and its outlet segments (indices in the network)."""

    def inlets_from(self, temperature, flow) -> StackedInlets:
        """What enters each unit of the group, from (batch, columns) arrays."""
        return StackedInlets(temperature[:, self.inlets].transpose(1, 0, 2), flow[:, self.inlets].transpose(1, 0, 2),
                             self.fluids)

    def outlets_from(self, net, layout: SegmentState, state, flow) -> np.ndarray:
        """Outlet states (units, batch, outlets) from (batch, columns) states and flows: one stacked
        call, or unit by unit where a unit of the group touches a segment that carries enthalpy."""
        if not layout.units.intersection(self.names):
            return outlet_temperatures_together(self.units, self.inlets_from(state, flow))
        return np.stack([layout.outlets(net, name, self.segments[0][k], self.segments[1][k], state[:, self.inlets[k]],
                                        flow[:, self.inlets[k]]) for k, name in enumerate(self.names)])


def unit_groups(net, names, column=None) -> list[UnitGroup]:
    """The units ``names`` by class and port counts (a unit's type is only a key here: the solver
    never asks which it is). ``column`` maps a segment to its column (default: itself)."""
    column = column if column is not None else {s: s for s in range(len(net.segments))}
    groups: dict = {}
    for name in names:
        unit = net.units[name]
        groups.setdefault((type(unit), len(unit.inlets), len(unit.outlets)), []).append(name)

    def columns(members, ports):
        return np.array([[column[s] for s in ports[n]] for n in members], int).reshape(len(members), -1)

    return [UnitGroup(members, [net.units[n] for n in members], columns(members, net.inlets),
                      columns(members, net.outlets), [tuple(net.fluids[s] for s in net.inlets[n]) for n in members],
                      ([net.inlets[n] for n in members], [net.outlets[n] for n in members]))
            for members in groups.values()]


def _sweep(net, layout, units, temperature, flow, tear_slots=None):
    """Evaluate ``units`` in order, writing outlet states; outlets that are tear segments go
    to ``tear_slots`` (segment -> column of the returned array) instead of the working array."""
    computed = None
    if tear_slots:
        computed = np.empty((temperature.shape[0], len(tear_slots)))
    for name in units:
        outlet = net.outlets[name]
        if not outlet:
            continue
        inlet = net.inlets[name]
        t_out = layout.outlets(net, name, inlet, outlet, temperature[:, inlet], flow[:, inlet])
        for j, seg in enumerate(outlet):
            if tear_slots and seg in tear_slots:
                computed[:, tear_slots[seg]] = t_out[:, j]
            else:
                temperature[:, seg] = t_out[:, j]
    return computed


def initial_guess(net, batch):
    """A first guess for tear temperatures: the mean of the supply temperatures."""
    nothing = Inlets(np.empty((batch, 0)), np.empty((batch, 0)), ())
    supplies = [u.outlet_temperatures(nothing)[:, 0] for u in net.units.values() if not u.inlets]
    return np.mean(supplies, axis=0)


def solve_temperatures(net, *, tolerance, max_iterations, batch=1, plan=None, start=None) -> TemperatureSolution:
    """Temperatures of every segment over the batch. A block that fails marks its scenarios
    unconverged in ``TemperatureSolution.converged`` (their temperatures must not be reported;
    :func:`convergence_error` words the diagnosis). Runs of chained cyclic blocks are converged
    together (:mod:`.block_runs`). ``start``: a solution whose segments outside ``plan``'s
    blocks stand as they are (``plan`` then the part of the calculation order to solve again)
    and whose states start the iterations of the blocks solved again; the result's blocks are
    ``plan``'s."""
    from hxtrain.solver.simulation.block_runs import with_runs
    from hxtrain.solver.simulation.sequencing import plan_calculation

    if plan is None:
        plan = plan_calculation(net.graph)
    layout = segment_state(net)
    flow = np.broadcast_to(net.flow, (batch, len(net.segments)))  # (segments,) or per scenario
    # column-major: a unit reads and writes whole segments, each then contiguous over the batch.
    # It holds the segments' states: temperatures, and h/c where a segment carries enthalpy
    temperature = np.full((batch, len(net.segments)), np.nan, order="F") if start is None else \
        np.array(start.state, order="F")
    outcomes = []
    converged = np.ones(batch, bool)
    guess = StartingPoint(initial_guess(net, batch), None if start is None else np.asarray(start.state))
    for block in with_runs(net, plan, batch, LARGE_BLOCK_TEARS):
        converged &= _solve_block(net, layout, block, temperature, flow, guess, tolerance, max_iterations, outcomes)
    return TemperatureSolution(layout.temperatures(net, temperature), outcomes, converged, temperature, layout)


def _solve_block(net, layout, block, temperature, flow, guess, tolerance, max_iterations, outcomes) -> np.ndarray:
    """Solve one block of the plan in place, its outcome appended to ``outcomes``; returns which
    scenarios converged. A run of blocks (``block.parts``) that does not converge in every
    scenario is solved again block by block, their outcomes in its place."""
    if not block.tears:
        _sweep(net, layout, block.units, temperature, flow)
        outcomes.append(BlockOutcome(block, None))
        return np.ones(temperature.shape[0], bool)
    if block.parts or len(block.tears) > LARGE_BLOCK_TEARS:
        result = _converge_large_block(net, layout, block, temperature, flow, guess, tolerance, max_iterations)
        if block.parts and not result.success:
            return np.logical_and.reduce([_solve_block(net, layout, part, temperature, flow, guess, tolerance,
                                                       max_iterations, outcomes) for part in block.parts])
    else:
        slots = {seg: j for j, seg in enumerate(block.tears)}
        last, whole, reach = {}, {}, {}

        # every evaluation rewrites all of the block's segments from the tears and the blocks
        # before it, so it may work in place; ``last`` says at which tears the array now is
        # (None after a sweep of part of the block), ``whole`` what the last whole sweep left
        def evaluate(x):
            temperature[:, block.tears] = x
            last["x"] = x
            whole.update(x=np.array(x), g=_sweep(net, layout, block.units, temperature, flow, slots), saved=None)
            return whole["g"].copy()

        def one_tear(x, j):
            """g at x, which differs from the last whole sweep's point in tear j only: the units
            tear j does not reach keep what that sweep gave them (about half of the crude demo's)."""
            others = np.arange(x.shape[1]) != j
            if not whole or not np.array_equal(x[:, others], whole["x"][:, others]):
                return evaluate(x)
            if "written" not in reach:  # the block's structure: found once, on its first column
                reach["written"] = _written(net, block)
            if whole["saved"] is None:
                whole["saved"] = temperature[:, reach["written"]].copy()
            else:  # back to the whole sweep's states before the next column
                temperature[:, reach["written"]] = whole["saved"]
            temperature[:, block.tears] = x
            last["x"] = None
            units, produced = reach[j] if j in reach else reach.setdefault(j, _reached(net, block, j))
            computed = _sweep(net, layout, units, temperature, flow, slots)
            g = whole["g"].copy()
            g[:, produced] = computed[:, produced]
            return g

        result = converge_tears(evaluate, layout.start(net, block.tears, guess), tolerance, max_iterations, one_tear)
        if not np.array_equal(last["x"], result.x):
            evaluate(result.x)
    outcomes.append(BlockOutcome(block, result))
    return result.converged


def _written(net, block) -> list:
    """The segments a sweep of ``block`` writes: its units' outlets and its tears."""
    return sorted({seg for name in block.units for seg in net.outlets[name]}.union(block.tears))


def _reached(net, block, j) -> tuple[list, list]:
    """The units of ``block`` whose outlets change with its tear ``j`` (the rest held), in the
    block's order, and the tears (their columns) those units compute."""
    tears = set(block.tears)
    changed, reached = {block.tears[j]}, []
    for name in block.units:  # the block's order: a unit's inlets are computed before it
        if changed.intersection(net.inlets[name]):
            reached.append(name)
            changed.update(seg for seg in net.outlets[name] if seg not in tears)
    produced = [k for k, seg in enumerate(block.tears) if any(seg in net.outlets[name] for name in reached)]
    return reached, produced


def _converge_large_block(net, layout, block, temperature, flow, guess, tolerance, max_iterations) -> TearResult:
    """A block with many tears: Newton on all its segments (:mod:`.block_newton`). Every
    segment of the block is held (within the tolerance of what its unit computes); the block's
    tear set is what the tables report."""
    from hxtrain.solver.simulation.block_newton import METHOD, solve_block  # sparse solvers: loaded when needed

    equations, converged, iterations, history, sweeps, computed = solve_block(
        net, layout, block.units, temperature, flow, guess, tolerance, max_iterations)
    x = np.array(temperature[:, block.tears])
    where = np.searchsorted(equations.segments, block.tears)
    return TearResult(x, converged, iterations, np.abs(computed[:, where] - x), history, [METHOD],
                      evaluations=sweeps, held=equations.segments, computed=computed)


def convergence_error(net, solution: TemperatureSolution, tolerance) -> ConvergenceError:
    """The diagnosis of the first block whose tears did not converge, as an exception."""
    for outcome in solution.blocks:
        if outcome.tears is not None and not outcome.tears.success:
            return ConvergenceError(_failure_message(net, outcome.block, outcome.tears, tolerance),
                                    _diagnostics(net, outcome.block, outcome.tears))
    return ConvergenceError("the temperatures did not converge")


def tear_labels(net, block):
    return [net.segments[s].label for s in block.tears]


def _diagnostics(net, block, result: TearResult):
    return {
        "units": list(block.units),
        "tears": tear_labels(net, block),
        "iterations": result.iterations,
        "methods": list(result.methods),
        "final_residual": np.max(result.residual, axis=0).tolist(),
        "history": [h.tolist() for h in result.history],
    }


def _failure_message(net, block, result: TearResult, tolerance):
    labels = tear_labels(net, block)
    last = np.max(result.residual, axis=0)
    worst = sorted(zip(last, labels), reverse=True)[:5]
    listing = "; ".join(f"{label}: {value:.3g} K" for value, label in worst)
    trail = [float(np.max(h)) for h in result.history]
    shown = trail[:: max(1, len(trail) // 8)][-7:] + [float(np.max(last))]  # the history ends at the last residual
    failed = int(np.sum(~result.converged))
    lost = "" if np.all(np.isfinite(last)) else (
        " The temperatures left the physical range on the way (a unit met a state no temperature has: most "
        "often a duty or a target inside the loop that no temperature can meet, such as a cooler taking more "
        "than the loop's flow holds above absolute zero); the iteration stopped there.")
    return (
        f"temperatures did not converge in the block of units {', '.join(block.units)} after "
        f"{result.iterations} iterations ({' -> '.join(result.methods)}); tolerance {tolerance:g} K, "
        f"{failed} of {result.converged.size} scenario(s) unconverged. Largest last residuals by tear stream: "
        f"{listing}. Residual history (K): {', '.join(f'{v:.3g}' for v in shown)}.{lost} No results are reported."
    )
