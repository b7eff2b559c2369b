"""Excursions in back-calculated fouling (solver/monitoring/excursions.py): synthetic truth.

A new user's trial opened a bypass on one exchanger for three days without a tag: its
back-calculated fouling jumped 13 standard uncertainties and fell back, and the tool had fitted
the jump into the exchanger's law, costed it as fouling and listed the fall back under the
cleanings. Histories here are drawn from known laws with Gaussian noise of a known standard
deviation, with and without such a bump, with and without a cleaning.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from hxtrain.solver.monitoring.excursions import EXCURSION, find_excursions, mark_excursions
from hxtrain.solver.monitoring.fouling_fits import find_cleanings, fit_fouling

START = pd.Timestamp("2026-03-01")
SIGMA = 3e-5


def history(values, name="E-2") -> pd.DataFrame:
    index = START + pd.to_timedelta(np.arange(len(values)), unit="D")
    return pd.DataFrame({"unit": name, "fouling": values, "fouling_sigma": SIGMA, "identifiable": True,
                         "status": "identified"}, index=index).rename_axis("time")


def law(days=60, rate=8e-6):
    return 1e-4 + rate * np.arange(days)


def test_a_bump_that_falls_back_is_an_excursion_left_out_of_fits_cleanings_and_cost():
    """Three windows 13 sigma up on a rising linear history: exactly those are excursions; the
    linear law fitted without them comes back within its standard errors (with them it is pulled
    off), no cleaning is found at the fall back, and the windows are named as not costed."""
    rng = np.random.default_rng(5)
    values = law() + rng.normal(0.0, SIGMA, 60)
    values[30:33] += 13 * SIGMA
    table = history(values)
    assert np.flatnonzero(find_excursions(table)).tolist() == [30, 31, 32]
    marked, reasons = mark_excursions(table)
    assert (marked["status"] == EXCURSION).sum() == 3
    assert list(reasons.index) == list(table.index[30:33]) and "E-2" in reasons.iloc[0]
    assert find_cleanings(marked).empty
    assert len(find_cleanings(table)) >= 1  # unmarked, the fall back had been found as a drop
    fitted = fit_fouling(marked, models=("linear",)).fits.iloc[0]
    assert fitted["points"] == 57 and "3 " + EXCURSION in fitted["left_out"]
    for name, truth in (("r_f0", 1e-4), ("rate", 8e-6)):
        assert abs(fitted["parameters"][name] - truth) <= 3 * fitted["standard_errors"][name]


def test_noise_a_rising_law_and_a_cleaning_are_no_excursions():
    """200 noisy histories of 60 windows (a steep linear rise, an asymptotic one, a cleaning that
    drops the fouling by 20 sigma halfway): no window is taken for an excursion (at 4 sigma on
    both sides a false one is rarer than 1 in 10^4 windows)."""
    rng = np.random.default_rng(11)
    days = np.arange(60)
    shapes = [law(rate=2e-5), 1e-4 + 5e-4 * (1 - np.exp(-days / 10.0)),
              np.where(days < 30, law(), law() - 20 * SIGMA - 8e-6 * 30)]
    flagged = 0
    for draw in range(200):
        table = history(shapes[draw % 3] + rng.normal(0.0, SIGMA, 60))
        flagged += int(find_excursions(table).sum())
    assert flagged == 0


def test_the_first_and_last_windows_are_not_judged():
    """A jump in the last windows cannot be told from a step yet: not an excursion."""
    values = law()
    values[-2:] += 20 * SIGMA
    assert not find_excursions(history(values)).any()
