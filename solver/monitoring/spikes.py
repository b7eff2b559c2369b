"""Glitches in a tag's readings: an isolated spike (one sample far beyond both of its
neighbours) and a held value (one value repeated exactly, far longer than the tag repeats by
chance).

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

A transmitter that freezes, or a historian that keeps logging the last good value of a tag it no
longer receives, repeats one value exactly. Read as a measurement, a held thermocouple pins its
exchanger's outlet and the reconciliation blames the healthy instruments around it; its windows
look steadier than any. A run of k equal successive readings is held where the chance of such a
run anywhere in the tag's readings, were its successive readings equal at the rate seen over all of
them outside the run (p0, at least one in their number), is below :data:`HELD_CHANCE`:
n·p0^(k-1) < :data:`HELD_CHANCE` (n the tag's differences), and k >= :data:`FEWEST_HELD`. A tag
logged to a coarse resolution repeats often (p0 near 1) and is judged accordingly; a tag that
never changes gives nothing to judge by; a run of zeros is a flow out of operation, for the
windows to judge, never a held value.
"""

from __future__ import annotations

import numpy as np

from .windows import MAD_TO_SIGMA

__all__ = ["without_glitches", "isolated_spikes", "held_runs", "SPIKE", "HELD", "SPIKE_MULTIPLE", "FEWEST_DIFFERENCES",
           "HELD_CHANCE", "FEWEST_HELD"]

SPIKE, HELD = "isolated spike", "value held unchanged"
"""The reasons a glitch's readings are left out (the skipped-rows table's ``reason``)."""
SPIKE_MULTIPLE = 8.0
"""How many times the successive-difference scatter a reading must stand beyond both neighbours.
For normal noise a difference passes 8 of its standard deviations about once in 10^15 draws;
two at once on one side, never in practice."""
FEWEST_DIFFERENCES = 10
"""The fewest successive differences from which a tag's scatter is taken."""
HELD_CHANCE = 1e-6
"""Largest chance of a run of equal readings arising from the tag's own repeats for it to count as
held (see the module text)."""
FEWEST_HELD = 5
"""The fewest equal successive readings ever taken for a held value."""


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


def held_runs(values: np.ndarray) -> list[tuple[int, int]]:
    """(first, last) positions in ``values`` (one tag's readings in time order, NaN where it has
    none, skipped over) of each run of one nonzero value held unchanged (module text).

    >>> x = 226.0 + 0.3 * np.sin(np.arange(40.0))
    >>> x[30:] = x[29]
    >>> x[33] = np.nan
    >>> held_runs(x)
    [(29, 39)]
    """
    values = np.asarray(values, dtype=float)
    seen = np.flatnonzero(np.isfinite(values))
    if seen.size < FEWEST_DIFFERENCES + 1:
        return []
    x = values[seen]
    same = np.diff(x) == 0.0
    edges = np.flatnonzero(np.diff(np.concatenate(([0], same.astype(np.int8), [0]))))
    runs = []
    for start, stop in zip(edges[::2], edges[1::2]):  # same[start:stop]: readings start..stop equal
        readings, others = stop - start + 1, same.size - (stop - start)
        if readings < FEWEST_HELD or others == 0 or x[start] == 0.0:
            continue  # a tag that never changes gives nothing to judge a run by
        repeats = max((np.count_nonzero(same) - (stop - start)) / others, 1.0 / others)
        if (readings - 1) * np.log(repeats) + np.log(same.size) < np.log(HELD_CHANCE):
            runs.append((int(seen[start]), int(seen[stop])))
    return runs


def without_glitches(values: dict, tags, keep: np.ndarray, times: np.ndarray, skips) -> dict:
    """``values`` (tag name -> readings over the file's rows) with the isolated spikes and held
    values among the ``keep`` rows' readings blanked, and told to ``skips(column)(mask, reason,
    details)`` with their neighbours or their run's first and last ``times``, in the tag's unit.
    Spikes of two or more tags in one row are not glitches but the process moving (a throughput
    cut seen by the total and its branches): kept, for the steady-state test to judge."""
    rows = np.flatnonzero(keep)
    found = {tag.name: isolated_spikes(values[tag.name][keep], tag.sigma_of) for tag in tags}
    alone = np.sum([spike for spike, _, _ in found.values()], axis=0) == 1  # the only tag spiking in its row
    cleaned = dict(values)
    for tag in tags:
        readings, shown = values[tag.name], tag.from_default_unit
        spike, before, after = found[tag.name]
        spike = spike & alone
        blank = _at(rows[spike], keep.shape)  # over the file's rows
        if spike.any():
            skips(tag.column)(blank, SPIKE, [f"{x:.6g} {tag.unit} between {b:.6g} and {a:.6g}" for x, b, a in
                                             zip(*(shown(v) for v in (readings[blank], before[spike], after[spike])))])
        for first, last in held_runs(np.where(spike, np.nan, readings[keep])):
            run = rows[first:last + 1][np.isfinite(readings[rows[first:last + 1]])]
            detail = (f"{shown(np.array(readings[run[0]])):.6g} {tag.unit} in each of {run.size} readings, "
                      f"{_minute(times[run[0]])} to {_minute(times[run[-1]])}")
            held = _at(run, keep.shape)
            skips(tag.column)(held, HELD, [detail] * run.size)
            blank |= held
        if blank.any():
            cleaned[tag.name] = np.where(blank, np.nan, readings)
    return cleaned


def _at(positions, shape) -> np.ndarray:
    where = np.zeros(shape, dtype=bool)
    where[positions] = True
    return where


def _minute(time) -> str:
    return str(np.datetime_as_string(np.datetime64(time, "m"))).replace("T", " ")
