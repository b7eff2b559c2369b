"""Reading an exchanger from a case file: arrangement, shells, how U is found, pressure drop
and design limits. See README.md ("Exchangers") for the keys.

U is found in exactly one of five ways: ``ua`` (kW/K, fixed); ``u`` with ``area_per_shell``
(fixed U); ``clean_u`` with ``clean_resistance_shell_share`` (a data sheet's clean U and the share
of its film resistance on the shell side); ``film`` (each side's film coefficient); or
``geometry`` (film coefficients from correlations). The last three are at ``reference_flow`` and
scale with flow; they take ``fouling`` resistances.
"""

from __future__ import annotations

from hxtrain.units import hydraulics, resistances, u_models
from hxtrain.units.arrangements import ARRANGEMENTS, FLOWS, arranged, setting_problem
from hxtrain.units.service_rating import ExchangerSpec

from . import quantities as q
from .exchanger_geometry import LAYOUT_CELL, most_tubes, read_geometry  # noqa: F401 -- LAYOUT_CELL, most_tubes: public here
from .fields import Fields

SIDES = ("hot", "cold")
PARTS = ("shell", "tube")
DEFAULT_EXPONENT = {"shell": 0.6, "tube": 0.8}
"""Film exponents on flow: tube side turbulent (Dittus–Boelter form), shell side crossflow over
tube banks (Kern's Re^0.55 rounded): common practice."""
THERMAL_KEYS = ("clean_u", "film", "geometry")
NO_BUNDLE = {"plate": "a plate exchanger has no tube bundle",
             "air_cooler": "an air-cooled bundle's air-side film is not the shell side of a baffled bundle"}
"""Arrangements that the geometry path (a baffled shell's tube bundle) does not describe."""
STATED = {"air_cooler": ("tube_rows", "tube_passes")}
"""Keys an arrangement requires although the registry has defaults for them (an air-cooled
bundle's rows and passes are stated, never assumed)."""


def read_exchanger(f: Fields) -> dict:
    arranged_as, passes, shell_side, mixed_side = _read_arrangement(f)
    shell_side_given = f.has("shell_side")
    data = {"arrangement": arranged_as.name, "shells": f.integer("shells", 1, 1, 50),
            "shells_in_parallel": f.integer("shells_in_parallel", 1, 1, 50), "tube_passes": passes,
            "mixed_side": mixed_side, "shell_side": shell_side}
    bypass = _by_side(f, "bypass", q.FRACTION, shell_side, shell_side_given)
    spec = ExchangerSpec(arranged_as, shells=data["shells"], shells_in_parallel=data["shells_in_parallel"],
                         tube_passes=passes, shell_side=shell_side, mixed_side=mixed_side,
                         bypass_hot=bypass.get("hot", 0.0), bypass_cold=bypass.get("cold", 0.0))
    _read_thermal(f, spec, shell_side_given)
    limits = {
        "design_temperature": _by_side(f, "design_temperature", q.TEMPERATURE, spec.shell_side, shell_side_given),
        "maximum_flow": _by_side(f, "maximum_flow", q.MASS_FLOW, spec.shell_side, shell_side_given),
        "allowable_pressure_drop": {},
        "maximum_vapour_fraction": _by_side(f, "maximum_vapour_fraction", q.FRACTION, spec.shell_side, shell_side_given),
    }
    _read_pressure_drop(f, spec, limits)
    f.text("description")
    f.finish()
    data.update(spec=spec, limits=limits)
    return data


OPTION_KEYS = {"tube_flow", "shell_inlets", "shell_fluid_mixed", "overall_flow", "channel_flow", "tube_rows", "passes"}
"""Case-file keys of the arrangements' own options (registry ``options``; crossflow's ``both_mixed``
is read from ``mixed_side: both``)."""


def _arrangements_taking(key) -> str:
    names = [name for name, line in ARRANGEMENTS.items() if key in line.options]
    return " and ".join(names) if len(names) < 3 else ", ".join(names)


def _read_arrangement(f: Fields):
    """The arrangement with its options, its tube passes, the shell side and crossflow's mixed
    side, each checked against the registry (an error names the key)."""
    name = f.choice("arrangement", tuple(ARRANGEMENTS))
    line = ARRANGEMENTS[name]
    if line.tube_passes == (1,):
        if f.has("tube_passes"):
            # a single-pass relation: more passes would be another relation
            raise f.error("tube_passes", f"'tube_passes' does not apply to arrangement {name}: it is rated as one tube pass")
        passes = 1
    else:
        passes = f.integer("tube_passes", None if "tube_passes" in STATED.get(name, ()) else line.tube_passes[0], 1, 16)
        problem = setting_problem(name, passes)
        if problem and problem[0] == "tube_passes":
            raise f.error("tube_passes", problem[1])
    options = {}
    for key in sorted(OPTION_KEYS):
        if key not in line.options:
            if f.has(key):
                raise f.error(key, f"'{key}' applies to arrangement {_arrangements_taking(key)} only")
            continue
        allowed = line.options[key]
        if key == "passes":
            options[key] = _plate_passes(f)
        elif isinstance(allowed[0], bool):
            if f.has(key):
                options[key] = f.flag(key)
        elif isinstance(allowed[0], int):
            if f.has(key) or key in STATED.get(name, ()):
                value = f.integer(key, None, min(allowed), max(allowed))
                if value not in allowed:
                    raise f.error(key, f"expected one of {', '.join(map(str, allowed))}; got {value}")
                options[key] = value
        elif f.has(key):
            options[key] = f.choice(key, allowed)
    mixed_side = None
    if name == "crossflow":
        mixed = f.choice("mixed_side", ("none", "hot", "cold", "both"))
        if mixed == "both":
            options["both_mixed"] = True
        mixed_side = None if mixed in ("none", "both") else mixed
    elif f.has("mixed_side"):
        raise f.error("mixed_side", "'mixed_side' applies to arrangement crossflow only")
    shells_flow = f.choice("shells_flow", FLOWS, required=False, default="counterflow")
    probe = arranged(name, **{k: v for k, v in options.items() if k != "passes"})
    by_films = [k for k in THERMAL_KEYS if f.has(k)]
    needs_side = line.sided(passes, probe.options) or bool(by_films)
    if needs_side and not f.has("shell_side"):
        why = (f"'{by_films[0]}' gives each side's film" if by_films else
               f"with {passes} tube passes the {name} relation is not the same for both sides")
        raise f.doc.error(f.path, f"missing key 'shell_side' (hot or cold: the stream in the shell): {why}")
    shell_side = f.choice("shell_side", SIDES, required=False, default="hot")  # given where needed: above
    if "passes" in options:  # a plate's passes as (the shell_side stream's, the other's)
        options["passes"] = (options["passes"][shell_side], options["passes"][_other(shell_side)])
    arranged_as = arranged(name, shells_flow=shells_flow, **options)
    problem = setting_problem(arranged_as, passes)
    if problem:
        key, message = problem
        raise f.error(key, message)
    return arranged_as, passes, shell_side, mixed_side


def _plate_passes(f: Fields) -> dict:
    section = f.mapping("passes", required=True, what="a mapping with 'hot' and 'cold': the passes of each stream")
    passes = {side: section.integer(side, None, 1, 6) for side in SIDES}
    section.finish()
    return passes


def _by_side(f: Fields, key, kind, shell_side, shell_side_given, **limits) -> dict:
    """A {hot, cold} mapping, also accepted as {shell, tube} when the case says which is which."""
    section = f.mapping(key, what="a mapping with 'hot'/'cold' (or 'shell'/'tube')")
    if section is None:
        return {}
    values = {}
    for side in SIDES + PARTS:
        value = section.quantity(side, kind, required=False, **limits)
        if value is None:
            continue
        if side in PARTS:
            if not shell_side_given:
                raise section.error(side, "say which stream is in the shell ('shell_side: hot' or 'cold') to use "
                                          "'shell'/'tube' here")
            side = shell_side if side == "shell" else _other(shell_side)
        if side in values:
            raise section.error(None, f"the {side} side is given twice (as hot/cold and as shell/tube)")
        values[side] = value
    section.finish()
    return values


def _other(side):
    return "cold" if side == "hot" else "hot"


def _per_part(f: Fields, key, kind, required=True, **limits):
    section = f.mapping(key, required=required, what="a mapping with 'shell' and 'tube'")
    if section is None:
        return None
    values = {part: section.quantity(part, kind, required=required, **limits) for part in PARTS}
    section.finish()
    return values


def _read_thermal(f: Fields, spec: ExchangerSpec, shell_side_given):
    forms = [k for k in ("ua", "u") + THERMAL_KEYS if f.has(k)]
    if len(forms) != 1:
        what = "none" if not forms else " and ".join(forms)
        raise f.one_of_error(("ua", "u") + THERMAL_KEYS, "give exactly one way to find U: 'ua', 'u', 'clean_u', 'film' "
                                                         f"or 'geometry' (found {what})", forms)
    form = forms[0]
    if form == "ua":
        spec.ua = f.quantity("ua", q.CONDUCTANCE)
        return
    if form == "geometry":
        if spec.arrangement.name in NO_BUNDLE:
            raise f.error("geometry", f"{NO_BUNDLE[spec.arrangement.name]}: give U by 'ua', 'u', 'clean_u' or 'film'")
        bundle, wall = read_geometry(f, spec)
        spec.area_per_shell = bundle.area
        fouling = _fouling(f)
        spec.thermal = u_models.GeometryFilms(bundle, fouling["shell"], fouling["tube"], wall)
        return
    spec.area_per_shell = f.quantity("area_per_shell", q.AREA)
    if form == "u":
        if f.has("fouling"):
            raise f.error("fouling", "fouling needs U from 'clean_u', 'film' or 'geometry'; a plain 'u' is the service U")
        spec.thermal = u_models.FixedCoefficient(f.quantity("u", q.HEAT_TRANSFER_COEFFICIENT))
        return
    wall, ratio = _tube_wall(f)
    fouling = _fouling(f)
    if form == "clean_u":
        clean = f.quantity("clean_u", q.CLEAN_COEFFICIENT)
        share = f.quantity("clean_resistance_shell_share", q.SHELL_SHARE)
        if 1.0 / clean <= wall:
            raise f.error("clean_u", "the tube wall resistance alone exceeds 1/clean_u")
        h_shell, h_tube = resistances.films_from_clean_coefficient(clean, share, wall, ratio)
        h = {"shell": float(h_shell), "tube": float(h_tube)}
    else:
        h = _per_part(f, "film", q.FILM_COEFFICIENT)
    flows = _per_part(f, "reference_flow", q.MASS_FLOW)
    exponents = DEFAULT_EXPONENT | {k: v for k, v in (_per_part(f, "flow_exponent", q.FLOW_EXPONENT,
                                                                required=False) or {}).items() if v is not None}
    temps = _per_part(f, "reference_temperature", q.TEMPERATURE, required=False) or {}
    reynolds = f.quantity("reference_reynolds_tube", q.REYNOLDS, required=False)
    per_shell = 1.0 / spec.shells_in_parallel
    sides = {part: u_models.SideFilm(h[part], flows[part] * per_shell, exponents[part], temps.get(part),
                                    reynolds if part == "tube" else None) for part in PARTS}
    spec.thermal = u_models.ScaledFilms(sides["shell"], sides["tube"], fouling["shell"], fouling["tube"], wall, ratio)


def _fouling(f: Fields) -> dict:
    """Fouling resistances per side (m²·K/W); a side not given is clean."""
    given = _per_part(f, "fouling", q.FOULING, required=False) or {}
    return {part: given.get(part) or 0.0 for part in PARTS}


def _tube_wall(f: Fields):
    tubes = f.mapping("tubes", what="a mapping with outer_diameter, inner_diameter and wall_conductivity")
    if tubes is None:
        return 0.0, 1.0
    do = tubes.quantity("outer_diameter", q.TUBE_DIAMETER)
    di = tubes.quantity("inner_diameter", q.TUBE_DIAMETER)
    k = tubes.quantity("wall_conductivity", q.WALL_CONDUCTIVITY)
    if di >= do:
        raise tubes.error("inner_diameter", "the inner diameter must be smaller than the outer diameter")
    tubes.finish()
    return float(resistances.wall_resistance(do, di, k)), do / di


def _read_pressure_drop(f: Fields, spec: ExchangerSpec, limits):
    section = f.mapping("pressure_drop", what="a mapping with 'shell' and/or 'tube'")
    if section is None:
        return
    geometry = isinstance(spec.thermal, u_models.GeometryFilms)
    for part in PARTS:
        side = section.mapping(part, what="a mapping with 'reference' (at reference_flow) and/or 'allowable'")
        if side is None:
            continue
        reference = side.quantity("reference", q.PRESSURE_DROP, required=not geometry)
        allowable = side.quantity("allowable", q.PRESSURE_DROP, required=False)
        side.finish()
        if allowable is not None:
            limits["allowable_pressure_drop"][part] = allowable
        spec.pressure_drop[part] = _drop_model(f, spec, part, reference)
    section.finish()


def _drop_model(f: Fields, spec, part, reference):
    if reference is None:
        return hydraulics.BundleDrop(spec.thermal.bundle, part)
    film = getattr(spec.thermal, part, None)
    if film is None:
        fixed = "a fixed 'ua' or 'u'" if spec.ua is not None or spec.u_is_fixed else "this U"
        raise f.error("pressure_drop", "a reference pressure drop is scaled with flow from the films' reference "
                                       f"flows, which {fixed} does not have: give U by 'clean_u' or 'film' (with "
                                       "'reference_flow'), or the geometry, to have pressure drops checked")
    return hydraulics.ScaledDrop(reference / spec.shells, film.reference_flow, film.reference_temperature)
