"""From a checked case to a network: unit models as graph nodes, stream segments as edges, and
the flows of every segment (solved before any temperature).

Flows are linear in the supplies and independent of temperature: each segment's flow is its
unit's flow coefficients times the unit's inlet flows, plus what the unit supplies. Solving that
linear system (:mod:`.flows`) gives each segment's flow and which supplies it carries, hence its
cp (the supplies' fluids blended by mass; where a unit's outlet carries a fluid of its own, a
reactor's effluent, that fluid starts there). Recycles need no iteration here. A flash drum's
split follows its inlet state: the solver sets it and calls :func:`resolve_flows` between its
passes.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from hxtrain.units import protocol
from hxtrain.units.properties import Blend

from .case import Case, Origin
from . import sections as registry
from .sections import Building
from .flows import solve_flows


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
    """A case as a graph with unit models on the nodes and its solved flows, for a batch of one
    or more scenarios (one value per scenario wherever :func:`build_network` was given values).

    ``graph`` (a networkx MultiDiGraph, units as nodes, segments as edges keyed by index) is
    built on first use: checking a case needs no graph library."""

    case: Case
    units: dict[str, protocol.UnitModel]
    segments: list[Segment]
    inlets: dict[str, list[int]]
    """Segment index feeding each inlet port of each unit, in the unit's port order."""
    outlets: dict[str, list[int]]
    flow: np.ndarray | None = None
    """(batch, segments) mass flow of each segment, kg/s."""
    fluids: list | None = None
    """Fluid model of each segment (a blend where supplies of different fluids have mixed)."""
    batch: int = 1
    valid: np.ndarray | None = None
    """(batch,) the scenario's values are within bounds and its flows balance."""
    message: np.ndarray | None = None
    """(batch,) why a scenario is not valid ("" where it is)."""
    reason_key: np.ndarray | None = None
    """(batch,) the case-file key path (a tuple) the reason is about, None where valid."""
    utility: np.ndarray | None = None
    """(segments,) the segment carries only utility streams (cooling water, steam, hot oil)."""
    _graph: object = field(default=None, repr=False)

    @property
    def graph(self):
        """The unit graph (networkx MultiDiGraph), built once on first use."""
        if self._graph is None:
            import networkx as nx

            graph = nx.MultiDiGraph()
            for name, unit in self.units.items():
                graph.add_node(name, kind=unit.kind, key=self.case.keys[name] if name in self.case.keys else (name,))
            for seg in self.segments:
                graph.add_edge(seg.source, seg.target, key=seg.index, segment=seg)
            self._graph = graph
        return self._graph


def build_network(case: Case, values: dict | None = None) -> Network:
    """Unit models, graph, segments and flows of a checked case.

    ``values`` (key path -> one value per scenario, see :mod:`.scenarios`) makes a batch: each
    unit parameter named is set per scenario and checked against its bounds, and a scenario
    whose values or flows are impossible is marked not valid with its reason. Without values
    (a batch of one from the case as written) impossible flows raise :class:`CaseError`."""
    from .scenarios import apply_values

    segments, mixer_inlets = _segments(case)
    units = _unit_models(case, mixer_inlets, varied=bool(values))
    inlets = {name: [None] * len(u.inlets) for name, u in units.items()}
    outlets = {name: [None] * len(u.outlets) for name, u in units.items()}
    for seg in segments:
        inlets[seg.target][units[seg.target].inlets.index(seg.target_port)] = seg.index
        outlets[seg.source][units[seg.source].outlets.index(seg.source_port)] = seg.index
    net = Network(case, units, segments, inlets, outlets)
    check_way_out(net)
    net.batch, net.valid, net.message, net.reason_key = apply_values(net, values or {})
    _solve_flows(net)
    if values is None and not net.valid[0]:
        raise case.error(net.reason_key[0], net.message[0])
    check_properties(net)
    check_enthalpy_fluids(net)
    return net


def _segments(case: Case):
    """Walk every path; return the segments and, for each unit that several paths end at (a
    mixer), its inlet port names in path order."""
    segments: list[Segment] = []
    many = [s.name for s in registry.UNIT_SECTIONS if s.path_end == "many"]
    mixer_inlets: dict[str, list[str]] = {m: [] for section in many for m in case.section(section)}

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


def _unit_models(case: Case, path_inlets, varied=True) -> dict[str, protocol.UnitModel]:
    """Each unit's model, built by its section's factory (:data:`.sections.UNIT_SECTIONS`)."""
    building = Building(case, path_inlets, varied)
    return {name: section.build(name, _key(case, name), data, building)
            for section in registry.UNIT_SECTIONS for name, data in case.section(section.name).items()}


def _key(case, name):
    return ".".join(case.keys[name])


def check_way_out(net: Network):
    """Every unit must reach a product through ports that carry flow (coefficient > 0);
    otherwise what enters a loop of mixers and splitters could never leave. One search backwards
    from all products at once: linear in the size of the network."""
    feeders = {name: [] for name in net.units}  # unit -> units feeding it through a flowing port
    for name, unit in net.units.items():
        coefficients = np.asarray(unit.flow_coefficients())
        supplied = np.asarray(unit.supplied_flow())
        for out_index, seg_index in enumerate(net.outlets[name]):
            if np.any(supplied[..., out_index] > 0.0) or np.any(coefficients[..., out_index, :] > 0.0):
                feeders[net.segments[seg_index].target].append(name)
    can_leave = {n for n, u in net.units.items() if not u.outlets}
    frontier = list(can_leave)
    while frontier:
        for feeder in feeders[frontier.pop()]:
            if feeder not in can_leave:
                can_leave.add(feeder)
                frontier.append(feeder)
    trapped = [n for n in net.units if n not in can_leave]
    if trapped:
        raise net.case.error(
            tuple(net.case.keys[trapped[0]]),
            f"what enters {', '.join(trapped)} can never reach a product: a loop with no way out "
            "(check the splitter fractions and paths)",
        )


def resolve_flows(net: Network):
    """Solve the flows again after a unit changed its flow coefficients (a flash drum's split
    found from its inlet state): flows, segment fluids and the units' flow checks, as
    :func:`build_network` did them; a scenario the new flows make impossible is marked not valid.
    A segment that now carries no flow in any scenario (a drum's vapour below its feed's bubble
    point) keeps the fluid it had: with no flow its fluid enters no balance, and its rows in the
    reports stay those of the fluid that path carries."""
    before = net.fluids
    _solve_flows(net)
    idle = ~np.any(np.broadcast_to(net.flow, (net.batch, len(net.segments))) > 0.0, axis=0)
    net.fluids = [old if still else new for old, new, still in zip(before, net.fluids, idle)]


def _solve_flows(net: Network):
    """Flows of every scenario (:func:`.flows.solve_flows`), each segment's fluid blended from
    the supplies it carries, and which segments carry only utility streams. Supplies are grouped
    by fluid and utility, so the work grows with the segments, not with segments x supplies."""
    sources = [n for n, u in net.units.items() if not u.inlets]
    labels: dict = {}
    groups = [labels.setdefault((net.case.streams[s]["fluid"], bool(net.case.streams[s].get("utility"))),
                                len(labels)) for s in sources]
    restarts = {net.outlets[name][unit.outlets.index(port)]: labels.setdefault((fluid, False), len(labels))
                for name, unit in net.units.items() for port, fluid in unit.outlet_fluids.items()}
    solution = solve_flows(net.units, net.inlets, net.outlets, len(net.segments), net.batch, groups, restarts)
    _check_unit_flows(net, solution.flow)
    bad = net.valid & ~solution.valid
    if np.any(bad):
        key = _recycle_key(net)
        for k in np.flatnonzero(bad):
            net.message[k], net.reason_key[k] = solution.message[k], key
    net.valid = net.valid & solution.valid
    net.flow = solution.flow
    group_fluids = [fluid for fluid, _ in labels]
    fallback = net.case.streams[sources[0]]["fluid"]
    net.fluids = [segment_fluid(net.case, group_fluids, row, solution.makeup.get(s), fallback)
                  for s, row in enumerate(solution.carried)]
    is_utility = np.array([utility for _, utility in labels])
    net.utility = np.array([bool(np.any(row)) and bool(np.all(is_utility[row])) for row in solution.carried])
    for name, unit in net.units.items():
        unit.carry_utility(port for port, seg in zip(unit.inlets, net.inlets[name]) if net.utility[seg])


def _check_unit_flows(net: Network, flow):
    """Each unit's own checks on the flows it was given (a splitter whose inlet carries less
    than its branches set by flow take): the scenarios they find are not valid, with the unit's
    reason and key; they come before the general balance check, whose reason is vaguer."""
    for name, unit in net.units.items():
        m_in = flow[:, net.inlets[name]]
        m_out = flow[:, net.outlets[name]]
        for finding in unit.check_flows(m_in, m_out):
            for k in np.flatnonzero(finding.active & net.valid):
                net.message[k], net.reason_key[k] = finding.messages[k], tuple(finding.key.split("."))
            net.valid = net.valid & ~finding.active


def segment_fluid(case: Case, group_fluids, carried, makeup=None, fallback=None):
    """The fluid of a segment: its supplies' fluids blended by mass. ``group_fluids`` names the
    fluid of each supply group, ``carried`` says which groups reach the segment in any scenario
    and ``makeup`` (where several do) holds the segment's flow from each group on its last axis
    (one row per scenario). A segment without flow takes ``fallback``: with no flow its
    properties enter no balance."""
    names = list(dict.fromkeys(f for f, reaches in zip(group_fluids, carried) if reaches))
    if len(names) <= 1 or makeup is None:  # one fluid (or none): no blend, no per-scenario arithmetic
        return case.fluids[names[0] if names else fallback]
    makeup = np.asarray(makeup, dtype=float)
    by_fluid: dict = {}
    for j, name in enumerate(group_fluids):
        if carried[j]:
            by_fluid[name] = by_fluid.get(name, 0.0) + makeup[..., j]
    total = sum(by_fluid.values())
    safe = np.where(total > 0.0, total, 1.0)
    return Blend([case.fluids[k] for k in by_fluid], [v / safe for v in by_fluid.values()])


def check_properties(net: Network):
    """Every unit gets the fluid properties it declares it needs (rating from geometry needs
    viscosity and conductivity, say) on each inlet."""
    for name, unit in net.units.items():
        need = unit.required_properties()
        if need is None:
            continue
        for port, seg in zip(unit.inlets, net.inlets[name]):
            fluid = net.fluids[seg]
            missing = [p for p in need.properties if getattr(fluid, p)(20.0) is None]
            if missing:
                raise net.case.error(tuple(net.case.keys[name]) + (need.key,),
                                     f"{need.reason} needs the {' and '.join(missing)} of the fluid on the "
                                     f"{port} side (segment {net.segments[seg].label}); add it to its fluid")


def check_enthalpy_fluids(net: Network):
    """Fluids on enthalpy curves go where this version can carry them: they mix with no other
    fluid (a blend of two curves is not the mixture's curve: its bubble and dew points are not
    weighted means of the parts'), a fluid with a saturation plateau, whose streams carry
    enthalpy, enters and leaves only units that take enthalpy (``outlet_states``), and each unit
    can rate the fluids that reach it (``fluid_problem``: an exchanger rated by zones)."""
    from hxtrain.units.enthalpy_curves import EnthalpyCurve

    for seg, fluid in zip(net.segments, net.fluids):
        members = fluid.members()
        curves = [m.name for m in members if isinstance(m, EnthalpyCurve)]
        if curves and len(members) > 1:
            others = sorted({m.name for m in members} - set(curves[:1]))
            raise net.case.error(tuple(net.case.keys[seg.source]),
                                 f"fluid '{curves[0]}' (on an enthalpy curve) meets {', '.join(map(repr, others))} at "
                                 f"{seg.source}: a fluid on an enthalpy curve mixes with no other fluid in this version "
                                 "(give the mixture its own curve)")
        if not fluid.state_by_enthalpy:
            continue
        for name in (seg.source, seg.target):
            if not protocol.takes_enthalpy_state(net.units[name]):
                raise net.case.error(tuple(net.case.keys[name]),
                                     f"fluid '{fluid.name}' has a saturation plateau, where temperature does not fix "
                                     f"its state; {name} ({net.units[name].kind}) cannot take it in this version (only "
                                     "supplies, products, mixers, splitters and exchangers can)")
    for name, unit in net.units.items():
        asks = getattr(unit, "fluid_problem", None)
        problem = asks(tuple(net.fluids[s] for s in net.inlets[name])) if asks else None
        if problem is not None:
            raise net.case.error(tuple(net.case.keys[name]) + ((problem[0],) if problem[0] else ()), problem[1])


def _recycle_key(net: Network):
    """Key path of the first unit inside a loop that divides its one inlet by fractions (a
    splitter: the likely culprit of an unbalanced flow), down to those fractions' key."""
    import networkx as nx

    for component in nx.strongly_connected_components(net.graph):
        for name in sorted(component):
            unit = net.units[name]
            fractions = [p.name for p in unit.parameters() if p.quantity == "fraction"]
            if len(component) > 1 and len(unit.inlets) == 1 and len(unit.outlets) > 1 and fractions:
                return tuple(net.case.keys[name]) + (fractions[0].split(".")[0],)
    return ("streams",)
