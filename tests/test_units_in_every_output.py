"""US customary units in every output, not only in the run's tables: messages converted from
their exact values (so they agree with the tables), numbers in exponent form and ranges, the
specification results with their units, the fouled-against-clean section, the cleaning ranking's
words and the study commands' console tables (fitted to the width).

Conversion factors: 1 K = 1.8 Δ°F, °F = 1.8 °C + 32, 1 kW = 3412.14 Btu/h, 1 psi = 6.894757 kPa
(NIST SP 811)."""

import json

import numpy as np
import pandas as pd
import pytest
from cli_helpers import CONSOLE_WIDTH, fits_the_width
from cli_helpers import run_in_process as run_cli

from hxtrain.solver.demos import demo_case_path
from hxtrain.solver.reporting.console_tables import WIDTH
from hxtrain.solver.reporting.display_units import Display
from hxtrain.units.protocol import Worded

STUDY = demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml")


@pytest.mark.parametrize("si, us", [
    ("gives 1.60192e-08 K (target 0 K)", "gives 2.88346e-08 Δ°F (target 0 Δ°F)"),  # was 1.60192e-14: the exponent read alone
    ("adjusting it over 60 to 90 kg/s gives 174 to 348.4 °C", "adjusting it over 476,198 to 714,298 lb/h gives 345 to 659.1 °F"),
    ("reaches 100.0 °C; approach 5.0 K", "reaches 212.0 °F; approach 9.0 Δ°F"),
    ("steam at 1000 kPa (absolute)", "steam at 145 psi (absolute)"),
])
def test_message_numbers_are_converted_whole(si, us):
    assert Display("us").message(si) == us
    assert Display("si").message(si) == si


def test_a_worded_message_is_converted_from_its_exact_numbers():
    """280.84 °C is 537.51 °F: from the rounded "280.8 °C" it would read 537.4 °F, against 537.5
    in the tables."""
    worded = Worded("reaches 280.8 °C, above 280.0 °C", "reaches 280.83927 °C, above 280 °C")
    assert Display("us").message(worded) == "reaches 537.5 °F, above 536.0 °F"
    assert Display("us").message(str(worded)) == "reaches 537.4 °F, above 536.0 °F"


def test_the_limit_box_agrees_with_the_table_in_us_units(capsys):
    code, out, err = run_cli(capsys, "run", "--units", "us")
    assert code == 0, err
    row = next(line for line in out.splitlines() if line.startswith("E-112 ") and "design_temperature" in line)
    assert "537.5" in row.split()
    assert "E-112: the cold side reaches 537.5 °F, above its design temperature of 536.0 °F" in out


def test_specification_results_carry_their_units_and_convert(tmp_path, capsys):
    si_file, us_file = tmp_path / "si.json", tmp_path / "us.json"
    assert run_cli(capsys, "compare", STUDY, "--out", si_file)[0] == 0
    code, out, err = run_cli(capsys, "compare", STUDY, "--units", "us", "--out", us_file)
    assert code == 0, err
    si = {row["name"]: row for row in json.loads(si_file.read_text())["specifications"]}
    us = {row["name"]: row for row in json.loads(us_file.read_text())["specifications"]}
    balance, outlet = "branch_balance", "e110_outlet_by_bypass"
    assert us[balance]["achieved_delta_f"] == pytest.approx(1.8 * si[balance]["achieved_k"], rel=1e-12, abs=1e-15)
    assert us[outlet]["target_f"] == pytest.approx(1.8 * si[outlet]["target_c"] + 32.0, rel=1e-12)
    assert us[outlet]["at_low_end_f"] == pytest.approx(1.8 * si[outlet]["at_low_end_c"] + 32.0, rel=1e-12)
    assert us[outlet]["value"] == si[outlet]["value"]  # a bypass fraction has no unit
    assert "(target 464.0 °F)" in us[outlet]["message"]  # °F: one decimal, as the tables and "°C" not in out.split("Specification")[1]
    assert fits_the_width(out)


def test_fouled_against_clean_in_us_units(capsys):
    code, out, err = run_cli(capsys, "run", "--against-clean", "--units", "us")
    assert code == 0, err
    section = out.split("Fouled against clean")[1]
    assert "°C" not in section and " kW" not in section and "MMBtu/h" in section
    inlet = next(line.split() for line in section.splitlines() if line.startswith("F-101_inlet_f"))
    fouled, clean, change = map(float, inlet[1:4])
    assert change == pytest.approx(clean - fouled, abs=0.011)  # a difference: scaled, never offset


def test_the_cleaning_ranking_words_follow_the_units(tmp_path, capsys):
    """E-111's tube side rated for 255 °C, which it passes (254.4 °C fouled) only when cleaned:
    a new limit whose words carry a temperature, in °F with --units us."""
    text = demo_case_path("crude_preheat").read_text(encoding="utf-8")
    case = tmp_path / "crude.yaml"
    case.write_text(text.replace("    tubes: *tubes\n  E-112:", "    tubes: *tubes\n    design_temperature: {tube: 255}\n"
                                 "  E-112:"), encoding="utf-8")
    code, out, err = run_cli(capsys, "cleaning", case, "--units", "us", "--out", tmp_path / "r.csv")
    assert code == 0, err
    ranking = pd.read_csv(tmp_path / "r.csv")
    words = " ".join(ranking["new_limits_when_clean"].dropna())
    assert "°F" in words and "°C" not in words
    assert "°C" not in out
    assert fits_the_width(out)


def test_a_long_case_path_is_printed_whole_on_its_own_line(tmp_path, capsys):
    """An installed demo lies as deep as the environment it is installed in (CI's was past the width):
    the path gets a line of its own, whole, and the tables still fit."""
    deep = tmp_path.joinpath(*["a_rather_long_folder_name"] * 5)
    deep.mkdir(parents=True)
    case = deep / "crude_preheat.yaml"
    case.write_bytes(demo_case_path("crude_preheat").read_bytes())
    assert len(str(case)) > WIDTH
    code, out, err = run_cli(capsys, "cleaning", case, "--units", "us")
    assert code == 0, err
    assert f"case file: {case}" in out.splitlines()
    assert fits_the_width(out) and CONSOLE_WIDTH == WIDTH


def test_a_sweep_shows_its_grid_in_the_units_and_width(tmp_path, capsys):
    """On the console and in the files: the swept flow in lb/h, named with its unit."""
    study = tmp_path / "study.yaml"
    study.write_text(f"base: {demo_case_path('product_cooling')}\nsweeps:\n  water:\n"
                     "    grid: {streams.cooling_water.flow: [60, 90]}\n", encoding="utf-8")
    code, out, err = run_cli(capsys, "sweep", study, "--units", "us", "--out", tmp_path / "s.json")
    assert code == 0, err
    rows = json.loads((tmp_path / "s.json").read_text())["water"]
    assert [row["streams.cooling_water.flow_lb_h"] for row in rows] == pytest.approx([476_198.5, 714_297.7], rel=1e-6)
    assert "lb/h" in out and "476,198" in out and "714,298" in out  # 60 and 90 kg/s
    assert fits_the_width(out)
    np.testing.assert_allclose(60 * 3600 / 0.45359237, 476_198.6, rtol=1e-6)


UNCERTAIN = """\
base: {demo: crude_preheat}
uncertainty:
  samples: 30
  seed: 5
  inputs:
    streams.crude.flow: {distribution: normal, mean: 95, sd: 4, between: [88, 102]}
    exchangers.E-112.fouling.tube: {distribution: triangular, low: 0.0003, mode: 0.0006, high: 0.0009}
"""


def test_uncertainty_files_and_console_in_us_units(tmp_path, capsys):
    """Every sheet in the chosen units: percentiles row by row (E-101.duty a duty, E-101.cold_out
    a temperature, the sample count as it is), the tornado's duties and each input in its own
    unit, the samples' inputs and named results with their units."""
    study = tmp_path / "u.yaml"
    study.write_text(UNCERTAIN, encoding="utf-8")
    assert run_cli(capsys, "uncertainty", study, "--out", tmp_path / "si.xlsx")[0] == 0
    code, out, err = run_cli(capsys, "uncertainty", study, "--units", "us", "--out", tmp_path / "us.xlsx")
    assert code == 0, err
    si = pd.read_excel(tmp_path / "si.xlsx", sheet_name=None)
    us = pd.read_excel(tmp_path / "us.xlsx", sheet_name=None)
    si_p = si["uncertainty_percentiles"].set_index("result")
    us_p = us["uncertainty_percentiles"].set_index("result")
    kw_in_mmbtu_h = 3412.14163312794 / 1e6  # IT Btu
    assert us_p.loc["E-101.duty_mmbtu_h", "p50"] == pytest.approx(si_p.loc["E-101.duty_kw", "p50"] * kw_in_mmbtu_h, rel=1e-9)
    assert us_p.loc["E-101.cold_out_f", "p90"] == pytest.approx(1.8 * si_p.loc["E-101.cold_out_c", "p90"] + 32, rel=1e-12)
    assert (us_p["samples"].to_numpy() == si_p["samples"].to_numpy()).all() and us_p["samples"].max() == 30
    tornado = us["uncertainty_tornado"].set_index("input")
    assert tornado.loc["streams.crude.flow", "input_unit"] == "lb/h"
    assert tornado.loc["exchangers.E-112.fouling.tube", "input_unit"] == "h·ft²·°F/Btu"
    si_t = si["uncertainty_tornado"].set_index("input")
    assert tornado.loc["streams.crude.flow", "input_p90"] == pytest.approx(
        si_t.loc["streams.crude.flow", "input_p90"] * 3600 / 0.45359237, rel=1e-9)
    assert "swing_mmbtu_h" in tornado and "fired_heater_duty_at_p10_mmbtu_h" in tornado
    samples = us["uncertainty_samples"]
    assert {"streams.crude.flow_lb_h", "E-101.duty_mmbtu_h", "E-101.hot_out_f"} <= set(samples.columns)
    assert "kW" not in out and "°C" not in out


def test_every_named_result_a_unit_offers_has_a_unit():
    """The protocol: each unit's ``metrics`` are keys of METRIC_UNITS (so that reports show them in
    the chosen units), over every demo's units."""
    from hxtrain.solver.demos import DEMO_CASES
    from hxtrain.solver.simulation.evaluation import evaluate
    from hxtrain.units.protocol import METRIC_UNITS

    offered = set()
    for demo in DEMO_CASES:
        for report in evaluate(demo_case_path(demo)).reports.values():
            offered |= set(report.metrics)
    assert offered and offered <= set(METRIC_UNITS), offered - set(METRIC_UNITS)


def test_joined_messages_and_the_about_sheet_in_us_units(tmp_path, capsys):
    """The fouled-against-clean table's limits (messages joined) agree with the tables (537.5 °F,
    not 537.4 from the rounded 280.8 °C); the workbook's about sheet names the summary's US
    units in words."""
    code, out, err = run_cli(capsys, "run", "--against-clean", "--units", "us", "--out", tmp_path / "r.json")
    assert code == 0, err
    limits = [row["limits_fouled"] for row in json.loads((tmp_path / "r.json").read_text())["fouling_by_exchanger"]]
    assert "the cold side reaches 537.5 °F, above its design temperature of 536.0 °F" in limits
    assert run_cli(capsys, "run", "--units", "us", "--out", tmp_path / "r.xlsx")[0] == 0
    items = list(pd.read_excel(tmp_path / "r.xlsx", sheet_name="about")["item"])
    assert "heat recovered (MMBtu/h)" in items and "F-101 inlet (°F)" in items
    assert not [item for item in items if "mmbtu h" in item]
