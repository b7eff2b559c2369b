"""The balances of a network as reconciliation constraints: variables, measurements, residuals and
their Jacobian, built from the units' declared balances (no unit type is named here).

Variables are the temperature and the mass flow of every stream segment and each unit's own
unknowns (a heater's duty). Quantities a unit declares equal whatever its settings — a flow
through an exchanger side, a splitter branch's temperature — are merged into one variable
(union-find), so that the constraints left are the real balances: an exchanger's enthalpy
balance, a heater's, a mixer's mass and enthalpy, a splitter's mass. A measurement (a tag) is a
measured variable; a variable no tag measures is unmeasured; a variable several tags measure
is measured by the first and tied to the others by equality constraints.

Each segment's fluid is the network's (:mod:`hxtrain.network.graph`): where supplies of several
fluids mix, the blend's make-up is the base case's, not the window's (a stated approximation:
the window's flows would change it only where fluids of different cp mix in changing shares).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hxtrain.units.protocol import PortStates

TEMPERATURE, FLOW, UNKNOWN = "temperature", "flow", "unknown"
FD_STEP = 1e-5
"""Relative step of the central differences of the Jacobian (each unit's balances are smooth
functions of its own ports: enthalpies and products of flows and enthalpies; a central
difference errs by about step² times the third derivative, ~1e-10 relative here)."""


@dataclass(frozen=True)
class Variable:
    """One variable of the reconciliation: ``kind`` temperature (°C) or flow (kg/s) of segment
    ``index``, or a unit's own unknown (``unit``, ``name``)."""

    kind: str
    index: int = -1
    unit: str = ""
    name: str = ""


class _Merge:
    """Union-find over variable slots."""

    def __init__(self, size):
        self.parent = list(range(size))

    def find(self, i):
        while self.parent[i] != i:
            self.parent[i] = self.parent[self.parent[i]]
            i = self.parent[i]
        return i

    def join(self, a, b):
        a, b = self.find(a), self.find(b)
        if a != b:
            self.parent[max(a, b)] = min(a, b)


class NetworkBalances:
    """Reconciliation constraints of a built network (:func:`hxtrain.network.build_network`).

    ``measured`` lists, per tag in order, the variable it measures: ``(TEMPERATURE, segment)``,
    ``(FLOW, segment)`` or ``(UNKNOWN, unit, name)`` (a heater's duty)."""

    def __init__(self, net, measured):
        self.net = net
        segments = len(net.segments)
        units = list(net.units.items())
        # slots: T of each segment, m of each segment, then each unit's own unknowns
        slots = [Variable(TEMPERATURE, s) for s in range(segments)] + [Variable(FLOW, s) for s in range(segments)]
        self._unknown_slot = {}
        for name, unit in units:
            for unknown in unit.balance_unknowns():
                self._unknown_slot[(name, unknown)] = len(slots)
                slots.append(Variable(UNKNOWN, unit=name, name=unknown))
        merge = _Merge(len(slots))
        for name, unit in units:
            for quantity, port_a, port_b in unit.balance_identities():
                a = net.outlets[name][unit.outlets.index(port_a[1])] if isinstance(port_a, tuple) else \
                    net.inlets[name][unit.inlets.index(port_a)]
                b = net.outlets[name][unit.outlets.index(port_b)]
                offset = 0 if quantity == TEMPERATURE else segments
                merge.join(offset + a, offset + b)
        roots = sorted({merge.find(i) for i in range(len(slots))})
        column = {root: k for k, root in enumerate(roots)}
        self.variables = [slots[root] for root in roots]
        self.slot_column = np.array([column[merge.find(i)] for i in range(len(slots))])
        """Column of the merged variable for every slot (T of segments, m of segments, unknowns)."""
        self.segments = segments
        probe = np.ones((1, len(self.variables)))
        self.units = [(name, unit) for name, unit in units if self.unit_residuals(name, probe, unit).shape[1]]
        self.tag_column = np.array([self.column(m) for m in measured], dtype=int)
        first = {}
        self.ties = []  # (tag index, tag index measuring the same variable first)
        for i, c in enumerate(self.tag_column):
            if c in first:
                self.ties.append((i, first[c]))
            else:
                first[c] = i
        self.primary = np.array(sorted(first.values()), dtype=int)
        """Tags that stand for their variable (the first tag measuring it)."""
        self.unmeasured = np.array([c for c in range(len(self.variables)) if c not in first], dtype=int)
        self._local = [self.local_columns(name) for name, unit in self.units]
        self.equations = self.constraints(np.ones((1, len(self.tag_column))), np.ones((1, len(self.unmeasured)))).shape[1]

    def column(self, measured) -> int:
        """The variable column a measurement ``(kind, segment)`` or ``(UNKNOWN, unit, name)`` reads."""
        kind = measured[0]
        if kind == UNKNOWN:
            return int(self.slot_column[self._unknown_slot[(measured[1], measured[2])]])
        return int(self.slot_column[measured[1] + (0 if kind == TEMPERATURE else self.segments)])

    def local_columns(self, name):
        """Columns of the variables unit ``name``'s balances depend on (its ports, its unknowns)."""
        unit = self.net.units[name]
        ins, outs = self.net.inlets[name], self.net.outlets[name]
        seg = list(ins) + list(outs)
        t = [self.slot_column[s] for s in seg]
        m = [self.slot_column[self.segments + s] for s in seg]
        own = [self.slot_column[self._unknown_slot[(name, k)]] for k in unit.balance_unknowns()]
        return np.array(t + m + own, dtype=int)

    def unit_residuals(self, name, z, unit=None):
        """Residuals of unit ``name``'s balances at the variables ``z`` (W, N)."""
        net = self.net
        unit = net.units[name] if unit is None else unit
        ins, outs = net.inlets[name], net.outlets[name]
        t = lambda segs: z[:, self.slot_column[list(segs)]] if segs else np.empty((z.shape[0], 0))  # noqa: E731
        m = lambda segs: z[:, self.slot_column[[self.segments + s for s in segs]]] if segs else np.empty((z.shape[0], 0))  # noqa: E731
        states = PortStates(t(ins), m(ins), t(outs), m(outs), tuple(net.fluids[s] for s in ins),
                            tuple(net.fluids[s] for s in outs))
        own = [self.slot_column[self._unknown_slot[(name, k)]] for k in unit.balance_unknowns()]
        return unit.balances(states, z[:, own] if own else np.empty((z.shape[0], 0)))

    # ------------------------------------------------------------------ the reconciler's view

    def full(self, x, u) -> np.ndarray:
        """All variables (W, N) from the measured (tags) and the unmeasured ones."""
        x, u = np.atleast_2d(x), np.atleast_2d(u)
        z = np.empty((x.shape[0], len(self.variables)))
        z[:, self.tag_column[self.primary]] = x[:, self.primary]
        z[:, self.unmeasured] = u
        return z

    def split(self, z):
        """Measured (per tag) and unmeasured parts of the variables ``z``."""
        return z[:, self.tag_column], z[:, self.unmeasured]

    def constraints(self, x, u) -> np.ndarray:
        z = self.full(x, u)
        parts = [self.unit_residuals(name, z, unit) for name, unit in self.units]
        parts += [(x[:, i] - x[:, j])[:, None] for i, j in self.ties]
        return np.concatenate(parts, axis=1) if parts else np.empty((z.shape[0], 0))

    def jacobian(self, x, u):
        """(dg/dx (W, m, tags), dg/du (W, m, unmeasured)) by central differences, each unit's
        residuals differenced over its own variables only."""
        z = self.full(x, u)
        windows, columns = z.shape
        dz = np.zeros((windows, self.equations, columns))
        row = 0
        for (name, unit), local in zip(self.units, self._local):
            base = self.unit_residuals(name, z, unit)
            rows = slice(row, row + base.shape[1])
            for c in np.unique(local):
                step = FD_STEP * np.maximum(np.abs(z[:, c]), 1.0)
                up, down = z.copy(), z.copy()
                up[:, c] += step
                down[:, c] -= step
                dz[:, rows, c] = (self.unit_residuals(name, up, unit)
                                  - self.unit_residuals(name, down, unit)) / (2.0 * step[:, None])
            row += base.shape[1]
        jx = np.zeros((windows, self.equations, len(self.tag_column)))
        jx[:, :, self.primary] = dz[:, :, self.tag_column[self.primary]]
        for k, (i, j) in enumerate(self.ties):
            jx[:, row + k, i], jx[:, row + k, j] = 1.0, -1.0
        return jx, dz[:, :, self.unmeasured]
