"""``hxtrain monitor`` and ``hxtrain schedule`` as a user runs them: the reports, the files
``--out`` writes, and bad input (exit 2 naming the file and key path, nothing written)."""

import json
import shutil
from pathlib import Path

import pandas as pd
import pytest

from cli_helpers import fits_the_width, run_in_process
from test_scheduling import small_schedule

ROOT = Path(__file__).resolve().parents[1]
MONITORING = ROOT / "cases" / "plant_data" / "crude_monitoring.yaml"


@pytest.fixture(scope="module")
def monitor_run(tmp_path_factory):
    """One run of the demo shared by the tests that read its report and files."""
    import contextlib
    import io

    from hxtrain.solver.cli.main import main

    out = tmp_path_factory.mktemp("monitor") / "state.xlsx"
    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        code = main(["monitor", str(MONITORING), "--out", str(out)])
    return (code, stdout.getvalue(), stderr.getvalue()), out


def test_monitor_prints_the_state_cost_instruments_and_limits(monitor_run):
    (code, out, err), _ = monitor_run
    assert code == 0, err
    assert "Screening estimates" in out
    for heading in ("Exchangers at 2026-12-31", "What fouling costs", "Instruments to check", "Cleanings",
                    "Projection from", "LIMITS VIOLATED OR PROJECTED"):
        assert heading in out, heading
    instruments = out[out.index("Instruments to check"):out.index("Cleanings")]
    assert instruments.splitlines()[4].split()[0] == "TI-206"  # the drifting thermocouple heads the list
    assert out.rstrip().splitlines()[-1].startswith("wrote")
    assert fits_the_width(out)


def test_monitor_writes_its_tables(monitor_run):
    (code, _, _), path = monitor_run
    sheets = pd.read_excel(path, sheet_name=None)
    for name in ("today", "state", "windows", "instruments", "cost", "fouling_laws", "cleanings", "projection",
                 "limit_dates", "skipped_rows"):
        assert any(s.startswith(name) for s in sheets), name
    for name, sheet in sheets.items():  # no column twice (the skipped rows had had 'row' twice: '.1' from pandas)
        assert not any(str(c).endswith(".1") for c in sheet.columns), name
    skipped = next(sheet for name, sheet in sheets.items() if name.startswith("skipped_rows"))
    assert "data_file_row" in skipped.columns


def test_monitor_refuses_to_write_over_its_inputs(tmp_path, capsys):
    folder = tmp_path / "plant"
    shutil.copytree(MONITORING.parent, folder)
    code, out, err = run_in_process(capsys, "monitor", folder / "crude_monitoring.yaml", "--out",
                                    folder / "crude_history.csv")
    assert code == 2 and "would replace an input" in err and "plant data" in err
    assert (folder / "crude_history.csv").read_bytes() == (MONITORING.parent / "crude_history.csv").read_bytes()


def test_monitor_names_the_file_and_key_of_bad_input(tmp_path, capsys):
    text = MONITORING.read_text().replace("furnace_efficiency: 0.88", "furnace_efficiency: 1.7")
    assert "1.7" in text
    bad = tmp_path / "bad_monitoring.yaml"
    bad.write_text(text.replace("data: crude_history.csv", f"data: {MONITORING.parent / 'crude_history.csv'}"))
    code, out, err = run_in_process(capsys, "monitor", bad, "--out", tmp_path / "x.json")
    assert code == 2 and str(bad) in err and "economics.furnace_efficiency" in err
    assert "Traceback" not in err and not (tmp_path / "x.json").exists()
    # the steady-state confidence, a new key: the same
    bad.write_text(bad.read_text().replace("furnace_efficiency: 1.7", "furnace_efficiency: 0.88").replace(
        "steady_state:\n", "steady_state:\n  confidence: 0.3\n"))
    code, out, err = run_in_process(capsys, "monitor", bad, "--out", tmp_path / "x.json")
    assert code == 2 and str(bad) in err and "steady_state.confidence" in err and "cannot be below 0.5" in err
    assert "Traceback" not in err and not (tmp_path / "x.json").exists()


def test_schedule_prints_the_plan_and_the_baselines(tmp_path, capsys):
    schedule = small_schedule(tmp_path, ("X-1", "X-2", "X-3"), 10, durations={"X-2": 2})
    out_file = tmp_path / "plan.json"
    code, out, err = run_in_process(capsys, "schedule", schedule.file, "--out", out_file)
    assert code == 0, err
    for heading in ("Optimised plan", "Costs over the horizon", "no cleaning", "fouling threshold",
                    "one-step ranking, greedily", "Search:"):
        assert heading in out, heading
    comparison = pd.DataFrame(json.loads(out_file.read_text())["comparison"]).set_index("plan")
    assert comparison.index[0] == "optimised" and len(comparison) >= 4  # fixed intervals longer than 10 weeks drop out
    assert comparison["total_cost_usd"].min() == pytest.approx(comparison.loc["optimised", "total_cost_usd"])


def test_schedule_names_the_file_and_key_of_bad_input(tmp_path, capsys):
    schedule = small_schedule(tmp_path, ("X-1", "X-2"), 6)
    path = Path(schedule.file)
    path.write_text(path.read_text().replace("at_most_at_once: 1", "at_most_at_once: 0"))
    code, out, err = run_in_process(capsys, "schedule", path)
    assert code == 2 and str(path) in err and "cleaning.at_most_at_once" in err and "Traceback" not in err


def test_the_plant_data_benchmark_runs_and_reports_its_ratio(capsys):
    """A smoke run (not a timed test): the figures are printed, every window reconciled."""
    code, out, err = run_in_process(capsys, "benchmark", "--plant-data", "--windows", "60")
    assert code == 0, err
    assert "60 hourly windows" in out and "x the batch solve" in out and "windows reconciled: 60" in out


def test_a_gap_in_the_plant_data_is_said_with_its_times():
    """Windows without a single reading (a historian outage) are named as stretches, not only
    counted among the unsteady ones."""
    from hxtrain.solver.reporting.monitoring_text import _gap_lines

    windows = pd.DataFrame({"samples": [6, 0, 0, 6, 0, 6]}, index=pd.date_range("2026-03-01", periods=6, freq="6h"))
    text = " ".join(_gap_lines(windows, pd.Timedelta("6h")))
    assert "no data at all in 3 windows" in text
    # each stretch by its number of windows and first window (a trial read "06:00 to 18:00", the end
    # exclusive, as one window more than it was)
    assert "2 from 2026-03-01 06:00; 1 from 2026-03-02 00:00" in text
    assert _gap_lines(windows.assign(samples=6), pd.Timedelta("6h")) == []
    assert " ".join(_gap_lines(windows, pd.Timedelta("6h"), spacing=pd.Timedelta("1h"))) == text  # data every hour
    # a window shorter than the data's spacing: said as such, not as a list of gaps
    short = " ".join(_gap_lines(windows, pd.Timedelta("30min"), spacing=pd.Timedelta("1h")))
    assert "the window (30 min) is shorter than the data's usual spacing (1 h)" in short and "2026-03-01" not in short
