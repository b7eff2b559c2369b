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
  no sample of the tag; a single-sample window keeps this test alone).

Both average the noise instead of adding it up: with N samples of standard deviation sigma
equally spaced over a window, the trend's standard deviation is sigma * sqrt(12 / N) (0.71 sigma
for N = 24) and the change of mean's sigma * sqrt(2 / N), where the range of the samples
(largest less smallest, the test this replaced) grows with N: 3.9 sigma at N = 24 (the d2
factor of control charts), which failed every window of ordinary hourly data. Duty tags are not
tested: a heater's duty follows the flows and temperatures that are. A window with fewer than
``minimum_samples`` samples of a tag that it does have ("too few samples") or with no sample at
all ("no data") is not steady either. A tag with no sample in a window leaves that window's mean
NaN and does not by itself make it unsteady: the reconciliation treats it as unmeasured there.

A window mean's uncertainty is the instrument's stated one (its accuracy: a calibration error
does not average out), unless the readings scatter more: with n >= :data:`SCATTER_SAMPLES`
samples, where their standard deviation over sqrt(n) exceeds the stated sigma, the window uses
that (``Windows.wide_scatter`` marks where, so the report can say how often).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from hxtrain.network.monitoring_file import MonitoringFile

__all__ = ["Windows", "average_windows", "SCATTER_SAMPLES"]

SCATTER_SAMPLES = 3
"""The fewest samples whose scatter is taken as evidence of a window mean's uncertainty."""


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

    def wide_scatter_counts(self) -> pd.Series:
        """Per tag: the windows whose sigma is the readings' scatter, not the instrument's."""
        return self.wide_scatter.sum().astype(int)


def average_windows(samples: pd.DataFrame, monitoring: MonitoringFile) -> Windows:
    """Average ``samples`` (DatetimeIndex, one column per tag of ``monitoring``, default units)
    over ``monitoring.window`` and apply the steady-state test (module text)."""
    tags = [monitoring.tags[name] for name in samples.columns]
    binned = samples.resample(monitoring.window, closed="left", label="left")
    mean, count = binned.mean(), binned.count()
    trend = _trend(samples, mean.index, monitoring.window)
    drift = trend.abs()
    change = mean.diff().abs()  # NaN where either window has no sample of the tag
    rule = monitoring.steady_state
    flows = [t.name for t in tags if t.quantity == "flow"]
    temperatures = [t.name for t in tags if t.quantity == "temperature"]
    scale = mean[flows].abs()
    tests = [
        ("too few samples", (count > 0) & (count < rule.minimum_samples), count, "{:.0f} samples"),
        (f"flow trend above {rule.flow_change:.3g} of the mean", drift[flows] > rule.flow_change * scale,
         drift[flows] / scale, "{:.3g} of its mean across the window"),
        (f"flow change above {rule.flow_change:.3g} of the mean", change[flows] > rule.flow_change * scale,
         change[flows] / scale, "{:.3g} of its mean since the window before"),
        (f"temperature trend above {rule.temperature_change:g} K", drift[temperatures] > rule.temperature_change,
         drift[temperatures], "{:.3g} K across the window"),
        (f"temperature change above {rule.temperature_change:g} K",
         change[temperatures] > rule.temperature_change, change[temperatures], "{:.3g} K since the window before"),
    ]
    no_data = count.sum(axis=1) == 0
    steady = ~no_data.to_numpy()
    parts = [np.where(no_data, "no data", "")]
    for title, failed, measure, detail in tests:
        hit = failed.to_numpy()
        steady &= ~hit.any(axis=1)
        parts.append(_describe(title, hit, measure.to_numpy(), list(failed.columns), detail))
    reason = pd.Series(_join(parts), index=mean.index, name="reason")
    stated = pd.DataFrame({t.name: t.sigma_of(mean[t.name].to_numpy()) for t in tags}, index=mean.index)
    scatter = (binned.std() / np.sqrt(count)).where(count >= SCATTER_SAMPLES)
    wide = scatter > stated
    return Windows(mean, count, pd.Series(steady, index=mean.index, name="steady"), reason,
                   stated.where(~wide, scatter), monitoring.window, wide, trend)


def _trend(samples: pd.DataFrame, starts: pd.DatetimeIndex, window: pd.Timedelta) -> pd.DataFrame:
    """Per window and tag: the least-squares slope of the samples against time, times the
    window's length (NaN with fewer than two samples). Time runs from 0 to 1 across each window,
    so the sums stay small and exact."""
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
        spread = stt - st * st / n
        slope = np.where((n >= 2) & (spread > 0.0), (stx - st * sx / n) / spread, np.nan)
    return pd.DataFrame(slope, index=starts, columns=samples.columns)


def _describe(title, hit: np.ndarray, measure: np.ndarray, names: list, detail: str) -> np.ndarray:
    """Per window: "" or "<title>: TAG <detail> (and N more tags)" for its first failing tag."""
    text = np.full(hit.shape[0], "", dtype=object)
    failing = np.flatnonzero(hit.any(axis=1)) if hit.size else np.array([], dtype=int)
    if failing.size == 0:
        return text
    first = hit[failing].argmax(axis=1)
    more = hit[failing].sum(axis=1) - 1
    for w, j, extra in zip(failing, first, more):
        also = f" (and {extra} more tag{'s' if extra > 1 else ''})" if extra else ""
        text[w] = f"{title}: {names[j]} {detail.format(measure[w, j])}{also}"
    return text


def _join(parts: list[np.ndarray]) -> list[str]:
    return ["; ".join(p for p in row if p) for row in zip(*parts)]
