"""The case model: what a case file describes, read and checked key by key.

A case is a set of named units in sections (supply streams, exchangers, heaters, coolers,
mixers, splitters, products: the registry in :mod:`.sections`) and the paths the streams take
through them (:mod:`.paths`). See README.md for the full key reference.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from . import quantities as q
from .errors import CaseError
from .fields import Fields
from .fluids import read_fluid
from .paths import Origin, Step, check_connections
from .reading import Document, read_document, refuse_other_kind
from . import sections as registry
from .sections import Reading

__all__ = ["Case", "Settings", "Step", "Origin", "load_case", "case_from_mapping", "case_from_document",
           "without_fouling", "fouled_units", "fouling_of"]

DEFAULT_MINIMUM_APPROACH = 10.0
DEFAULT_MINIMUM_F = 0.75
DEFAULT_TOLERANCE = 1e-6
DEFAULT_MAX_ITERATIONS = 500


@dataclass
class Settings:
    minimum_approach: float = DEFAULT_MINIMUM_APPROACH
    minimum_f: float = DEFAULT_MINIMUM_F
    tolerance: float = DEFAULT_TOLERANCE
    max_iterations: int = DEFAULT_MAX_ITERATIONS
    display_units: dict = field(default_factory=dict)
    """Quantity (a key of :data:`DISPLAY_KINDS`) -> the unit reports show it in, as written."""


DISPLAY_KINDS = {"temperature": q.TEMPERATURE, "temperature_difference": q.TEMPERATURE_DIFFERENCE,
                 "duty": q.DUTY, "mass_flow": q.MASS_FLOW, "heat_capacity_rate": q.CONDUCTANCE,
                 "heat_transfer_coefficient": q.HEAT_TRANSFER_COEFFICIENT, "fouling": q.FOULING,
                 "pressure_drop": q.PRESSURE_DROP, "area": q.AREA, "energy": q.ENERGY}
"""The quantities ``settings.display_units`` may set a unit for, and their kinds (the units a
value may be shown in); reports (``hxtrain.solver.reporting.display_units``) show each in it."""


@dataclass
class Case:
    """A checked case. Physical values are floats in the default units (°C, kg/s, kJ/kg·K, kW, kW/K);
    fluids are property models. ``sections`` holds each unit section's entries (name -> the data
    its reader returned); ``case.exchangers`` and the like are those tables by section name."""

    file: str
    title: str
    settings: Settings
    fluids: dict
    sections: dict = field(default_factory=lambda: {name: {} for name in registry.section_names()})
    origins: list[Origin] = field(default_factory=list)
    keys: dict[str, tuple] = field(default_factory=dict)
    """Case-file key path of every unit by name."""
    lines: dict[tuple, int] = field(default_factory=dict, repr=False)
    """Line of each key path in the case file (empty for a case built from Python data)."""

    def __getattr__(self, name):
        # case.streams, case.exchangers, ...: a section's table by its case-file name
        if name.startswith("__") or name == "sections":
            raise AttributeError(name)
        try:
            return self.sections[name]
        except KeyError:
            raise AttributeError(f"a case has no section or attribute '{name}'") from None

    def section(self, name: str) -> dict:
        """The entries of unit section ``name`` (name -> data)."""
        return self.sections[name]

    def section_of(self, unit: str) -> str:
        """The section a unit's entry is in."""
        return self.keys[unit][0]

    def feeds_itself(self, unit: str) -> bool:
        """The unit supplies flow of its own (a supply stream)."""
        return next(s for s in registry.UNIT_SECTIONS if s.name == self.section_of(unit)).feeds_itself

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
    refuse_other_kind(doc, "case file")
    title = top.text("title", default="") or ""
    top.text("description")
    settings = _settings(top.mapping("settings"))
    fluids = {name: read_fluid(f) for name, f in top.named_entries("fluids", "fluid names to their properties")}
    if not fluids:
        raise doc.error(("fluids",), "the case defines no fluids: add a 'fluids' section with each fluid's cp")
    case = Case(doc.file, title, settings, fluids, lines=doc.lines)
    reading = Reading(settings, fluids)
    for section in registry.UNIT_SECTIONS:
        table = case.sections[section.name]
        for name, f in top.named_entries(section.name, section.entries):
            table[name] = section.read(f, reading)
    top.finish()
    _register_names(case, top)
    if not case.streams:
        raise doc.error(("streams",), "the case has no supply streams: nothing flows")
    case.origins = reading.origins
    check_connections(case, doc, registry.UNIT_SECTIONS)
    return case


def _settings(f: Fields | None) -> Settings:
    if f is None:
        return Settings()
    settings = Settings(
        minimum_approach=f.quantity("minimum_approach", q.TEMPERATURE_DIFFERENCE, False, DEFAULT_MINIMUM_APPROACH),
        minimum_f=f.quantity("minimum_f", q.CORRECTION_FACTOR, False, DEFAULT_MINIMUM_F),
        tolerance=f.quantity("tolerance", q.TOLERANCE, False, DEFAULT_TOLERANCE),
        max_iterations=f.integer("max_iterations", DEFAULT_MAX_ITERATIONS, 1, 100_000),
        display_units=_display_units(f.mapping("display_units", what="a mapping of quantities to units, e.g. "
                                                                    "{temperature: degF, duty: MMBtu/h}")),
    )
    f.finish()
    return settings


def _display_units(f: Fields | None) -> dict:
    if f is None:
        return {}
    units = {}
    for name, kind in DISPLAY_KINDS.items():
        text = f.text(name)
        if text is not None:
            try:
                q.conversion_to(text, kind)
            except q.QuantityError as exc:
                raise f.error(name, str(exc)) from None
            units[name] = text.strip()
    f.finish()
    return units


def _register_names(case: Case, top: Fields):
    for section in registry.section_names():
        for name in case.sections[section]:
            if name in case.keys:
                first = ".".join(case.keys[name])
                raise top.doc.error((section, name), f"the name '{name}' is already used by {first}; names must be unique")
            case.keys[name] = (section, name)


def fouling_of(case: Case, tag) -> dict:
    """The fouling resistances (m²·K/W) of exchanger or air cooler ``tag`` by part (an
    exchanger's ``shell`` and ``tube``, an air cooler's ``bundle``); empty where its U takes none
    (a fixed UA or service U)."""
    if tag in case.exchangers:
        return dict(case.exchangers[tag]["spec"].fouling)
    cooler = case.air_coolers.get(tag)
    return {"bundle": cooler["fouling"]} if cooler is not None and "fouling" in cooler else {}


def fouled_units(case: Case) -> list[str]:
    """The exchangers and air coolers with a fouling resistance above zero, in file order."""
    import numpy as np  # not at the top: `check` reads cases without loading numpy

    return [tag for tag in (*case.exchangers, *case.air_coolers) if any(np.any(np.asarray(r) != 0.0)
                                                                         for r in fouling_of(case, tag).values())]


def without_fouling(case: Case, exchangers=None) -> Case:
    """A copy of ``case`` with the fouling resistances of ``exchangers`` (tags of exchangers or
    air coolers; default: all) set to zero: the units as clean. The case passed in is not changed."""
    import copy

    clean = copy.deepcopy(case)
    chosen = (*clean.exchangers, *clean.air_coolers) if exchangers is None else exchangers
    for tag in chosen:
        if tag in clean.exchangers:
            spec = clean.exchangers[tag]["spec"]
            for part in spec.fouling:
                spec.set_fouling(part, 0.0)
        elif tag in clean.air_coolers:
            if "fouling" in clean.air_coolers[tag]:
                clean.air_coolers[tag]["fouling"] = 0.0
        else:
            raise CaseError(f"no exchanger or air cooler '{tag}' in the case", file=case.file, path=("exchangers",))
    return clean
