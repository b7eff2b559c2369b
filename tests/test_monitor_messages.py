"""What the monitor's console report says about its data (solver/reporting/monitoring_text.py),
from a new user's trial: a flow meter reading zero for a week showed only as a smaller steady
count, rows without any reading vanished from the row count, whole rows left out were counted
but not named, and a column of numbers with thousands separators was refused without its text."""

from __future__ import annotations

import pandas as pd
from test_spikes import demo_days

from hxtrain.solver.cli.main import main


def monitor_text(capsys, path) -> str:
    assert main(["monitor", str(path)]) == 0
    return capsys.readouterr().out.replace("\n    ", " ")  # wrapped lines joined


def test_a_week_reading_zero_and_rows_without_readings_are_said(tmp_path, capsys):
    """FI-102 reads 0 for seven days: the report says those seven windows were set aside as
    reading zero, naming FI-102 and the first and last; two rows with a time and no reading are
    counted beside the rows; a repeated time names its data file row."""
    def edit(data):
        data["FI-102"] = pd.to_numeric(data["FI-102"], errors="coerce")
        data.loc[20:26, "FI-102"] = 0.0
        data.loc[[5, 6], data.columns[1:]] = None
        data.loc[30, "time"] = data.loc[29, "time"]

    text = monitor_text(capsys, demo_days(tmp_path, 40, edit))
    days = pd.to_datetime(pd.read_csv(tmp_path / "crude_history.csv")["time"])
    assert (f"reading zero (out of operation, or a dead transmitter?) in 7 (FI-102; {days[20]:%Y-%m-%d} to "
            f"{days[26]:%Y-%m-%d})") in text
    assert "Plant data: 37 rows from" in text and "(2 more with no usable reading of any tag)" in text
    assert "left out (time repeated): 1 row (data file row 32)" in text


def test_a_column_with_thousands_separators_is_refused_with_its_text(tmp_path, capsys):
    """Every FI-101 reading (t/h) written with a thousands separator, as 1,339.9: exit 2, the
    message quotes the text and asks about the separator."""
    def edit(data):
        data["FI-101"] = [f"{v + 1000.0:,.1f}" for v in pd.to_numeric(data["FI-101"], errors="coerce").fillna(340.0)]

    assert main(["monitor", str(demo_days(tmp_path, 40, edit))]) == 2
    err = capsys.readouterr().err
    assert "column 'FI-101' (tag FI-101) holds no usable value" in err
    assert "not a number ('" in err and "a thousands separator?" in err and "Traceback" not in err


def test_the_readings_table_sets_each_reading_beside_its_reconciled_value(tmp_path):
    """The table a back-calculation is checked from (a trial had to dig the reconciled values out
    of the internals): one row per steady window and tag; reading less reconciled is the
    difference of the two; a reading removed as a gross error is marked unused, the others used;
    the reconciled flows of the crude meter and its two branches close their balance."""
    from hxtrain.solver.monitoring.monitor import monitor

    def glitch(data):
        data["TI-203"] = pd.to_numeric(data["TI-203"], errors="coerce")
        data.loc[12:14, "TI-203"] += 25.0  # off by 25 K for three days (no spike): removed in those windows

    result = monitor(demo_days(tmp_path, 40, glitch))
    readings = result.readings.set_index("tag", append=True)
    steady = result.windows.index[result.windows["reconciled"]]
    assert len(readings) == len(steady) * len(result.monitoring.tags)
    assert (readings["reading"] - readings["reconciled"] - readings["reading_less_reconciled"]).abs().max() < 1e-9
    day = pd.to_datetime(pd.read_csv(tmp_path / "crude_history.csv")["time"])[13]  # its first day is a step: transient
    assert not readings.loc[(day, "TI-203"), "used"]
    assert readings.loc[(day, "TI-203"), "reading_less_reconciled"] > 15.0
    assert readings["used"].mean() > 0.95
