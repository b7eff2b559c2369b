"""Historian samples averaged over fixed windows, with a steady-state test per window.

Windows are ``pandas.resample`` bins of the monitoring file's length, left-closed and labelled
by their start (daily windows run from midnight to midnight). The steady-state test (common
practice: fixed thresholds on change; a statistical alternative is the variance-ratio test of
Cao & Rhinehart 1995, from memory) marks a window transient when

* a flow tag's range inside the window (largest minus smallest sample), or the change of its
  window mean from the previous window's, exceeds ``flow_change`` times its window mean, or
* a temperature tag's range or change of mean exceeds ``temperature_change`` K;

the previous window is the one just before, and no change is tested when it had no sample of
the tag. Duty tags are not tested: a heater's duty follows the flows and temperatures that are.
A window with fewer than ``minimum_samples`` samples of a tag that it does have ("too few
samples") or with no sample at all ("no data") is not steady either. A tag with no sample in
a window leaves that window's mean NaN and does not by itself make it unsteady: the
reconciliation treats it as unmeasured there.

The range test sees the noise as well as the process: the expected range of N normal samples
of standard deviation sigma is 3.26 sigma for N = 12 and 3.90 sigma for N = 24 (the d2 factor
of control charts, checked by simulation), so a threshold below that rejects steady windows.
Set ``temperature_change`` above it when the data are noisy and frequent.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from hxtrain.network.monitoring_file import MonitoringFile

__all__ = ["Windows", "average_windows"]


@dataclass
class Windows:
    """Window averages. Every frame is indexed by window start with one column per tag.

    mean: the mean of the tag's good samples, NaN where it had none.
    count: the samples averaged.
    steady: (bool Series) the window passes the steady-state test.
    reason: (Series of text) why a window is not steady, "" where it is.
    sigma: one standard deviation of each window mean: the tag's instrument sigma, absolute, a
        relative one times the window mean. It is NOT divided by the square root of the count:
        an instrument's bias (calibration, installation) does not average out over a window.
    """

    mean: pd.DataFrame
    count: pd.DataFrame
    steady: pd.Series
    reason: pd.Series
    sigma: pd.DataFrame
    window: pd.Timedelta


def average_windows(samples: pd.DataFrame, monitoring: MonitoringFile) -> Windows:
    """Average ``samples`` (DatetimeIndex, one column per tag of ``monitoring``, default units)
    over ``monitoring.window`` and apply the steady-state test (module text)."""
    tags = [monitoring.tags[name] for name in samples.columns]
    binned = samples.resample(monitoring.window, closed="left", label="left")
    mean, count = binned.mean(), binned.count()
    spread = binned.max() - binned.min()
    change = mean.diff().abs()  # NaN where either window has no sample of the tag
    rule = monitoring.steady_state
    flows = [t.name for t in tags if t.quantity == "flow"]
    temperatures = [t.name for t in tags if t.quantity == "temperature"]
    scale = mean[flows].abs()
    tests = [
        ("too few samples", (count > 0) & (count < rule.minimum_samples), count, "{:.0f} samples"),
        (f"flow range above {rule.flow_change:.3g} of the mean", spread[flows] > rule.flow_change * scale,
         spread[flows] / scale, "{:.3g} of its mean within the window"),
        (f"flow change above {rule.flow_change:.3g} of the mean", change[flows] > rule.flow_change * scale,
         change[flows] / scale, "{:.3g} of its mean since the window before"),
        (f"temperature range above {rule.temperature_change:g} K", spread[temperatures] > rule.temperature_change,
         spread[temperatures], "{:.3g} K within the window"),
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
    sigma = pd.DataFrame({t.name: t.sigma_of(mean[t.name].to_numpy()) for t in tags}, index=mean.index)
    return Windows(mean, count, pd.Series(steady, index=mean.index, name="steady"), reason, sigma,
                   monitoring.window)


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
