r"""Shell-side geometry of a baffled TEMA E shell for the Bell–Delaware method: flow areas, leakage
and bypass areas, tube fractions and tube-row counts, with clearance defaults.

Single-segmental baffles, plain tubes. Symbols follow Taborek [1]_: :math:`D_s` shell inner
diameter, :math:`D_{otl}` outer tube limit (diameter of the circle enclosing the tube bundle),
:math:`D_{ctl} = D_{otl} - D_o` the diameter through the outermost tube centres, :math:`B_c` the
baffle cut as a fraction of :math:`D_s`, :math:`L_{tp}` the tube pitch, :math:`L_{bc}` the
central baffle spacing. Clearances are diametral (twice the radial gap).

Layout angle, measured from the crossflow direction [1]_: 30° triangular, 60° rotated
triangular, 45° rotated square, 90° square (in line).

References
----------
.. [1] Taborek, J. "Shell-and-tube heat exchangers: single-phase flow", section 3.3 of the Heat
       Exchanger Design Handbook (Schlünder/Hewitt, eds.), Hemisphere, 1983: flow areas, tube
       counts and correction factors (section numbers from memory).
.. [2] TEMA, Standards of the Tubular Exchanger Manufacturers Association, 9th ed. (2007):
       RCB-4.2 baffle hole clearance, RCB-4.3 shell-to-baffle clearance (table numbers from
       memory; the values are checked against ``ht.hx`` in the tests).
.. [3] Serth, R. W. Process Heat Transfer: Principles and Applications. Academic Press, 2007,
       ch. 6 (the Delaware method, after [1]_).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .arrays import as_arrays

__all__ = [
    "LAYOUT_ANGLES",
    "layout_angle",
    "pitch_parallel_to_flow",
    "pitch_normal_to_flow",
    "shell_baffle_clearance_tema",
    "tube_baffle_clearance_tema",
    "bundle_shell_clearance_fixed_tubesheet",
    "baffle_cut_angle",
    "centre_line_angle",
    "window_tube_fraction",
    "crossflow_area",
    "window_flow_area",
    "window_hydraulic_diameter",
    "crossflow_rows",
    "window_rows",
    "shell_baffle_leakage_area",
    "tube_baffle_leakage_area",
    "bypass_area",
    "BaffledShell",
    "baffled_shell",
]

LAYOUT_ANGLES = {"triangular": 30, "rotated_square": 45, "rotated_triangular": 60, "square": 90}
"""Layout names used in hxtrain and their tube-layout angles (degrees, from the flow direction)."""

_SQRT3_2 = np.sqrt(3.0) / 2.0
_SQRT1_2 = np.sqrt(0.5)
# pitch parallel to the flow L_pp / L_tp, and effective pitch normal to it L_tp,eff / L_tp [1]_;
# Taborek prints 0.866 and 0.707, the exact values to three digits
_PARALLEL = {30: _SQRT3_2, 45: _SQRT1_2, 60: 0.5, 90: 1.0}
_NORMAL = {30: 1.0, 45: _SQRT1_2, 60: _SQRT3_2, 90: 1.0}

INCH = 0.0254
# TEMA RCB-4.3: shell inner diameter upper bounds (m) and the diametral shell-to-baffle clearance
# for each band, TEMA's metric figures (mm) for 1/8, 3/16, 1/4, 5/16, 3/8, 7/16 in
_TEMA_SHELL_BOUNDS = np.array([18.0, 40.0, 55.0, 70.0, 85.0]) * INCH
_TEMA_SHELL_BAFFLE = np.array([3.2, 4.8, 6.4, 7.9, 9.5, 11.1]) * 1e-3


def layout_angle(layout):
    """Tube-layout angle in degrees from an angle (30, 45, 60, 90) or a layout name of
    :data:`LAYOUT_ANGLES`.

    >>> layout_angle("triangular"), layout_angle(45)
    (30, 45)
    """
    angle = LAYOUT_ANGLES.get(layout, layout) if isinstance(layout, str) else layout
    if angle not in _PARALLEL:
        raise ValueError(f"layout must be one of 30, 45, 60, 90 or {sorted(LAYOUT_ANGLES)}, got {layout!r}")
    return int(angle)


def pitch_parallel_to_flow(pitch, layout):
    r"""Tube pitch parallel to the crossflow :math:`L_{pp}` (m) [1]_: the distance between
    successive tube rows, :math:`L_{tp}\cos 30°`, :math:`L_{tp}/\sqrt2`, :math:`L_{tp}/2` and
    :math:`L_{tp}` for 30°, 45°, 60°, 90°.

    >>> round(float(pitch_parallel_to_flow(0.025, 30)), 6)
    0.021651
    """
    (pitch,) = as_arrays(pitch)
    return pitch * _PARALLEL[layout_angle(layout)]


def pitch_normal_to_flow(pitch, layout):
    r"""Effective tube pitch normal to the crossflow :math:`L_{tp,eff}` (m) [1]_, the one that
    sets the gap area between tubes: :math:`L_{tp}` (30°, 90°), :math:`L_{tp}/\sqrt2` (45°),
    :math:`L_{tp}\cos 30°` (60°).

    >>> round(float(pitch_normal_to_flow(0.025, 45)), 6)
    0.017678
    """
    (pitch,) = as_arrays(pitch)
    return pitch * _NORMAL[layout_angle(layout)]


def shell_baffle_clearance_tema(shell_diameter):
    r"""Diametral clearance between shell and baffle :math:`L_{sb}` (m), TEMA RCB-4.3 standard
    clearances [2]_: 3.2 mm below 18 in (0.457 m) nominal shell diameter, 4.8 mm to 40 in,
    6.4 mm to 55 in, 7.9 mm to 70 in, 9.5 mm to 85 in, 11.1 mm above (TEMA's metric figures).

    >>> float(shell_baffle_clearance_tema(0.489))
    0.0048
    """
    (ds,) = as_arrays(shell_diameter)
    return _TEMA_SHELL_BAFFLE[np.searchsorted(_TEMA_SHELL_BOUNDS, ds, side="right")]


def tube_baffle_clearance_tema(outer_diameter, unsupported_span):
    r"""Diametral clearance between tube and baffle hole :math:`L_{tb}` (m), TEMA RCB-4.2 [2]_:
    0.8 mm (1/32 in) where the tube is larger than 1¼ in (31.8 mm) or its unsupported span is at
    most 36 in (914 mm), 0.4 mm (1/64 in) otherwise. In a segmental-baffled shell a tube in the
    window passes every second baffle, so its span is about twice the baffle spacing (common
    practice).

    >>> float(tube_baffle_clearance_tema(0.01905, 0.6)), float(tube_baffle_clearance_tema(0.01905, 1.2))
    (0.0008, 0.0004)
    """
    do, span = as_arrays(outer_diameter, unsupported_span)
    return np.where((do > 0.0318) | (span <= 0.914), 0.8e-3, 0.4e-3)


def bundle_shell_clearance_fixed_tubesheet(shell_diameter):
    r"""Diametral clearance between shell and outer tube limit :math:`L_{bb} = D_s - D_{otl}`
    (m) of a fixed-tubesheet or U-tube bundle, Taborek's approximation [1]_ (from memory):

    .. math:: L_{bb} = 12\ \text{mm} + 0.005\,D_s

    Pull-through and split-ring floating heads have much larger gaps (tens of mm): give those
    explicitly.

    >>> round(float(bundle_shell_clearance_fixed_tubesheet(0.5)), 6)
    0.0145
    """
    (ds,) = as_arrays(shell_diameter)
    return 0.012 + 0.005 * ds


def baffle_cut_angle(baffle_cut):
    r"""Angle subtended at the shell centre by the baffle cut on the shell wall (rad) [1]_:
    :math:`\theta_{ds} = 2\arccos(1 - 2B_c)`.

    >>> round(float(baffle_cut_angle(0.25)), 6)   # 2*pi/3
    2.094395
    """
    (bc,) = as_arrays(baffle_cut)
    return 2.0 * np.arccos(1.0 - 2.0 * bc)


def centre_line_angle(shell_diameter, baffle_cut, centre_line_diameter):
    r"""Angle subtended by the baffle cut on the circle through the outermost tube centres
    (rad) [1]_: :math:`\theta_{ctl} = 2\arccos[D_s(1 - 2B_c)/D_{ctl}]`, 0 when the cut does not
    reach the bundle (no tubes in the window).

    >>> round(float(centre_line_angle(0.5, 0.25, 0.47)), 6)
    2.019872
    """
    ds, bc, dctl = as_arrays(shell_diameter, baffle_cut, centre_line_diameter)
    return 2.0 * np.arccos(np.clip(ds * (1.0 - 2.0 * bc) / dctl, -1.0, 1.0))


def window_tube_fraction(centre_line_angle):
    r"""Fraction of the tubes in one baffle window [1]_:
    :math:`F_w = (\theta_{ctl} - \sin\theta_{ctl})/2\pi`. The fraction in crossflow between the
    baffle tips is :math:`F_c = 1 - 2F_w`.

    >>> round(float(window_tube_fraction(2.0 * np.pi / 3.0)), 6)
    0.195501
    """
    (theta,) = as_arrays(centre_line_angle)
    return (theta - np.sin(theta)) / (2.0 * np.pi)


def crossflow_area(baffle_spacing, shell_diameter, outer_tube_limit, outer_diameter, pitch, layout):
    r"""Crossflow area at the shell centre line :math:`S_m` (m²) [1]_: the gap between bundle
    and shell plus the gaps between the tubes of the central row,

    .. math:: S_m = L_{bc}\left[D_s - D_{otl} + \frac{D_{ctl}}{L_{tp,eff}}(L_{tp} - D_o)\right]

    >>> round(float(crossflow_area(0.2, 0.5, 0.485, 0.019, 0.025, 30)), 6)
    0.025368
    """
    lbc, ds, dotl, do, pitch = as_arrays(baffle_spacing, shell_diameter, outer_tube_limit, outer_diameter, pitch)
    dctl = dotl - do
    return lbc * (ds - dotl + dctl / pitch_normal_to_flow(pitch, layout) * (pitch - do))


def window_flow_area(shell_diameter, baffle_cut, tubes, window_fraction, outer_diameter):
    r"""Net flow area of one baffle window :math:`S_w` (m²) [1]_: the gross segment less the
    tubes in it,

    .. math:: S_w = \frac{D_s^2}{8}(\theta_{ds} - \sin\theta_{ds}) - N_t F_w\frac{\pi D_o^2}{4}

    >>> round(float(window_flow_area(0.5, 0.25, 300, 0.2, 0.019)), 6)
    0.021375
    """
    ds, bc, nt, fw, do = as_arrays(shell_diameter, baffle_cut, tubes, window_fraction, outer_diameter)
    theta = baffle_cut_angle(bc)
    return ds**2 / 8.0 * (theta - np.sin(theta)) - nt * fw * np.pi * do**2 / 4.0


def window_hydraulic_diameter(window_area, shell_diameter, baffle_cut, tubes, window_fraction, outer_diameter):
    r"""Hydraulic diameter of a baffle window :math:`D_w` (m) [1]_, used in laminar window flow:

    .. math:: D_w = \frac{4 S_w}{\pi D_o N_t F_w + D_s\theta_{ds}}

    >>> round(float(window_hydraulic_diameter(0.03, 0.5, 0.25, 300, 0.2, 0.019)), 6)
    0.025926
    """
    sw, ds, bc, nt, fw, do = as_arrays(window_area, shell_diameter, baffle_cut, tubes, window_fraction, outer_diameter)
    return 4.0 * sw / (np.pi * do * nt * fw + ds * baffle_cut_angle(bc))


def crossflow_rows(shell_diameter, baffle_cut, pitch, layout):
    r"""Tube rows crossed between two baffle tips :math:`N_{tcc}` [1]_:
    :math:`N_{tcc} = D_s(1 - 2B_c)/L_{pp}` (not rounded).

    >>> round(float(crossflow_rows(0.5, 0.25, 0.025, 30)), 6)
    11.547005
    """
    ds, bc, pitch = as_arrays(shell_diameter, baffle_cut, pitch)
    return ds * (1.0 - 2.0 * bc) / pitch_parallel_to_flow(pitch, layout)


def window_rows(shell_diameter, baffle_cut, centre_line_diameter, pitch, layout):
    r"""Effective tube rows crossed in one baffle window :math:`N_{tcw}` [1]_:

    .. math:: N_{tcw} = \frac{0.8}{L_{pp}}\left[D_s B_c - \frac{D_s - D_{ctl}}{2}\right]

    >>> round(float(window_rows(0.5, 0.25, 0.466, 0.025, 30)), 6)
    3.990645
    """
    ds, bc, dctl, pitch = as_arrays(shell_diameter, baffle_cut, centre_line_diameter, pitch)
    return 0.8 / pitch_parallel_to_flow(pitch, layout) * np.maximum(ds * bc - (ds - dctl) / 2.0, 0.0)


def shell_baffle_leakage_area(shell_diameter, baffle_cut, shell_baffle_clearance):
    r"""Leakage area between shell and one baffle :math:`S_{sb}` (m²) [1]_: the annular gap
    around the uncut part of the baffle,
    :math:`S_{sb} = \pi D_s\,\frac{L_{sb}}{2}\left(1 - \frac{\theta_{ds}}{2\pi}\right)`.

    >>> round(float(shell_baffle_leakage_area(0.5, 0.25, 0.0048)), 8)
    0.00251327
    """
    ds, bc, lsb = as_arrays(shell_diameter, baffle_cut, shell_baffle_clearance)
    return np.pi * ds * lsb / 2.0 * (1.0 - baffle_cut_angle(bc) / (2.0 * np.pi))


def tube_baffle_leakage_area(outer_diameter, tube_baffle_clearance, tubes, window_fraction):
    r"""Leakage area between tubes and baffle holes in one baffle :math:`S_{tb}` (m²) [1]_, the
    tubes through the baffle being those not in its window:

    .. math:: S_{tb} = \frac{\pi}{4}\left[(D_o + L_{tb})^2 - D_o^2\right] N_t (1 - F_w)

    >>> round(float(tube_baffle_leakage_area(0.019, 0.0008, 300, 0.2)), 8)
    0.0058509
    """
    do, ltb, nt, fw = as_arrays(outer_diameter, tube_baffle_clearance, tubes, window_fraction)
    return np.pi / 4.0 * ((do + ltb) ** 2 - do**2) * nt * (1.0 - fw)


def bypass_area(baffle_spacing, shell_diameter, outer_tube_limit, pass_lane_width=0.0):
    r"""Bypass area in one baffle space :math:`S_b` (m²) [1]_: the gap between bundle and shell
    and any tube-pass lane open in the flow direction,
    :math:`S_b = L_{bc}(D_s - D_{otl} + L_{pl})`.

    >>> round(float(bypass_area(0.2, 0.5, 0.485)), 6)
    0.003
    """
    lbc, ds, dotl, lpl = as_arrays(baffle_spacing, shell_diameter, outer_tube_limit, pass_lane_width)
    return lbc * (ds - dotl + lpl)


@dataclass(frozen=True)
class BaffledShell:
    """The shell-side geometry of one E shell for the Bell–Delaware method, inputs and derived
    quantities (SI units, angles in rad). Built by :func:`baffled_shell`; every field is a float64
    array (0-d for scalar input)."""

    shell_diameter: np.ndarray
    outer_diameter: np.ndarray
    pitch: np.ndarray
    layout_angle: int
    baffle_cut: np.ndarray
    baffle_spacing: np.ndarray
    inlet_baffle_spacing: np.ndarray
    outlet_baffle_spacing: np.ndarray
    baffles: np.ndarray
    tubes: np.ndarray
    sealing_strip_pairs: np.ndarray
    shell_baffle_clearance: np.ndarray
    tube_baffle_clearance: np.ndarray
    outer_tube_limit: np.ndarray
    pass_lane_width: np.ndarray
    centre_line_angle: np.ndarray
    window_fraction: np.ndarray
    crossflow_fraction: np.ndarray
    crossflow_area: np.ndarray
    window_area: np.ndarray
    window_hydraulic_diameter: np.ndarray
    crossflow_rows: np.ndarray
    window_rows: np.ndarray
    shell_baffle_leakage_area: np.ndarray
    tube_baffle_leakage_area: np.ndarray
    bypass_area: np.ndarray

    @property
    def pitch_ratio(self):
        """Tube pitch over tube outer diameter."""
        return self.pitch / self.outer_diameter

    @property
    def bypass_fraction(self):
        """Bypass area over crossflow area, :math:`F_{sbp} = S_b/S_m`."""
        return self.bypass_area / self.crossflow_area

    @property
    def sealing_strip_ratio(self):
        """Sealing-strip pairs per tube row crossed, :math:`r_{ss} = N_{ss}/N_{tcc}`."""
        return self.sealing_strip_pairs / self.crossflow_rows

    @property
    def total_rows_crossed(self):
        """Tube rows crossed over the whole shell, :math:`(N_{tcc} + N_{tcw})(N_b + 1)`."""
        return (self.crossflow_rows + self.window_rows) * (self.baffles + 1.0)


def baffled_shell(shell_diameter, outer_diameter, pitch, layout, baffle_spacing, baffles, tubes,
                  baffle_cut=0.25, inlet_baffle_spacing=None, outlet_baffle_spacing=None,
                  shell_baffle_clearance=None, tube_baffle_clearance=None, bundle_shell_clearance=None,
                  outer_tube_limit=None, sealing_strip_pairs=0, tube_passes=1, pass_lane_width=0.0):
    r"""Every Bell–Delaware geometric quantity of one E shell with single-segmental baffles [1]_.

    Parameters
    ----------
    shell_diameter : shell inner diameter :math:`D_s` (m).
    outer_diameter : tube outer diameter :math:`D_o` (m).
    pitch : tube pitch :math:`L_{tp}` (m).
    layout : layout angle 30, 45, 60, 90 or a name of :data:`LAYOUT_ANGLES`.
    baffle_spacing : central baffle spacing :math:`L_{bc}` (m).
    baffles : number of baffles :math:`N_b`.
    tubes : tube holes in one baffle :math:`N_t` (a U-tube counts twice).
    baffle_cut : baffle cut as a fraction of :math:`D_s` (0.15–0.45 in [1]_'s data); 0.25 default
        (common practice).
    inlet_baffle_spacing, outlet_baffle_spacing : end spacings (m); default the central one.
    shell_baffle_clearance : diametral :math:`L_{sb}` (m); default TEMA RCB-4.3
        (:func:`shell_baffle_clearance_tema`).
    tube_baffle_clearance : diametral :math:`L_{tb}` (m); default TEMA RCB-4.2 with an
        unsupported span of twice the central spacing (:func:`tube_baffle_clearance_tema`).
    bundle_shell_clearance : diametral :math:`L_{bb} = D_s - D_{otl}` (m), or give
        ``outer_tube_limit`` :math:`D_{otl}` (m) instead; default a fixed-tubesheet bundle
        (:func:`bundle_shell_clearance_fixed_tubesheet`).
    sealing_strip_pairs : :math:`N_{ss}`, pairs of sealing strips (0 default: common practice is
        to fit none unless the bundle gap is large).
    tube_passes : tube passes; a pass lane needs at least two.
    pass_lane_width : :math:`L_{pl}` (m), the width a tube-pass partition lane open in the
        crossflow direction adds to the bypass gap (Taborek: about half the lane, from memory);
        0 when lanes run across the flow.

    >>> g = baffled_shell(0.5, 0.019, 0.025, "triangular", 0.2, 20, 300)
    >>> round(float(g.crossflow_fraction), 4), round(float(g.crossflow_rows), 3)
    (0.6481, 11.547)
    """
    angle = layout_angle(layout)
    if outer_tube_limit is not None and bundle_shell_clearance is not None:
        raise ValueError("give either bundle_shell_clearance or outer_tube_limit, not both")
    if np.any(np.asarray(pass_lane_width) > 0.0) and tube_passes < 2:
        raise ValueError("a pass lane (pass_lane_width > 0) needs at least two tube passes")
    ds, do, pitch, bc, lbc, nb, nt, nss, lpl = as_arrays(shell_diameter, outer_diameter, pitch, baffle_cut,
                                                           baffle_spacing, baffles, tubes, sealing_strip_pairs,
                                                           pass_lane_width)
    if np.any((bc <= 0.0) | (bc >= 0.5)):
        raise ValueError("baffle_cut is a fraction of the shell diameter, between 0 and 0.5")
    if np.any(pitch <= do):
        raise ValueError("tube pitch must exceed the tube outer diameter")
    lbi = lbc if inlet_baffle_spacing is None else np.asarray(inlet_baffle_spacing, dtype=float)
    lbo = lbc if outlet_baffle_spacing is None else np.asarray(outlet_baffle_spacing, dtype=float)
    lsb = shell_baffle_clearance_tema(ds) if shell_baffle_clearance is None else np.asarray(
        shell_baffle_clearance, dtype=float)
    ltb = tube_baffle_clearance_tema(do, 2.0 * lbc) if tube_baffle_clearance is None else np.asarray(
        tube_baffle_clearance, dtype=float)
    if outer_tube_limit is None:
        lbb = bundle_shell_clearance_fixed_tubesheet(ds) if bundle_shell_clearance is None else np.asarray(
            bundle_shell_clearance, dtype=float)
        dotl = ds - lbb
    else:
        dotl = np.asarray(outer_tube_limit, dtype=float)
    if np.any(dotl > ds) or np.any(dotl <= do):
        raise ValueError("the outer tube limit must lie between one tube diameter and the shell diameter")
    dctl = dotl - do
    theta_ctl = centre_line_angle(ds, bc, dctl)
    fw = window_tube_fraction(theta_ctl)
    sw = window_flow_area(ds, bc, nt, fw, do)
    return BaffledShell(
        shell_diameter=ds, outer_diameter=do, pitch=pitch, layout_angle=angle, baffle_cut=bc,
        baffle_spacing=lbc, inlet_baffle_spacing=lbi, outlet_baffle_spacing=lbo, baffles=nb, tubes=nt,
        sealing_strip_pairs=nss, shell_baffle_clearance=lsb, tube_baffle_clearance=ltb, outer_tube_limit=dotl,
        pass_lane_width=lpl, centre_line_angle=theta_ctl, window_fraction=fw, crossflow_fraction=1.0 - 2.0 * fw,
        crossflow_area=crossflow_area(lbc, ds, dotl, do, pitch, angle), window_area=sw,
        window_hydraulic_diameter=window_hydraulic_diameter(sw, ds, bc, nt, fw, do),
        crossflow_rows=crossflow_rows(ds, bc, pitch, angle), window_rows=window_rows(ds, bc, dctl, pitch, angle),
        shell_baffle_leakage_area=shell_baffle_leakage_area(ds, bc, lsb),
        tube_baffle_leakage_area=tube_baffle_leakage_area(do, ltb, nt, fw),
        bypass_area=bypass_area(lbc, ds, dotl, lpl),
    )
