"""Isolated spikes in a tag's readings: one sample far beyond both of its neighbours.

A transmitter or historian glitch (a dropped value logged as 0, a burst of interference) puts a
single reading far from the readings on either side of it. Kept, one such sample moves a window's
mean (a zero in 24 hourly readings of a flow: 4 % of it) and its trend, and fails the
steady-state test for a whole day. A reading ``x`` between ``before`` and ``after`` (the tag's
previous and next readings, whatever lies between) is a spike where it lies beyond both on the
same side by more than :data:`SPIKE_MULTIPLE` times the tag's scatter between successive
readings (common practice for historian data; a neighbour test rather than a window's median, as
a Hampel filter would use, so that a step change, whose next reading stays at the new level, is
never one).

The scatter is that of successive differences, robustly (1.4826 times their median absolute
deviation: the few large differences of spikes and steps are outliers to the median), and never
below the instrument's stated sigma times sqrt 2 (readings logged to a coarse resolution can
leave most differences zero). A tag with fewer than :data:`FEWEST_DIFFERENCES` differences is
not screened. Spikes are left out like any bad cell, each reported with its neighbours.
"""

from __future__ import annotations

import numpy as np

from .windows import MAD_TO_SIGMA

__all__ = ["isolated_spikes", "SPIKE_MULTIPLE", "FEWEST_DIFFERENCES"]

SPIKE_MULTIPLE = 8.0
"""How many times the successive-difference scatter a reading must stand beyond both neighbours.
For normal noise a difference passes 8 of its standard deviations about once in 10^15 draws;
two at once on one side, never in practice."""
FEWEST_DIFFERENCES = 10
"""The fewest successive differences from which a tag's scatter is taken."""


def isolated_spikes(values: np.ndarray, stated_sigma) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(spike, before, after): where ``values`` (one tag's readings in time order, NaN where it
    has none) holds an isolated spike (module text), and each reading's previous and next
    readings (NaN at the ends). ``stated_sigma``: a function giving the instrument's sigma at
    given values (:meth:`hxtrain.network.measurement_points.Tag.sigma_of`).

    >>> spike, before, after = isolated_spikes(np.array([300.0, 301, 299, 300, 0, 301, 300, 299, 301, 300, 300,
    ...                                                  301, 299]), lambda v: 0.01 * np.abs(v))
    >>> np.flatnonzero(spike).tolist(), float(before[4]), float(after[4])
    ([4], 300.0, 301.0)
    """
    values = np.asarray(values, dtype=float)
    spike = np.zeros(values.shape, dtype=bool)
    before, after = np.full(values.shape, np.nan), np.full(values.shape, np.nan)
    seen = np.flatnonzero(np.isfinite(values))
    if seen.size < FEWEST_DIFFERENCES + 1:
        return spike, before, after
    x = values[seen]
    differences = np.diff(x)
    scatter = MAD_TO_SIGMA * np.median(np.abs(differences - np.median(differences)))
    before[seen[1:]], after[seen[:-1]] = x[:-1], x[1:]
    middle, low, high = x[1:-1], x[:-2], x[2:]
    with np.errstate(invalid="ignore"):
        allowed = SPIKE_MULTIPLE * np.maximum(scatter, np.sqrt(2.0) * stated_sigma(0.5 * (low + high)))
        up = (middle - np.maximum(low, high)) > allowed
        down = (np.minimum(low, high) - middle) > allowed
    spike[seen[1:-1]] = up | down
    return spike, before, after
