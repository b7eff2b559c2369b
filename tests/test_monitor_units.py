"""``monitor`` and ``schedule`` in US customary units (issue 13, item 2): every number of their
console reports and of the files they write is in the chosen units, each file column named with
its unit, and the US output equals the SI output converted by hand.

The factors below are identities, by definition (no outside data): 1 Btu (International Table)
= 1055.05585262 J; 1 lb = 0.45359237 kg; 1 ft = 0.3048 m; °F = °C·9/5 + 32, so a temperature
difference (a bias, a mismatch) in °F is 9/5 of the same in K, with no offset.
"""

import json
import re

import numpy as np
import pytest

from cli_helpers import fits_the_width, run_in_process
from test_plant_cli import MONITORING
from test_scheduling import small_schedule

BTU, LB, FT = 1055.05585262, 0.45359237, 0.3048  # identities, by definition (J, kg, m)
DELTA_F_PER_K = 9 / 5
W_M2K_PER_US_U = BTU / 3600 / FT ** 2 * DELTA_F_PER_K  # 1 Btu/h·ft²·°F in W/m²·K
BY_HAND = [  # (ending of an SI column in files, ending of its US counterpart, SI value -> US value)
    ("_w_m2_k", "_btu_h_ft2_f", lambda v: v / W_M2K_PER_US_U),
    ("_m2_k_w", "_h_ft2_f_btu", lambda v: v * W_M2K_PER_US_U),
    ("_kw_k", "_btu_h_f", lambda v: v * 1000 * 3600 / BTU / DELTA_F_PER_K),
    ("_kg_s", "_lb_h", lambda v: v * 3600 / LB),
    ("_kw", "_mmbtu_h", lambda v: v * 1000 * 3600 / (1e6 * BTU)),
    ("_gj", "_mmbtu", lambda v: v * 1e9 / (1e6 * BTU)),
    ("_c", "_f", lambda v: v * 9 / 5 + 32),
    ("_k", "_delta_f", lambda v: v * DELTA_F_PER_K),
]
NO_UNIT = {"p", "r", "p_hot", "r_hot", "standardised", "re_tube", "samples", "statistic", "degrees_of_freedom", "eliminated", "windows_used",
           "redundant_share", "mean_standardised", "observable_share", "windows_eliminated",
           "windows_persistently_off", "windows", "share", "share_of_cost", "points", "beta", "beta_sigma",
           "chi_square", "reduced_chi_square", "aicc", "row", "throughput_share", "limits_violated", "cleanings",
           "limit_steps", "new_limit_steps", "saving_share_of_fouling_cost", "round", "plans_marched", "steps_out",
           "steps"}
"""Numbers without a unit: counts, shares, statistics, P, R, Reynolds numbers, exponents."""
OTHER_UNITS = ("_usd", "_t", "_days", "_j_per_mol")
"""Endings of units outside the conversion table: the currency, tonnes, days, J/mol."""


def _tables(document):
    return {name: rows for name, rows in document.items() if isinstance(rows, list) and rows
            and isinstance(rows[0], dict)}


def _column_unit(name, endings):
    stem = name.rsplit(".", 1)[-1]
    return next((e for e in endings if stem.endswith(e) and len(stem) > len(e)), None)


def assert_us_is_si_by_hand(si, us):
    """Every quantity column of every table: the US value is the SI value converted by hand; every
    numeric column (in both) names its unit or is a plain number."""
    si_tables, us_tables = _tables(si), _tables(us)
    assert si_tables.keys() == us_tables.keys()
    checked = 0
    for name, si_rows in si_tables.items():
        us_rows = us_tables[name]
        assert len(si_rows) == len(us_rows), name
        for column in si_rows[0]:
            ending = _column_unit(column, [e for e, _, _ in BY_HAND])
            values = [row[column] for row in si_rows]
            numeric = any(isinstance(v, float) for v in values)
            if ending is None:
                assert column in us_rows[0], (name, column)  # not converted: the same name in both
                if numeric:
                    assert column in NO_UNIT or _column_unit(column, OTHER_UNITS), (name, column, "no unit")
                continue
            us_ending, by_hand = next((u, f) for e, u, f in BY_HAND if e == ending)
            us_column = column[: -len(ending)] + us_ending
            assert us_column in us_rows[0], (name, column, us_column)
            si_values = np.array([np.nan if v is None else v for v in values], float)
            us_values = np.array([np.nan if row[us_column] is None else row[us_column] for row in us_rows], float)
            np.testing.assert_allclose(us_values, by_hand(si_values), rtol=1e-9, atol=1e-12, err_msg=f"{name}.{column}")
            checked += 1
    return checked


SI_LABELS = re.compile(r"(?<![\w/])(kW|MW|°C|kg/s|W/m²·K|m²·K/W|kW/K|GJ)(?![\w/²])|\d K\b")


@pytest.fixture(scope="module")
def monitored():
    from hxtrain.solver.monitoring.monitor import monitor

    return monitor(str(MONITORING))


def _written(result, tables_of, report_of, display, path):
    from hxtrain.solver.reporting.display_units import using
    from hxtrain.solver.reporting.files import write_tables

    with using(display):
        write_tables(tables_of(result), path, {"title": "units"})
        report = report_of(result)
    return json.loads(path.read_text()), report


def test_monitor_in_us_units_is_the_si_output_converted_by_hand(monitored, tmp_path):
    from hxtrain.solver.reporting.display_units import Display
    from hxtrain.solver.reporting.monitoring_text import monitoring_report, monitoring_tables

    si, si_text = _written(monitored, monitoring_tables, monitoring_report, Display("si"), tmp_path / "si.json")
    us, us_text = _written(monitored, monitoring_tables, monitoring_report, Display("us"), tmp_path / "us.json")
    assert assert_us_is_si_by_hand(si, us) > 40
    for column in ("duty_kw", "fouling_m2_k_w", "plus_minus_95_m2_k_w", "trend_per_30_days_m2_k_w"):
        assert column in si["today"][0], column
    assert "median_bias_k" in si["instruments"][0] and "cost_per_day_usd" in si["cost"][0]
    assert "rate_per_day_m2_k_w" in si["fouling_laws"][0]  # law parameters as numbers with units
    assert "fired duty above 107.824 MMBtu/h" in {row["limit"] for row in us["limit_dates"]}  # 31.6 MW: 31 600 kW × 3600 / 1055.05585262 / 1000
    for text in (si_text, us_text):
        assert fits_the_width(text)
    assert not SI_LABELS.findall(us_text), SI_LABELS.findall(us_text)
    for label in ("MMBtu/h", "Btu/h·ft²·°F", "h·ft²·°F/Btu", "lb/h", "Δ°F", "°F", "MMBtu/day"):
        assert label in us_text, label
    # the drifting thermocouple's bias on the console: a difference, ×9/5 and no offset
    si_bias, us_bias = (float(re.search(r"^TI-206 .*?(-?\d+\.\d+)\s*$", text, re.M).group(1)) for text in (si_text, us_text))
    assert us_bias == pytest.approx(si_bias * DELTA_F_PER_K, abs=0.01 + 0.005 * DELTA_F_PER_K)


def test_monitor_console_keeps_within_120_columns_unless_wide(monitored):
    from hxtrain.solver.reporting.display_units import Display, using
    from hxtrain.solver.reporting.monitoring_text import monitoring_report

    with using(Display("us", wide=True)):
        wide = monitoring_report(monitored)
    row = next(line for line in wide.splitlines() if line.startswith("E-101 "))
    assert "identified" in row and "linear" in row  # the whole table in one block


def _schedule_run(capsys, schedule, out, *options):
    code, text, err = run_in_process(capsys, "schedule", schedule.file, "--out", out, *options)
    assert code == 0, err
    return json.loads(out.read_text()), text


def test_schedule_in_us_units_is_the_si_output_converted_by_hand(tmp_path, capsys):
    schedule = small_schedule(tmp_path, ("X-1", "X-2", "X-3"), 12, furnace="28.7 MW")
    si, si_text = _schedule_run(capsys, schedule, tmp_path / "si.json")
    us, us_text = _schedule_run(capsys, schedule, tmp_path / "us.json", "--units", "us")
    assert assert_us_is_si_by_hand(si, us) >= 10
    laws = {row["exchanger"]: row for row in us["fouling_laws"]}
    assert laws["X-1"]["rate_per_day_h_ft2_f_btu"] == pytest.approx(8.0e-6 * W_M2K_PER_US_U, rel=1e-9)
    assert laws["X-2"]["tau_days"] == pytest.approx(60.0)
    assert "total_cost_usd" in us["comparison"][0] and "fuel_mmbtu" in us["comparison"][0]
    assert not SI_LABELS.findall(us_text), SI_LABELS.findall(us_text)
    assert "fires at most 97.928 MMBtu/h" in us_text  # 28.7 MW: 28 700 kW × 3600 / 1055.05585262 / 1000
    for text in (si_text, us_text):
        assert fits_the_width(text)


def test_a_case_choice_of_unit_applies_to_schedule_files(tmp_path, capsys):
    """settings.display_units of the case (duty in MW) over --units si."""
    schedule = small_schedule(tmp_path, ("X-1", "X-2"), 6, furnace="28.7 MW")
    case = tmp_path / "small.yaml"
    case.write_text(case.read_text().replace("title: three", "settings: {display_units: {duty: MW}}\ntitle: three"))
    si, text = _schedule_run(capsys, schedule, tmp_path / "mw.json")
    step = si["steps"][0]
    assert "X-1.duty_mw" in step and "X-1.duty_kw" not in step
    assert re.search(r"fires at most 28\.70* MW;", text), text
