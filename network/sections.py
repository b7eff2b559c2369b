"""The registry of a case file's unit sections: for each section, how one entry is read, how its
unit model is built, and how paths pass through or end at its units.

Adding a unit type is one reader (a function of the entry's :class:`~.fields.Fields`, returning
the entry's data), one class in :mod:`hxtrain.units` behind the unit protocol, and one line in
:data:`UNIT_SECTIONS` naming both. Nothing else in the case model or the solver names unit types:
reading, name registration, path checks and graph building all walk this table.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from hxtrain.units import stream_units
from hxtrain.units.desalter import Desalter
from hxtrain.units.enthalpy_curves import EnthalpyCurve
from hxtrain.units.flash_drum import FlashDrum
from hxtrain.units.steam_heater import SteamHeater
from hxtrain.units.water_steam import saturation_temperature
from hxtrain.units.exchanger_model import Exchanger
from hxtrain.units.protocol import HEAT_SOURCES, UnitModel

from . import quantities as q
from .air_coolers import build_air_cooler, read_air_cooler
from .exchangers import SIDES, read_exchanger
from .fields import Fields
from .paths import Origin, read_path


DESALTER_SIDES = Desalter.inlets
"""A desalter's sides: the crude passes through ``crude``, the wash water enters by ``water``
and leaves as brine."""


@dataclass
class Reading:
    """What a reader may use and add to besides its own entry: the case's settings and fluids,
    and the list of origins (where streams start) that readers of path-starting units extend."""

    settings: object
    fluids: dict
    origins: list = field(default_factory=list)

    def starts_path(self, name: str, f: Fields, unit: str, port: str):
        """The entry ``f`` starts a stream called ``name`` at ``unit``'s outlet ``port``: read its
        ``path``."""
        self.origins.append(Origin(name, f.path, read_path(f), unit, port))


@dataclass
class Building:
    """What a factory may use besides the entry's data: the case, for units that many paths end
    at (mixers) the names of their inlet ports in path order, and whether scenario values will be
    set on the units (then a unit must not share mutable data with the case)."""

    case: object
    path_inlets: dict
    varied: bool = True


@dataclass(frozen=True)
class UnitSection:
    """One section of a case file holding units of one type."""

    name: str
    """The case-file key of the section (``heaters``)."""
    word: str
    """What one of its units is called in messages (``heater``)."""
    entries: str
    """What the section maps, for messages (``heater tags to their data``)."""
    read: Callable[[Fields, Reading], dict]
    """Reads one entry (its name is ``f.path[-1]``); returns its data, kept in the case."""
    build: Callable[[str, str, dict, Building], UnitModel]
    """(name, key path text, data, building context) -> the unit model."""
    through: tuple = ()
    """The sides a path passes through: ``("hot", "cold")`` for an exchanger, ``(None,)`` for a
    unit with one side, ``()`` for a unit no path passes through."""
    path_end: str = ""
    """``"one"``: exactly one path ends here (a product, a splitter); ``"many"``: one or more (a
    mixer); ``""``: no path ends here."""
    feeds_itself: bool = False
    """Its units supply flow of their own (a supply stream), so what they feed is reached."""


def _read_stream(f: Fields, reading: Reading) -> dict:
    name = f.path[-1]
    data = {
        "fluid": f.defined_name("fluid", sorted(reading.fluids)),
        "flow": f.quantity("flow", q.MASS_FLOW),
        "utility": f.flag("utility"),
    }
    data["supply_temperature"], data["vapour_fraction"] = _supply_vapour_fraction(f, reading)
    reading.starts_path(name, f, name, "out")
    f.text("description")
    f.finish()
    return data


SATURATION_MATCH = 0.1
"""K: a supply temperature within this of a saturation plateau of its fluid is taken as that
plateau's temperature (a saturated supply written to the nearest tenth of a degree, or converted
from °F, is not a subcooled liquid or a superheated vapour by a hair's breadth: common practice is
to read it as saturated), and so needs its vapour fraction."""


def _supply_vapour_fraction(f: Fields, reading: Reading):
    """(supply temperature, vapour fraction): the fraction needed where the temperature is within
    :data:`SATURATION_MATCH` of a saturation plateau of the fluid (there T does not fix the
    state; the supply is then taken at the plateau's temperature), refused anywhere else (T fixes
    it there)."""
    fluid = reading.fluids[f.raw("fluid")]
    t = f.quantity("supply_temperature", q.TEMPERATURE)
    plateaus = getattr(fluid, "plateau_temperatures", np.empty(0)) if fluid.state_by_enthalpy else np.empty(0)
    nearest = plateaus[np.argmin(np.abs(plateaus - t))] if plateaus.size else None
    saturated = nearest is not None and abs(t - nearest) <= SATURATION_MATCH
    given = f.quantity("vapour_fraction", q.FRACTION, required=False)
    if saturated and given is None:
        raise f.error("vapour_fraction", f"{t:g} °C is within {SATURATION_MATCH:g} K of the saturation temperature "
                                         f"{nearest:.4f} °C of fluid '{fluid.name}' at its pressure, where "
                                         "temperature does not fix the state: give the supply's 'vapour_fraction' "
                                         "(0 saturated liquid, 1 saturated vapour; it is then taken at the "
                                         "saturation temperature), or a temperature further from it for a "
                                         "subcooled liquid or a superheated vapour")
    if given is not None and not saturated:
        where = "" if nearest is None else f"; its saturation temperature is {nearest:.4f} °C"
        raise f.error("vapour_fraction", f"the supply's temperature fixes its state ({t:g} °C is not within "
                                         f"{SATURATION_MATCH:g} K of a saturation temperature of fluid "
                                         f"'{fluid.name}'{where}): leave out 'vapour_fraction'")
    for member in fluid.members():  # what the solved temperatures are checked against, known here already
        if not member.extrapolate and np.any(member.outside_range(t)):
            low, high = member.valid_range
            raise f.error("supply_temperature", f"{t:g} °C is outside the data range {low:g} to {high:g} °C of fluid "
                                                f"'{member.name}' ({member.range_key}): give a supply temperature "
                                                "within it, or widen the data (or set 'extrapolate: true' on the fluid "
                                                "to accept extrapolated properties)")
    return (float(nearest) if saturated else t), given


def _build_stream(name, key, data, building):
    return stream_units.Source(name, key, data["flow"], data["supply_temperature"], data.get("vapour_fraction"))


def _read_exchanger(f: Fields, reading: Reading) -> dict:
    return read_exchanger(f)


def _build_exchanger(name, key, data, building):
    # where scenario values will be set on the unit it gets its own copy of the spec: they must
    # never change the case it was built from (the next network built from it starts afresh)
    s = building.case.settings
    spec = copy.deepcopy(data["spec"]) if building.varied else data["spec"]
    return Exchanger(name, key, spec, minimum_approach=s.minimum_approach, minimum_f=s.minimum_f, limits=data["limits"])


def _read_one_side_unit(f: Fields, heater: bool, reading: Reading) -> dict:
    if f.has("duty") == f.has("outlet_temperature"):
        raise f.one_of_error(("duty", "outlet_temperature"),
                             "give exactly one of 'duty' (kW) and 'outlet_temperature' (°C)")
    data = {
        "duty": f.quantity("duty", q.DUTY, required=False),
        "outlet_temperature": f.quantity("outlet_temperature", q.TEMPERATURE, required=False),
        "design_temperature": f.quantity("design_temperature", q.TEMPERATURE, required=False),
        "outlet_fluid": f.defined_name("outlet_fluid", sorted(reading.fluids), required=False),
    }
    if heater:
        data["heat_source"] = f.choice("heat_source", HEAT_SOURCES, required=False, default="fired")
    f.text("description")
    f.finish()
    return data


def _read_heater(f: Fields, reading: Reading) -> dict:
    return _read_one_side_unit(f, True, reading)


def _read_cooler(f: Fields, reading: Reading) -> dict:
    return _read_one_side_unit(f, False, reading)


def _with_outlet_fluid(data, building) -> dict:
    """The entry's data with its outlet fluid's name turned into the fluid model and its name."""
    data = dict(data)
    name = data.pop("outlet_fluid", None)
    if name is not None:
        data.update(outlet_fluid=building.case.fluids[name], outlet_fluid_name=name)
    return data


def _build_heater(name, key, data, building):
    return stream_units.Heater(name, key, **_with_outlet_fluid(data, building))


def _build_cooler(name, key, data, building):
    return stream_units.Heater(name, key, cooler=True, **_with_outlet_fluid(data, building))


def _read_mixer(f: Fields, reading: Reading) -> dict:
    reading.starts_path(f.path[-1], f, f.path[-1], "out")
    f.text("description")
    f.finish()
    return {}


def _build_mixer(name, key, data, building):
    return stream_units.Mixer(name, key, building.path_inlets[name])


def _read_splitter(f: Fields, reading: Reading) -> dict:
    branches = f.named_entries("branches", "branch names to their fraction (or set flow) and path")
    if not branches:
        raise f.error("branches", "a splitter needs at least one branch")
    by_flow = [branch for branch, b in branches if b.has("flow")]
    if by_flow and len(by_flow) == len(branches):
        raise f.error("branches", "every branch is set by flow: at least one branch must take the rest (give it a "
                                  "'fraction' instead of a 'flow')")
    lone = len(branches) - len(by_flow) == 1  # one branch takes all the rest: its fraction is 1
    fractions, set_flows = {}, {}
    for branch, b in branches:
        if branch in by_flow:
            if b.has("fraction"):
                raise b.error("fraction", "give a branch either a 'fraction' or a set 'flow' (kg/s), not both")
            set_flows[branch] = b.quantity("flow", q.MASS_FLOW)
        else:
            if not b.has("fraction") and not (by_flow and lone):
                sharing = [name for name, _ in branches if name not in by_flow]
                raise b.error(None, "missing key 'fraction': " + (
                    f"the branches sharing what the set flows leave ({', '.join(sharing)}) each need theirs; only a "
                    "branch that takes all the rest alone may omit it" if by_flow else
                    "every branch of a splitter without set flows needs its fraction (they sum to 1)"))
            fractions[branch] = b.quantity("fraction", q.FRACTION, required=False, default=1.0)
        reading.starts_path(f"{f.path[-1]}.{branch}", b, f.path[-1], branch)
        b.text("description")
        b.finish()
    total = sum(fractions.values())
    if abs(total - 1.0) > 1e-6:
        shared = "branch fractions" if not by_flow else "fractions of the branches sharing the rest"
        raise f.error("branches", f"the {shared} sum to {total:.6g}, not 1 (tolerance 1e-6); a study's 'set' of one "
                                  "branch must set the others too (a sweep, adjust or uncertainty input on one "
                                  "branch rescales the others)")
    f.text("description")
    f.finish()
    return {"fractions": {k: v / total for k, v in fractions.items()}, "set_flows": set_flows,
            "order": [branch for branch, _ in branches]}


def _build_splitter(name, key, data, building):
    return stream_units.Splitter(name, key, data["fractions"], data.get("set_flows"), data.get("order"))


def _read_product(f: Fields, reading: Reading) -> dict:
    data = {"target_temperature": f.quantity("target_temperature", q.TEMPERATURE, required=False)}
    f.text("description")
    f.finish()
    return data


def _build_product(name, key, data, building):
    return stream_units.Sink(name, key, data["target_temperature"])


def _read_steam_heater(f: Fields, reading: Reading) -> dict:
    settings = [key for key in ("outlet_temperature", "duty", "ua") if f.has(key)]
    if len(settings) != 1:
        raise f.one_of_error(("outlet_temperature", "duty", "ua"), "give exactly one of 'outlet_temperature' (°C), "
                                                                  "'duty' (kW) and 'ua' (kW/K)")
    data = {
        "steam_pressure": f.quantity("steam_pressure", q.STEAM_PRESSURE),
        "outlet_temperature": f.quantity("outlet_temperature", q.TEMPERATURE, required=False),
        "duty": f.quantity("duty", q.DUTY, required=False),
        "ua": f.quantity("ua", q.CONDUCTANCE, required=False),
        "design_temperature": f.quantity("design_temperature", q.TEMPERATURE, required=False),
    }
    t_sat = saturation_temperature(data["steam_pressure"])
    if data["outlet_temperature"] is not None and data["outlet_temperature"] >= t_sat:
        written = f.value["outlet_temperature"]
        raise f.error("outlet_temperature",
                      f"{q.shorten(written)} ({q.in_written_terms(None, data['outlet_temperature'], q.TEMPERATURE)}) is "
                      "at or above the saturation temperature of the steam at "
                      f"{q.shorten(f.value['steam_pressure'])}, {q.in_written_terms(written, t_sat, q.TEMPERATURE)}: "
                      "condensing steam cannot heat a stream there; raise 'steam_pressure' or lower "
                      "'outlet_temperature'")
    f.text("description")
    f.finish()
    return data


def _build_steam_heater(name, key, data, building):
    return SteamHeater(name, key, **data)


def _read_desalter(f: Fields, reading: Reading) -> dict:
    data = {"carry_over": f.quantity("carry_over", q.FRACTION, required=False, default=0.0),
            "heat_loss": f.quantity("heat_loss", q.DUTY, required=False, default=0.0)}
    f.text("description")
    f.finish()
    return data


def _build_desalter(name, key, data, building):
    return Desalter(name, key, **data)


DRUM_OUTLETS = FlashDrum.outlets
"""A flash drum's outlets, each an entry of its own with the fluid it carries and its path."""


def _read_flash_drum(f: Fields, reading: Reading) -> dict:
    """A drum's ``vapour`` and ``liquid``: each names the fluid it leaves as (an enthalpy curve
    without a plateau, on the feed's reference) and starts a path."""
    data, outlets = {}, {}
    data["feed_curve"] = f.defined_name("feed_curve", sorted(reading.fluids), required=False)
    for port in DRUM_OUTLETS:  # every key of both outlets read before any is judged: the schema sees them all
        outlet = outlets[port] = f.mapping(port, required=True, what=f"the drum's {port}: its fluid and path")
        data[f"{port}_name"] = outlet.defined_name("fluid", sorted(reading.fluids))
        reading.starts_path(f"{f.path[-1]}.{port}", outlet, f.path[-1], port)
        outlet.text("description")
        outlet.finish()
    for port, outlet in outlets.items():
        name = data[f"{port}_name"]
        fluid = reading.fluids[name]
        if not isinstance(fluid, EnthalpyCurve) or fluid.state_by_enthalpy:
            raise outlet.error("fluid", f"fluid '{name}' is not an enthalpy curve without a saturation plateau: the "
                                        f"drum's {port} leaves as a fluid given by 'enthalpy_curve' at the drum's "
                                        "pressure, on the feed curve's enthalpy reference (a wide-boiling cut; a "
                                        "pure fluid's plateau is not taken by a drum in this version)")
    curve = reading.fluids.get(data["feed_curve"]) if data["feed_curve"] else None
    if data["feed_curve"] and (not isinstance(curve, EnthalpyCurve) or curve.state_by_enthalpy):
        raise f.error("feed_curve", f"fluid '{data['feed_curve']}' is not an enthalpy curve without a saturation "
                                    "plateau: 'feed_curve' names the feed's curve at the drum's pressure (given by "
                                    "'enthalpy_curve'), onto which a feed kept liquid upstream is let down")
    f.text("description")
    f.finish()
    return data


def _build_flash_drum(name, key, data, building):
    fluids = building.case.fluids
    return FlashDrum(name, key, fluids[data["vapour_name"]], fluids[data["liquid_name"]], data["vapour_name"],
                     data["liquid_name"], feed_curve=fluids[data["feed_curve"]] if data["feed_curve"] else None)


UNIT_SECTIONS = (
    UnitSection("streams", "supply stream", "stream names to their supply", _read_stream, _build_stream,
                feeds_itself=True),
    UnitSection("exchangers", "exchanger", "exchanger tags to their data", _read_exchanger, _build_exchanger,
                through=SIDES),
    UnitSection("heaters", "heater", "heater tags to their data", _read_heater, _build_heater, through=(None,)),
    UnitSection("coolers", "cooler", "cooler tags to their data", _read_cooler, _build_cooler, through=(None,)),
    UnitSection("steam_heaters", "steam heater", "steam heater tags to their data", _read_steam_heater,
                _build_steam_heater, through=(None,)),
    UnitSection("desalters", "desalter", "desalter tags to their data", _read_desalter, _build_desalter,
                through=DESALTER_SIDES),
    UnitSection("air_coolers", "air cooler", "air cooler tags to their data", read_air_cooler, build_air_cooler,
                through=(None,)),
    UnitSection("mixers", "mixer", "mixer names to their outlet path", _read_mixer, _build_mixer, path_end="many"),
    UnitSection("splitters", "splitter", "splitter names to their branches", _read_splitter, _build_splitter,
                path_end="one"),
    UnitSection("flash_drums", "flash drum", "flash drum tags to their vapour and liquid", _read_flash_drum,
                _build_flash_drum, path_end="one"),
    UnitSection("products", "product", "product names", _read_product, _build_product, path_end="one"),
)
"""Every unit section of a case file, in the order they are read (and shown in ``check``)."""



def section_names() -> tuple[str, ...]:
    """The case-file keys of the unit sections, in registry order."""
    return tuple(s.name for s in UNIT_SECTIONS)
