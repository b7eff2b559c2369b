r"""Identical shells in series, in overall counterflow, rated zone by zone along the enthalpy curves.

Each shell carries UA/N and is rated by zones as one 1-2 shell (:func:`.zone_rating.zone_profile`);
the shells are chained as they are piped: the hot stream leaves shell k into shell k+1, the cold
stream leaves shell k+1 into shell k. With constant cp this is the series formula of N shells
([1]_, the P of N units in overall counterflow), found here without it: the chained shells give
the same outlets because each shell is the same 1-2 relation at NTU/N.

Method. The total duty Q is the unknown of the outer bracketed solve (:func:`.zone_rating.solve_duty`,
on [0, the counterflow limit], since no arrangement passes more than counterflow): at a trial Q the
hot outlet and the cold inlet, the exchanger's cold end, are both known, and the shells are marched
from there towards the hot end. Each shell's duty is the one whose zones need its UA/N (an inner
bracketed solve on the shell's own zone profile, started from the shell's cold-end states), and no
more than the duty still left of Q; a shell that reaches the end of Q uses less than UA/N and the
shells after it none. What is left of Q after the N shells is given to one more shell of its own
that needs UA for it. The UA the march uses is then continuous and rises with Q (a larger Q lowers
the hot outlet, so each shell does less with its UA/N and more is left over), and equals the UA
exactly where every shell uses UA/N and nothing is left: the duty of the N shells in series, and
the intermediate enthalpies the march found between them.

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003:
       shells (units) in series in overall counterflow (section from memory).
"""

from __future__ import annotations

import numpy as np

from .enthalpy_curves import EnthalpyCurve
from .zone_rating import ZoneProfile, solve_duty, zone_profile

__all__ = ["series_profile", "shell_ends", "shell_terminals"]


def series_profile(hot: EnthalpyCurve, cold: EnthalpyCurve, h_hot_in, h_cold_in, m_hot, m_cold, duty, ua,
                   shells, arrangement="tema_e", *, tube_passes=2, shell_is_hot=True) -> ZoneProfile:
    """The zones of ``shells`` shells in series at total ``duty``, each shell given UA/shells.

    Arguments as for :func:`.zone_rating.zone_profile` (arrays over the batch), with ``ua`` the
    total UA (kW/K) and ``shells`` the number in series. The zones of all shells come one after
    the other from the cold end (shell N first); ``ua_needed`` is the UA the march uses: below
    ``ua`` where the shells need less for ``duty``, above it where they cannot pass it (the part
    left over rated as one more shell), and ``ua`` itself at the duty of the shells in series.

    Examples
    --------
    Steam condensing at 180 °C heats water from 20 °C in two shells with 5 kW/K each: at the
    duty of the pair (ε = 1 − exp(−NTU) with NTU = 10/42, R = 0) the march uses UA exactly:

    >>> steam = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])
    >>> water = EnthalpyCurve([0.0, 200.0], [0.0, 840.0])
    >>> q = 42.0 * 160.0 * -np.expm1(-10.0 / 42.0)
    >>> round(float(series_profile(steam, water, 2778.0, 84.0, 1.0, 10.0, q, 10.0, 2).ua_needed[0]), 9)
    10.0
    """
    h_hot_in, h_cold_in, m_hot, m_cold, duty, ua = np.broadcast_arrays(
        *(np.atleast_1d(np.asarray(a, dtype=float)) for a in (h_hot_in, h_cold_in, m_hot, m_cold, duty, ua)))
    flowing = (m_hot > 0.0) & (m_cold > 0.0)
    safe_m_hot, safe_m_cold = np.where(flowing, m_hot, 1.0), np.where(flowing, m_cold, 1.0)
    options = dict(arrangement=arrangement, tube_passes=tube_passes, shell_is_hot=shell_is_hot)
    # ``left``: the part of the duty the shells marched so far have not passed; the states at the
    # cold end of the next shell follow from it, counted from the inlets (a shell that takes all
    # that is left then reaches the hot inlet's own enthalpy, not one a round-off past it, which
    # matters where the hot curve's table ends there: saturated vapour)
    left, ua_shell, parts = duty.copy(), ua / shells, []

    def shell(q):
        """The zones of the next shell at shell duty q."""
        return zone_profile(hot, cold, h_hot_in - (left - q) / safe_m_hot, h_cold_in + (duty - left) / safe_m_cold,
                            m_hot, m_cold, q, **options)

    for _ in range(shells):
        # a shell that can pass all that is left with UA/N or less takes it; else its UA/N decides
        takes_all = ~(shell(left).ua_needed > ua_shell)
        q = np.where(takes_all, left, solve_duty(lambda trial: shell(trial).ua_needed, ua_shell,
                                                  np.where(takes_all, 0.0, left)))
        parts.append(shell(q))
        left = np.where(takes_all, 0.0, left - q)
    parts.append(shell(np.maximum(left, 0.0)))  # what the shells could not pass, as one shell more
    return _chained(parts)


def _chained(parts) -> ZoneProfile:
    """One profile of the shells' profiles, each shell's positions after those before it; where
    two shells meet, a zone of no width (no UA) joins the last point of one to the first of the
    next (the same states)."""
    offset, fields = 0.0, {name: [] for name in ZoneProfile.__dataclass_fields__}
    for k, part in enumerate(parts):
        for name in fields:
            value = getattr(part, name)
            if name == "position":
                value = value + offset
            if k > 0 and name in ("c_hot", "c_cold", "ua"):  # the joining zone
                fields[name].append(np.zeros_like(value[:, :1]) if name == "ua" else value[:, :1])
            fields[name].append(value)
        offset = offset + part.position[:, -1:]
    return ZoneProfile(**{name: np.concatenate(values, axis=1) for name, values in fields.items()})


def shell_ends(profile: ZoneProfile, shells):
    """Each shell's outlet temperatures, (hot, cold), each (batch, shells) in °C, shell N (the
    cold end) first, on the basis of the stream that gives heat: from a profile of
    :func:`series_profile` (shells + 1 parts of equal width, the last the part left over) or,
    with one shell, of :func:`.zone_rating.zone_profile`. A 1-2 shell whose cold stream leaves
    above the hot stream's outlet runs with a temperature cross."""
    hot_in, hot_out, cold_in, cold_out = shell_terminals(profile, shells)
    return hot_out, cold_out


def shell_terminals(profile: ZoneProfile, shells):
    """Each shell's terminal temperatures (hot in, hot out, cold in, cold out), each (batch,
    shells) in °C, ordered and based as in :func:`shell_ends`."""
    parts = shells + 1 if shells > 1 else 1
    width = profile.position.shape[1] // parts
    t_hot = profile.t_hot.reshape(len(profile.t_hot), parts, width)[:, :shells]
    t_cold = profile.t_cold.reshape(len(profile.t_cold), parts, width)[:, :shells]
    return t_hot[:, :, -1], t_hot[:, :, 0], t_cold[:, :, 0], t_cold[:, :, -1]
