"""Flows of every segment for one scenario or many, before any temperature.

Flows are linear in the supplies and independent of temperature: each segment's flow is its
unit's flow coefficients times the unit's inlet flows, plus what the unit supplies. With ``A``
the segment-to-segment coefficient matrix and ``S`` each supply's entry point, the flows are
``(I - A)^-1 S s`` for the supply flows ``s``.

Supplies come in groups (the network groups them by fluid and by whether they are utility
streams); besides the total flows this module says which groups reach each segment and, where
more than one does, how much of each (a blend's make-up). Everything is sparse, so the cost
grows with the number of segments and coefficients, not with their square:

* split fractions fixed: one sparse LU factorization of ``I - A`` serves every scenario; a large
  network solves it for one right-hand side per group (its supplies at their fixed flows) and
  one per supply whose flow varies by scenario (scaled afterwards): a handful of solves however
  many supplies (a small one keeps each supply's share, up to :data:`SHARE_LIMIT` numbers);
* split fractions varied: each scenario has its own matrix; the scenarios' matrices are solved
  together as one block-diagonal sparse system (in chunks), never as a dense matrix.

A unit with inlets may also add a flow of its own to an outlet (``supplied_flow``): a splitter
branch set by flow carries its set flow whatever enters, and the branches left take the rest, so
flows are affine in the supplies. Those terms enter the totals as supplies of their own; the
make-up of each segment (which supplies it carries) then comes from a second solve in which such
a unit divides its inlet in the proportions the totals found. A unit's outlet may also start a
new fluid (a reactor's effluent is not its feed: ``restarts``): in that second solve the outlet
is cut from what feeds it and carries its total flow as a supply of the new fluid's group, so
mass is conserved and what lies downstream carries the new fluid.

A scenario whose matrix is singular (a recycle returning all of its flow) or whose flows do not
balance is marked not valid with its reason; nothing is raised here.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

BALANCE_TOLERANCE = 1e-9
"""Relative tolerance on supplied against delivered flow, and on negative flows."""
SHARE_LIMIT = 20_000
"""Largest segments x supplies block kept whole (each supply's share of each segment)."""
DENSE_SEGMENTS = 300
"""Largest network (in segments) whose fixed-split flows are solved with a dense matrix."""
CHUNK_UNKNOWNS = 400_000
"""Most unknowns (segments times scenarios) in one block-diagonal factorization of varied splits."""


@dataclass
class FlowSolution:
    flow: np.ndarray
    """(batch, segments) kg/s, Fortran order (a unit reads whole segments)."""
    carried: np.ndarray
    """(segments, groups) whether supplies of each group reach the segment in any scenario."""
    valid: np.ndarray
    """(batch,) the flows of that scenario exist and balance."""
    message: np.ndarray
    """(batch,) why a scenario's flows are not valid ("" where they are)."""
    makeup: dict = field(default_factory=dict)
    """segment -> (batch, groups) flow of each group, for the segments that more than one group
    reaches (a blend)."""


def solve_flows(units, inlets, outlets, segments: int, batch: int, groups=None, restarts=None) -> FlowSolution:
    """Flows of every segment in every scenario through the units' flow coefficients.

    ``units`` maps names to unit models; ``inlets``/``outlets`` give each unit's segment
    indices in port order. A unit without inlets is a supply; ``groups`` gives each supply (in
    the order of ``units``) a group number (all 0 without it). ``restarts`` maps a segment that
    starts a new fluid (a fluid-changing unit's outlet) to the group of that fluid."""
    sources = [name for name, u in units.items() if not u.inlets]
    groups = np.zeros(len(sources), int) if groups is None else np.asarray(groups, int)
    supplies = np.stack([np.broadcast_to(np.asarray(units[s].supplied_flow(), float)[..., 0], (batch,))
                         for s in sources], axis=1)
    entry = np.array([outlets[s][0] for s in sources], int)  # the segment each supply feeds
    coefficients = {name: np.asarray(u.flow_coefficients(), dtype=float) for name, u in units.items()}
    offsets = _offsets(units, outlets, batch)
    restarts = dict(restarts or {})
    valid = np.ones(batch, bool)
    message = np.full(batch, "", dtype=object)
    if offsets or restarts:
        count = groups.max(initial=max(restarts.values(), default=0)) + 1
        segs = np.array(sorted(offsets), int)
        added = np.stack([offsets[s] for s in segs], axis=1) if offsets else np.zeros((batch, 0))
        flow = _solve(coefficients, inlets, outlets, segments, batch, np.concatenate([entry, segs]),
                      np.hstack([supplies, added]), np.concatenate([groups, np.full(segs.size, count)]),
                      valid, message)[0]
        ends = np.array(sorted(restarts), int)
        _, carried, makeup = _solve(
            _proportions(units, coefficients, inlets, outlets, flow), inlets, outlets, segments, batch,
            np.concatenate([entry, ends]), np.hstack([supplies, flow[:, ends]]),
            np.concatenate([groups, [restarts[s] for s in ends]]).astype(int), valid.copy(), message.copy(),
            cut=set(restarts), count=count)
    else:
        flow, carried, makeup = _solve(coefficients, inlets, outlets, segments, batch, entry, supplies, groups, valid,
                                       message)
    flow = np.asfortranarray(flow)
    _check_balance(units, inlets, flow, supplies, valid, message)
    return FlowSolution(flow, carried, valid, message, makeup)


def _solve(coefficients, inlets, outlets, n, batch, entry, supplies, groups, valid, message, cut=(), count=None):
    """Flows, groups carried and make-up, through one factorization (fixed coefficients) or the
    block-diagonal solve (coefficients varied by scenario). ``cut``: segments fed by their supply
    alone (their rows of the coefficient matrix left out); ``count``: how many groups to report."""
    rows, cols, values = _pattern(coefficients, inlets, outlets, n, batch, cut)
    solve = _fixed_splits if values.ndim == 1 else _varied_splits
    flow, carried, makeup = solve(rows, cols, values, n, entry, supplies, groups, valid, message)
    if count is not None and carried.shape[1] < count:
        carried = np.hstack([carried, np.zeros((n, count - carried.shape[1]), bool)])
        makeup = {s: np.hstack([v, np.zeros((v.shape[0], count - v.shape[1]))]) for s, v in makeup.items()}
    return flow, carried, makeup


def _offsets(units, outlets, batch) -> dict:
    """segment -> (batch,) flow that a unit with inlets adds to that outlet (a splitter branch
    set by flow: + on the set branch, - on the branches that take the rest)."""
    offsets = {}
    for name, unit in units.items():
        if not unit.inlets:
            continue
        added = np.asarray(unit.supplied_flow(), dtype=float)
        for o, seg in enumerate(outlets[name]):
            if np.any(added[..., o] != 0.0):
                offsets[seg] = np.broadcast_to(added[..., o], (batch,)).astype(float)
    return offsets


def _proportions(units, coefficients, inlets, outlets, flow) -> dict:
    """The coefficients with each unit that adds flows of its own (one inlet) dividing its inlet
    in the proportions the solved flows give, scenario by scenario: what the make-up follows."""
    result = dict(coefficients)
    for name, unit in units.items():
        if not unit.inlets or not np.any(np.asarray(unit.supplied_flow()) != 0.0):
            continue
        if len(unit.inlets) != 1:
            raise ValueError(f"{name}: a unit that adds flows of its own must have one inlet")
        m_in = flow[:, inlets[name][0]]
        m_out = flow[:, outlets[name]]
        base = np.broadcast_to(coefficients[name][..., 0], m_out.shape)
        with np.errstate(invalid="ignore", divide="ignore"):
            shares = np.where((m_in > 0.0)[:, None], m_out / np.where(m_in > 0.0, m_in, 1.0)[:, None], base)
        result[name] = np.nan_to_num(shares)[..., None]
    return result


_SINGULAR = "the flows cannot be balanced: a recycle returns all of its flow (check the splitter fractions)"


def _pattern(coefficients, inlets, outlets, n, batch, cut=()):
    """The entries of ``I - A``: rows, columns and values (one value per entry, or (batch,
    entries) where some coefficient varies by scenario); the rows of ``cut`` keep only their 1."""
    rows, cols, vals = list(range(n)), list(range(n)), [np.ones(())] * n
    for name, c in coefficients.items():
        for o, seg_out in enumerate(outlets[name]):
            if seg_out in cut:
                continue
            for i, seg_in in enumerate(inlets[name]):
                value = c[..., o, i]
                if np.any(value != 0.0):
                    rows.append(seg_out)
                    cols.append(seg_in)
                    vals.append(-value)
    varied = any(np.ndim(v) > 0 for v in vals)
    values = np.stack([np.broadcast_to(v, (batch,)) for v in vals], axis=1) if varied else np.array(vals, float)
    return np.array(rows, int), np.array(cols, int), values


def _fixed_splits(rows, cols, values, n, entry, supplies, groups, valid, message):
    """One sparse factorization for every scenario. A small network keeps each supply's share
    of each segment (a dense segments x supplies block: the arithmetic of earlier versions, to
    the last digit); a large one is solved for few right-hand sides: each group's fixed supplies
    together, and each supply whose flow varies by scenario on its own (scaled afterwards)."""
    batch, count = supplies.shape[0], groups.max(initial=0) + 1
    per_supply = n * supplies.shape[1] <= SHARE_LIMIT
    varies = np.flatnonzero(np.ptp(supplies, axis=0) > 0.0) if batch > 1 and not per_supply else np.array([], int)
    fixed = np.setdiff1d(np.arange(supplies.shape[1]), varies)
    if per_supply:
        columns = [np.bincount(entry[j:j + 1], minlength=n).astype(float) for j in range(supplies.shape[1])]
    else:
        columns = [np.bincount(entry[fixed], np.where(groups[fixed] == g, supplies[0, fixed], 0.0), minlength=n)
                   for g in range(count)] + [np.bincount(entry[j:j + 1], minlength=n).astype(float) for j in varies]
    try:
        with np.errstate(all="ignore"):
            solved = _solve_once(rows, cols, values, n, np.stack(columns, axis=1))
    except (RuntimeError, np.linalg.LinAlgError):  # exactly singular
        valid[:] = False
        message[:] = _SINGULAR
        return np.full((batch, n), np.nan), np.zeros((n, count), bool), {}
    if per_supply:
        return _from_shares(solved, supplies, groups, count)
    by_group, varying = solved[:, :count], solved[:, count:]  # (segments, groups), (segments, varying)
    flow = np.broadcast_to(by_group.sum(axis=1), (batch, n)) + supplies[:, varies] @ varying.T
    with np.errstate(invalid="ignore"):
        carried = by_group > 0.0
        for v, j in enumerate(varies):
            carried[:, groups[j]] |= (varying[:, v] > 0.0) & bool(np.any(supplies[:, j] > 0.0))
    makeup = {}
    for s in np.flatnonzero(carried.sum(axis=1) > 1):
        shares = np.repeat(by_group[s][None], batch, axis=0)
        for v, j in enumerate(varies):
            shares[:, groups[j]] += varying[s, v] * supplies[:, j]
        makeup[int(s)] = shares
    return flow, carried, makeup


def _solve_once(rows, cols, values, n, right):
    """``(I - A) x = right`` for one matrix given by its entries (summed where repeated). A
    network of up to :data:`DENSE_SEGMENTS` segments is solved dense (LAPACK through numpy):
    checking a case then needs no scipy, whose sparse modules cost a quarter of a second to
    load; a larger one by a sparse LU (SuperLU), never forming the dense matrix."""
    if n <= DENSE_SEGMENTS:
        matrix = np.zeros((n, n))
        np.add.at(matrix, (np.asarray(rows, int), np.asarray(cols, int)), values)
        return np.linalg.solve(matrix, right)
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla

    lu = spla.splu(sp.csc_matrix((values, (rows, cols)), shape=(n, n)))
    return np.asarray(lu.solve(right)).reshape(n, right.shape[1])


def _from_shares(share, supplies, groups, count):
    """Flows, groups carried and blends' make-up from each supply's share of each segment."""
    share = np.nan_to_num(share)
    flow = np.matmul(share[None], supplies[:, :, None])[..., 0]
    reaches = (share > 0.0) & np.any(supplies > 0.0, axis=0)  # (segments, supplies)
    carried = np.zeros((share.shape[0], count), bool)
    for j, g in enumerate(groups):
        carried[:, g] |= reaches[:, j]
    makeup = {}
    for s in np.flatnonzero(carried.sum(axis=1) > 1):
        by_group = [0.0] * count
        for j, g in enumerate(groups):  # supply by supply, in order: the sums of earlier versions
            by_group[g] = by_group[g] + share[s, j] * supplies[:, j]
        makeup[int(s)] = np.stack([np.broadcast_to(v, supplies.shape[:1]) for v in by_group], axis=1)
    return flow, carried, makeup


def _varied_splits(rows, cols, values, n, entry, supplies, groups, valid, message):
    """Each scenario's own matrix. Without a recycle of flow the segments are taken downstream
    one by one, each carrying only the groups that reach it (:func:`downstream_flows`); with
    one, the scenarios' matrices are solved together as one block-diagonal sparse system, one
    right-hand side per group."""
    count = groups.max(initial=0) + 1
    order = acyclic_order(rows, cols, n)
    if order is not None:
        flow, carried, makeup, singular = downstream_flows(rows, cols, values, order, n, entry, supplies, groups)
    else:
        by_group = np.zeros((supplies.shape[0], n, count))
        by_group[:, entry, groups] = supplies  # each supply feeds a segment of its own
        flows, singular = solve_block_diagonal(rows, cols, values, n, by_group)
        flow = flows.sum(axis=2)
        with np.errstate(invalid="ignore"):
            carried = np.any(flows > 0.0, axis=0)
        makeup = {int(s): flows[:, s, :] for s in np.flatnonzero(carried.sum(axis=1) > 1)}
    for k in np.flatnonzero(singular & valid):
        message[k] = _SINGULAR
    valid &= ~singular
    return flow, carried, makeup


def acyclic_order(rows, cols, n):
    """The segments in an order in which every off-diagonal entry (row, col) of ``I - A`` has
    its col before its row (each segment after all that feed it), or None where the entries
    close a loop (a recycle of flow through other segments)."""
    feeds = [[] for _ in range(n)]
    waiting = np.zeros(n, int)
    for r, c in zip(rows.tolist(), cols.tolist()):
        if r != c:
            feeds[c].append(r)
            waiting[r] += 1
    ready = [int(s) for s in np.flatnonzero(waiting == 0)]
    order = []
    while ready:
        s = ready.pop()
        order.append(s)
        for r in feeds[s]:
            waiting[r] -= 1
            if waiting[r] == 0:
                ready.append(r)
    return order if len(order) == n else None


def downstream_flows(rows, cols, values, order, n, entry, supplies, groups):
    """Flows of k scenarios whose matrices ``I - A`` (entries ``values`` (k, entries) at
    ``rows``, ``cols``) are triangular in ``order`` (:func:`acyclic_order`): one pass
    downstream, a segment's flow of each group is what its supplies put in less the entries'
    contributions of the segments that feed it, over its diagonal (repeated entries summed, as
    in the sparse form). A segment holds only the groups that reach it, so the work grows with
    the entries, not with entries times groups. Returns (flow (k, n), carried (n, groups),
    make-up of the blends, singular (k,): a zero on the diagonal, its flows NaN)."""
    k, count = supplies.shape[0], groups.max(initial=0) + 1
    by_row = [[] for _ in range(n)]
    diagonal = np.zeros((k, n))
    for e, (r, c) in enumerate(zip(rows.tolist(), cols.tolist())):
        if r == c:
            diagonal[:, r] += values[:, e]
        else:
            by_row[r].append(e)
    parts = [{} for _ in range(n)]  # segment -> {group: (k,) kg/s}
    for j, (s, g) in enumerate(zip(entry.tolist(), groups.tolist())):
        parts[s][g] = parts[s].get(g, 0.0) + supplies[:, j]
    flow = np.empty((k, n), order="F")
    carried = np.zeros((n, count), bool)
    with np.errstate(all="ignore"):
        for s in order:
            mine = dict(parts[s])
            for e in by_row[s]:
                for g, upstream in parts[cols[e]].items():
                    mine[g] = mine.get(g, 0.0) - values[:, e] * upstream
            parts[s] = {g: np.broadcast_to(v / diagonal[:, s], (k,)) for g, v in mine.items()}
            flow[:, s] = sum(parts[s].values()) if parts[s] else 0.0
            for g, v in parts[s].items():
                carried[s, g] = bool(np.any(v > 0.0))
    singular = np.any(diagonal == 0.0, axis=1)
    flow[singular] = np.nan
    makeup = {}
    for s in np.flatnonzero(carried.sum(axis=1) > 1):
        shares = np.zeros((k, count))
        for g, v in parts[s].items():
            shares[:, g] = v
        shares[singular] = np.nan
        makeup[int(s)] = shares
    return flow, carried, makeup, singular


def solve_block_diagonal(rows, cols, values, n, right, chunk=CHUNK_UNKNOWNS):
    """Solve k sparse systems of one pattern together: system j has the entries ``values[j]``
    at (``rows``, ``cols``) of an n x n matrix and right-hand sides ``right[j]`` (n, r). They
    are factorized as one block-diagonal matrix, in chunks of at most ``chunk`` unknowns.
    Returns (solutions (k, n, r), singular (k,)); a singular system gets NaN."""
    k = values.shape[0]
    solution = np.full(right.shape, np.nan)
    singular = np.zeros(k, bool)
    size = max(1, chunk // max(n, 1))
    for start in range(0, k, size):
        part = slice(start, min(k, start + size))
        _solve_part(rows, cols, values[part], n, right[part], solution[part], singular[part])
    return solution, singular


def _solve_part(rows, cols, values, n, right, solution, singular):
    """One chunk into ``solution`` and ``singular`` (views of the caller's arrays); a chunk
    with a singular system is halved until that system is found."""
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla

    k = values.shape[0]
    offset = (np.arange(k) * n)[:, None]
    matrix = sp.csc_matrix((values.ravel(), ((rows + offset).ravel(), (cols + offset).ravel())), shape=(k * n, k * n))
    try:
        with np.errstate(all="ignore"):
            solution[...] = np.asarray(spla.splu(matrix).solve(right.reshape(k * n, -1))).reshape(right.shape)
    except RuntimeError:  # exactly singular somewhere
        if k == 1:
            singular[0] = True
            return
        for half in (slice(0, k // 2), slice(k // 2, k)):
            _solve_part(rows, cols, values[half], n, right[half], solution[half], singular[half])


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
