"""The steady-state test against synthetic truth: windows of known steadiness, instruments of
known noise (hxtrain.solver.monitoring.windows).

The data are made here, not by hxtrain: each tag is a constant (or a known ramp or step) plus
Gaussian noise of a stated standard deviation, sampled hourly and averaged over six-hour
windows. With six samples a window, a 1 % flow meter's trend has a standard deviation of
1 % x sqrt(12 / 6) = 1.4 %: against the 3 % threshold alone, steady windows of four such meters
are set aside about one time in seven; the noise allowance must bring that down without letting
a real ramp or step through.
"""

from __future__ import annotations

import numpy as np
import pytest

from hxtrain.network.errors import CaseError
from hxtrain.network.monitoring_file import load_monitoring

from test_monitoring_input import hourly, windows_of, write_plant

FLOWS = {"FI-1": "crude", "FI-2": "residue", "FI-3": "diesel", "FI-4": "kerosene"}
FLOW_MEANS = {"FI-1": 342.0, "FI-2": 150.0, "FI-3": 80.0, "FI-4": 50.0}  # t/h
TEMPERATURES = {f"TI-{k}": point for k, point in enumerate(
    ["E-101.cold_out", "E-102.cold_out", "E-103.cold_out", "E-101.hot_out", "E-102.hot_out", "E-103.hot_out"])}
TAGS = {**{name: {"flow": stream, "unit": "t/h"} for name, stream in FLOWS.items()},
        **{name: {"temperature": point, "unit": "degC"} for name, point in TEMPERATURES.items()}}
HOURS = 60 * 24  # 240 six-hour windows


def noisy(seed, hours=HOURS, flow_noise=0.01, temperature_noise=0.5):
    """Steady readings: each flow its mean times (1 + 1 % noise), each temperature 150 °C + 0.5 K noise."""
    rng = np.random.default_rng(seed)
    columns = {name: mean * (1.0 + rng.normal(0.0, flow_noise, hours)) for name, mean in FLOW_MEANS.items()}
    columns.update({name: 150.0 + rng.normal(0.0, temperature_noise, hours) for name in TEMPERATURES})
    return hourly("2026-01-01", hours, **columns)


def set_aside(tmp_path, data, **steady_state):
    _, windows = windows_of(tmp_path, TAGS, data, window="6 h", **({"steady_state": steady_state} if steady_state
                                                                   else {}))
    return windows


@pytest.mark.parametrize("seed", [11, 12, 13])
def test_steady_noisy_windows_are_kept(tmp_path, seed):
    """Truth: every window steady. Allowing for the noise (default confidence 0.95) sets aside
    at most 2 % of them; the plain comparison (confidence 0.5) sets aside several times more,
    the fault this allowance mends (expected about 13 % from the figures in the module text)."""
    data = noisy(seed)
    allowed = set_aside(tmp_path, data)
    plain = set_aside(tmp_path, data, confidence=0.5)
    assert len(allowed.steady) == 240
    assert (~allowed.steady).mean() <= 0.02
    assert (~plain.steady).mean() >= 0.06
    assert set(allowed.steady.index[~allowed.steady]) <= set(plain.steady.index[~plain.steady])


def test_a_ramp_and_a_step_inside_windows_are_still_caught_through_the_noise(tmp_path):
    """Truth: a 20 % fall of the crude flow over three hours from 2026-01-10 06:00, held until
    18:00 and back up in one step then, and a 6 K step of a temperature at 2026-01-20 03:00. The
    windows that hold a change (06:00 on the 10th, 00:00 on the 20th) and the window after the
    step back up (a change of mean of 25 %) are transient; the noise pooled from the whole data
    (differences within windows, median based) is not widened by them. The windows in between
    are steady at their new values; the one after the ramp sees a 4.2 % change of mean, a
    borderline case either way."""
    data = noisy(21)
    start = 9 * 24 + 6
    ramp = np.ones(HOURS)
    ramp[start:start + 3] = 1.0 - 0.2 * np.arange(1, 4) / 3.0
    ramp[start + 3:start + 12] = 0.8
    data["FI-1"] *= ramp
    data.loc[19 * 24 + 3:, "TI-2"] += 6.0
    windows = set_aside(tmp_path, data)
    flagged = {str(t) for t in windows.steady.index[~windows.steady]}
    assert {"2026-01-10 06:00:00", "2026-01-10 18:00:00", "2026-01-20 00:00:00"} <= flagged
    assert len(flagged - {"2026-01-10 12:00:00"}) <= 3 + 2  # at most 1 % of the steady windows for noise
    reason = windows.reason["2026-01-10 06:00"]
    assert reason.startswith("flow trend above 0.03 of the mean: FI-1 ") and "(the noise allows 0.0" in reason


def test_without_noise_a_drift_just_under_the_threshold_passes_and_just_over_fails(tmp_path):
    """No scatter, no allowance: flows rising linearly by 2.9 % and 3.1 % of the mean per window
    length (six samples; the least-squares trend of a straight line is its rise over the
    window's length, 6/5 of the rise from its first to its last sample)."""
    flow = np.full(48, 342.0)
    flow[12:18] = 342.0 * (1.0 + 0.029 * np.arange(6) / 6.0)
    flow[18:24] = flow[17]
    flow[24:30] = flow[17] * (1.0 + 0.031 * np.arange(6) / 6.0)
    flow[30:] = flow[29]
    data = hourly("2026-01-01", 48, **{"FI-1": flow, **{name: 150.0 for name in TEMPERATURES}})
    tags = {"FI-1": TAGS["FI-1"], **{name: TAGS[name] for name in TEMPERATURES}}
    _, windows = windows_of(tmp_path, tags, data, window="6 h")
    assert [str(t) for t in windows.steady.index[~windows.steady]] == ["2026-01-02 00:00:00"]
    assert "within the noise" not in windows.reason.iloc[4] and "noise allows" not in windows.reason.iloc[4]


@pytest.mark.parametrize("value, words", [(1.0, "must be below 1"), (0.3, "cannot be below 0.5"),
                                          ("95 K", "confidence")])
def test_a_confidence_outside_half_to_one_is_refused_with_its_key(tmp_path, value, words):
    path = write_plant(tmp_path, TAGS, None, steady_state={"confidence": value})
    with pytest.raises(CaseError) as caught:
        load_monitoring(path)
    assert "steady_state.confidence" in str(caught.value) and words in str(caught.value)
