"""Flows of every segment for one scenario or many, before any temperature.

Flows are linear in the supplies and independent of temperature: each segment's flow is its
unit's flow coefficients times the unit's inlet flows, plus what the unit supplies. With
``A`` the segment-to-segment coefficient matrix and ``S`` each supply's entry point, the share of
each supply in each segment is ``R = (I - A)^-1 S``; the flows are ``R`` times the supply flows,
and ``R`` also gives each segment's make-up by supply (its fluid, whether it is a utility).

When no scenario changes a flow coefficient (split fractions fixed), one sparse factorization
serves every scenario. When split fractions vary, each scenario has its own matrix, solved in
one stacked dense solve (per scenario where the stack is singular). A scenario whose matrix is
singular (a recycle returning all of its flow) or whose flows do not balance is marked not
valid with its reason; nothing is raised here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

BALANCE_TOLERANCE = 1e-9
"""Relative tolerance on supplied against delivered flow, and on negative flows."""


@dataclass
class FlowSolution:
    flow: np.ndarray
    """(batch, segments) kg/s, Fortran order (a unit reads whole segments)."""
    response: np.ndarray
    """(rows, segments, supplies): each segment's share of each supply; rows is 1 where one
    matrix serves every scenario, else the batch."""
    supplies: np.ndarray
    """(batch, supplies) kg/s."""
    valid: np.ndarray
    """(batch,) the flows of that scenario exist and balance."""
    message: np.ndarray
    """(batch,) why a scenario's flows are not valid ("" where they are)."""


def solve_flows(units, inlets, outlets, segments: int, batch: int) -> FlowSolution:
    """Flows of every segment in every scenario through the units' flow coefficients.

    ``units`` maps names to unit models; ``inlets``/``outlets`` give each unit's segment
    indices in port order. A unit without inlets is a supply."""
    sources = [name for name, u in units.items() if not u.inlets]
    supplies = np.stack([np.broadcast_to(np.asarray(units[s].supplied_flow(), float)[..., 0], (batch,))
                         for s in sources], axis=1)
    entry = np.zeros((segments, len(sources)))
    for j, name in enumerate(sources):
        entry[outlets[name][0], j] = 1.0
    coefficients = {name: np.asarray(u.flow_coefficients(), dtype=float) for name, u in units.items()}
    varied = any(c.ndim == 3 for c in coefficients.values())
    valid = np.ones(batch, bool)
    message = np.full(batch, "", dtype=object)
    if varied:
        response = _stacked_response(coefficients, inlets, outlets, segments, batch, entry, valid, message)
    else:
        response = _sparse_response(coefficients, inlets, outlets, segments, entry)
        if response is None:
            response = np.full((1, segments, len(sources)), np.nan)
            valid[:] = False
            message[:] = _SINGULAR
    flow = np.asfortranarray(np.matmul(response, supplies[:, :, None])[..., 0])
    _check_balance(units, inlets, flow, supplies, valid, message)
    return FlowSolution(flow, response, supplies, valid, message)


_SINGULAR = "the flows cannot be balanced: a recycle returns all of its flow (check the splitter fractions)"


def _entries(coefficients, inlets, outlets):
    """(outlet segment, inlet segment, coefficient array) of every unit's flow coefficients."""
    for name, c in coefficients.items():
        for o, seg_out in enumerate(outlets[name]):
            for i, seg_in in enumerate(inlets[name]):
                yield seg_out, seg_in, c[..., o, i]


def _sparse_response(coefficients, inlets, outlets, n, entry):
    rows, cols, vals = list(range(n)), list(range(n)), [1.0] * n
    for seg_out, seg_in, c in _entries(coefficients, inlets, outlets):
        if c != 0.0:
            rows.append(seg_out)
            cols.append(seg_in)
            vals.append(-float(c))
    matrix = sp.csc_matrix((vals, (rows, cols)), shape=(n, n))
    try:
        with np.errstate(all="ignore"):
            response = np.asarray(spla.splu(matrix).solve(entry)).reshape(n, entry.shape[1])
    except RuntimeError:  # exactly singular
        return None
    return response[None]


def _stacked_response(coefficients, inlets, outlets, n, batch, entry, valid, message):
    matrix = np.broadcast_to(np.eye(n), (batch, n, n)).copy()
    for seg_out, seg_in, c in _entries(coefficients, inlets, outlets):
        matrix[:, seg_out, seg_in] -= np.broadcast_to(c, (batch,))
    right = np.broadcast_to(entry, (batch, n, entry.shape[1]))
    try:
        return np.linalg.solve(matrix, right)
    except np.linalg.LinAlgError:  # some scenario is singular: solve them one by one
        response = np.full((batch, n, entry.shape[1]), np.nan)
        for k in range(batch):
            try:
                response[k] = np.linalg.solve(matrix[k], entry)
            except np.linalg.LinAlgError:
                valid[k] = False
                message[k] = _SINGULAR
        return response


def _check_balance(units, inlets, flow, supplies, valid, message):
    supplied = supplies.sum(axis=1)
    delivered = sum(flow[:, inlets[n][0]] for n, u in units.items() if not u.outlets)
    with np.errstate(invalid="ignore"):
        bad = (~np.all(np.isfinite(flow), axis=1) | np.any(flow < -BALANCE_TOLERANCE * supplied[:, None], axis=1)
               | (np.abs(delivered - supplied) > BALANCE_TOLERANCE * supplied))
    for k in np.flatnonzero(bad & valid):
        message[k] = (f"the flows do not balance: {supplied[k]:.6g} kg/s supplied, {delivered[k]:.6g} kg/s "
                      "delivered to products (a recycle that returns nearly everything?)")
    valid &= ~bad
