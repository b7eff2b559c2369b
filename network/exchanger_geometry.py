"""Reading an exchanger's tube-bundle geometry (``exchangers.TAG.geometry``): the bundle itself,
the checks that it can be built, and the shell-side method with its Bell–Delaware keys (baffle
cut, clearances, sealing strips, end baffle spacings). See README.md ("Keys").
"""

from __future__ import annotations

import math

from hxtrain.units import resistances, u_models
from hxtrain.units.bell_delaware_geometry import LAYOUT_ANGLES

from . import quantities as q
from .fields import Fields

SHELL_SIDE_METHODS = ("kern", "bell_delaware")
CLEARANCE = q.Kind("a clearance", "m", '"0.8 mm" or 0.0008', low=1e-5, high=0.3,
                   basis="0.01 mm, below any drilled hole's tolerance, to 0.3 m, above the bundle-to-shell gap of "
                         "the largest pull-through bundles: common practice")
BAFFLE_CUT = q.Kind("a baffle cut", "dimensionless", '0.25 or "25 %"', low=0.15, high=0.45,
                    basis="the 15-45 % of the shell diameter the Bell-Delaware correlations were fitted over "
                          "(Taborek, HEDH 3.3, from memory)")
BELL_DELAWARE_KEYS = ("baffle_cut", "shell_baffle_clearance", "tube_baffle_clearance", "bundle_shell_clearance",
                      "sealing_strip_pairs", "inlet_baffle_spacing", "outlet_baffle_spacing")
"""Geometry keys of the Bell–Delaware method (``shell_side_method: bell_delaware`` only)."""
LAYOUT_BASE = {"triangular": "triangular", "rotated_triangular": "triangular", "square": "square",
               "rotated_square": "square"}
"""Tube layouts and the lattice each lies on (a rotated layout is its lattice turned against the
flow: the same tubes per area, another angle for Bell–Delaware, :data:`LAYOUT_ANGLES`)."""


def read_geometry(f: Fields, spec):
    """The bundle of ``exchangers.TAG.geometry`` (a :class:`~hxtrain.units.u_models.TubeBundle`)
    and the tube-wall resistance (m²·K/W); errors name the key."""
    g = f.mapping("geometry", required=True)
    lengths = {key: g.quantity(key, kind) for key, kind in GEOMETRY_LENGTHS.items()}
    tubes, layout = g.integer("tubes", None, 1, 100_000), g.choice("tube_layout", tuple(LAYOUT_BASE))
    baffles = g.integer("baffles", None, 0, 1000)
    # the method after the bundle's own keys: a read stopped at it has asked for them all (the
    # schema builder infers 'required' from the reads, solver/reporting/schema_build.py)
    method = g.choice("shell_side_method", SHELL_SIDE_METHODS, required=False, default="kern")
    bundle = u_models.TubeBundle(
        lengths["tube_outer_diameter"], lengths["tube_inner_diameter"], lengths["tube_length"], tubes,
        spec.tube_passes, lengths["tube_pitch"], layout, lengths["baffle_spacing"], baffles,
        lengths["shell_inner_diameter"], **_bell_delaware(g, method, spec))
    _check_bundle(g, bundle)
    k = g.quantity("wall_conductivity", q.WALL_CONDUCTIVITY)
    g.finish()
    wall = float(resistances.wall_resistance(bundle.tube_outer_diameter, bundle.tube_inner_diameter, k))
    return bundle, wall


def _bell_delaware(g: Fields, method, spec) -> dict:
    """The Bell–Delaware keys, refused with Kern's method (which has no use for them)."""
    if method == "kern":
        for key in BELL_DELAWARE_KEYS:
            if g.has(key):
                raise g.error(key, f"'{key}' is a Bell–Delaware key: it needs 'shell_side_method: bell_delaware'")
        return {}
    if spec.arrangement.name != "tema_e":
        raise g.error("shell_side_method", "the Bell–Delaware method here describes a TEMA E shell with "
                                           f"single-segmental baffles, not arrangement {spec.arrangement.name}")
    optional = {key: g.quantity(key, CLEARANCE, required=False) for key in BELL_DELAWARE_KEYS[1:4]}
    ends = {key: g.quantity(key, q.SPACING, required=False) for key in BELL_DELAWARE_KEYS[5:]}
    return dict(shell_side_method=method, baffle_cut=g.quantity("baffle_cut", BAFFLE_CUT),
                sealing_strip_pairs=g.integer("sealing_strip_pairs", 0, 0, 50), **optional, **ends)


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
    return math.pi * (shell_diameter / 2.0 + pitch / math.sqrt(2.0)) ** 2 / (LAYOUT_CELL[LAYOUT_BASE[layout]] * pitch**2)


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
    most = most_tubes(ds, pitch, LAYOUT_BASE[b.layout])
    if b.tubes > most:
        raise g.error("tubes", f"{b.tubes} tubes on a {pitch * 1000:.4g} mm {b.layout} pitch cannot fit a "
                               f"{ds:.4g} m shell: even with no clearance and no pass lanes at most {most:.0f} fit")
    inlet, outlet = b.end_spacings
    baffled = spacing * (b.baffles - 1) + inlet + outlet if b.baffles else spacing
    if baffled > b.tube_length * (1.0 + 1e-9):
        ends = "" if inlet == outlet == spacing else f" (with the end spacings {inlet:.4g} and {outlet:.4g} m)"
        raise g.error("baffles", f"{b.baffles} baffles at {spacing:.4g} m make {b.baffles + 1} spaces{ends}, "
                                 f"{baffled:.4g} m: longer than the {b.tube_length:.4g} m tubes")
    if b.shell_side_method == "bell_delaware":
        _check_bell_delaware(g, b)
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




def _check_bell_delaware(g: Fields, b: u_models.TubeBundle):
    """What the Bell–Delaware geometry adds: baffles to correct for, an outer tube limit that
    holds the tubes, end spacings within the range of the central one."""
    if b.baffles < 1:
        raise g.error("baffles", "the Bell–Delaware method corrects a baffled shell: give at least one baffle")
    shell = b.baffled_shell_limits()
    if shell["outer_tube_limit"] <= b.tube_outer_diameter:
        raise g.error("bundle_shell_clearance", f"a bundle-to-shell clearance of {b.shell_inner_diameter - shell['outer_tube_limit']:.4g} m "
                                                f"leaves no room for tubes in a {b.shell_inner_diameter:.4g} m shell")
    most = most_tubes(shell["outer_tube_limit"], b.tube_pitch, LAYOUT_BASE[b.layout])
    if b.tubes > most:
        raise g.error("tubes", f"{b.tubes} tubes cannot fit inside the outer tube limit of {shell['outer_tube_limit']:.4g} m "
                               f"(the shell less the bundle-to-shell clearance): at most {most:.0f} fit")
    share, inches, most_diameters = BAFFLE_SPACING_LIMITS
    for key, value in zip(BELL_DELAWARE_KEYS[5:], b.end_spacings):
        if value < 0.995 * max(share * b.shell_inner_diameter, inches) or value > most_diameters * b.shell_inner_diameter:
            raise g.error(key, f"{value:.4g} m is outside the baffle spacings a shell of {b.shell_inner_diameter:.4g} m "
                               "takes (as baffle_spacing: TEMA RCB-4.51, from memory, to twice the shell diameter)")
