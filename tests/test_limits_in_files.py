"""Violated limits in the files of sweep, uncertainty and cleaning (solver/cli/main.py,
solver/studies/monte_carlo.py, solver/reporting/spreadsheet.py): the README promises every
report shows them, and a new user's trial found them only on the console (the files kept only
each row's own ``violated_limits`` text)."""

from __future__ import annotations

import json

import openpyxl
import pandas as pd
from cli_helpers import run_in_process

from hxtrain.solver import demo_case_path

STUDY = demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml")


def test_a_sweeps_workbook_has_its_limits_counted_over_the_points(tmp_path, capsys):
    """Each sweep's limits, with the points that violate them, on a red sheet named in the about
    sheet; the counts are those of each sweep's own violated_limits column."""
    target = tmp_path / "sw.xlsx"
    code, out, err = run_in_process(capsys, "sweep", STUDY, "--out", target)
    assert code == 0, err
    book = openpyxl.load_workbook(target)
    assert "limits" in book.sheetnames and book["limits"].sheet_properties.tabColor is not None
    about = dict(book["about"].iter_rows(min_row=2, values_only=True))
    limits = pd.read_excel(target, sheet_name="limits")
    assert about["limits violated"] == f"{len(limits)}: see the sheet 'limits'"
    for sweep, rows in limits.groupby("sweep"):
        points = pd.read_excel(target, sheet_name=sweep)["violated_limits"].fillna("")
        for row in rows.itertuples():
            assert row.points == points.str.contains(row.limit, regex=False).sum(), (sweep, row.limit)
    assert "E-112 design_temperature (cold)" in set(limits["limit"])


def test_the_monte_carlo_file_and_the_cleaning_files_carry_their_limits(tmp_path, capsys):
    """The uncertainty JSON counts each limit over the samples as its console box does; the
    cleaning ranking's files add a limits table: the case's own as it is (E-112's design
    temperature), then each cleaning's new and standing ones, in the display's units."""
    code, out, err = run_in_process(capsys, "uncertainty", STUDY, "--samples", "200", "--out", tmp_path / "u.json")
    assert code == 0, err
    document = json.loads((tmp_path / "u.json").read_text(encoding="utf-8"))
    samples = pd.DataFrame(document["uncertainty_samples"])
    for row in document["limits"]:
        assert row["samples"] == samples["violated_limits"].fillna("").str.contains(row["limit"], regex=False).sum()
        assert f"{row['limit']}: {row['samples']:,} of 200" in out
    code, out, err = run_in_process(capsys, "cleaning", "--units", "us", "--out", tmp_path / "c.csv")
    assert code == 0, err
    limits = pd.read_csv(tmp_path / "c_limits.csv")
    first = limits.iloc[0]
    assert first["cleaned"] == "none (as it is)" and first["key"] == "exchangers.E-112.design_temperature.cold"
    assert "°F" in first["limit"] and "°C" not in " ".join(limits["limit"])
    assert set(limits["limit_is"]) <= {"as it is", "new", "still"} and (limits["limit_is"] == "new").any()
    assert "rank" in pd.read_csv(tmp_path / "c.csv").columns  # the ranking stays in PATH
