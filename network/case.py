"""The case model: what a case file describes, read and checked key by key.

A case is a set of named units (exchangers, heaters, coolers, mixers, splitters, products) and
the paths the streams take through them. Every place where a stream starts — a supply stream, a
mixer's outlet, a splitter's branch — carries a ``path``: the units the stream passes through in
order, ending at a product, a mixer or a splitter. See README.md for the full key reference.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from . import quantities as q
from hxtrain.units.protocol import HEAT_SOURCES

from .errors import CaseError
from .exchangers import SIDES, read_exchanger
from .fields import Fields
from .quantities import shorten
from .fluids import read_fluid
from .reading import Document, read_document
DEFAULT_MINIMUM_APPROACH = 10.0
DEFAULT_MINIMUM_F = 0.75
DEFAULT_TOLERANCE = 1e-6
DEFAULT_MAX_ITERATIONS = 500


@dataclass(frozen=True)
class Step:
    """One element of a path: a unit, and for an exchanger the side ("hot"/"cold") passed through."""

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


@dataclass
class Settings:
    minimum_approach: float = DEFAULT_MINIMUM_APPROACH
    minimum_f: float = DEFAULT_MINIMUM_F
    tolerance: float = DEFAULT_TOLERANCE
    max_iterations: int = DEFAULT_MAX_ITERATIONS


@dataclass
class Case:
    """A checked case. Physical values are floats in the default units (°C, kg/s, kJ/kg·K, kW, kW/K);
    fluids are property models; each exchanger holds its ``spec`` (an ExchangerSpec) and ``limits``."""

    file: str
    title: str
    settings: Settings
    fluids: dict
    streams: dict[str, dict]
    exchangers: dict[str, dict]
    heaters: dict[str, dict]
    coolers: dict[str, dict]
    mixers: dict[str, dict]
    splitters: dict[str, dict]
    products: dict[str, dict]
    origins: list[Origin] = field(default_factory=list)
    keys: dict[str, tuple] = field(default_factory=dict)
    """Case-file key path of every unit by name."""
    lines: dict[tuple, int] = field(default_factory=dict, repr=False)
    """Line of each key path in the case file (empty for a case built from Python data)."""

    def error(self, path, message):
        """A CaseError at ``path``, with the line where the file had that key."""
        doc = Document(None, self.file, self.lines)
        return doc.error(tuple(path), message)


def load_case(path) -> Case:
    """Read, parse and check a case file; raises :class:`CaseError` on any bad input."""
    return case_from_document(read_document(path))


def case_from_mapping(data, name="<case>") -> Case:
    """Check a case given as plain Python data (the same keys as a case file)."""
    return case_from_document(Document(data, name))


def case_from_document(doc: Document) -> Case:
    top = Fields(doc, (), doc.data, "a mapping at the top level (title, fluids, streams, exchangers, ...)")
    if "base" in doc.data:
        raise doc.error(("base",), "this looks like a study file (it has 'base'), not a case file; "
                                   "use hxtrain compare or hxtrain sweep on a study file")
    title = top.text("title", default="") or ""
    top.text("description")
    settings = _settings(top.mapping("settings"))
    fluids = {name: read_fluid(f) for name, f in top.named_entries("fluids", "fluid names to their properties")}
    if not fluids:
        raise doc.error(("fluids",), "the case defines no fluids: add a 'fluids' section with each fluid's cp")
    case = Case(doc.file, title, settings, fluids, {}, {}, {}, {}, {}, {}, {}, lines=doc.lines)
    origins = []
    for name, f in top.named_entries("streams", "stream names to their supply"):
        case.streams[name] = {
            "fluid": f.choice("fluid", sorted(fluids)),
            "flow": f.quantity("flow", q.MASS_FLOW),
            "supply_temperature": f.quantity("supply_temperature", q.TEMPERATURE),
            "utility": f.flag("utility"),
        }
        origins.append(Origin(name, f.path, _path(f), name, "out"))
        f.text("description")
        f.finish()
    for name, f in top.named_entries("exchangers", "exchanger tags to their data"):
        case.exchangers[name] = read_exchanger(f)
    for section, table in (("heaters", case.heaters), ("coolers", case.coolers)):
        for name, f in top.named_entries(section, f"{section[:-1]} tags to their data"):
            table[name] = _heater(f, heater=section == "heaters")
    for name, f in top.named_entries("mixers", "mixer names to their outlet path"):
        case.mixers[name] = {}
        origins.append(Origin(name, f.path, _path(f), name, "out"))
        f.text("description")
        f.finish()
    for name, f in top.named_entries("splitters", "splitter names to their branches"):
        case.splitters[name] = _splitter(f, origins)
    for name, f in top.named_entries("products", "product names"):
        case.products[name] = {"target_temperature": f.quantity("target_temperature", q.TEMPERATURE, required=False)}
        f.text("description")
        f.finish()
    top.finish()
    _register_names(case, top)
    if not case.streams:
        raise doc.error(("streams",), "the case has no supply streams: nothing flows")
    case.origins = origins
    check_connections(case, doc)
    return case


def _settings(f: Fields | None) -> Settings:
    if f is None:
        return Settings()
    settings = Settings(
        minimum_approach=f.quantity("minimum_approach", q.TEMPERATURE_DIFFERENCE, False, DEFAULT_MINIMUM_APPROACH),
        minimum_f=f.quantity("minimum_f", q.CORRECTION_FACTOR, False, DEFAULT_MINIMUM_F),
        tolerance=f.quantity("tolerance", q.TOLERANCE, False, DEFAULT_TOLERANCE),
        max_iterations=f.integer("max_iterations", DEFAULT_MAX_ITERATIONS, 1, 100_000),
    )
    f.finish()
    return settings


def _heater(f: Fields, heater: bool) -> dict:
    if f.has("duty") == f.has("outlet_temperature"):
        raise f.error(None, "give exactly one of 'duty' (kW) and 'outlet_temperature' (°C)")
    data = {
        "duty": f.quantity("duty", q.DUTY, required=False),
        "outlet_temperature": f.quantity("outlet_temperature", q.TEMPERATURE, required=False),
        "design_temperature": f.quantity("design_temperature", q.TEMPERATURE, required=False),
    }
    if heater:
        data["heat_source"] = f.choice("heat_source", HEAT_SOURCES, required=False, default="fired")
    f.text("description")
    f.finish()
    return data


def _splitter(f: Fields, origins) -> dict:
    branches = f.named_entries("branches", "branch names to their fraction and path")
    if not branches:
        raise f.error("branches", "a splitter needs at least one branch")
    fractions = {}
    for branch, b in branches:
        fractions[branch] = b.quantity("fraction", q.FRACTION)
        origins.append(Origin(f"{f.path[-1]}.{branch}", b.path, _path(b), f.path[-1], branch))
        b.text("description")
        b.finish()
    total = sum(fractions.values())
    if abs(total - 1.0) > 1e-6:
        raise f.error("branches", f"the branch fractions sum to {total:.6g}, not 1 (tolerance 1e-6)")
    f.text("description")
    f.finish()
    return {"fractions": {k: v / total for k, v in fractions.items()}}


def _path(f: Fields) -> list[Step]:
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


def _register_names(case: Case, top: Fields):
    for section in ("streams", "exchangers", "heaters", "coolers", "mixers", "splitters", "products"):
        for name in getattr(case, section):
            if name in case.keys:
                first = ".".join(case.keys[name])
                raise top.doc.error((section, name), f"the name '{name}' is already used by {first}; names must be unique")
            case.keys[name] = (section, name)


def check_connections(case: Case, doc: Document):
    """Every port connected exactly once; paths made of known units in a possible order."""
    used: dict[tuple, tuple] = {}  # (unit, side) -> key path of the path that uses it
    terminals = {**{n: "products" for n in case.products}, **{n: "mixers" for n in case.mixers},
                 **{n: "splitters" for n in case.splitters}}
    for origin in case.origins:
        key = origin.key + ("path",)
        *through, last = origin.path
        for step in through:
            _check_through_step(case, doc, key, step, terminals)
            if (step.unit, step.side) in used:
                other = ".".join(map(str, used[(step.unit, step.side)]))
                raise doc.error(key, f"{step.label} is already on the path at {other}: each exchanger side and "
                                     "each heater or cooler takes exactly one stream")
            used[(step.unit, step.side)] = key
        if last.unit not in terminals:
            what = "an exchanger side" if last.unit in case.exchangers else "not a product, mixer or splitter"
            if last.unit not in case.keys:
                what = "not a known name"
            raise doc.error(key, f"a path must end at a product, a mixer or a splitter; its last step '{last.label}' is {what}")
        if last.side:
            raise doc.error(key, f"'{last.label}': a path ends at the unit itself, without a '.{last.side}' part")
        if terminals[last.unit] != "mixers" and (last.unit, None) in used:
            other = ".".join(map(str, used[(last.unit, None)]))
            raise doc.error(key, f"{last.unit} is already fed by the path at {other}; only a mixer takes several streams")
        used.setdefault((last.unit, None), key)
    expected = [(t, s, ("exchangers", t)) for t in case.exchangers for s in SIDES]
    expected += [(t, None, (sec, t)) for sec in ("heaters", "coolers", "mixers", "splitters", "products") for t in getattr(case, sec)]
    for unit, side, key in expected:
        if (unit, side) not in used:
            port = f"{unit}.{side}" if side else unit
            raise doc.error(key, f"{port} is on no path: every exchanger side, heater, cooler, mixer, splitter and "
                                 "product must be fed by exactly one path (a mixer by one or more)")
    check_supply_reaches_every_unit(case, doc)


def check_supply_reaches_every_unit(case: Case, doc: Document):
    """Refuse a mixer or splitter that no supply stream reaches: the paths that start there carry
    only what circulates in a loop that nothing enters, so their flows are zero and their
    temperatures undefined. Uses the paths alone (no flows): a branch with fraction 0 is fine."""
    downstream = {}  # origin name -> the mixer or splitter its path ends at (None: a product)
    for origin in case.origins:
        last = origin.path[-1].unit
        downstream[origin.name] = last if last in case.mixers or last in case.splitters else None
    reached, frontier = set(), [o.name for o in case.origins if o.name in case.streams]
    while frontier:
        name = frontier.pop()
        unit = downstream[name]
        if unit is not None and unit not in reached:
            reached.add(unit)
            frontier += [o.name for o in case.origins if o.unit == unit]
    unfed = [o for o in case.origins if o.name not in case.streams and o.unit not in reached]
    if unfed:
        names = sorted({o.unit for o in unfed})
        raise doc.error(unfed[0].key + ("path",),
                        f"no supply stream reaches {', '.join(names[:5])}: the units on this path are fed only by a "
                        "loop that nothing enters (route a supply stream's path into it)")


def _check_through_step(case, doc, key, step, terminals):
    if step.unit in case.exchangers:
        if step.side not in SIDES:
            raise doc.error(key, f"'{step.label}': name the exchanger side the stream passes through, "
                                 f"'{step.unit}.hot' or '{step.unit}.cold'")
    elif step.unit in case.heaters or step.unit in case.coolers:
        if step.side:
            raise doc.error(key, f"'{step.label}': a heater or cooler has one side; write '{step.unit}'")
    elif step.unit in terminals:
        raise doc.error(key, f"'{step.label}' is a {terminals[step.unit][:-1]}: it can only be the last step of a path")
    else:
        raise doc.error(key, f"'{step.label}' is not a known exchanger, heater or cooler{_near(step.unit, case.keys)}")


def _near(word, names):
    from .fields import nearest

    return nearest(word, list(names))


def without_fouling(case: Case, exchangers=None) -> Case:
    """A copy of ``case`` with the fouling resistances of ``exchangers`` (default: all) set to
    zero: the exchangers as clean. The case passed in is not changed."""
    import copy

    clean = copy.deepcopy(case)
    chosen = clean.exchangers if exchangers is None else exchangers
    for tag in chosen:
        if tag not in clean.exchangers:
            raise CaseError(f"no exchanger '{tag}' in the case", file=case.file, path=("exchangers",))
        spec = clean.exchangers[tag]["spec"]
        for part in spec.fouling:
            spec.set_fouling(part, 0.0)
    return clean
