r"""Excursions: windows whose back-calculated fouling stands above the exchanger's level both
before and after them.

Fouling builds up slowly and falls at a cleaning; neither makes a window stand above the level
of the windows on *both* sides of it: a rising history lies below its later level, a
cleaning's earlier windows lie below their earlier level. A window that does is an excursion: an
unmeasured bypass opened and closed again, an instrument reading off for a few windows, a
process upset. Its value is what the instruments said but not the exchanger's fouling, so it is
left out of the fitted laws, of the cleanings found as steps (the fall back from an excursion is
no cleaning) and of what fouling costs (a bypass's lost duty is not fouling's).

The test, per exchanger over its fitted windows (those with a fouling and a finite
uncertainty), for window k with at least :data:`SIDE_WINDOWS` such windows on each side: a
straight line fitted (weighted) to each side's :data:`~.fouling_fits.PERSISTENCE` nearest
windows but the :data:`GAP` next to k, carried to window k's time, gives the level before and
after; window k is an
excursion where it stands above both by more than :data:`~.fouling_fits.STEP_SIGMAS` times
:math:`\sqrt{\sigma_k^2 + s^2}`, s the larger standard error of the two carried lines. A line,
not a median: a history rising fast, or the first windows after a cleaning, lie on their side's
line, where a median lags by the rise over half the windows. Only windows *above*: fouling curves
bend down (an asymptote), and a line carried over a bend overshoots, which would make windows
below look like excursions; a faulty reading low is a drop that does not last
(:func:`.fouling_fits.find_cleanings`). An excursion longer than :data:`GAP` + 1 windows moves
the lines themselves and may not be found: it reads as a step up and down.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .fouling_fits import PERSISTENCE, STEP_SIGMAS, usable_rows

__all__ = ["EXCURSION", "find_excursions", "mark_excursions"]

SIDE_WINDOWS = 3
"""Fewest fitted windows on each side for a window to be judged (the first and last few are not:
a step there cannot be told from an excursion)."""
GAP = 2
"""Fitted windows left out next to the window judged, on each side: the rest of an excursion
(up to GAP + 1 windows long) then stays out of the lines it is judged against; a line's last point
has the most weight where it is carried on."""
EXCURSION = "excursion (above the level before and after it: left out of fits and costs)"
"""The status an excursion's rows take in the state table."""


def find_excursions(table: pd.DataFrame, step_sigmas=STEP_SIGMAS) -> np.ndarray:
    """(rows of ``table``,) True for each row (as :func:`.plant_state.conditions` gives them)
    that is an excursion of its exchanger (module text)."""
    found = np.zeros(len(table), bool)
    usable = usable_rows(table)
    times = table.index.to_numpy()
    for name in table["unit"].unique():
        rows = np.flatnonzero((table["unit"] == name).to_numpy() & usable)
        if rows.size < 2 * (SIDE_WINDOWS + GAP) + 1:
            continue
        rows = rows[np.argsort(times[rows], kind="stable")]
        r, s = table["fouling"].to_numpy(float)[rows], table["fouling_sigma"].to_numpy(float)[rows]
        t = (times[rows] - times[rows[0]]) / np.timedelta64(1, "D")
        for k in range(SIDE_WINDOWS + GAP, len(rows) - SIDE_WINDOWS - GAP):
            sides = [_carried(t[w], r[w], s[w], t[k]) for w in (slice(max(k - GAP - PERSISTENCE, 0), k - GAP),
                                                               slice(k + 1 + GAP, k + 1 + GAP + PERSISTENCE))]
            spread = max(error for _, error in sides)
            if min(r[k] - level for level, _ in sides) > step_sigmas * np.hypot(s[k], spread):
                found[rows[k]] = True
    return found


def _carried(t, r, s, at):
    """(the weighted least-squares line through (t, r) with standard errors s, at ``at``; its
    standard error there)."""
    w = 1.0 / s**2
    t_mean = np.sum(w * t) / np.sum(w)
    spread = np.sum(w * (t - t_mean) ** 2)
    slope = np.sum(w * (t - t_mean) * r) / spread
    level = np.sum(w * r) / np.sum(w) + slope * (at - t_mean)
    return level, np.sqrt(1.0 / np.sum(w) + (at - t_mean) ** 2 / spread)


def mark_excursions(table: pd.DataFrame) -> tuple[pd.DataFrame, pd.Series]:
    """(``table`` with its excursions' status :data:`EXCURSION`, and per window time that has
    one the reason it is not costed, naming the exchangers)."""
    if table.empty or "fouling_sigma" not in table:
        return table, pd.Series(dtype=object)
    hit = find_excursions(table)
    table = table.copy()
    table.loc[hit, "status"] = EXCURSION
    names = pd.Series(table["unit"].to_numpy()[hit], index=table.index[hit])
    reasons = names.groupby(level=0).agg(lambda units: (
        f"the fouling of {', '.join(units)} is an excursion (above the level before and after it: an unmeasured "
        "bypass, an instrument reading off or an upset?)"))
    return table, reasons
