"""Reading an exchanger from a case file: arrangement, shells, how U is found, pressure drop
and design limits. See README.md ("Exchangers") for the keys.

U is found in exactly one of five ways: ``ua`` (kW/K, fixed); ``u`` with ``area_per_shell``
(fixed U); ``clean_u`` with ``clean_resistance_shell_share`` (a data sheet's clean U and the share
of its film resistance on the shell side); ``film`` (each side's film coefficient); or
``geometry`` (film coefficients from correlations). The last three are at ``reference_flow`` and
scale with flow; they take ``fouling`` resistances.
"""

from __future__ import annotations

import math

from hxtrain.units import hydraulics, resistances, u_models
from hxtrain.units.pntu_rating import ARRANGEMENTS
from hxtrain.units.service_rating import ExchangerSpec

from . import quantities as q
from .fields import Fields

SIDES = ("hot", "cold")
PARTS = ("shell", "tube")
DEFAULT_EXPONENT = {"shell": 0.6, "tube": 0.8}
"""Film exponents on flow: tube side turbulent (Dittus–Boelter form), shell side crossflow over
tube banks (Kern's Re^0.55 rounded): common practice."""
THERMAL_KEYS = ("clean_u", "film", "geometry")


def read_exchanger(f: Fields) -> dict:
    arrangement = f.choice("arrangement", ARRANGEMENTS)
    data = {"arrangement": arrangement, "shells": f.integer("shells", 1, 1, 50),
            "shells_in_parallel": f.integer("shells_in_parallel", 1, 1, 50), "tube_passes": 1, "mixed_side": None}
    shell_side_given = f.has("shell_side")
    if arrangement == "tema_e":
        data["tube_passes"] = f.integer("tube_passes", 2, 2, 16)
        if data["tube_passes"] % 2:
            raise f.error("tube_passes", f"a TEMA E shell here has an even number of tube passes; got {data['tube_passes']}")
    elif f.has("tube_passes"):
        # the other arrangements' P–NTU relations are single-pass: more passes would be another relation
        raise f.error("tube_passes", f"'tube_passes' applies to arrangement tema_e only; {arrangement} is rated as "
                                     "one tube pass")
    needs_side = (arrangement == "tema_e" and data["tube_passes"] > 2) or any(f.has(k) for k in THERMAL_KEYS)
    data["shell_side"] = f.choice("shell_side", SIDES, required=needs_side, default="hot")
    if arrangement == "crossflow":
        mixed = f.choice("mixed_side", ("none", "hot", "cold"))
        data["mixed_side"] = None if mixed == "none" else mixed
    elif f.has("mixed_side"):
        raise f.error("mixed_side", "'mixed_side' applies to arrangement crossflow only")
    bypass = _by_side(f, "bypass", q.FRACTION, data["shell_side"], shell_side_given)
    spec = ExchangerSpec(arrangement, shells=data["shells"], shells_in_parallel=data["shells_in_parallel"],
                         tube_passes=data["tube_passes"], shell_side=data["shell_side"], mixed_side=data["mixed_side"],
                         bypass_hot=bypass.get("hot", 0.0), bypass_cold=bypass.get("cold", 0.0))
    _read_thermal(f, spec, shell_side_given)
    limits = {
        "design_temperature": _by_side(f, "design_temperature", q.TEMPERATURE, spec.shell_side, shell_side_given),
        "maximum_flow": _by_side(f, "maximum_flow", q.MASS_FLOW, spec.shell_side, shell_side_given),
        "allowable_pressure_drop": {},
    }
    _read_pressure_drop(f, spec, limits)
    f.text("description")
    f.finish()
    data.update(spec=spec, limits=limits)
    return data


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
        raise f.error(None if not forms else forms[1],
                      f"give exactly one way to find U: 'ua', 'u', 'clean_u', 'film' or 'geometry' (found {what})")
    form = forms[0]
    if form == "ua":
        spec.ua = f.quantity("ua", q.CONDUCTANCE)
        return
    if form == "geometry":
        bundle, wall = _geometry(f, spec)
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


def _geometry(f: Fields, spec: ExchangerSpec):
    g = f.mapping("geometry", required=True)
    lengths = {key: g.quantity(key, kind) for key, kind in GEOMETRY_LENGTHS.items()}
    bundle = u_models.TubeBundle(
        lengths["tube_outer_diameter"], lengths["tube_inner_diameter"], lengths["tube_length"],
        g.integer("tubes", None, 1, 100_000), spec.tube_passes, lengths["tube_pitch"],
        g.choice("tube_layout", tuple(LAYOUT_CELL)), lengths["baffle_spacing"], g.integer("baffles", None, 0, 1000),
        lengths["shell_inner_diameter"])
    _check_bundle(g, bundle)
    k = g.quantity("wall_conductivity", q.WALL_CONDUCTIVITY)
    g.finish()
    wall = float(resistances.wall_resistance(bundle.tube_outer_diameter, bundle.tube_inner_diameter, k))
    return bundle, wall


GEOMETRY_LENGTHS = {"tube_outer_diameter": q.TUBE_DIAMETER, "tube_inner_diameter": q.TUBE_DIAMETER,
                    "tube_length": q.TUBE_LENGTH, "tube_pitch": q.SPACING, "baffle_spacing": q.SPACING,
                    "shell_inner_diameter": q.SHELL_DIAMETER}
LAYOUT_CELL = {"triangular": math.sqrt(3.0) / 2.0, "square": 1.0}
"""Area of one tube's lattice cell in units of pitch²: a triangular (60°) layout packs tubes at
√3/2·p² each, a square one at p² (geometry)."""
MINIMUM_PITCH_RATIO = 1.25
"""TEMA's smallest tube pitch: 1.25 tube outer diameters (TEMA RCB-2.5, from memory)."""
BAFFLE_SPACING_LIMITS = (0.2, 0.0508, 2.0)
"""Smallest baffle spacing: a fifth of the shell diameter or 2 in, whichever is larger (TEMA
RCB-4.51, from memory); largest: twice the shell diameter (Kern's method rests on spacings up to
about the shell diameter: common practice)."""
LENGTH_TO_SHELL = (0.5, 300.0)
"""Tube length over shell diameter: bundles run ~3-15 (common practice); outside 0.5-300 the
numbers are a slip, not a design."""


def most_tubes(shell_diameter, pitch, layout) -> float:
    """Upper bound on the tubes of one pitch and layout a shell can hold (m, m).

    Each tube owns one lattice cell (LAYOUT_CELL · pitch²); the cells of tubes centred inside the
    shell lie within shell_diameter/2 + pitch/√2 of its axis (a cell's farthest corner), so they
    cannot outnumber that disc's area over a cell's. Clearances and pass lanes only lower the
    real count (geometry; a bound, not an estimate of the count).

    >>> round(most_tubes(0.75, 0.0254, "square"))
    752
    """
    return math.pi * (shell_diameter / 2.0 + pitch / math.sqrt(2.0)) ** 2 / (LAYOUT_CELL[layout] * pitch**2)


def _check_bundle(g: Fields, b: u_models.TubeBundle):
    """Refuse a bundle that cannot be built: tubes that do not fit the shell, baffles longer than
    the tubes, pitch, baffle spacing or proportions outside what any shell-and-tube design uses."""
    do, ds, pitch, spacing = b.tube_outer_diameter, b.shell_inner_diameter, b.tube_pitch, b.baffle_spacing
    if b.tube_inner_diameter >= do:
        raise g.error("tube_inner_diameter", "must be smaller than tube_outer_diameter")
    # rounding of a quoted pitch (15/16 in on 3/4 in tubes is 1.25 exactly) is let through
    if pitch < 0.995 * MINIMUM_PITCH_RATIO * do:
        raise g.error("tube_pitch", f"{pitch * 1000:.4g} mm is {pitch / do:.3g} tube diameters; tubes are at least "
                                    f"{MINIMUM_PITCH_RATIO} diameters apart (TEMA RCB-2.5, from memory)")
    if ds <= do:
        raise g.error("shell_inner_diameter", "must be larger than tube_outer_diameter")
    most = most_tubes(ds, pitch, b.layout)
    if b.tubes > most:
        raise g.error("tubes", f"{b.tubes} tubes on a {pitch * 1000:.4g} mm {b.layout} pitch cannot fit a "
                               f"{ds:.4g} m shell: even with no clearance and no pass lanes at most {most:.0f} fit")
    baffled = spacing * (b.baffles + 1)
    if baffled > b.tube_length * (1.0 + 1e-9):
        raise g.error("baffles", f"{b.baffles} baffles at {spacing:.4g} m make {b.baffles + 1} spaces, "
                                 f"{baffled:.4g} m: longer than the {b.tube_length:.4g} m tubes")
    share, inches, most_diameters = BAFFLE_SPACING_LIMITS
    smallest = max(share * ds, inches)
    if spacing < 0.995 * smallest or spacing > most_diameters * ds:
        raise g.error("baffle_spacing", f"{spacing:.4g} m is outside {smallest:.4g} m (a fifth of the shell diameter or "
                                        f"2 in, TEMA RCB-4.51, from memory) to {most_diameters * ds:.4g} m (twice the "
                                        "shell diameter: common practice)")
    low, high = LENGTH_TO_SHELL
    if not low <= b.tube_length / ds <= high:
        raise g.error("tube_length", f"{b.tube_length:.4g} m tubes in a {ds:.4g} m shell: a length of "
                                     f"{b.tube_length / ds:.3g} shell diameters, outside {low:g} to {high:g} "
                                     "(common practice)")


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
        raise f.error("pressure_drop", "a reference pressure drop needs 'reference_flow' (give U by 'clean_u' or "
                                       "'film' with reference flows)")
    return hydraulics.ScaledDrop(reference / spec.shells, film.reference_flow, film.reference_temperature)
