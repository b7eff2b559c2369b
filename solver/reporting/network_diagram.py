"""The network as a picture: an SVG drawn from the case's paths and the result's temperatures.

Layout (computed, never placed by hand): every stream path is a horizontal row; a stream that
is heated runs left to right, one that is cooled right to left, so that exchangers line up in
columns the way the heat-exchanger grid diagram (Linnhoff & Flower 1978) lines them up. Each unit
on a path gets a column: consecutive units of a row must sit in consecutive columns in the
row's direction of flow; the columns are the longest-path layers of that constraint graph,
after the fewest edges that close a cycle (a cooled stream's, first) are left out. Rows of
cooled streams go above, heated ones below, each group ordered by where it starts.

Symbols and colours are our own: an exchanger is two dots on its two rows joined by a line; a
unit on one stream a rounded square, warm where it heats the stream and cool where it cools
it; a junction (a split or a mix) a small diamond joined to the rows it feeds or collects (a
flash drum's with its tag); a bypass a dashed arc round the unit on its stream's row, away from
the unit's other row, its fraction written under the unit's duty. Segment temperatures are
written on each row; a unit with a violated limit is ringed in red with a "!", one with a
warning in amber; every unit links to its row in the report's tables.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from html import escape

import networkx as nx
import pandas as pd

from hxtrain.solver.simulation.results import SimulationResult

from .console_tables import fixed
from .display_units import Display

COLUMN, ROW, LEFT, TOP = 92, 62, 0, 40
"""Spacing of columns and rows, the first column and the top margin (SVG units; the picture
scales to the page)."""
STUB = 1.15
"""Length of a row before its first and after its last unit, in columns (room for a label)."""
CHARACTER = 7.0
"""Width of one character of a 12-unit label, for the margins (a generous estimate)."""
HEATED, COOLED, UTILITY = "#2f6690", "#b4532a", "#8c8c8c"
HEATS, COOLS = "#9c4f96", "#5aa9c9"  # a heater in plum: amber is a warning's, red a limit's
LIMIT, WARNING = "#d62828", "#e0a800"
BYPASS_REACH, BYPASS_RISE = 26, 15
"""A bypass arc's half-width and height (SVG units)."""
HALO = ' stroke="#fff" stroke-width="3" paint-order="stroke"'
"""A white edge under a label's letters: legible where a link or an arc runs behind it."""


@dataclass
class Row:
    name: str
    nodes: list
    """The units with a column along the row, in the order the stream meets them."""
    sides: dict
    start: str
    end: str
    heated: bool
    utility: bool
    temperatures: list
    """Segment temperatures in flow order (°C): the first leaves the start, the last reaches the end."""


def rows_of(result: SimulationResult) -> tuple[list[Row], set, set]:
    """The rows (one per path), the units with a column, and the junctions (splits, mixes)."""
    origins = result.network.case.origins
    starts = {o.unit for o in origins}
    ends = {o.path[-1].unit for o in origins}
    junctions = starts & ends
    streams = result.streams
    rows = []
    for origin in origins:
        segments = streams[streams["path_of"] == origin.name]
        temperatures = list(segments["temperature_c"])
        utility = bool(segments["utility"].any()) if "utility" in segments else False
        steps = [s.unit for s in origin.path[:-1]]
        for k, (first, last) in enumerate(_turns(steps)):
            nodes = steps[first:last]
            start = origin.unit if k == 0 else f"from {steps[first - 1]}"
            end = origin.path[-1].unit if last == len(steps) else f"to {steps[last]}"
            if start in junctions:
                nodes.insert(0, start)
            if end in junctions:
                nodes.append(end)
            chunk = temperatures[first:last + 1]
            # the sides this turn passes: a path may pass both sides of one exchanger (a feed-effluent
            # loop), each in a turn of its own
            sides = {s.unit: s.side for s in origin.path[first:last]}
            rows.append(Row(origin.name if k == 0 else f"{origin.name} ({k + 1})", nodes, sides, start, end,
                            _heated(chunk, [sides.get(n) for n in nodes]), utility, chunk))
    _level_rows_follow_their_stream(rows)
    placed = {n for row in rows for n in row.nodes}
    return rows, placed, junctions


def _heated(temperatures: list, sides: list) -> bool:
    """A row is heated where its temperature rises along it; where it stays level (its exchangers
    bypassed, or no duty), where it passes an exchanger's cold side rather than its hot one."""
    if len(temperatures) >= 2 and temperatures[-1] != temperatures[0]:
        return temperatures[-1] > temperatures[0]
    return "hot" not in sides or "cold" in sides


def _level_rows_follow_their_stream(rows: list[Row]):
    """A row whose temperature does not change (a splitter's branch straight to a mixer) runs the
    way the row that feeds it runs (else the row it feeds), not left to right by default: a
    branch of a cooled stream is drawn with that stream, through any number of such rows."""
    level = [r for r in rows if r.temperatures[-1:] == r.temperatures[:1]  # one segment, or no change,
             and not {"hot", "cold"} & {r.sides.get(n) for n in r.nodes}]   # and no exchanger side to tell
    known = [r for r in rows if r not in level]
    while level:
        for row in level:
            found = [r for r in known if r.end == row.start] or [r for r in known if r.start == row.end]
            if found:
                row.heated = found[0].heated
                known.append(row)
                level.remove(row)
                break
        else:
            return  # the rest touch no row with a direction: left to right


def _turns(steps: list) -> list[tuple[int, int]]:
    """A path cut where it meets a unit again (a feed heated by its own effluent passes both
    sides of an exchanger): each piece is a row of its own, (first, last) step indices."""
    pieces, first, seen = [], 0, set()
    for k, unit in enumerate(steps):
        if unit in seen:
            pieces.append((first, k))
            first, seen = k, set()
        seen.add(unit)
    return pieces + [(first, len(steps))]


def columns(rows: list[Row]) -> dict:
    """Column of every placed unit: longest-path layers of the order constraints of the rows."""
    graph = nx.DiGraph()
    for priority, row in enumerate(rows):
        graph.add_nodes_from(row.nodes)
        ordered = row.nodes if row.heated else row.nodes[::-1]
        for a, b in zip(ordered, ordered[1:]):
            weight = (2 if row.heated else 1) + (0 if row.utility else 2)
            if a != b and (not graph.has_edge(a, b) or graph[a][b]["weight"] < weight):
                graph.add_edge(a, b, weight=weight)
    while True:
        try:
            cycle = nx.find_cycle(graph)
        except nx.NetworkXNoCycle:
            break
        weakest = min(cycle, key=lambda e: graph.edges[e[0], e[1]]["weight"])
        graph.remove_edge(weakest[0], weakest[1])
    column = {}
    for node in nx.topological_sort(graph):
        column[node] = max((column[p] + 1 for p in graph.predecessors(node)), default=0)
    return column


def ordered_rows(rows: list[Row], column: dict) -> list[Row]:
    """Cooled streams above heated ones; utilities at the edges; each group by its columns."""
    def first(row):
        return min((column[n] for n in row.nodes), default=0)

    cooled = sorted((r for r in rows if not r.heated), key=lambda r: (not r.utility, -first(r)))
    heated = sorted((r for r in rows if r.heated), key=lambda r: (r.utility, first(r), r.name))
    return cooled + heated


def network_svg(result: SimulationResult, display: Display, linked=frozenset()) -> str:
    """The diagram as an inline SVG element; each unit of ``linked`` (those with a table row in
    the page) links to its row."""
    rows, placed, junctions = rows_of(result)
    column = columns(rows)
    rows = ordered_rows(rows, column)
    y = {row.name: TOP + ROW * k for k, row in enumerate(rows)}
    severity = _severities(result)
    units = result.units
    x = {n: LEFT + COLUMN * c for n, c in column.items()}
    rows_at = {}
    for row in rows:
        for node in row.nodes:
            rows_at.setdefault(node, []).append(y[row.name])
    _apart(x, rows_at, junctions)
    ends = [_ends(row, x, junctions) for row in rows]
    low = min(min(a - (len(row.start) * CHARACTER + 12 if row.heated else 0),
                  b - (0 if row.heated else len(row.end) * CHARACTER + 12)) for row, (a, b) in zip(rows, ends))
    high = max(max(a + (0 if row.heated else len(row.start) * CHARACTER + 12),
                   b + (len(row.end) * CHARACTER + 12 if row.heated else 0)) for row, (a, b) in zip(rows, ends))
    height = TOP + ROW * len(rows)
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" class="network" viewBox="{low - 10:.0f} 0 '
             f'{high - low + 20:.0f} {height}" role="img" aria-label="network diagram" font-family="sans-serif" '
             f'font-size="12">']
    for node, ys in rows_at.items():  # links first: the rows are drawn over them
        if len(ys) > 1:
            dash = ' stroke-dasharray="4 3"' if node in junctions else ""
            parts.append(f'<line x1="{x[node]}" y1="{min(ys)}" x2="{x[node]}" y2="{max(ys)}" stroke="#555" '
                         f'stroke-width="1.6"{dash}/>')
    for row in rows:
        parts += _row(row, x, y[row.name], junctions, display)
    bypassed = {}  # unit -> {side: (fraction, on its top row)}: its words, and its tag lifted over a top arc
    for row in rows:
        for node, side, fraction in _bypasses(row, units):
            top_row = y[row.name] == min(rows_at[node])
            parts.append(_bypass_arc(node, side, fraction, x[node], y[row.name], -1 if top_row else 1, _colour(row)))
            bypassed.setdefault(node, {})[side] = (fraction, top_row)
    for node in placed:
        parts += _unit(node, x[node], rows_at[node], node in junctions, units, severity, display,
                       bypassed.get(node, {}), node in linked)
    parts.append("</svg>")
    return "".join(parts)


def _apart(x: dict, rows_at: dict, junctions):
    """Move a unit half a column (junctions first) where it would sit on another unit's link in
    the same column, or its link would run through another unit: two symbols on one vertical
    would read as one connection."""
    def clash(a, b):
        return x[a] == x[b] and min(rows_at[a]) <= max(rows_at[b]) and min(rows_at[b]) <= max(rows_at[a])

    for _ in range(len(x)):
        pairs = [(a, b) for a in x for b in x if a < b and clash(a, b)]
        if not pairs:
            return
        a, b = pairs[0]
        mover = b if b in junctions and a not in junctions else a if a in junctions else b
        x[mover] += COLUMN / 2


def _severities(result) -> dict:
    findings = result.findings
    worst = {}
    for row in findings.itertuples():
        if worst.get(row.unit) != "limit":
            worst[row.unit] = row.severity
    return worst


def _ends(row: Row, x: dict, junctions) -> tuple[float, float]:
    """Where the row starts and ends: at its junctions, or a stub before and after its units."""
    step = 1 if row.heated else -1
    points = [x[n] for n in row.nodes]
    start = x[row.start] if row.start in junctions else (points[0] if points else LEFT) - step * STUB * COLUMN
    end = x[row.end] if row.end in junctions else (points[-1] if points else LEFT) + step * STUB * COLUMN
    return start, end


def _row(row: Row, x: dict, y: float, junctions, display: Display) -> list[str]:
    """The row's line with its direction, its end labels and its segment temperatures."""
    step = 1 if row.heated else -1
    points = [x[n] for n in row.nodes]
    start, end = _ends(row, x, junctions)
    inner = [p for n, p in zip(row.nodes, points) if n not in (row.start, row.end) or n not in junctions]
    stops = [start, *inner, end]
    colour = _colour(row)
    dash = ' stroke-dasharray="6 4"' if row.utility else ""
    parts = [f'<line x1="{start}" y1="{y}" x2="{end}" y2="{y}" stroke="{colour}" stroke-width="3"{dash}/>',
             _arrow(end - step * 10, y, step, colour)]
    label = display.column("x_c")
    for k, temperature in enumerate(row.temperatures[: len(stops) - 1]):
        middle = (stops[k] + stops[k + 1]) / 2
        shown = f"{display.value('temperature', temperature):,.1f}"
        parts.append(f'<text x="{middle}" y="{y - 7}" text-anchor="middle" fill="{colour}" font-size="11"{HALO}>'
                     f'{shown} {label.label}</text>')
    anchor_start, anchor_end = ("end", "start") if row.heated else ("start", "end")
    if row.start not in junctions:
        parts.append(f'<text x="{start - step * 6}" y="{y + 4}" text-anchor="{anchor_start}" font-weight="bold" '
                     f'fill="{colour}">{escape(row.start)}</text>')
    if row.end not in junctions:
        parts.append(f'<text x="{end + step * 6}" y="{y + 4}" text-anchor="{anchor_end}" fill="{colour}">'
                     f'{escape(row.end)}</text>')
    return parts


def _bypasses(row: Row, units: pd.DataFrame):
    """(unit, side, fraction) where the row's stream goes partly round a unit on it (its side's
    bypass fraction in the units table)."""
    for node in row.nodes:
        side = row.sides.get(node)
        column = f"{side}_bypass_fraction"
        if column in units and node in units.index:
            fraction = units.at[node, column]
            if fraction == fraction and fraction > 0.0:
                yield node, side, float(fraction)


def _bypass_arc(node, side, fraction, x, y, away, colour) -> str:
    """A dashed arc leaving the row before the unit and rejoining it after, on the side away
    from the unit's other row (``away``: -1 above, 1 below), titled with the fraction."""
    return (f'<path d="M{x - BYPASS_REACH},{y} Q{x},{y + away * 2 * BYPASS_RISE} {x + BYPASS_REACH},{y}" fill="none" '
            f'stroke="{colour}" stroke-width="1.8" stroke-dasharray="4 3"><title>{escape(node)}: '
            f'{fraction:.0%} of the {side} side goes round it (bypass)</title></path>')


def _colour(row: Row) -> str:
    """A row's colour: a utility's grey, else heated blue or cooled rust."""
    return UTILITY if row.utility else (HEATED if row.heated else COOLED)


def _arrow(x, y, step, colour) -> str:
    return (f'<path d="M{x - step * 7},{y - 6} L{x + step * 3},{y} L{x - step * 7},{y + 6} z" fill="{colour}"/>')


def _duty_text(value, digits) -> str:
    """A duty beside its unit: one decimal, or as many as give three significant figures (1.85
    MMBtu/h, not 1.8), at most the unit's own ``digits``.

    >>> _duty_text(7590.44, 1), _duty_text(1.846, 3), _duty_text(25.93, 3), _duty_text(0.0, 3)
    ('7,590.4', '1.85', '25.9', '0.0')
    """
    size = abs(value)
    wanted = 2 - int(math.floor(math.log10(size))) if size > 0.0 and math.isfinite(size) else 1
    return fixed(value, max(min(digits, 1), min(digits, wanted)))


def _heats_its_stream(units: pd.DataFrame, node) -> bool:
    """Whether a unit drawn on one stream heats it: a heater has only a cold side (its process);
    an air cooler has both (its process the hot side, the air the cold), and cools."""
    def known(column):
        return column in units and node in units.index and units.at[node, column] == units.at[node, column]

    return known("cold_in_c") and not known("hot_in_c")


def _unit(node, x, ys, junction, units: pd.DataFrame, severity, display: Display, bypasses=None,
          linked=False) -> list[str]:
    """A unit's symbol, tag and duty, ringed by its worst finding, linked to its table row (where
    ``linked``);
    ``bypasses`` ({side: (fraction, on the top row)}): the fractions written under the duty, and
    the tag lifted above an arc on the top row."""
    bypasses = bypasses or {}
    lifted = any(top_row for _, top_row in bypasses.values())
    worst = severity.get(node)
    ring = LIMIT if worst == "limit" else WARNING if worst == "warning" else "#333"
    thick = 3.2 if worst else 1.2
    top = min(ys)
    title = escape(node + ("" if worst is None else f": {worst} (listed with the limits and warnings)"))
    opening, closing = (f'<a href="#unit-{escape(node)}">', "</a>") if linked else ("", "")
    parts = [f'{opening}<g class="unit"><title>{title}</title>']
    if junction:
        for yy in ys[:1]:
            parts.append(f'<path d="M{x},{yy - 8} L{x + 8},{yy} L{x},{yy + 8} L{x - 8},{yy} z" fill="#fff" '
                         f'stroke="{ring if worst else "#555"}" stroke-width="{thick if worst else 1.6}"/>')
        if "group" in units and node in units.index and units.at[node, "group"] == "drums":  # a vessel: its tag
            parts.append(f'<text x="{x}" y="{ys[0] - 12}" text-anchor="middle" font-weight="bold" fill="#222">'
                         f'{escape(node)}</text>')
        parts.append(f"</g>{closing}")
        return parts
    duty = units.at[node, "duty_kw"] if node in units.index and "duty_kw" in units else float("nan")
    if len(ys) > 1:
        for yy in ys:
            parts.append(f'<circle cx="{x}" cy="{yy}" r="9" fill="#fff" stroke="{ring}" stroke-width="{thick}"/>')
    else:
        heats = _heats_its_stream(units, node)
        parts.append(f'<rect x="{x - 10}" y="{top - 10}" width="20" height="20" rx="5" fill="{HEATS if heats else COOLS}" '
                     f'stroke="{ring}" stroke-width="{thick}"/>')
    colour = LIMIT if worst == "limit" else "#222"
    mark = " !" if worst == "limit" else ""
    parts.append(f'<text x="{x}" y="{top - (14 + BYPASS_RISE if lifted else 14)}" text-anchor="middle" '
                 f'font-weight="bold" fill="{colour}">'
                 f'{escape(node)}{mark}</text>')
    # an exchanger's words beside its link, not across it; a one-stream unit's under its symbol
    beside = f'x="{x + 6}" text-anchor="start"' if len(ys) > 1 else f'x="{x}" text-anchor="middle"'
    if duty == duty:
        column = display.column("x_kw")
        parts.append(f'<text {beside} y="{top + 24}" font-size="10" fill="#444"{HALO}>'
                     f'{_duty_text(display.value("duty", duty), column.digits)} {column.label}</text>')
    if bypasses:
        words = ", ".join(f"{side} {fraction:.0%}" for side, (fraction, _) in sorted(bypasses.items(), reverse=True))
        parts.append(f'<text {beside} y="{top + 36}" font-size="10" fill="#444"{HALO}>bypass {escape(words)}</text>')
    parts.append(f"</g>{closing}")
    return parts
