"""How an exchanger's U follows its operating point: fixed, scaled films, or geometry.

Every model answers :meth:`evaluate` with the service U (fouled), the clean U, the film
coefficients and, where known, the tube-side Reynolds number, for the flows through one shell
(kg/s) and the mean temperature of each side (°C). All U and h are W/m²·K referred to the
tube outside area; resistances m²·K/W.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property, partial

import numpy as np

from . import bell_delaware, bell_delaware_geometry, films
from .protocol import check
from .resistances import overall_coefficient

__all__ = ["SideFilm", "FixedCoefficient", "ScaledFilms", "TubeBundle", "GeometryFilms", "Coefficients",
           "SCALING_RANGE"]

SCALING_RANGE = 3.0
"""A film scaled with flow from one reference point is trusted from a third to three times its
reference flow (the range this tool takes; the exponent itself, 0.8 or 0.6, is common practice
for turbulent flow near design); outside it the exchanger gets a warning."""


@dataclass
class Coefficients:
    """U and its parts at one operating point, arrays over the batch."""

    u_service: np.ndarray
    clean: object
    """The clean U, or a function giving it: it is worked out on first use of :attr:`u_clean`,
    since only reports need it, not the iterations."""
    h_shell: np.ndarray | None = None
    h_tube: np.ndarray | None = None
    reynolds_tube: np.ndarray | None = None
    notes: dict = field(default_factory=dict)
    """name -> boolean array: conditions the report flags (e.g. "laminar_tube_side")."""

    @property
    def u_clean(self) -> np.ndarray:
        if callable(self.clean):
            self.clean = self.clean()
        return self.clean


class _AtFlows:
    """The U models' :meth:`at_flows`, for models with nothing to keep from the flows alone."""

    def at_flows(self, m_shell, m_tube):
        """U as a function of (t_shell, t_tube, fluid_shell, fluid_tube) at these flows through
        one shell (kg/s): what stays fixed over an exchanger's passes is worked out once."""
        return partial(self.evaluate, m_shell, m_tube)


class FixedCoefficient(_AtFlows):
    """U given directly; it does not change with flow or temperature (the results say so)."""

    source = "fixed U"
    takes_fouling = False
    fouling_shell = fouling_tube = 0.0

    def __init__(self, u):
        self.u = np.asarray(u, dtype=float)  # a number, or one per scenario of a batch

    def evaluate(self, m_shell, m_tube, t_shell, t_tube, fluid_shell, fluid_tube):
        shape = np.broadcast(np.asarray(m_shell), np.asarray(m_tube)).shape
        u = np.broadcast_to(self.u, shape).astype(float)
        return Coefficients(u, u)


@dataclass
class SideFilm:
    """One side's film coefficient at a reference flow, and how it scales (see
    :func:`films.scaled_film_coefficient`). ``reference_temperature`` (°C) enables the property
    correction when the fluid has viscosity data; ``reference_reynolds`` (tube side) enables the
    laminar check."""

    h_ref: float
    reference_flow: float
    exponent: float
    reference_temperature: float | None = None
    reference_reynolds: float | None = None
    _reference: tuple | None = field(default=None, init=False, repr=False, compare=False)

    def _reference_properties(self, fluid):
        """(k, ln μ, cp) of ``fluid`` at the reference temperature: the same in every pass of
        an exchanger's rating, so kept for the last fluid asked (fluid models do not change)."""
        kept = self._reference
        if kept is None or kept[0] is not fluid:
            t_ref = self.reference_temperature
            kept = self._reference = (fluid, fluid.conductivity(t_ref), fluid.log_viscosity(t_ref), fluid.cp(t_ref))
        return kept[1:]

    def at_reference_properties(self, mass_flow):
        """h at ``mass_flow`` with the reference properties: the flow part of the scaling, fixed
        while an exchanger's passes move its temperatures (:meth:`ScaledFilms.at_flows`)."""
        return films.scaled_film_coefficient(self.h_ref, mass_flow, self.reference_flow, self.exponent)

    def at(self, mass_flow, temperature, fluid, flow_part=None):
        """(h at ``mass_flow`` and ``temperature``, ln(μ_ref/μ) there or None without the
        property correction). ``flow_part``: :meth:`at_reference_properties` of ``mass_flow``
        where the caller has it."""
        h = self.at_reference_properties(mass_flow) if flow_part is None else flow_part
        log_mu = None if self.reference_temperature is None else fluid.log_viscosity(temperature)
        if log_mu is None:
            return h, None
        k_ref, log_mu_ref, cp_ref = self._reference_properties(fluid)
        k = fluid.conductivity(temperature) if fluid.conductivity_follows_temperature else k_ref
        log_mu_ratio = log_mu_ref - log_mu
        log_ratio = films.log_property_correction(self.exponent, -log_mu_ratio, fluid.cp(temperature) / cp_ref,
                                                  1.0 if k is None or k_ref is None else k / k_ref)
        factor = np.exp(log_ratio)
        factor *= h  # h times the property factor, in place
        return factor, log_mu_ratio


class ScaledFilms:
    """Film coefficients known at a reference (data-sheet) condition, scaled with flow and
    properties, plus fouling and wall resistances in series (:func:`overall_coefficient`).

    Tube side: if a reference Reynolds number is given, the operating Re follows as
    Re_ref·(ṁ/ṁ_ref)·(μ_ref/μ); below 2300 the film scales as a laminar developing flow
    (Nu ∝ (Re Pr)^(1/3), Sieder–Tate form: exponent 1/3 on flow) instead of with the turbulent
    exponent n, continuously at Re = 2300 — from a turbulent reference,
    h = h_n·(2300/Re)^(n - 1/3) below 2300; from a laminar reference, h = h_(1/3) below 2300 and
    h_(1/3)·(Re/2300)^(n - 1/3) above — and the condition is flagged; between 2300 and 10^4 it is
    flagged as transitional.
    """

    source = "films scaled from reference"
    takes_fouling = True

    def __init__(self, shell: SideFilm, tube: SideFilm, fouling_shell=0.0, fouling_tube=0.0, wall=0.0, diameter_ratio=1.0):
        self.shell, self.tube = shell, tube
        self.fouling_shell, self.fouling_tube = fouling_shell, fouling_tube
        self.wall, self.diameter_ratio = wall, diameter_ratio

    def scaling_findings(self, key, m_shell, m_tube):
        """Warnings where a side's flow through one shell (kg/s) lies outside
        :data:`SCALING_RANGE` times the reference flow its film is known at: h ∝ ṁ^n is carried
        from that one point, and far from it the film should be rated from the geometry."""
        found = []
        for part, film, m in (("shell", self.shell, m_shell), ("tube", self.tube, m_tube)):
            ratio = np.asarray(m, float) / film.reference_flow
            far = (ratio > SCALING_RANGE) | ((ratio > 0.0) & (ratio < 1.0 / SCALING_RANGE))
            found.append(check("film_far_from_reference", "warning", far, key,
                               f"the {part}-side flow is {{r:.2f}} times the reference flow its film coefficient is "
                               f"scaled from (h ∝ ṁ^{film.exponent:g}), outside a third to three times it: U is "
                               "extrapolated; give the exchanger's geometry to rate it there", r=ratio))
        return found

    def reference_findings(self, key, fluid_shell, fluid_tube, shape):
        """``input`` findings where a side's reference temperature lies outside its fluid's data
        range (without ``extrapolate``): its properties there, which the property correction
        divides by, are not known (at absolute zero an Andrade viscosity is infinite)."""
        found = []
        for part, film, fluid in (("shell", self.shell, fluid_shell), ("tube", self.tube, fluid_tube)):
            t_ref = film.reference_temperature
            outside = [m for m in fluid.members() if t_ref is not None and not m.extrapolate and m.valid_range
                       and bool(m.outside_range(t_ref))]
            for member in outside:
                low, high = member.valid_range
                found.append(check("property_range", "input", np.ones(shape, bool),
                                   f"{key}.reference_temperature.{part}",
                                   f"the {part} side's reference temperature, {t_ref:g} °C, is outside the data range "
                                   f"{low:g} to {high:g} °C of fluid '{member.name}': its film cannot be scaled from "
                                   "there"))
        return found

    def evaluate(self, m_shell, m_tube, t_shell, t_tube, fluid_shell, fluid_tube):
        return self.at_flows(m_shell, m_tube)(t_shell, t_tube, fluid_shell, fluid_tube)

    def at_flows(self, m_shell, m_tube):
        """U as a function of (t_shell, t_tube, fluid_shell, fluid_tube) at these flows through
        one shell (kg/s): each film's flow part (ṁ/ṁ_ref)^n is worked out here, once."""
        flow_parts = (self.shell.at_reference_properties(m_shell), self.tube.at_reference_properties(m_tube),
                      self._laminar_tube.at_reference_properties(m_tube) if self._laminar_tube else None)
        return partial(self._at, m_shell, m_tube, flow_parts)

    @cached_property
    def _laminar_tube(self):
        """The tube film scaled as laminar flow, from a laminar reference (None otherwise)."""
        reference = self.tube.reference_reynolds
        if reference is None or reference >= films.LAMINAR_LIMIT:
            return None
        return SideFilm(self.tube.h_ref, self.tube.reference_flow, 1.0 / 3.0, self.tube.reference_temperature)

    def _at(self, m_shell, m_tube, flow_parts, t_shell, t_tube, fluid_shell, fluid_tube):
        h_shell, _ = self.shell.at(m_shell, t_shell, fluid_shell, flow_parts[0])
        h_tube, log_mu_ratio = self.tube.at(m_tube, t_tube, fluid_tube, flow_parts[1])
        notes, reynolds = {}, None
        if self.tube.reference_reynolds is not None:
            mu_ratio = 1.0 if log_mu_ratio is None else np.exp(log_mu_ratio)
            reynolds = self.tube.reference_reynolds * np.asarray(m_tube, float) / self.tube.reference_flow * mu_ratio
            laminar = reynolds < films.LAMINAR_LIMIT
            bend = self.tube.exponent - 1.0 / 3.0
            with np.errstate(divide="ignore"):
                to_transition = films.LAMINAR_LIMIT / np.maximum(reynolds, 1e-300)
            if self.tube.reference_reynolds >= films.LAMINAR_LIMIT:
                h_tube = np.where(laminar, h_tube * to_transition**bend, h_tube)
            else:
                h_laminar, _ = self._laminar_tube.at(m_tube, t_tube, fluid_tube, flow_parts[2])
                h_tube = np.where(laminar, h_laminar, h_laminar * (1.0 / to_transition) ** bend)
            notes["laminar_tube_side"] = laminar
            notes["transitional_tube_side"] = (reynolds >= films.LAMINAR_LIMIT) & (reynolds < films.TURBULENT_LIMIT)
        return _combine(self, h_shell, h_tube, reynolds, notes)


def _combine(model, h_shell, h_tube, reynolds, notes):
    service = overall_coefficient(h_shell, h_tube, model.fouling_shell, model.fouling_tube, model.wall,
                                  model.diameter_ratio)
    wall, ratio = model.wall, model.diameter_ratio
    return Coefficients(service, lambda: overall_coefficient(h_shell, h_tube, 0.0, 0.0, wall, ratio),
                        h_shell, h_tube, reynolds, notes)


@dataclass
class TubeBundle:
    """Geometry of one shell (SI units). ``layout``: triangular, square, rotated_triangular or
    rotated_square. ``shell_side_method`` "kern" or "bell_delaware"; the fields after it are the
    Bell–Delaware geometry (None: the defaults of
    :func:`~hxtrain.units.bell_delaware_geometry.baffled_shell`, TEMA clearances and end spacings
    equal to the central one)."""

    tube_outer_diameter: float
    tube_inner_diameter: float
    tube_length: float
    tubes: int
    tube_passes: int
    tube_pitch: float
    layout: str
    baffle_spacing: float
    baffles: int
    shell_inner_diameter: float
    shell_side_method: str = "kern"
    baffle_cut: float | None = None
    shell_baffle_clearance: float | None = None
    tube_baffle_clearance: float | None = None
    bundle_shell_clearance: float | None = None
    sealing_strip_pairs: int = 0
    inlet_baffle_spacing: float | None = None
    outlet_baffle_spacing: float | None = None

    @property
    def tube_flow_area(self):
        return self.tubes / self.tube_passes * np.pi * self.tube_inner_diameter**2 / 4.0

    @property
    def area(self):
        return self.tubes * np.pi * self.tube_outer_diameter * self.tube_length

    @property
    def kern_layout(self):
        """The lattice Kern's method rates: a rotated layout has its lattice's cell, and so its
        equivalent diameter (Kern's method knows no layout angle)."""
        return self.layout.removeprefix("rotated_")

    @property
    def end_spacings(self):
        """Inlet and outlet baffle spacings (m), the central one where not given."""
        return tuple(self.baffle_spacing if s is None else s for s in (self.inlet_baffle_spacing,
                                                                        self.outlet_baffle_spacing))

    def baffled_shell_limits(self) -> dict:
        """The outer tube limit (m) the Bell–Delaware geometry works with."""
        lbb = (bell_delaware_geometry.bundle_shell_clearance_fixed_tubesheet(self.shell_inner_diameter)
               if self.bundle_shell_clearance is None else self.bundle_shell_clearance)
        return {"outer_tube_limit": float(self.shell_inner_diameter - lbb)}

    @cached_property
    def baffled_shell(self):
        """The Bell–Delaware geometry of the shell (:class:`~.bell_delaware_geometry.BaffledShell`)."""
        inlet, outlet = self.end_spacings
        return bell_delaware_geometry.baffled_shell(
            self.shell_inner_diameter, self.tube_outer_diameter, self.tube_pitch, self.layout, self.baffle_spacing,
            self.baffles, self.tubes, baffle_cut=self.baffle_cut, inlet_baffle_spacing=inlet,
            outlet_baffle_spacing=outlet, shell_baffle_clearance=self.shell_baffle_clearance,
            tube_baffle_clearance=self.tube_baffle_clearance,
            outer_tube_limit=self.baffled_shell_limits()["outer_tube_limit"],
            sealing_strip_pairs=self.sealing_strip_pairs, tube_passes=self.tube_passes)


class GeometryFilms(_AtFlows):
    """Film coefficients from geometry and fluid properties: tube side by
    :func:`films.nusselt_tube_side` (Gnielinski, with Gnielinski's laminar–turbulent
    interpolation), shell side by Kern's method (:func:`films.nusselt_kern_shell`) or, with the
    bundle's ``shell_side_method`` "bell_delaware", by the Bell–Delaware method
    (:func:`.bell_delaware.shell_side_bell_delaware`: ideal tube bank times J_c J_l J_b J_s J_r).
    Viscosity ratio (wall) factors are taken as 1. Needs cp, viscosity and conductivity of both
    fluids."""

    source = "films from geometry"
    takes_fouling = True

    def __init__(self, bundle: TubeBundle, fouling_shell=0.0, fouling_tube=0.0, wall=0.0):
        self.bundle = bundle
        self.fouling_shell, self.fouling_tube, self.wall = fouling_shell, fouling_tube, wall
        self.diameter_ratio = bundle.tube_outer_diameter / bundle.tube_inner_diameter

    def evaluate(self, m_shell, m_tube, t_shell, t_tube, fluid_shell, fluid_tube):
        b = self.bundle
        mu_t, k_t, cp_t = fluid_tube.viscosity(t_tube), fluid_tube.conductivity(t_tube), 1000.0 * fluid_tube.cp(t_tube)
        re_t = films.reynolds(np.maximum(m_tube, 1e-12), b.tube_inner_diameter, b.tube_flow_area, mu_t)
        nu_t = films.nusselt_tube_side(re_t, films.prandtl(cp_t, mu_t, k_t), b.tube_inner_diameter, b.tube_length)
        h_tube = np.where(np.asarray(m_tube) > 0.0, nu_t * k_t / b.tube_inner_diameter, 0.0)
        mu_s, k_s, cp_s = fluid_shell.viscosity(t_shell), fluid_shell.conductivity(t_shell), 1000.0 * fluid_shell.cp(t_shell)
        if b.shell_side_method == "bell_delaware":
            # h does not depend on density (only the pressure drop does): any value serves here
            h_shell = bell_delaware.shell_side_bell_delaware(m_shell, 1.0, mu_s, cp_s, k_s,
                                                             b.baffled_shell).heat_transfer_coefficient
        else:
            de = films.kern_equivalent_diameter(b.tube_pitch, b.tube_outer_diameter, b.kern_layout)
            area_s = films.kern_crossflow_area(b.shell_inner_diameter, b.tube_pitch, b.tube_outer_diameter,
                                               b.baffle_spacing)
            re_s = films.reynolds(np.maximum(m_shell, 1e-12), de, area_s, mu_s)
            nu_s = films.nusselt_kern_shell(re_s, films.prandtl(cp_s, mu_s, k_s))
            h_shell = np.where(np.asarray(m_shell) > 0.0, nu_s * k_s / de, 0.0)
        notes = {"laminar_tube_side": re_t < films.LAMINAR_LIMIT,
                 "transitional_tube_side": (re_t >= films.LAMINAR_LIMIT) & (re_t < films.TURBULENT_LIMIT)}
        return _combine(self, h_shell, h_tube, re_t, notes)
