"""Scenarios of one topology as arrays: numeric case values set per scenario on one network.

Only values that leave the topology and the calculation order alone can vary across a batch:

* ``streams.NAME.flow`` (kg/s), ``streams.NAME.supply_temperature`` (°C)
* ``exchangers.TAG.ua`` (kW/K, where given), ``exchangers.TAG.u`` (W/m²·K, a fixed U),
  ``exchangers.TAG.fouling.shell`` / ``.tube`` (m²·K/W), ``exchangers.TAG.bypass.hot`` / ``.cold``
* ``heaters.TAG.outlet_temperature`` / ``.duty`` and the same for ``coolers``
* ``splitters.NAME.branches.BRANCH.fraction`` (the other branches rescale to sum to one)

Values are numbers in the default units. Each path's smallest and largest values are checked
like case-file values before anything runs (the checks are ranges, so the rest pass too).
"""

from __future__ import annotations

import copy

import numpy as np

from hxtrain.units.thermal import FixedCoefficient

from .case import case_from_document
from .changes import apply_change, rescaled_branches, value_changes
from .errors import CaseError
from .graph import Network, build_network, segment_fluid
from .reading import Document

BATCHABLE = (
    "streams.NAME.flow", "streams.NAME.supply_temperature", "exchangers.TAG.ua", "exchangers.TAG.u",
    "exchangers.TAG.fouling.shell", "exchangers.TAG.fouling.tube", "exchangers.TAG.bypass.hot",
    "exchangers.TAG.bypass.cold", "heaters.TAG.outlet_temperature", "heaters.TAG.duty",
    "coolers.TAG.outlet_temperature", "coolers.TAG.duty", "splitters.NAME.branches.BRANCH.fraction",
)


def is_batchable(path: str) -> bool:
    parts = path.split(".")
    if len(parts) < 3:
        return False
    pattern = [parts[0], "NAME" if parts[0] in ("streams", "splitters") else "TAG", *parts[2:]]
    if parts[0] == "splitters" and len(parts) == 5:
        pattern[3] = "BRANCH"
    return ".".join(pattern) in BATCHABLE


def check_values(document: Document, values: dict, where=()):
    """Check each path's extreme values as case-file values (the rules are ranges)."""
    for path, array in values.items():
        if not is_batchable(path):
            raise CaseError(f"'{path}' cannot vary within a batch (it is not one of: {', '.join(BATCHABLE)})",
                            path=where)
        array = np.asarray(array, dtype=float)
        if array.ndim != 1 or not np.all(np.isfinite(array)):
            raise CaseError(f"the values of '{path}' must be a one-dimensional array of finite numbers", path=where)
        for extreme in (array.min(), array.max()):
            data = copy.deepcopy(document.data)
            for change in value_changes(data, path, float(extreme), where):
                apply_change(data, change, where)
            case_from_document(Document(data, document.file, document.lines))


def batch_network(case, values: dict) -> tuple[Network, int]:
    """A network of ``case`` whose unit parameters hold one value per scenario, with flows and
    segment fluids per scenario. Returns (network, number of scenarios)."""
    sizes = {len(np.atleast_1d(v)) for v in values.values()}
    if len(sizes) != 1:
        raise CaseError(f"every varied value needs the same number of scenarios; got {sorted(sizes)}")
    batch = sizes.pop()
    net = build_network(case)
    fractions = {}
    for path, array in values.items():
        _set(net, path, np.asarray(array, dtype=float), fractions)
    _batch_flows(net, batch, fractions)
    return net, batch


def _set(net: Network, path, array, fractions):
    parts = path.split(".")
    section, name, rest = parts[0], parts[1], parts[2:]
    unit = net.units[name]
    if section == "streams":
        setattr(unit, "flow" if rest == ["flow"] else "temperature", array)
    elif section == "exchangers":
        spec = unit.spec
        if rest == ["ua"]:
            if spec.ua is None:
                raise CaseError(f"exchanger '{name}' has no 'ua' to vary", path=("exchangers", name))
            spec.ua = array
        elif rest == ["u"]:
            if not isinstance(spec.thermal, FixedCoefficient):
                raise CaseError(f"exchanger '{name}' has no fixed 'u' to vary", path=("exchangers", name))
            spec.thermal.u = array
        elif rest[0] == "fouling":
            if not hasattr(spec.thermal, "bundle") and not hasattr(spec.thermal, "shell"):
                raise CaseError(f"exchanger '{name}' has no fouling resistances to vary", path=("exchangers", name))
            setattr(spec.thermal, f"fouling_{rest[1]}", array)
        else:
            setattr(spec, f"bypass_{rest[1]}", array)
    elif section in ("heaters", "coolers"):
        field = "target" if rest == ["outlet_temperature"] else "duty"
        if getattr(unit, field) is None:
            raise CaseError(f"{section[:-1]} '{name}' is not set by its {rest[0]}; vary what it is set by",
                            path=(section, name))
        setattr(unit, field, array)
    else:
        shares = rescaled_branches(dict(zip(unit.outlets, unit.fractions)), rest[1], array)
        fractions[name] = np.stack([np.broadcast_to(shares[b], array.shape) for b in unit.outlets], axis=1)


def _batch_flows(net: Network, batch, fractions):
    """Flows (batch, segments) and segment fluids per scenario."""
    sources = [n for n, u in net.units.items() if not u.inlets]
    n = len(net.segments)
    supplies = np.stack([np.broadcast_to(np.asarray(net.units[s].flow, float), (batch,)) for s in sources], axis=1)
    rows = batch if fractions else 1  # one topology and fixed splits: one matrix serves all
    matrix = np.broadcast_to(np.eye(n), (rows, n, n)).copy()
    unit_supply = np.zeros((n, len(sources)))
    for name, unit in net.units.items():
        coefficients = fractions[name][:, :, None] if name in fractions else np.asarray(unit.flow_coefficients())[None]
        for o, seg_out in enumerate(net.outlets[name]):
            for i, seg_in in enumerate(net.inlets[name]):
                matrix[:, seg_out, seg_in] -= np.broadcast_to(coefficients[:, o, i], (rows,))
        if not unit.inlets:
            unit_supply[net.outlets[name][0], sources.index(name)] = 1.0
    # (rows, segments, supplies): each segment's share of each supply; rows broadcast over the batch
    response = np.linalg.solve(matrix, np.broadcast_to(unit_supply, (rows, n, len(sources))))
    net.flow = np.asfortranarray(np.matmul(response, supplies[:, :, None])[..., 0])
    carried = np.any(response > 0.0, axis=0) & np.any(supplies > 0.0, axis=0)  # (segments, supplies): in any scenario
    net.fluids = [segment_fluid(net.case, sources, response[:, s, :] * supplies, carried[s]) for s in range(n)]
