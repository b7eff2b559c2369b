"""Held values in historian readings (solver/monitoring/spikes.py, ``held_runs``): a frozen
transmitter, or a historian logging a tag's last good value, must be left out and named, not
reconciled as a measurement. A new user's trial froze TI-209 for five months of the plant-data
demo: nothing said so, and the reconciliation blamed the healthy TI-312 and FI-102 instead."""

from __future__ import annotations

import shutil

import numpy as np
import pandas as pd
import pytest
from test_monitoring_input import FLOW_AND_TEMPERATURE, hourly, write_plant
from test_spikes import DEMO

from hxtrain.network.monitoring_file import load_monitoring
from hxtrain.solver.monitoring.historian import HELD, read_history
from hxtrain.solver.monitoring.spikes import FEWEST_HELD, HELD_CHANCE, held_runs


def test_a_frozen_stretch_of_a_noisy_reading_is_found_exactly():
    """A float reading with noise never repeats; frozen from reading 300 on, the run is found
    from the last reading before the freeze (whose value the historian holds) to the end."""
    rng = np.random.default_rng(1)
    x = 226.0 + rng.normal(0.0, 0.3, 500)
    x[300:] = x[299]
    assert held_runs(x) == [(299, 499)]


def test_runs_too_short_or_likely_by_chance_are_not_held():
    """Four equal readings are never held (fewer than FEWEST_HELD); a reading logged to whole
    kelvins at a steady plant repeats most of the time, so a run of 12 is no surprise there;
    a flow out of operation (zeros) and a tag that never changes are not judged."""
    rng = np.random.default_rng(2)
    x = 226.0 + rng.normal(0.0, 0.3, 500)
    x[100:100 + FEWEST_HELD - 2] = x[99]  # FEWEST_HELD - 1 equal readings
    assert held_runs(x) == []
    coarse = np.round(250.0 + rng.normal(0.0, 0.3, 500))
    assert np.mean(np.diff(coarse) == 0.0) > 0.5 and held_runs(coarse) == []
    flow = 80.0 + rng.normal(0.0, 1.0, 500)
    flow[200:260] = 0.0
    assert held_runs(flow) == [] and held_runs(np.full(500, 120.0)) == []


def test_noise_logged_to_a_tenth_gives_no_held_run():
    """200,000 readings of normal noise (sigma 3 K) logged to 0.1 K: successive readings are
    equal about 0.7 % of the time; no run is taken for a held value (the rule's chance of a false
    run over the whole file is HELD_CHANCE)."""
    rng = np.random.default_rng(3)
    x = np.round(250.0 + rng.normal(0.0, 3.0, 200_000), 1)
    assert 0.003 < np.mean(np.diff(x) == 0.0) < 0.02
    assert held_runs(x) == []


def test_the_chance_rule_at_its_edge():
    """With no repeats elsewhere (p0 = 1 / n), a run of k readings is held where n p0^(k-1) <
    HELD_CHANCE: for 500 readings k = 4 gives 499 x 499^-3 = 4e-6 (not held, and under the
    five-reading floor anyway), k = 5 gives 8e-9 (held)."""
    rng = np.random.default_rng(4)
    n = 500
    assert n * float(n - 1) ** -3 > HELD_CHANCE > (n - 1) * float(n - 1) ** -4
    x = 300.0 + rng.normal(0.0, 1.0, n)
    x[250:255] = x[250]
    assert held_runs(x) == [(250, 254)]


def test_the_reader_leaves_a_held_run_out_and_names_it(tmp_path):
    """Hourly data with TI-1011 frozen for 30 hours: those cells are blanked with the reason
    'value held unchanged', each with the run's value, length and first and last time; the
    flow's readings in those rows stay."""
    rng = np.random.default_rng(5)
    data = hourly("2026-02-01", 96, **{"FI-1001": rng.normal(342.0, 1.5, 96), "TI-1011": rng.normal(60.0, 0.2, 96)})
    data.loc[40:69, "TI-1011"] = data.loc[40, "TI-1011"]
    monitoring = load_monitoring(write_plant(tmp_path, FLOW_AND_TEMPERATURE, data))
    history = read_history(monitoring)
    held = history.skipped[history.skipped["reason"] == HELD]
    assert held["row"].tolist() == list(range(42, 72))  # header row 1, data from row 2
    assert set(held["column"]) == {"TI-1011"}
    value = data.loc[40, "TI-1011"]
    assert held["detail"].iloc[0] == f"{value:.6g} degC in each of 30 readings, 2026-02-02 16:00 to 2026-02-03 21:00"
    assert history.samples["TI-1011"].iloc[40:70].isna().all()
    assert history.samples["FI-1001"].iloc[40:70].notna().all()


def test_a_frozen_thermocouple_in_the_demo_is_named_and_blames_nobody_else(tmp_path, capsys):
    """The trial's case: TI-209 held at its 1 August reading to the end of the year. The report
    names the run; TI-209 is unmeasured there rather than reconciled, and neither TI-312 nor
    FI-102 (healthy: the data generator faults only TI-206) reads persistently off. With the
    frozen value taken as a measurement they did, in 18 and 7 windows."""
    from hxtrain.solver.cli.main import main
    from hxtrain.solver.monitoring.monitor import monitor

    def freeze(data):
        frozen = pd.to_datetime(data["time"]) >= pd.Timestamp("2026-08-01")
        data["TI-209"] = pd.to_numeric(data["TI-209"], errors="coerce")
        data.loc[frozen, "TI-209"] = data.loc[frozen.idxmax(), "TI-209"]

    data = pd.read_csv(DEMO / "crude_history.csv")
    freeze(data)
    data.to_csv(tmp_path / "crude_history.csv", index=False)
    shutil.copy(DEMO / "crude_monitoring.yaml", tmp_path / "plant.yaml")
    path = tmp_path / "plant.yaml"
    result = monitor(path)
    instruments = result.instruments if "tag" not in result.instruments else result.instruments.set_index("tag")
    for healthy in ("TI-312", "FI-102", "TI-209"):
        assert healthy not in instruments.index or instruments.at[healthy, "windows_persistently_off"] == 0
    assert main(["monitor", str(path)]) == 0
    out = capsys.readouterr().out.replace("\n      ", " ")  # the run's line, unwrapped
    assert "left out (value held unchanged):" in out and "TI-209 (data file rows " in out
    assert "a frozen transmitter, or the historian holding its last value?" in out
