"""Paths: where streams start, the units they pass through, and the checks that every port is
connected exactly once.

Every place where a stream starts — a supply stream, a mixer's outlet, a splitter's branch —
carries a ``path``: the units the stream passes through in order, ending at a unit that ends
paths (a product, a mixer, a splitter). Which units a path may pass through, by which sides, and
which may end one, each section says in the registry (:mod:`.sections`); nothing here names a
unit type.
"""

from __future__ import annotations

from dataclasses import dataclass

from .fields import Fields, nearest
from .quantities import shorten
from .reading import Document


@dataclass(frozen=True)
class Step:
    """One element of a path: a unit, and for a unit with several sides (an exchanger's
    ``hot``/``cold``) the side passed through."""

    unit: str
    side: str | None = None

    @property
    def label(self):
        return f"{self.unit}.{self.side}" if self.side else self.unit


@dataclass
class Origin:
    """Where a stream starts: a supply stream, a mixer outlet or a splitter branch."""

    name: str
    key: tuple
    path: list[Step]
    unit: str
    port: str


def read_path(f: Fields) -> list[Step]:
    """The ``path`` key of an entry: ``"A -> B.hot -> C"`` or a list of steps."""
    raw = f.raw("path")
    if isinstance(raw, str):
        items = [part.strip() for part in raw.split("->")]
    elif isinstance(raw, list) and all(isinstance(item, str) for item in raw):
        items = [item.strip() for item in raw]
    else:
        raise f.error("path", 'expected a path such as "E-101.cold -> E-102.cold -> crude_split" (or a list of steps)')
    if not items:
        raise f.error("path", "an empty path: a path names at least the product, mixer or splitter it ends at")
    steps = []
    for item in items:
        if not item:
            raise f.error("path", f"an empty step in {shorten(raw)} (two arrows in a row, or an arrow at an end?)")
        unit, _, side = item.partition(".")
        steps.append(Step(unit, side or None))
    return steps


def check_connections(case, doc: Document, sections):
    """Every port connected exactly once; paths made of known units in a possible order.

    ``sections`` is the registry (:data:`.sections.UNIT_SECTIONS`): each says which sides of its
    units a path passes through (``through``) and whether its units end paths (``path_end``)."""
    of_unit = {name: s for s in sections for name in case.section(s.name)}
    words = _Words(sections)
    used: dict[tuple, tuple] = {}  # (unit, side) -> key path of the path that uses it
    for origin in case.origins:
        key = origin.key + ("path",)
        *through, last = origin.path
        for step in through:
            _check_through_step(case, doc, key, step, of_unit, words)
            if (step.unit, step.side) in used:
                other = ".".join(map(str, used[(step.unit, step.side)]))
                raise doc.error(key, f"{step.label} is already on the path at {other}: {words.one_stream}")
            used[(step.unit, step.side)] = key
        end = of_unit.get(last.unit)
        if end is None or not end.path_end:
            what = ("not a known name" if end is None else
                    f"an {end.word} side" if len(end.through) > 1 else f"not a {words.ends_bare}")
            raise doc.error(key, f"a path must end at {words.ends}; its last step '{last.label}' is {what}")
        if last.side:
            raise doc.error(key, f"'{last.label}': a path ends at the unit itself, without a '.{last.side}' part")
        if end.path_end != "many" and (last.unit, None) in used:
            other = ".".join(map(str, used[(last.unit, None)]))
            raise doc.error(key, f"{last.unit} is already fed by the path at {other}; only a {words.many} takes "
                                 "several streams")
        used.setdefault((last.unit, None), key)
    for name, s in of_unit.items():
        for side in s.through or ((None,) if s.path_end else ()):
            if (name, side) not in used:
                port = f"{name}.{side}" if side else name
                raise doc.error(case.keys[name], f"{port} is on no path: every {words.fed} must be fed by exactly "
                                                 f"one path (a {words.many} by one or more)")
    check_supply_reaches_every_unit(case, doc)


def listed(words, last=" and ") -> str:
    """Words in a sentence: "a", "a and b", "a, b and c" (repeats once)."""
    words = list(dict.fromkeys(words))
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + last + words[-1]


class _Words:
    """The unit words of the registry, for messages about paths (so that a new section is named
    in them without editing them)."""

    def __init__(self, sections):
        sided = [s.word for s in sections if len(s.through) > 1]
        single = [s.word for s in sections if s.through == (None,)]
        ends = [s.word for s in sections if s.path_end]
        self.single = listed(single, " or ")
        self.passable = listed(sided + single, " or ")
        self.one_stream = f"each {listed(sided, ' and each ')} side and each {self.single} takes exactly one stream"
        ordered = sorted(ends, key=lambda w: w != "product")  # the usual end first
        self.ends = listed([f"a {w}" for w in ordered], " or ")
        self.ends_bare = listed(ordered, " or ")
        self.many = listed([s.word for s in sections if s.path_end == "many"], " or ")
        self.fed = listed([f"{w} side" if w in sided else w for w in sided + single + ends])


def check_supply_reaches_every_unit(case, doc: Document):
    """Refuse a unit that starts paths (a mixer, a splitter) that no supply stream reaches: the
    paths that start there carry only what circulates in a loop that nothing enters, so their
    flows are zero and their temperatures undefined. Uses the paths alone (no flows): a branch
    with fraction 0 is fine."""
    starts = {o.unit for o in case.origins}
    downstream = {}  # origin name -> the path-starting unit its path ends at (None: a product)
    for origin in case.origins:
        last = origin.path[-1].unit
        downstream[origin.name] = last if last in starts else None
    supplies = [o.name for o in case.origins if case.feeds_itself(o.unit)]
    reached, frontier = set(), supplies
    while frontier:
        name = frontier.pop()
        unit = downstream[name]
        if unit is not None and unit not in reached:
            reached.add(unit)
            frontier += [o.name for o in case.origins if o.unit == unit]
    unfed = [o for o in case.origins if not case.feeds_itself(o.unit) and o.unit not in reached]
    if unfed:
        names = sorted({o.unit for o in unfed})
        raise doc.error(unfed[0].key + ("path",),
                        f"no supply stream reaches {', '.join(names[:5])}: the units on this path are fed only by a "
                        "loop that nothing enters (route a supply stream's path into it)")


def _check_through_step(case, doc, key, step, of_unit, words):
    section = of_unit.get(step.unit)
    if section is None:
        raise doc.error(key, f"'{step.label}' is not a known {words.passable}"
                             f"{nearest(step.unit, list(case.keys))}")
    if section.through == (None,):
        if step.side:
            raise doc.error(key, f"'{step.label}': a {words.single} has one side; write '{step.unit}'")
    elif section.through:
        if step.side not in section.through:
            options = " or ".join(f"'{step.unit}.{side}'" for side in section.through)
            raise doc.error(key, f"'{step.label}': name the {section.word} side the stream passes through, {options}")
    elif section.path_end:
        raise doc.error(key, f"'{step.label}' is a {section.word}: it can only be the last step of a path")
    else:
        raise doc.error(key, f"'{step.label}' is a {section.word}: a path cannot pass through it")
