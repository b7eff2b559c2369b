"""From a checked case to a network: unit models as graph nodes, stream segments as edges, and
the flows of every segment (solved before any temperature).

Flows are linear in the supplies and independent of temperature: each segment's flow is its
unit's flow coefficients times the unit's inlet flows, plus what the unit supplies. Solving that
linear system once per source gives each segment's flow and its make-up by source, hence its cp
(the supplies' fluids blended by mass). Recycles need no iteration here.
"""

from __future__ import annotations

from dataclasses import dataclass

import networkx as nx
import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from hxtrain.units import models
from hxtrain.units.exchanger_unit import Exchanger
from hxtrain.units.properties import Blend
from hxtrain.units.thermal import GeometryFilms

from .case import Case, Origin


@dataclass(frozen=True)
class Segment:
    """A stream segment: from an outlet port of one unit to an inlet port of the next."""

    index: int
    source: str
    source_port: str
    target: str
    target_port: str
    origin: str

    @property
    def label(self):
        return f"{_port_label(self.source, self.source_port)} -> {_port_label(self.target, self.target_port)}"


def _port_label(unit, port):
    return unit if port in ("in", "out") or port.startswith("in:") else f"{unit}.{port}"


@dataclass
class Network:
    """A case as a graph with unit models on the nodes and its solved flows."""

    case: Case
    graph: nx.MultiDiGraph
    units: dict[str, models.UnitModel]
    segments: list[Segment]
    inlets: dict[str, list[int]]
    """Segment index feeding each inlet port of each unit, in the unit's port order."""
    outlets: dict[str, list[int]]
    flow: np.ndarray
    """Mass flow of each segment, kg/s."""
    fluids: list
    """Fluid model of each segment (a blend where supplies of different fluids have mixed)."""


def build_network(case: Case) -> Network:
    """Unit models, graph, segments and flows of a checked case; raises CaseError on flows that
    cannot balance (a loop with no way out)."""
    segments, mixer_inlets = _segments(case)
    units = _unit_models(case, mixer_inlets)
    graph = nx.MultiDiGraph()
    for name, unit in units.items():
        graph.add_node(name, kind=unit.kind, key=case.keys[name] if name in case.keys else (name,))
    for seg in segments:
        graph.add_edge(seg.source, seg.target, key=seg.index, segment=seg)
    inlets = {name: [None] * len(u.inlets) for name, u in units.items()}
    outlets = {name: [None] * len(u.outlets) for name, u in units.items()}
    for seg in segments:
        inlets[seg.target][units[seg.target].inlets.index(seg.target_port)] = seg.index
        outlets[seg.source][units[seg.source].outlets.index(seg.source_port)] = seg.index
    net = Network(case, graph, units, segments, inlets, outlets, None, None)
    check_way_out(net)
    solve_flows(net)
    check_properties(net)
    return net


def _segments(case: Case):
    """Walk every path; return the segments and each mixer's inlet port names in order."""
    segments: list[Segment] = []
    mixer_inlets: dict[str, list[str]] = {m: [] for m in case.mixers}

    def connect(origin: Origin, source, source_port, target, target_port):
        segments.append(Segment(len(segments), source, source_port, target, target_port, origin.name))

    for origin in case.origins:
        unit, port = origin.unit, origin.port
        *through, last = origin.path
        for step in through:
            side = step.side or "in"
            connect(origin, unit, port, step.unit, side)
            unit, port = step.unit, step.side or "out"
        if last.unit in case.mixers:
            target_port = f"in:{origin.name}"
            mixer_inlets[last.unit].append(target_port)
        else:
            target_port = "in"
        connect(origin, unit, port, last.unit, target_port)
    return segments, mixer_inlets


def _unit_models(case: Case, mixer_inlets) -> dict[str, models.UnitModel]:
    s = case.settings
    units: dict[str, models.UnitModel] = {}
    for name, d in case.streams.items():
        units[name] = models.Source(name, _key(case, name), d["flow"], d["supply_temperature"])
    for name, d in case.exchangers.items():
        units[name] = Exchanger(name, _key(case, name), d["spec"], minimum_approach=s.minimum_approach,
                                minimum_f=s.minimum_f, limits=d["limits"])
    for table, cooler in ((case.heaters, False), (case.coolers, True)):
        for name, d in table.items():
            units[name] = models.Heater(name, _key(case, name), cooler=cooler, **d)
    for name in case.mixers:
        units[name] = models.Mixer(name, _key(case, name), mixer_inlets[name])
    for name, d in case.splitters.items():
        units[name] = models.Splitter(name, _key(case, name), d["fractions"])
    for name, d in case.products.items():
        units[name] = models.Sink(name, _key(case, name), d["target_temperature"])
    return units


def _key(case, name):
    return ".".join(case.keys[name])


def check_way_out(net: Network):
    """Every unit must reach a product through ports that carry flow (coefficient > 0);
    otherwise what enters a loop of mixers and splitters could never leave."""
    flowing = nx.DiGraph()
    flowing.add_nodes_from(net.units)
    for name, unit in net.units.items():
        coefficients = np.asarray(unit.flow_coefficients())
        supplied = np.asarray(unit.supplied_flow())
        for out_index, seg_index in enumerate(net.outlets[name]):
            if supplied[out_index] > 0.0 or np.any(coefficients[out_index] > 0.0):
                flowing.add_edge(name, net.segments[seg_index].target)
    sinks = [n for n, u in net.units.items() if not u.outlets]
    can_leave = set(sinks)
    for sink in sinks:
        can_leave |= nx.ancestors(flowing, sink)
    trapped = [n for n in net.units if n not in can_leave]
    if trapped:
        raise net.case.error(
            tuple(net.case.keys[trapped[0]]),
            f"what enters {', '.join(trapped)} can never reach a product: a loop with no way out "
            "(check the splitter fractions and paths)",
        )


def solve_flows(net: Network):
    """Solve the linear flow balance for every segment and every supply stream at once."""
    n = len(net.segments)
    sources = [name for name, u in net.units.items() if not u.inlets]
    rows, cols, vals = list(range(n)), list(range(n)), [1.0] * n
    supply = np.zeros((n, len(sources)))
    for name, unit in net.units.items():
        coefficients = np.asarray(unit.flow_coefficients(), dtype=float)
        supplied = np.asarray(unit.supplied_flow(), dtype=float)
        for o, seg_out in enumerate(net.outlets[name]):
            for i, seg_in in enumerate(net.inlets[name]):
                if coefficients[o, i] != 0.0:
                    rows.append(seg_out)
                    cols.append(seg_in)
                    vals.append(-coefficients[o, i])
            if supplied[o] != 0.0:
                supply[seg_out, sources.index(name)] = supplied[o]
    matrix = sp.csc_matrix((vals, (rows, cols)), shape=(n, n))
    try:
        makeup = np.asarray(spla.splu(matrix).solve(supply)).reshape(n, len(sources))
    except RuntimeError:  # exactly singular: a recycle that returns everything, to round-off
        raise net.case.error(_recycle_key(net), "the flows cannot be balanced: a recycle returns all of its flow "
                                                "(check the splitter fractions)") from None
    flow = makeup.sum(axis=1)
    _check_flow_balance(net, flow, sources)
    net.flow = flow
    net.fluids = [segment_fluid(net.case, sources, row) for row in makeup]


def segment_fluid(case: Case, sources, makeup, carried=None):
    """The fluid of a segment: its supplies' fluids blended by mass. ``makeup`` holds the
    segment's flow from each supply on its last axis (a row, or one row per scenario); ``carried``
    optionally says already which supplies reach the segment in any scenario. A segment without
    flow takes the first supply's fluid: with no flow its properties enter no balance."""
    if carried is not None:
        names = {case.streams[source]["fluid"] for source, reaches in zip(sources, carried) if reaches}
        if len(names) <= 1:  # one fluid (or none): no blend, no per-scenario arithmetic
            return case.fluids[names.pop() if names else case.streams[sources[0]]["fluid"]]
    makeup = np.asarray(makeup, dtype=float)
    by_fluid: dict = {}
    for j, source in enumerate(sources):
        name = case.streams[source]["fluid"]
        by_fluid[name] = by_fluid.get(name, 0.0) + makeup[..., j]
    carried = {k: v for k, v in by_fluid.items() if np.any(v > 0.0)}
    if len(carried) <= 1:
        return case.fluids[next(iter(carried))] if carried else case.fluids[case.streams[sources[0]]["fluid"]]
    total = sum(carried.values())
    safe = np.where(total > 0.0, total, 1.0)
    return Blend([case.fluids[k] for k in carried], [v / safe for v in carried.values()])


def check_properties(net: Network):
    """Exchangers rated from geometry (and geometry pressure drops) need transport properties."""
    for name, unit in net.units.items():
        spec = getattr(unit, "spec", None)
        if spec is None or not isinstance(spec.thermal, GeometryFilms):
            continue
        needed = ("viscosity", "conductivity") + (("density",) if spec.pressure_drop else ())
        for port, seg in zip(unit.inlets, net.inlets[name]):
            fluid = net.fluids[seg]
            missing = [p for p in needed if getattr(fluid, p)(20.0) is None]
            if missing:
                raise net.case.error(tuple(net.case.keys[name]) + ("geometry",),
                                     f"rating from geometry needs the {' and '.join(missing)} of the fluid on the "
                                     f"{port} side (segment {net.segments[seg].label}); add it to its fluid")


def _recycle_key(net: Network):
    """Key path of the first splitter inside a loop (the likely culprit of an unbalanced flow)."""
    for component in nx.strongly_connected_components(net.graph):
        for name in sorted(component):
            if len(component) > 1 and net.units[name].kind == "splitter":
                return tuple(net.case.keys[name]) + ("branches",)
    return ("splitters",)


def _check_flow_balance(net: Network, flow, sources):
    supplied = sum(net.case.streams[s]["flow"] for s in sources)
    delivered = sum(flow[net.inlets[n][0]] for n, u in net.units.items() if not u.outlets)
    if not np.all(np.isfinite(flow)) or np.any(flow < -1e-9 * supplied) or abs(delivered - supplied) > 1e-9 * supplied:
        raise net.case.error(
            _recycle_key(net),
            f"the flows do not balance: {supplied:.6g} kg/s supplied, {delivered:.6g} kg/s delivered to "
            "products (a recycle that returns nearly everything?)",
        )
