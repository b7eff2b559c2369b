r"""Fouling models fitted to each exchanger's back-calculated fouling history since its last
cleaning, and the cleanings themselves: logged, and found in the data as steps.

**Data.** Rows as :func:`.plant_state.conditions` gives them. A window is fitted when its
fouling was found with a finite uncertainty (status ``identified``, ``negative fouling`` or
``not identifiable``), weighted by that uncertainty: a window the instruments resolve poorly
counts little, and leaving it out would select windows by their noise; the others are counted by
reason. Negative values stay in: after a cleaning noise scatters the fouling about
zero, and leaving out the negative half would bias the fit upward.

**Cleanings.** Logged in the monitoring file, or detected as a *step*: a fall between consecutive
fitted windows of more than :data:`STEP_SIGMAS` combined standard uncertainties,
:math:`R_{k-1} - R_k > k\sqrt{\sigma_{k-1}^2 + \sigma_k^2}`, that lasts (:data:`PERSISTENCE`).
A log and a step within :data:`MATCH_DAYS` are one cleaning (``both``); a step without a log is
reported as a possible unlogged cleaning or instrument change, a log without a step as a
cleaning the data do not show. A history starts at its latest cleaning of either source (for
``both`` the later of the two times, so that no fouled window enters).

**Fits.** Weighted least squares (``scipy.optimize.least_squares``, trust-region reflective,
within the bounds of :data:`hxtrain.units.fouling_models.MODELS`), residuals
:math:`(R_{model}(t_k) - R_k)/\sigma_k`, t in days since the cleaning, ``r_f0`` the fouling then;
parameters scaled by typical sizes from the data, several starts, the best kept. Covariance
:math:`s^2 (J^TJ)^{-1}`, J the Jacobian of the weighted residuals at the solution, :math:`s^2` the
reduced chi-square: the weights fix the windows' relative uncertainties, the scatter about the
fit their scale (``absolute_sigma=False`` of ``scipy.optimize.curve_fit``, its default [1]_) — the
stated instrument uncertainties include calibration errors that do not scatter from window to
window, so they overstate the scatter of a fouling history, and taken as absolute they would
leave well-determined laws looking undetermined. A parameter is *determined* when its standard error is finite, it is
not at a bound and (``r_f0`` apart) it lies :data:`DETERMINED_T` standard errors from zero. The
model **chosen** has the smallest :math:`AIC_c = n\ln(\chi^2/n) + 2k + 2k(k+1)/(n-k-1)`, k = fitted
parameters + 1, among models whose fitted parameters are all determined [2]_ [3]_.

**Threshold models** take each window's tube-side conditions (crude's side in the demo, and
where the models were fitted [4]_): bulk temperature ``t_mean_tube``; surface temperature
:math:`T_s = T_b \pm q_i/h_{tube}`, :math:`q_i = (Q\,U_{service}/UA)\,D_o/D_i` the mean flux on the
inside area (heat flows from the hotter side); film temperature :math:`T_b + 0.55(T_s - T_b)`
[4]_, Polley's wall temperature :math:`T_s`; Pr at :math:`T_b`; Re from the film model where it
gives one, else from the clean tube film by the Colburn form :math:`Nu = 0.023\,Re^{0.8}Pr^{1/3}`
[5]_ inverted with a nominal inside diameter :data:`NOMINAL_TUBE_DIAMETER` (with the case's films,
:math:`Nu \propto Re^n Pr^{1/3}`, it varies as ṁ/μ); Blasius wall shear from that Re. A wrong
nominal diameter scales Re and τ_w by constants that the fitted α and γ absorb, as fit and
projection use this one function. Windows without conditions take the last known ones. The
published exponent and activation energy are held unless freed (:data:`HELD`).

References
----------
.. [1] Bates, D. M., and D. G. Watts. Nonlinear Regression Analysis and Its Applications.
       Wiley, 1988, ch. 2 (linear approximation: covariance s²(JᵀJ)⁻¹). From memory.
.. [2] Akaike, H. "A new look at the statistical model identification." IEEE Transactions on
       Automatic Control 19 (1974) 716-723. From memory.
.. [3] Hurvich, C. M., and C.-L. Tsai. "Regression and time series model selection in small
       samples." Biometrika 76 (1989) 297-307 (AICc); Burnham, K. P., and D. R. Anderson. Model
       Selection and Multimodel Inference, 2nd ed., Springer, 2002 (the least-squares form). From
       memory.
.. [4] Ebert & Panchal (1997); Panchal et al. (1999); Polley et al. (2002): see
       :mod:`hxtrain.units.fouling_threshold`.
.. [5] Colburn, A. P. "A method of correlating forced convection heat transfer data and a
       comparison with fluid friction." Trans. AIChE 29 (1933) 174-210. From memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import least_squares

from hxtrain.units import fouling_threshold as threshold
from hxtrain.units.films import prandtl
from hxtrain.units.fouling_models import MODELS

__all__ = ["FoulingFits", "fit_fouling", "fit_history", "find_cleanings", "fouling_side_conditions",
           "STEP_SIGMAS", "PERSISTENCE", "MATCH_DAYS", "DETERMINED_T", "HELD", "THRESHOLD_CONDITIONS"]

STEP_SIGMAS = 4.0
"""k of the step test: noise alone drops that far between two windows with probability 3e-5
(one-sided normal tail), about once in 85 exchanger-years of daily windows."""
PERSISTENCE = 7
"""A step *lasts* when the median of the (up to) this many fitted windows after it lies below the
median of those before by more than STEP_SIGMAS standard errors of the medians (sqrt(pi/2) sigma
/ sqrt(count) each, normal large-sample, from memory): a cleaning lowers the level for good, an
outlier or an instrument switching in and out of the reconciliation does not."""
MEDIAN_ERROR = np.sqrt(np.pi / 2.0)
MATCH_DAYS = 7.0
"""A logged and a detected cleaning this close (days) are one cleaning: an exchanger is out of
service for days, and the log may carry the day the work was booked (common practice)."""
DETERMINED_T = 2.0
"""A parameter is determined when it is at least this many standard errors from zero (about
95 % two-sided, common practice)."""
FITTED_STATUSES = ("identified", "negative fouling", "not identifiable")
HELD = {"ebert_panchal": {"beta": -0.66, "activation_energy": 68e3}, "polley": {"activation_energy": 68e3}}
"""Held at published values unless freed: Ebert & Panchal's beta = -0.66 and E = 68 kJ/mol (from
memory); Polley's form with the same E (an assumption: a year of data rarely separates E)."""
NOMINAL_TUBE_DIAMETER = 0.01483
"""m: 3/4 in (19.05 mm) tubes of 14 BWG, the commonest crude-service tube (common practice)."""
COLBURN = 0.023
THRESHOLD_CONDITIONS = ("re", "pr", "t_film", "t_wall", "tau_w")
MIN_EXTRA_POINTS = 3
"""A model is fitted only to more points than its parameters plus this."""


# ----------------------------------------------------------------------------- conditions


def fouling_side_conditions(net, table: pd.DataFrame) -> pd.DataFrame:
    """Per row of ``table`` (columns ``unit``, ``duty``, ``ua``, ``u_service``, ``h_tube``,
    ``t_mean_tube``, ``t_mean_shell`` and optionally ``re_tube``), the tube side's Re, Pr,
    film and wall temperatures (K) and wall shear stress (Pa), as the module text describes;
    NaN where the film model or the fluid's data (viscosity, conductivity, density) cannot
    give them. ``net`` is the built network the rows' units belong to."""
    out = pd.DataFrame(np.nan, index=table.index, columns=list(THRESHOLD_CONDITIONS))
    for name in table["unit"].unique():
        rows = (table["unit"] == name).to_numpy()
        unit = net.units[name]
        part = table.loc[rows]
        if "h_tube" not in part or part["h_tube"].isna().all():
            continue
        spec = getattr(unit, "spec", None)
        ratio = getattr(getattr(spec, "thermal", None), "diameter_ratio", 1.0)
        t_b, t_shell = part["t_mean_tube"].to_numpy(float), part["t_mean_shell"].to_numpy(float)
        shell_side = getattr(spec, "shell_side", "hot" if np.nanmean(t_shell - t_b) > 0 else "cold")
        tube_port = "cold" if shell_side == "hot" else "hot"
        fluid = net.fluids[net.inlets[name][list(unit.inlets).index(tube_port)]]
        mu, k, rho = fluid.viscosity(t_b), fluid.conductivity(t_b), fluid.density(t_b)
        if mu is None or k is None or rho is None:
            continue
        h_tube = part["h_tube"].to_numpy(float)
        with np.errstate(invalid="ignore", divide="ignore"):
            duty, u, ua = (part[k].to_numpy(float) for k in ("duty", "u_service", "ua"))
            flux_inside = duty * u / ua * ratio  # W/m²: kW x W/(m²K) / (kW/K), on the inside area
            t_surface = t_b + np.sign(t_shell - t_b) * flux_inside / h_tube
            pr = prandtl(1000.0 * fluid.cp(t_b), mu, k)
            nusselt = h_tube * NOMINAL_TUBE_DIAMETER / k
            re = (nusselt / (COLBURN * pr ** (1.0 / 3.0))) ** 1.25
            if "re_tube" in part and part["re_tube"].notna().any():
                re = np.where(np.isfinite(part["re_tube"].to_numpy(float)), part["re_tube"].to_numpy(float), re)
            velocity = re * mu / (rho * NOMINAL_TUBE_DIAMETER)
            out.loc[rows, "re"] = re
            out.loc[rows, "pr"] = pr
            out.loc[rows, "t_film"] = threshold.film_temperature(t_b, t_surface) + 273.15
            out.loc[rows, "t_wall"] = t_surface + 273.15
            out.loc[rows, "tau_w"] = threshold.blasius_wall_shear_stress(velocity, rho, mu, NOMINAL_TUBE_DIAMETER)
    return out


# ----------------------------------------------------------------------------- one history


@dataclass
class _Form:
    """A model as fitted: internal parameters, bounds, sizes, starts; ``curve(x, days)``; and
    ``to_model(x)``: the model's own parameters and their gradient in x (rows in model order)."""

    names: tuple
    lower: np.ndarray
    upper: np.ndarray
    scale: np.ndarray
    starts: list
    curve: object
    to_model: object
    held: tuple = ()


def _bound(model, name):
    return next(q.bounds for q in model.parameters if q.name == name)


def _simple_form(name, days, r_f):
    model, span = MODELS[name], max(float(np.ptp(days)), 1.0)
    size = max(float(np.max(np.abs(r_f))), 1e-5)
    if name == "linear":
        slope = np.polyfit(days, r_f, 1)[0]
        names, scale, starts = ("r_f0", "rate"), np.array([size, size / span]), [np.array([r_f[0], max(slope, 0.0)])]
        curve = lambda x, d: x[0] + x[1] * d  # noqa: E731
    else:
        rise = max(float(np.ptp(r_f)), 1e-6)
        names, scale = ("r_f0", "r_inf", "tau"), np.array([size, size, span])
        starts = [np.array([r_f[0], rise * m, span * m]) for m in (0.3, 1.0, 3.0)]
        curve = lambda x, d: x[0] - x[1] * np.expm1(-d / x[2])  # noqa: E731
    bounds = np.array([_bound(model, n) for n in names])
    return _Form(names, bounds[:, 0], bounds[:, 1], scale, starts, curve,
                 lambda x: (dict(zip(names, x)), np.eye(len(names))))


def _threshold_form(name, grid, conditions, r_f, used, hold):
    """A threshold model in a reference form: deposition and removal rates (m²K/W per day) at
    the median conditions of the data instead of alpha and gamma (alpha spans decades with E)."""
    model = MODELS[name]
    own = [q.name for q in model.parameters]
    held = {k: v for k, v in (HELD.get(name, {}) if hold is None else hold).items() if k in own}
    c = {k: np.asarray(conditions[k], float) for k in THRESHOLD_CONDITIONS}
    temperature = c["t_film"] if name == "ebert_panchal" else c["t_wall"]
    re0, pr0, t0, tau0 = (float(np.median(v)) for v in (c["re"], c["pr"], temperature, c["tau_w"]))
    free = [n for n in ("activation_energy", "beta") if n in own and n not in held]
    names = ("r_f0", "deposition", "removal", *free)
    gas, steps = threshold.GAS_CONSTANT, np.diff(grid)
    removal_shape = c["tau_w"] / tau0 if name == "ebert_panchal" else (c["re"] / re0) ** -threshold.POLLEY_BETA
    removal_factor = 1.0 / tau0 if name == "ebert_panchal" else re0 ** threshold.POLLEY_BETA

    def value(x, n):
        return x[names.index(n)] if n in names else held.get(n, threshold.POLLEY_BETA)

    def curve(x, d):
        arrhenius = np.exp(-value(x, "activation_energy") / gas * (1.0 / temperature - 1.0 / t0))
        deposit = x[1] * (c["re"] / re0) ** value(x, "beta") * (c["pr"] / pr0) ** threshold.PRANDTL_EXPONENT * arrhenius
        history = x[0] + np.concatenate([[0.0], np.cumsum(np.maximum(deposit - x[2] * removal_shape, 0.0) * steps)])
        return history[np.searchsorted(grid, d)]

    def to_model(x):
        beta, energy = value(x, "beta"), value(x, "activation_energy")
        factor = re0 ** -beta * pr0 ** -threshold.PRANDTL_EXPONENT * np.exp(energy / (gas * t0))
        alpha, unit = x[1] * factor, np.eye(len(names))
        rows = {"r_f0": unit[0], "alpha": factor * unit[1], "gamma": removal_factor * unit[2]}
        for n in free:
            rows[n] = unit[names.index(n)]
        if "activation_energy" in free:
            rows["alpha"] = rows["alpha"] + alpha / (gas * t0) * unit[names.index("activation_energy")]
        if "beta" in free:
            rows["alpha"] = rows["alpha"] - alpha * np.log(re0) * unit[names.index("beta")]
        values = {"r_f0": x[0], "alpha": alpha, "gamma": x[2] * removal_factor, "beta": beta, "activation_energy": energy}
        return {n: values[n] for n in own}, np.array([rows.get(n, np.zeros(len(names))) for n in own])

    span, size = max(float(grid[-1]), 1.0), max(float(np.max(np.abs(r_f))), 1e-5)
    slope = max(np.polyfit(grid[used], r_f, 1)[0] if used.size > 1 else 0.0, size / span / 10.0)
    extra = [{"activation_energy": 68e3, "beta": -0.66}[n] for n in free]
    bounds = np.array([_bound(model, "r_f0"), (0.0, 1e-3), (0.0, 1e-3)] + [_bound(model, n) for n in free])
    scale = np.array([size, size / span, size / span, *(abs(e) for e in extra)])
    starts = [np.array([r_f[0], slope * (1.0 + q), slope * q, *extra]) for q in (0.1, 1.0, 3.0)]
    return _Form(names, bounds[:, 0], bounds[:, 1], scale, starts, curve, to_model, tuple(held))


def _not_fitted(points, message):
    return {"points": points, "held": (), "parameters": {}, "standard_errors": {}, "chi_square": np.nan,
            "reduced_chi_square": np.nan, "residual_rms": np.nan, "aicc": np.inf, "determined": False,
            "message": message, "curve": None}


def fit_history(name, days, r_f, sigma, grid=None, conditions=None, hold=None) -> dict:
    """Fit fouling model ``name`` to one exchanger's history since its cleaning: fouling ``r_f``
    (m²K/W) with standard uncertainties ``sigma`` at ``days`` after the cleaning. A threshold
    model also needs ``grid`` (days of every window since the cleaning, the first 0) and
    ``conditions`` (each of THRESHOLD_CONDITIONS, one value per interval of the grid: held over
    it); ``days`` are then values of the grid. ``hold``: the parameters held, name -> value
    (default :data:`HELD` of the model; {} frees them all).

    Returns a dict: ``parameters`` and ``standard_errors`` (the model's own names; 0 for a held
    one), ``held``, ``points``, ``chi_square``, ``reduced_chi_square``, ``residual_rms``
    (m²K/W), ``aicc``, ``determined``, ``message`` and ``curve`` (days -> fitted fouling; for a
    threshold model days of the grid)."""
    days, r_f, sigma = (np.asarray(a, float) for a in (days, r_f, sigma))
    n = days.size
    if n < 2 + MIN_EXTRA_POINTS:  # every model has at least two parameters
        return _not_fitted(n, f"{n} points: not fitted")
    if MODELS[name].conditions:
        grid = np.asarray(grid, float)
        form = _threshold_form(name, grid, conditions, r_f, np.searchsorted(grid, days), hold)
    else:
        form = _simple_form(name, days, r_f)
    p = len(form.names)
    if n < p + MIN_EXTRA_POINTS:
        return _not_fitted(n, f"{n} points for {p} parameters: not fitted")
    out = _not_fitted(n, "")
    lo, hi = form.lower / form.scale, form.upper / form.scale
    best = None
    for start in form.starts:
        z0 = np.clip(start / form.scale, lo + 1e-6 * (hi - lo), hi - 1e-6 * (hi - lo))
        found = least_squares(lambda z: (form.curve(z * form.scale, days) - r_f) / sigma, z0, bounds=(lo, hi),
                              method="trf", x_scale="jac")
        best = found if best is None or found.cost < best.cost else best
    x, chi2 = best.x * form.scale, 2.0 * best.cost
    s2 = chi2 / (n - p)
    _, singular, vt = np.linalg.svd(best.jac.T @ best.jac)
    kept = singular > 1e-10 * singular[0]
    covariance = s2 * (vt[kept].T / singular[kept]) @ vt[kept]  # in the scaled variables z
    null = vt[~kept]

    def errors(rows):  # rows: d(quantity)/dz; infinite along a direction the data do not fix
        se = np.sqrt(np.maximum(np.einsum("ij,jk,ik->i", rows, covariance, rows), 0.0))
        lost = np.abs(rows @ null.T).max(axis=1, initial=0.0) > 1e-8 * np.abs(rows).max(axis=1, initial=1e-300)
        return np.where(lost, np.inf, se)

    params, gradient = form.to_model(x)
    own_se = errors(gradient * form.scale)
    internal_se = errors(np.diag(form.scale))
    at_bound = [form.names[i] for i in np.flatnonzero(best.active_mask)]
    determined = not at_bound and all(np.isfinite(internal_se[i]) and (
        form.names[i] == "r_f0" or abs(x[i]) >= DETERMINED_T * internal_se[i]) for i in range(p))
    fitted, k = form.curve(x, days), p + 1
    weak = [f"{form.names[i]} ({abs(x[i]) / internal_se[i]:.1f} standard errors from zero)"
            if np.isfinite(internal_se[i]) else f"{form.names[i]} (not fixed by the data)"
            for i in range(p) if form.names[i] != "r_f0" and not (
                np.isfinite(internal_se[i]) and abs(x[i]) >= DETERMINED_T * internal_se[i])]
    notes = [f"at a bound: {', '.join(at_bound)}" if at_bound else "",
             f"not determined: {', '.join(weak)}" if weak else "",
             "alpha's standard error is linearized through exp(E/RT): with E free it understates the spread"
             if "activation_energy" in form.names else ""]
    out.update(held=form.held, parameters={n: float(v) for n, v in params.items()},
               standard_errors={n: 0.0 if n in form.held else float(e) for n, e in zip(params, own_se)},
               chi_square=chi2, reduced_chi_square=chi2 / (n - p), residual_rms=float(np.sqrt(np.mean((fitted - r_f) ** 2))),
               aicc=n * np.log(max(chi2, 1e-300) / n) + 2 * k + 2 * k * (k + 1) / (n - k - 1) if n > k + 1 else np.inf,
               determined=bool(determined), message="; ".join(filter(None, notes)),
               curve=lambda d, x=x: form.curve(x, np.asarray(d, float)))
    return out


# ----------------------------------------------------------------------------- cleanings and all exchangers


@dataclass
class FoulingFits:
    """``fits``: one row per (exchanger, model): ``since`` (the cleaning the history starts at),
    ``points`` fitted and ``left_out`` (counts by reason), ``parameters`` and ``standard_errors``
    (dicts, the model's own names), ``held`` (parameters held at published values), the
    chi-square, reduced chi-square, ``residual_rms`` (m²K/W), ``aicc``, ``determined``,
    ``chosen``, ``now`` (the last window) and ``fouling_now`` (the fitted model there), and a
    ``message``. ``cleanings``: one row per cleaning (:func:`find_cleanings`)."""

    fits: pd.DataFrame
    cleanings: pd.DataFrame

    def chosen(self) -> pd.DataFrame:
        """The chosen model of each exchanger that has one, indexed by exchanger."""
        return self.fits[self.fits["chosen"]].set_index("exchanger")


def usable_rows(table: pd.DataFrame) -> np.ndarray:
    """(rows,) True where a row's fouling enters fits: a fitted status, a value and a finite,
    positive uncertainty."""
    return (table["status"].isin(FITTED_STATUSES) & np.isfinite(table["fouling"])
            & np.isfinite(table["fouling_sigma"]) & (table["fouling_sigma"] > 0)).to_numpy()


def find_cleanings(table: pd.DataFrame, logged=(), step_sigmas=STEP_SIGMAS, match_days=MATCH_DAYS) -> pd.DataFrame:
    """Cleanings of each exchanger of ``table`` (rows as :func:`.plant_state.conditions`):
    ``logged`` ((exchanger, Timestamp) pairs) and steps found in the fitted windows (see the
    module text). Columns: exchanger, time (the logged time, else the step's window), source
    (logged / detected / both), step_time (first window after the step, NaT if none), drop and
    drop_sigma (m²K/W, NaN without a step), lasting (see :data:`PERSISTENCE`; True for a log
    without a step), note."""
    usable = usable_rows(table)
    steps = []
    for name in table["unit"].unique():
        part = table[(table["unit"] == name).to_numpy() & usable].sort_index()
        r, s = part["fouling"].to_numpy(float), part["fouling_sigma"].to_numpy(float)
        drop, combined = r[:-1] - r[1:], np.hypot(s[:-1], s[1:])
        for k in np.flatnonzero(drop > step_sigmas * combined):
            before, after = slice(max(k + 1 - PERSISTENCE, 0), k + 1), slice(k + 1, k + 1 + PERSISTENCE)
            spread = np.hypot(*(MEDIAN_ERROR * np.median(s[w]) / np.sqrt(s[w].size) for w in (before, after)))
            lasting = np.median(r[before]) - np.median(r[after]) > step_sigmas * spread
            steps.append((name, part.index[k + 1], drop[k], combined[k], bool(lasting)))
    rows, matched = [], set()
    for name, when in sorted(logged):
        near = [i for i, st in enumerate(steps) if st[0] == name and i not in matched and st[4]
                and abs((st[1] - when) / pd.Timedelta(days=1)) <= match_days]
        if near:
            i = min(near, key=lambda i: abs(steps[i][1] - when))
            matched.add(i)
            rows.append((name, when, "both", steps[i][1], steps[i][2], steps[i][3], True, ""))
        else:
            rows.append((name, when, "logged", pd.NaT, np.nan, np.nan, True,
                         "no lasting step in the data: the cleaning changed little, or the windows around it are "
                         "missing or not identifiable"))
    for i, (name, when, drop, sigma, lasting) in enumerate(steps):
        if i not in matched:
            note = ("no cleaning logged: an unlogged cleaning, or an instrument changed or recalibrated?" if lasting else
                    f"the level returns within {PERSISTENCE} windows: an outlier or an instrument switching in and out "
                    "of the reconciliation, not a cleaning (no new history starts here)")
            rows.append((name, when, "detected", when, drop, sigma, lasting, note))
    columns = ["exchanger", "time", "source", "step_time", "drop", "drop_sigma", "lasting", "note"]
    out = pd.DataFrame(rows, columns=columns).astype({"time": "datetime64[ns]", "step_time": "datetime64[ns]"})
    return out.sort_values(["exchanger", "time"], kind="stable").reset_index(drop=True)


def fit_fouling(table: pd.DataFrame, logged=(), net=None, models=tuple(MODELS), hold=HELD,
                step_sigmas=STEP_SIGMAS, centres=None) -> FoulingFits:
    """Fit every model of ``models`` to every exchanger's fouling history in ``table`` (rows as
    :func:`.plant_state.conditions`, indexed by window time) since its latest cleaning (logged in
    ``logged`` or detected), and choose one model per exchanger (module text). Threshold models
    need ``net`` (the built network of the rows' units) for their conditions; without it, or
    where the conditions cannot be found, they are reported as not fitted. ``hold``: model ->
    parameters held (name -> value), default :data:`HELD`. ``centres``: window time -> the time
    its values stand for (:attr:`.windows.Windows.centre`), at which the laws are fitted and
    ``now`` is; the window times themselves where not given."""
    if len(table):  # units whose fouling is never found (a fixed UA) have no history
        table = table[table["fouling"].notna().groupby(table["unit"].to_numpy()).transform("any").to_numpy()]
    cleanings = find_cleanings(table, logged, step_sigmas)
    needs_conditions = net is not None and any(MODELS[m].conditions for m in models)
    side = fouling_side_conditions(net, table) if needs_conditions else None
    usable, rows, day = usable_rows(table), [], pd.Timedelta(days=1)
    at = table.index if centres is None else pd.DatetimeIndex(centres.reindex(table.index).to_numpy())
    for name in table["unit"].unique():
        mine = (table["unit"] == name).to_numpy()
        times = table.index[mine]
        starts = cleanings[(cleanings["exchanger"] == name) & cleanings["lasting"]][["time", "step_time"]].max(axis=1)
        starts = starts[starts <= times.max()]
        since = starts.max() if len(starts) else times.min()
        segment = mine & (table.index >= since)
        part, used = table[segment], usable[segment]
        fitted_status = part["status"].isin(FITTED_STATUSES).to_numpy()
        reasons = np.where(~fitted_status, part["status"].astype(str).to_numpy(),
                           np.where(np.isfinite(part["fouling"].to_numpy(float)), "no uncertainty", "no value"))
        left_out = ", ".join(f"{v} {k}" for k, v in pd.Series(reasons[~used]).value_counts().items())
        all_days = np.asarray((at[segment] - since) / day, float)
        days, r_f, sigma = all_days[used], part["fouling"].to_numpy(float)[used], part["fouling_sigma"].to_numpy(float)[used]
        base = {"exchanger": name, "since": since, "left_out": left_out, "now": at[mine].max()}
        results = []
        for model in models:
            if MODELS[model].conditions:
                conditions = None if side is None else side[segment].ffill().bfill()
                if conditions is None or conditions.isna().any().any() or not len(conditions):
                    results.append((model, _not_fitted(days.size, "no tube-side conditions (network, film model or "
                                                                  "fluid data)")))
                    continue
                grid = np.unique(np.concatenate([[0.0], all_days]))  # each interval: its first window's conditions
                first = np.clip(np.searchsorted(all_days, grid[:-1], "right") - 1, 0, None)
                per_interval = conditions.to_numpy(float)[first]
                fit = fit_history(model, days, r_f, sigma, grid, dict(zip(conditions.columns, per_interval.T)),
                                  hold.get(model, {}))
            else:
                fit = fit_history(model, days, r_f, sigma)
            results.append((model, fit))
        determined = [(fit["aicc"], model) for model, fit in results if fit["determined"]]
        chosen = min(determined)[1] if determined else None
        for model, fit in results:
            now = fit["curve"](all_days[-1:])[0] if fit.get("curve") is not None else np.nan
            rows.append({**base, "model": model, **{k: v for k, v in fit.items() if k != "curve"},
                         "chosen": model == chosen, "fouling_now": now})
    columns = ["exchanger", "model", "since", "points", "left_out", "parameters", "standard_errors", "held", "chi_square",
               "reduced_chi_square", "residual_rms", "aicc", "determined", "chosen", "now", "fouling_now", "message"]
    return FoulingFits(pd.DataFrame(rows, columns=columns), cleanings)
