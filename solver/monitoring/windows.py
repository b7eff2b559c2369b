"""Historian samples averaged over fixed windows, with a steady-state test per window.

Windows are ``pandas.resample`` bins of the monitoring file's length, left-closed and labelled
by their start (daily windows run from midnight to midnight).

The steady-state test (common practice: a drift test on fixed thresholds; a statistical
alternative is the variance-ratio test of Cao & Rhinehart 1995, from memory) marks a window
transient when, for a flow tag against ``flow_change`` times its window mean or a temperature
tag against ``temperature_change`` K,

* its *trend* exceeds the threshold: the least-squares slope of its samples against time, times
  the window's length (the change a straight line through the window's samples makes across
  it; needs two samples), or
* its *change of mean* from the window just before exceeds it (not tested where that window had
  no sample of the tag, nor where some tag's trend failed in it: a window that moved within
  itself has a mean that says nothing of the next; a single-sample window keeps this test alone),

in each case by more than the instrument's noise explains: the drift less z·se must exceed the
threshold, with z the normal one-sided quantile at ``confidence`` (0.95 unless the file says;
0.5 gives z = 0, the plain comparison) and se the standard error of the trend,
sigma / sqrt(sum (t - t_mean)^2) with t in window lengths, or of the change of mean,
sigma * sqrt(1/n1 + 1/n2). The tag's noise sigma is pooled over the whole data from the
differences of successive samples within a window, robustly (1.4826 times their median absolute
deviation, over sqrt 2): slow trends cancel in a difference and the few large differences of a
transient are outliers to the median, so a transient cannot widen its own allowance, as the
scatter about a window's own line would. Where a tag has fewer than :data:`NOISE_DIFFERENCES`
such differences (a sample or so a window) its drifts are compared as they are.

Both average the noise instead of adding it up: with N samples of standard deviation sigma
equally spaced over a window, the trend's standard deviation is sigma * sqrt(12 / N) (0.71 sigma
for N = 24, 1.41 sigma for N = 6) and the change of mean's sigma * sqrt(2 / N), where the range
of the samples (largest less smallest, the test this replaced) grows with N: 3.9 sigma at N = 24
(the d2 factor of control charts), which failed every window of ordinary hourly data. Still, six
hourly samples of a 1 % flow meter give a trend of 1.4 % standard deviation: against a 3 %
threshold alone about one window in seven with four such meters was set aside for noise (on
synthetic data of steady flows), hence the allowance. Duty tags are not
tested: a heater's duty follows the flows and temperatures that are. A window with fewer than
``minimum_samples`` samples of a tag that it does have ("too few samples") or with no sample at
all ("no data") is not steady either, nor one where a flow or duty meter whose uncertainty is a
share of its reading averages zero ("reading zero": the unit out of operation or the transmitter
dead; its uncertainty would be zero, which no reconciliation can weigh). A tag with no sample in
a window leaves that window's mean NaN and does not by itself make it unsteady: the
reconciliation treats it as unmeasured there.

A window mean's uncertainty is the instrument's stated one (its accuracy: a calibration error
does not average out), unless the readings scatter more: with n >= :data:`SCATTER_SAMPLES`
samples, where their standard deviation over sqrt(n) exceeds the stated sigma, the window uses
that (``Windows.wide_scatter`` marks where, so the report can say how often).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.special import ndtri

from hxtrain.network.monitoring_file import MonitoringFile

__all__ = ["Windows", "average_windows", "SCATTER_SAMPLES"]

SCATTER_SAMPLES = 3
"""The fewest samples whose scatter is taken as evidence of a window mean's uncertainty."""
NOISE_DIFFERENCES = 10
"""The fewest within-window differences of successive samples from which a tag's noise is taken."""
MAD_TO_SIGMA = 1.4826
"""A normal distribution's standard deviation over its median absolute deviation."""


@dataclass
class Windows:
    """Window averages. Every frame is indexed by window start with one column per tag.

    mean: the mean of the tag's good samples, NaN where it had none.
    count: the samples averaged.
    steady: (bool Series) the window passes the steady-state test.
    reason: (Series of text) why a window is not steady, "" where it is.
    sigma: one standard deviation of each window mean: the tag's instrument sigma (absolute, or a
        relative one times the window mean), NOT divided by the square root of the count (an
        instrument's bias does not average out over a window); or, where larger with at least
        SCATTER_SAMPLES samples, their standard deviation over the square root of the count.
    wide_scatter: (bool) the readings scattered more than the instrument's sigma, and sigma is
        the scatter's.
    trend: the least-squares trend across the window (slope times the window's length), NaN with
        fewer than two samples.
    """

    mean: pd.DataFrame
    count: pd.DataFrame
    steady: pd.Series
    reason: pd.Series
    sigma: pd.DataFrame
    window: pd.Timedelta
    wide_scatter: pd.DataFrame | None = None
    trend: pd.DataFrame | None = None
    centre: pd.Series | None = None
    """The time each window's means stand for: the mean time of its samples (its middle for
    evenly spread samples; earlier in a last window the data end inside), indexed by window
    start. Fouling laws are fitted at these times: at the start, a 3-day window's fouling would
    sit 1.5 days early, biasing the fitted fouling at a cleaning by the rate times that."""

    def wide_scatter_counts(self) -> pd.Series:
        """Per tag: the windows whose sigma is the readings' scatter, not the instrument's."""
        return self.wide_scatter.sum().astype(int)


def average_windows(samples: pd.DataFrame, monitoring: MonitoringFile) -> Windows:
    """Average ``samples`` (DatetimeIndex, one column per tag of ``monitoring``, default units)
    over ``monitoring.window`` and apply the steady-state test (module text)."""
    tags = [monitoring.tags[name] for name in samples.columns]
    binned = samples.resample(monitoring.window, closed="left", label="left")
    mean, count = binned.mean(), binned.count()
    trend, time_spread, where = _trend(samples, mean.index, monitoring.window)
    change = mean.diff().abs()  # NaN where either window has no sample of the tag
    rule = monitoring.steady_state
    noise = _sample_noise(samples, where) * ndtri(rule.confidence)  # z sigma per tag
    with np.errstate(divide="ignore", invalid="ignore"):
        drifts = {"trend": (trend.abs(), (noise / np.sqrt(time_spread)).where(time_spread > 0.0, 0.0)),
                  "change": (change, (noise * np.sqrt(1.0 / count + 1.0 / count.shift())).fillna(0.0))}
    where_said = {"trend": "across the window", "change": "since the window before"}
    stated = pd.DataFrame({t.name: t.sigma_of(mean[t.name].to_numpy()) for t in tags}, index=mean.index)
    tests = [(f"too few samples (under {rule.minimum_samples})", (count > 0) & (count < rule.minimum_samples), count,
              count * 0.0, "{:.0f} samples", ""),
             # a meter whose uncertainty is a share of its reading says nothing at zero: a unit out
             # of operation or a dead transmitter, not a measurement to reconcile
             ("reading zero (out of operation, or a dead transmitter?)", (count > 0) & ~(stated > 0.0), mean,
              count * 0.0, "{:.3g} on average", "")]
    drift_tests = []
    for kind, threshold, unit in (("flow", rule.flow_change, " of the mean"),
                                  ("temperature", rule.temperature_change, " K")):
        names = [t.name for t in tags if t.quantity == kind]
        scale = mean[names].abs() if kind == "flow" else 1.0
        for test, (drift, allowance) in drifts.items():
            measured, allowed = drift[names] / scale, allowance[names] / scale
            drift_tests.append((test, f"{kind} {test} above {threshold:{'.3g' if kind == 'flow' else 'g'}}{unit}",
                                measured - allowed > threshold, measured, allowed,
                                "{:.3g}" + (" of its mean " if kind == "flow" else " K ") + where_said[test],
                                "" if kind == "flow" else " K"))
    # a window some tag moved within says nothing, by its mean, of whether the next one is steady
    moving = np.any([failed.any(axis=1).to_numpy() for test, _, failed, *_ in drift_tests if test == "trend"], axis=0)
    after_moving = np.concatenate([[False], moving[:-1]])[:, None]
    tests += [(title, failed & ~after_moving if test == "change" else failed, *rest)
              for test, title, failed, *rest in drift_tests]
    no_data = count.sum(axis=1) == 0
    steady = ~no_data.to_numpy()
    parts = [np.where(no_data, "no data", "")]
    for title, failed, measure, allowance, detail, unit in tests:
        hit = failed.to_numpy()
        steady &= ~hit.any(axis=1)
        parts.append(_describe(title, hit, (measure.to_numpy(), allowance.to_numpy(), unit), list(failed.columns),
                               detail))
    reason = pd.Series(_join(parts), index=mean.index, name="reason")
    scatter = (binned.std() / np.sqrt(count)).where(count >= SCATTER_SAMPLES)
    wide = scatter > stated
    return Windows(mean, count, pd.Series(steady, index=mean.index, name="steady"), reason,
                   stated.where(~wide, scatter), monitoring.window, wide, trend,
                   _centres(samples.index, mean.index, monitoring.window))


def _centres(times: pd.DatetimeIndex, starts: pd.DatetimeIndex, window: pd.Timedelta) -> pd.Series:
    """The mean time of the samples in each window (:attr:`Windows.centre`); the window's middle
    where it has none."""
    second = pd.Timedelta(seconds=1)
    seconds = pd.Series(np.asarray((times - starts[0]) / second, float), index=times)
    mean = seconds.resample(window, closed="left", label="left").mean().reindex(starts)
    middle = pd.Series(np.asarray((starts - starts[0] + window / 2) / second, float), index=starts)
    return pd.Series(starts[0] + pd.to_timedelta(mean.fillna(middle).to_numpy(), unit="s"), index=starts, name="centre")


def _trend(samples: pd.DataFrame, starts: pd.DatetimeIndex, window: pd.Timedelta):
    """Per window and tag (frames like the window means): the least-squares slope of the samples
    against time, times the window's length (NaN with fewer than two samples), and the spread of
    the samples' times, sum (t - t_mean)^2; and each sample's window. Time runs from 0 to 1
    across each window, so the sums stay small and exact."""
    where = np.searchsorted(starts.to_numpy(), samples.index.to_numpy(), side="right") - 1
    t = ((samples.index - starts[where]) / window).to_numpy(float)[:, None]
    x = samples.to_numpy(float)
    seen = np.isfinite(x)
    x0, t0 = np.where(seen, x, 0.0), np.where(seen, t, 0.0)
    parts = {name: pd.DataFrame(v, columns=samples.columns).groupby(where).sum()
             for name, v in (("n", seen.astype(float)), ("t", t0), ("tt", t0 * t0), ("x", x0), ("tx", t0 * x0))}
    n, st, stt, sx, stx = (parts[k].reindex(range(len(starts)), fill_value=0.0).to_numpy()
                           for k in ("n", "t", "tt", "x", "tx"))
    with np.errstate(invalid="ignore", divide="ignore"):
        spread = np.where(n >= 2, stt - st * st / n, 0.0)
        slope = np.where((n >= 2) & (spread > 0.0), (stx - st * sx / n) / spread, np.nan)

    def frame(values):
        return pd.DataFrame(values, index=starts, columns=samples.columns)

    return frame(slope), frame(spread), where


def _sample_noise(samples: pd.DataFrame, where: np.ndarray) -> pd.Series:
    """Per tag: its noise sigma from the differences of successive samples within a window
    (module text), 0 where it has fewer than :data:`NOISE_DIFFERENCES` of them."""
    found = {}
    for name in samples.columns:
        x = samples[name].to_numpy(float)
        kept = np.isfinite(x)
        x, window = x[kept], where[kept]
        differences = np.diff(x)[window[1:] == window[:-1]]
        if differences.size < NOISE_DIFFERENCES:
            found[name] = 0.0
            continue
        deviation = np.median(np.abs(differences - np.median(differences)))
        found[name] = MAD_TO_SIGMA * deviation / np.sqrt(2.0)
    return pd.Series(found, dtype=float)


def _describe(title, hit: np.ndarray, measured, names: list, detail: str) -> np.ndarray:
    """Per window: "" or "<title>: TAG <detail> (N more tags)" for its first failing tag, with
    what of it the noise allows where that was allowed for; ``measured``: (the measures, the
    noise allowances, the allowances' unit)."""
    measure, allowance, unit = measured
    text = np.full(hit.shape[0], "", dtype=object)
    failing = np.flatnonzero(hit.any(axis=1)) if hit.size else np.array([], dtype=int)
    if failing.size == 0:
        return text
    first = hit[failing].argmax(axis=1)
    more = hit[failing].sum(axis=1) - 1
    for w, j, extra in zip(failing, first, more):
        noise = f" (the noise allows {allowance[w, j]:.2g}{unit})" if allowance[w, j] > 0.0 else ""
        also = f" (and {extra} more tag{'s' if extra > 1 else ''})" if extra else ""
        text[w] = f"{title}: {names[j]} {detail.format(measure[w, j])}{noise}{also}"
    return text


def _join(parts: list[np.ndarray]) -> list[str]:
    return ["; ".join(p for p in row if p) for row in zip(*parts)]
