"""Large cyclic blocks converged on all their segments at once: Newton's method with a sparse
Jacobian whose pattern comes from the graph.

Sequential tearing makes each tear depend on every other (a dense tears x tears Jacobian, one
sweep of the whole block per column), which grows as n² on a long countercurrent coupling. Here
the unknowns are the temperatures of every segment inside the block, and the equations are
each unit's own: segment temperature = what its source unit computes from its inlets,
F(T) = G(T) - T. A unit's outlets depend only on its inlets, so dG/dT is sparse and its pattern
is known from the graph: column (inlet segment) i touches only the rows (outlet segments) of
the unit it enters. Two inlet segments of different units never share a row, so the columns are
coloured by the inlet's position at its unit (Curtis, Powell & Reid, IMA J. Appl. Math. 13,
1974, from memory): as many colours as the most inlets of one unit in the block, usually two.
The Jacobian costs one sweep per colour besides the sweep at the point itself, whatever the
size; for a single scenario all of them are one sweep, the perturbed copies stacked on the batch
axis (in a larger batch a unit's own values may differ along that axis, and the copies are swept
in turn). No unit of the block reads what another computes in a sweep, so
the units are asked class by class, each class in one stacked call
(:func:`~hxtrain.units.protocol.outlet_temperatures_together`): a sweep of thousands of
exchangers is a few calls, not thousands.

Each iteration solves (I - dG/dT) d = G(T) - T, one sparse LU per scenario (all scenarios as
one block-diagonal matrix). The step is the distance to the solution of the linearised
equations, so a block is converged when both the step and the residual are within the
tolerance; a step still above :data:`POLISH_BELOW` of it is then taken once more as a polish.
A step that raises a scenario's residual is halved (at most :data:`HALVINGS` times). With
constant cp and fixed UA the first step is the answer.

The answer is the last point evaluated: every segment of the block is then within the
tolerance both of what its unit computes there and of the solution. So every segment of the
block holds back a little enthalpy from the overall balance (what the balance check allows
for: :attr:`~.convergence.TearResult.held`); the tear set of :mod:`.sequencing` names the
segments reported as the block's tears.
"""

from __future__ import annotations

import numpy as np

from hxtrain.network.flows import solve_block_diagonal
from hxtrain.solver.simulation.engine import unit_groups

HALVINGS = 4
POLISH_BELOW = 1e-4
"""A converged scenario whose next step would move it more than this fraction of the tolerance
takes that step once more (kept where it lowers the residual), so that answers agree to
round-off rather than to the tolerance, as the tear iteration's polish does."""
FD_STEP = 1e-5
"""Relative forward-difference step (times max(1, |T|)). Small enough that the Jacobian of a
curved sweep (cp(T), U(T)) is good to about 1e-5, so Newton converges nearly quadratically;
large enough that the exchangers' own iteration (to 1e-12 of the inlet temperature) perturbs it
by less than 1e-6 and an affine sweep's Jacobian is exact to about 1e-11."""
METHOD = "Newton on every segment (sparse, coloured Jacobian)"


class BlockEquations:
    """The structure of one block: its internal segments, their colours and the Jacobian pattern."""

    def __init__(self, net, units):
        members = set(units)
        self.units = [u for u in units if net.outlets[u]]
        self.segments = np.array(sorted(s for u in self.units for s in net.outlets[u]
                                        if net.segments[s].target in members), int)
        position = {int(s): j for j, s in enumerate(self.segments)}
        colour = {}
        rows, cols, colours = [], [], []
        for name in units:
            internal = [s for s in net.inlets[name] if s in position]
            for c, seg in enumerate(internal):
                colour[seg] = c
            for out in net.outlets[name]:
                if out in position:
                    for seg in internal:
                        rows.append(position[out])
                        cols.append(position[seg])
                        colours.append(colour[seg])
        self.rows, self.cols, self.entry_colour = np.array(rows, int), np.array(cols, int), np.array(colours, int)
        self.colours = int(max(colour.values(), default=0)) + 1
        self.column_colour = np.array([colour[int(s)] for s in self.segments], int)
        self.leaving = np.array(sorted(s for u in self.units for s in net.outlets[u] if s not in position), int)
        # the block works on its own columns only: what its units read and write
        self.columns = np.array(sorted({s for u in self.units for s in (*net.inlets[u], *net.outlets[u])}), int)
        local = {int(s): j for j, s in enumerate(self.columns)}
        self.groups = unit_groups(net, self.units, local)
        self.local_segments = np.array([local[int(s)] for s in self.segments], int)
        self.local_leaving = np.array([local[int(s)] for s in self.leaving], int)

    def evaluate(self, net, layout, temperature, flow, x):
        """G at x (batch, segments of the block), the Jacobian entries (batch, pattern) and the
        temperatures of the segments leaving the block at x: a sweep of the block at x and at
        each colour's perturbed copy. A batch of one sweeps them all at once, stacked on the
        batch axis (a sweep of thousands of units is then a few calls, not three times as many);
        a larger batch sweeps them in turn, as a unit's own values may lie along that axis (a UA,
        a fouling resistance or a blend's fractions that differ from scenario to scenario)."""
        batch, n = x.shape
        step = FD_STEP * np.maximum(1.0, np.abs(x))
        points = [x] + [x + np.where(self.column_colour == c, step, 0.0) for c in range(self.colours)]
        columns, flows = temperature[:, self.columns], np.broadcast_to(flow, temperature.shape)[:, self.columns]
        if batch == 1:
            copies = len(points)
            swept = np.split(self._sweep(net, layout, np.tile(columns, (copies, 1)), np.tile(flows, (copies, 1)),
                                         np.concatenate(points)), copies)
        else:
            swept = [self._sweep(net, layout, columns, flows, point) for point in points]
        g = swept[0][:, self.local_segments]
        perturbed = np.stack([out[:, self.local_segments] for out in swept[1:]])  # (colours, batch, n)
        shifted = perturbed[self.entry_colour, :, self.rows].T  # (batch, pattern)
        derivative = (shifted - g[:, self.rows]) / step[:, self.cols]
        return g, derivative, swept[0][:, self.local_leaving]

    def _sweep(self, net, layout, columns, flows, point):
        """Every unit's outlets (batch, the block's columns) with the block's segments at ``point``
        and the rest of ``columns`` as they are: no unit of the block reads what another writes."""
        work = np.array(columns, order="F")
        work[:, self.local_segments] = point
        out = np.full(work.shape, np.nan, order="F")
        for group in self.groups:
            out[:, group.outlets] = group.outlets_from(net, layout, work, flows).transpose(1, 0, 2)
        return out

    def newton_step(self, residual, derivative):
        """d with (I - dG/dT) d = residual, per scenario."""
        n = self.segments.size
        diagonal = np.arange(n)
        rows = np.concatenate([diagonal, self.rows])
        cols = np.concatenate([diagonal, self.cols])
        values = np.concatenate([np.ones((residual.shape[0], n)), -derivative], axis=1)
        step, singular = solve_block_diagonal(rows, cols, values, n, residual[:, :, None])
        return np.where(singular[:, None], np.nan, step[:, :, 0])


def solve_block(net, layout, units, temperature, flow, guess, tolerance, max_iterations):
    """Converge the block of ``units`` on all its internal segments (see the module notes),
    starting from ``guess`` (a :class:`.segment_state.StartingPoint`: a previous solution's
    states where given, else its mean on every one).

    ``temperature`` (batch, segments) holds the converged inlets from earlier blocks; the
    block's segments (inside it and leaving it) are written in place, at the last point
    evaluated. Returns (equations, converged (batch,), iterations, history of the largest
    residual, sweeps, G at that point (batch, internal segments))."""
    equations = BlockEquations(net, units)
    batch = temperature.shape[0]
    x = layout.start(net, equations.segments, guess)
    state = equations.evaluate(net, layout, temperature, flow, x)  # (G, Jacobian entries, leaving) at x
    converged, polished = np.zeros(batch, bool), np.zeros(batch, bool)
    active = np.ones(batch, bool)
    history, sweeps, iterations = [], 1, 0
    while True:
        iterations += 1
        size = np.max(np.abs(state[0] - x), axis=1)
        history.append(np.array([np.max(np.where(active, size, 0.0))]))
        direction = equations.newton_step(state[0] - x, state[1])
        distance = np.max(np.abs(direction), axis=1)
        with np.errstate(invalid="ignore"):
            within = active & (distance <= tolerance) & (size <= tolerance)
            finished = within & ((distance <= POLISH_BELOW * tolerance) | polished)
        converged |= within
        active &= ~finished & np.isfinite(distance)
        polished |= within  # a converged scenario's next step is its polish, taken once
        if not np.any(active) or iterations >= max_iterations:
            break
        fraction = np.ones(batch)
        for halving in range(HALVINGS + 1):
            trial = np.where(active[:, None], x + fraction[:, None] * direction, x)
            candidate = equations.evaluate(net, layout, temperature, flow, trial)
            sweeps += 1
            with np.errstate(invalid="ignore"):
                worse = active & ~(np.max(np.abs(candidate[0] - trial), axis=1) <= size)
            if not np.any(worse & ~polished) or halving == HALVINGS:
                break
            fraction = np.where(worse & ~polished, fraction / 2.0, fraction)
        keep = active & ~(worse & polished)  # a polish that does not lower the residual is dropped
        active &= ~(worse & polished)
        x = np.where(keep[:, None], trial, x)
        state = tuple(np.where(keep[:, None], new, old) for new, old in zip(candidate, state))
    temperature[:, equations.segments] = x
    temperature[:, equations.leaving] = state[2]
    return equations, converged, iterations, history, sweeps, state[0]
