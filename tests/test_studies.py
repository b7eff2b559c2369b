"""Studies: key-path changes, study files, variants side by side, specifications, sweeps, the
cleaning ranking and the ``compare`` / ``sweep`` / ``cleaning`` commands.

Every check of a study result is made against an independent route: the changed case is built by
hand from the case document (plain dict edits, not :mod:`hxtrain.network.changes`) and simulated
directly. Most checks use the small constant-cp demo ``product_cooling`` (about 20 ms a run) or a
small fouled case written here; the crude demo (about 1.5 s a run) is used only where a test needs
it: the change verbs on its document (no simulation), one cleaning ranking and one ``compare`` run
of the bundled demo study through the command line.
"""

from __future__ import annotations

import contextlib
import copy
import io
import itertools
import re
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from hxtrain.network import CaseError, case_from_mapping, load_case, without_fouling
from hxtrain.network.changes import apply_changes
from hxtrain.network.reading import read_document
from hxtrain.network.study import load_study
from hxtrain.solver import demo_case_path, simulate
from cli_helpers import run_in_process
from hxtrain.solver.cli.main import main
from hxtrain.solver.studies import (adjust_changes, cleaning_ranking, compare, key_outputs, metric, run_sweep,
                                    solve_specification, study_text)

CASES = Path(__file__).resolve().parent.parent / "cases"
CRUDE = CASES / "crude_preheat.yaml"
CRUDE_STUDY = CASES / "crude_preheat_study.yaml"
COOLING = demo_case_path("product_cooling")
BANNER = "!" * 78
CW_FIRST = "splitters.cw_split.branches.first.fraction"

FOULED_CASE = """\
title: small fouled train (test case)
fluids:
  crude: {cp: 2.2}
  residue: {cp: 2.5}
  gas_oil: {cp: 2.6}
streams:
  feed:
    fluid: crude
    flow: 50
    supply_temperature: 40
    path: E-1.cold -> E-4.cold -> E-2.cold -> E-3.cold -> H-1 -> heated_feed
  residue:
    fluid: residue
    flow: 30
    supply_temperature: 330
    path: E-3.hot -> E-1.hot -> C-1 -> residue_rundown
  gas_oil:
    fluid: gas_oil
    flow: 20
    supply_temperature: 260
    path: E-2.hot -> E-4.hot -> gas_oil_rundown
exchangers:
  E-1:                      # films scaled with flow, fouled
    arrangement: tema_e
    shell_side: hot
    area_per_shell: 120
    film: {shell: 900, tube: 1200}
    reference_flow: {shell: 30, tube: 50}
    fouling: {shell: 0.0009, tube: 0.0005}
  E-2:                      # a fixed service U: nothing to clean
    arrangement: counterflow
    u: 350
    area_per_shell: 80
  E-3:                      # films scaled with flow, fouled, two shells
    arrangement: tema_e
    shell_side: hot
    shells: 2
    area_per_shell: 90
    film: {shell: 800, tube: 1400}
    reference_flow: {shell: 30, tube: 50}
    fouling: {shell: 0.0004, tube: 0.0002}
  E-4:                      # films scaled with flow, fouling zero: nothing to clean
    arrangement: counterflow
    shell_side: hot
    area_per_shell: 60
    film: {shell: 1100, tube: 1300}
    reference_flow: {shell: 20, tube: 50}
    fouling: {shell: 0.0, tube: 0.0}
heaters:
  H-1: {outlet_temperature: 300}
coolers:
  C-1: {outlet_temperature: 90}
products:
  heated_feed: {}
  residue_rundown: {}
  gas_oil_rundown: {}
"""


# ----------------------------------------------------------------------------- helpers


def write(folder: Path, text: str, name="study.yaml") -> Path:
    path = folder / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


run_cli = run_in_process


def document_data(path) -> dict:
    return copy.deepcopy(read_document(path).data)


def simulate_data(data: dict):
    """Simulate a case given as a (hand-edited) document."""
    return simulate(case_from_mapping(copy.deepcopy(data), "hand-built.yaml"))


def cooling_data(**edits) -> dict:
    """The product_cooling document with hand edits: naphtha_flow / cw_flow (kg/s),
    naphtha_supply (°C), first (the first cooling-water branch fraction; the second gets 1 - first)."""
    data = document_data(COOLING)
    if "naphtha_flow" in edits:
        data["streams"]["naphtha"]["flow"] = edits["naphtha_flow"]
    if "cw_flow" in edits:
        data["streams"]["cooling_water"]["flow"] = edits["cw_flow"]
    if "naphtha_supply" in edits:
        data["streams"]["naphtha"]["supply_temperature"] = edits["naphtha_supply"]
    if "first" in edits:
        branches = data["splitters"]["cw_split"]["branches"]
        branches["first"]["fraction"] = edits["first"]
        branches["second"]["fraction"] = 1.0 - edits["first"]
    return data


def assert_same_outputs(got: pd.Series, expected: pd.Series, rel=1e-9):
    got, expected = got.astype(float), expected.astype(float)
    assert list(got.index) == list(expected.index)
    np.testing.assert_allclose(got.to_numpy(), expected.to_numpy(), rtol=rel, atol=1e-9)


def hot_out_e303(result) -> float:
    return float(result.units.loc["E-303", "hot_out_c"])


NAPHTHA_FLOW = 95 / 3.6  # "95 t/h" in kg/s
CW_FLOW = 340 / 3.6  # "340 t/h"


# ============================================================================= 1. study-file errors

ERROR_CASES = {
    "unknown_key_path": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{set: streams.crud.flow, to: 90}}]}}
        """,
        ["variants.v.changes[0]", "streams.crud.flow", "streams.crude"]),
    "unknown_key_path_deeper": (
        f"""
        base: {CRUDE}
        variants:
          v:
            changes:
              - {{scale: streams.crude.flow, by: 1.1}}
              - {{set: exchangers.E-110.bypas.cold, to: 0.2}}
        """,
        ["variants.v.changes[1]", "exchangers.E-110.bypas.cold", "exchangers.E-110.bypass"]),
    "add_shells_unknown_exchanger": (
        f"""
        base: {CRUDE}
        variants:
          v:
            changes:
              - {{set: streams.crude.supply_temperature, to: 35}}
              - {{add_shells: E-1O4, count: 1}}
        """,
        ["variants.v.changes[1]", "E-1O4", "E-104"]),
    "clean_unknown_exchanger": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{clean: E-999}}]}}
        """,
        ["variants.v.changes[0]", "E-999"]),
    "bypass_unknown_exchanger": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{bypass: E-11.cold, fraction: 0.1}}]}}
        """,
        ["variants.v.changes[0]", "E-11", "E-110"]),
    "bypass_not_a_side": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{bypass: E-110.middle, fraction: 0.1}}]}}
        """,
        ["variants.v.changes[0]", "E-110.middle"]),
    "two_verbs": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{set: streams.crude.flow, to: 90, scale: streams.crude.flow, by: 2}}]}}
        """,
        ["variants.v.changes[0]", "set", "scale"]),
    "no_verb": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{put: streams.crude.flow, to: 90}}]}}
        """,
        ["variants.v.changes[0]", "put"]),
    "verb_with_wrong_key": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{scale: streams.crude.flow, to: 2}}]}}
        """,
        ["variants.v.changes[0]", "by"]),
    "scale_non_numeric": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{scale: streams.crude.fluid, by: 1.1}}]}}
        """,
        ["variants.v.changes[0]", "scale", "crude"]),
    "scale_by_text": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{scale: streams.crude.flow, by: lots}}]}}
        """,
        ["variants.v.changes[0]", "lots"]),
    "add_shells_fractional_count": (
        f"""
        base: {CRUDE}
        variants:
          v: {{changes: [{{add_shells: E-104, count: 1.5}}]}}
        """,
        ["variants.v.changes[0]", "count", "1.5"]),
    "clean_without_fouling": (
        f"""
        base: {COOLING}
        variants:
          v: {{changes: [{{clean: E-303}}]}}
        """,
        ["variants.v.changes[0]", "E-303", "fouling"]),
    "between_reversed": (
        f"""
        base: {COOLING}
        specifications:
          s:
            adjust: {CW_FIRST}
            between: [0.7, 0.3]
            target: {{value: E-303.hot_out, equals: 60}}
        """,
        ["specifications.s.between"]),
    "metric_without_field": (
        f"""
        base: {COOLING}
        specifications:
          s:
            adjust: {CW_FIRST}
            between: [0.3, 0.7]
            target: {{value: E-303, equals: 60}}
        """,
        ["specifications.s.target.value", "E-303"]),
    "metric_a_total": (  # the example names the kinds of result, not units another case has (F-101, E-106)
        f"""
        base: {COOLING}
        specifications:
          s:
            adjust: {CW_FIRST}
            between: [0.3, 0.7]
            target: {{value: totals.heat_to_utilities, equals: 60}}
        """,
        ["specifications.s.target.value", "totals.heat_to_utilities", "one unit's result", "TAG.cold_out"]),
    "metric_unknown_field": (
        f"""
        base: {COOLING}
        specifications:
          s:
            adjust: {CW_FIRST}
            between: [0.3, 0.7]
            target: {{difference: [E-303.hot_out, E-304.temperature], equals: 5}}
        """,
        ["specifications.s.target.difference", "E-304.temperature"]),
    "sweep_three_key_paths": (
        f"""
        base: {COOLING}
        sweeps:
          s:
            grid:
              streams.naphtha.flow: [20, 25]
              streams.cooling_water.flow: [80, 90]
              streams.naphtha.supply_temperature: [170, 175]
        """,
        ["sweeps.s.grid", "3"]),
    "variant_makes_case_invalid": (
        f"""
        base: {COOLING}
        variants:
          fine: {{changes: [{{scale: streams.naphtha.flow, by: 1.1}}]}}
          broken:
            changes:
              - {{scale: streams.naphtha.flow, by: 1.1}}
              - {{set: streams.naphtha.flow, to: -5}}
        """,
        ["variants.broken.changes", "streams.naphtha.flow", "-5"]),
    "remove_every_shell": (
        f"""
        base: {COOLING}
        variants:
          v: {{changes: [{{add_shells: E-304, count: -2}}]}}
        """,
        ["variants.v.changes", "shells"]),
}


@pytest.mark.parametrize("name", list(ERROR_CASES))
def test_study_file_errors_exit_2_naming_file_and_key_path(tmp_path, capsys, name):
    body, fragments = ERROR_CASES[name]
    study = write(tmp_path, body)
    out_file = tmp_path / "out.xlsx"
    code, out, err = run_cli(capsys, "compare", study, "--out", out_file)
    assert code == 2, (out, err)
    assert str(study) in err, err
    message = err.replace(str(study), "<study>")
    for fragment in fragments:
        assert fragment in message, f"{fragment!r} not in {message!r}"
    assert "internal error" not in err
    assert not out_file.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["study.yaml"], "something was written on error"
    assert "wrote" not in out


def test_invalid_variant_names_that_variant_not_the_others(tmp_path, capsys):
    body, _ = ERROR_CASES["variant_makes_case_invalid"]
    code, _, err = run_cli(capsys, "compare", write(tmp_path, body))
    assert code == 2
    assert "variants.broken" in err and "variants.fine" not in err


def test_missing_base_file_names_the_missing_file(tmp_path, capsys):
    study = write(tmp_path, """
        base: no_such_case.yaml
        variants:
          v: {changes: [{scale: streams.naphtha.flow, by: 1.1}]}
        """)
    out_file = tmp_path / "out.xlsx"
    code, out, err = run_cli(capsys, "compare", study, "--out", out_file)
    assert code == 2
    assert "no_such_case.yaml" in err
    assert not out_file.exists() and "wrote" not in out


def test_missing_base_file_error_names_the_study_file_and_base_key(tmp_path, capsys):
    """A study-file error names the study file and the key path; for a base that does not exist
    that is the study file and its ``base`` key (the missing file alone does not say which study
    referred to it)."""
    folder = tmp_path / "studies"
    folder.mkdir()
    study = write(folder, """
        base: no_such_case.yaml
        variants:
          v: {changes: [{scale: streams.naphtha.flow, by: 1.1}]}
        """, name="spring_options.yaml")
    code, _, err = run_cli(capsys, "compare", study)
    assert code == 2
    assert str(study) in err, err
    assert re.search(r"\bbase\b", err.replace(str(study), "")), err


def test_base_given_as_demo_name(tmp_path):
    study = load_study(write(tmp_path, """
        base: {demo: product_cooling}
        variants:
          v: {changes: [{set: streams.naphtha.supply_temperature, to: 170}]}
        """))
    assert Path(study.base.file).resolve() == Path(COOLING).resolve()


def test_base_path_is_relative_to_the_study_file(tmp_path, capsys, monkeypatch):
    (tmp_path / "plant").mkdir()
    (tmp_path / "plant" / "case.yaml").write_text(Path(COOLING).read_text(encoding="utf-8"), encoding="utf-8")
    study = write(tmp_path / "plant", """
        base: case.yaml
        variants:
          v: {changes: [{set: streams.naphtha.supply_temperature, to: 170}]}
        """)
    monkeypatch.chdir(tmp_path)
    code, out, err = run_cli(capsys, "compare", "plant/study.yaml")
    assert code == 0, err
    assert Path(load_study(study).base.file).resolve() == (tmp_path / "plant" / "case.yaml").resolve()


def test_study_with_nothing_to_do_is_an_error(tmp_path, capsys):
    study = write(tmp_path, f"base: {COOLING}\ntitle: empty\n")
    code, _, err = run_cli(capsys, "compare", study)
    assert code == 2 and str(study) in err


def test_sweep_command_on_a_study_without_sweeps(tmp_path, capsys):
    study = write(tmp_path, f"""
        base: {COOLING}
        variants:
          v: {{changes: [{{set: streams.naphtha.supply_temperature, to: 170}}]}}
        """)
    out_file = tmp_path / "s.csv"
    code, _, err = run_cli(capsys, "sweep", study, "--out", out_file)
    assert code == 2 and str(study) in err and "sweeps" in err
    assert not out_file.exists()


# Errors found only when a specification or sweep runs: they should still name the study file
# and the key path in it that holds the mistake.


def test_unknown_adjust_key_path_names_the_specifications_adjust_key(tmp_path, capsys):
    study = write(tmp_path, f"""
        base: {COOLING}
        specifications:
          s:
            adjust: streams.naphta.flow
            between: [20, 30]
            target: {{value: E-303.hot_out, equals: 60}}
        """)
    out_file = tmp_path / "out.csv"
    code, out, err = run_cli(capsys, "compare", study, "--out", out_file)
    assert code == 2, err
    assert str(study) in err
    assert "streams.naphta.flow" in err and "streams.naphtha" in err
    assert not out_file.exists()
    assert "specifications.s.adjust" in err, err


def test_unknown_key_path_in_specification_changes_names_that_change(tmp_path, capsys):
    study = write(tmp_path, f"""
        base: {COOLING}
        specifications:
          s:
            adjust: {CW_FIRST}
            between: [0.3, 0.7]
            target: {{value: E-303.hot_out, equals: 60}}
            changes: [{{set: streams.naphta.flow, to: 20}}]
        """)
    code, _, err = run_cli(capsys, "compare", study)
    assert code == 2, err
    assert str(study) in err and "streams.naphta.flow" in err
    assert "specifications.s.changes[0]" in err, err


def test_unknown_sweep_key_path_names_the_grid_key(tmp_path, capsys):
    study = write(tmp_path, f"""
        base: {COOLING}
        sweeps:
          s:
            grid:
              streams.naphta.flow: [20, 25]
        """)
    out_file = tmp_path / "out.csv"
    code, _, err = run_cli(capsys, "sweep", study, "--out", out_file)
    assert code == 2, err
    assert str(study) in err and "streams.naphtha" in err
    assert not out_file.exists()
    assert "sweeps.s.grid" in err, err


def test_target_naming_an_unknown_unit_names_the_study_file_and_target(tmp_path, capsys):
    study = write(tmp_path, f"""
        base: {COOLING}
        specifications:
          s:
            adjust: {CW_FIRST}
            between: [0.3, 0.7]
            target: {{value: E-333.hot_out, equals: 60}}
        """)
    out_file = tmp_path / "out.csv"
    code, _, err = run_cli(capsys, "compare", study, "--out", out_file)
    assert code == 2, err
    assert "E-333" in err
    assert not out_file.exists()
    assert str(study) in err and "specifications.s.target" in err, err


def test_a_variant_called_base_does_not_replace_the_base_case(tmp_path):
    """The comparison's ``base`` column is the unchanged case; a variant named ``base`` must be
    refused or kept apart, never silently take the base column's place."""
    study_file = write(tmp_path, f"""
        base: {COOLING}
        variants:
          base: {{changes: [{{scale: streams.naphtha.flow, by: 1.5}}]}}
        """)
    try:
        study = load_study(study_file)
    except CaseError as exc:  # refusing the name is fine
        assert str(study_file) in str(exc)
        return
    comparison = compare(study)
    assert_same_outputs(key_outputs(comparison.results["base"]), key_outputs(simulate(COOLING)))
    assert len(comparison.results) == 2


# ============================================================================= 2. the change verbs


@pytest.fixture(scope="module")
def crude_doc():
    return read_document(CRUDE)


def test_set_changes_one_value_and_deep_copies(crude_doc):
    before = copy.deepcopy(crude_doc.data)
    value = {"points": [[40, "9 cP"], [200, "1 cP"]]}
    changed = apply_changes(crude_doc.data, [{"set": "streams.crude.supply_temperature", "to": 42},
                                             {"set": "fluids.crude.viscosity", "to": value}])
    assert changed["streams"]["crude"]["supply_temperature"] == 42
    assert changed["fluids"]["crude"]["viscosity"] == value
    value["points"].append([300, "0.5 cP"])  # the change keeps its own copy
    assert len(changed["fluids"]["crude"]["viscosity"]["points"]) == 2
    assert crude_doc.data == before
    # everything else is as before
    expected = copy.deepcopy(before)
    expected["streams"]["crude"]["supply_temperature"] = 42
    expected["fluids"]["crude"]["viscosity"] = {"points": [[40, "9 cP"], [200, "1 cP"]]}
    assert changed == expected


def test_set_may_create_the_last_key(crude_doc):
    changed = apply_changes(crude_doc.data, [{"set": "exchangers.E-103.shells", "to": 3}])
    assert changed["exchangers"]["E-103"]["shells"] == 3
    assert "shells" not in crude_doc.data["exchangers"]["E-103"]


def test_scale_a_quantity_string(crude_doc):
    changed = apply_changes(crude_doc.data, [{"scale": "streams.crude.flow", "by": 1.1}])
    assert crude_doc.data["streams"]["crude"]["flow"] == "342 t/h"
    assert changed["streams"]["crude"]["flow"] == pytest.approx(104.5, rel=1e-12)  # 95 kg/s x 1.1
    case = case_from_mapping(changed)
    assert case.streams["crude"]["flow"] == pytest.approx(104.5, rel=1e-12)


def test_scale_a_plain_number_and_scale_twice(crude_doc):
    changed = apply_changes(crude_doc.data, [{"scale": "exchangers.E-101.area_per_shell", "by": 1.5},
                                             {"scale": "exchangers.E-101.area_per_shell", "by": 2}])
    assert changed["exchangers"]["E-101"]["area_per_shell"] == pytest.approx(110 * 3.0, rel=1e-12)
    assert crude_doc.data["exchangers"]["E-101"]["area_per_shell"] == 110


def test_scale_a_temperature_is_refused(crude_doc):
    """A temperature level has no meaningful multiple (86 °F × 2 is not 60 °C); see
    tests/test_defects_studies.py for the message."""
    data = copy.deepcopy(crude_doc.data)
    data["streams"]["crude"]["supply_temperature"] = "86 degF"  # 30 °C
    with pytest.raises(CaseError, match="use set"):
        apply_changes(data, [{"scale": "streams.crude.supply_temperature", "by": 2}])


def test_bypass_changes_an_existing_bypass(crude_doc):
    changed = apply_changes(crude_doc.data, [{"bypass": "E-110.cold", "fraction": 0.3}])
    assert changed["exchangers"]["E-110"]["bypass"] == {"cold": 0.3}
    assert crude_doc.data["exchangers"]["E-110"]["bypass"] == {"cold": 0.05}
    assert case_from_mapping(changed).exchangers["E-110"]["spec"].bypass_cold == 0.3


def test_set_creates_a_missing_settings_section(crude_doc):
    """A case without a settings section takes its defaults; a study may still set one of them
    (it had been refused: "'settings' does not exist")."""
    bare = copy.deepcopy(crude_doc.data)
    bare.pop("settings", None)
    changed = apply_changes(bare, [{"set": "settings.minimum_approach", "to": 5}])
    assert changed["settings"] == {"minimum_approach": 5} and "settings" not in bare
    assert case_from_mapping(changed).settings.minimum_approach == 5


def test_bypass_creates_the_bypass_mapping(crude_doc):
    assert "bypass" not in crude_doc.data["exchangers"]["E-109"]
    changed = apply_changes(crude_doc.data, [{"bypass": "E-109.hot", "fraction": 0.15},
                                             {"bypass": "E-109.cold", "fraction": 0.1}])
    assert changed["exchangers"]["E-109"]["bypass"] == {"hot": 0.15, "cold": 0.1}
    assert "bypass" not in crude_doc.data["exchangers"]["E-109"]
    spec = case_from_mapping(changed).exchangers["E-109"]["spec"]
    assert (spec.bypass_hot, spec.bypass_cold) == (0.15, 0.1)


def test_add_shells_adds_and_removes(crude_doc):
    changed = apply_changes(crude_doc.data, [{"add_shells": "E-104", "count": 1},   # 2 -> 3
                                             {"add_shells": "E-103", "count": 2},   # default 1 -> 3
                                             {"add_shells": "E-101", "count": -1}])  # 2 -> 1
    shells = {tag: changed["exchangers"][tag]["shells"] for tag in ("E-104", "E-103", "E-101")}
    assert shells == {"E-104": 3, "E-103": 3, "E-101": 1}
    assert crude_doc.data["exchangers"]["E-104"]["shells"] == 2
    assert crude_doc.data["exchangers"]["E-101"]["shells"] == 2
    assert "shells" not in crude_doc.data["exchangers"]["E-103"]
    case = case_from_mapping(changed)
    assert [case.exchangers[t]["shells"] for t in ("E-104", "E-103", "E-101")] == [3, 3, 1]


def test_clean_zeroes_every_fouling_resistance_of_one_exchanger(crude_doc):
    changed = apply_changes(crude_doc.data, [{"clean": "E-112"}])
    assert changed["exchangers"]["E-112"]["fouling"] == {"shell": 0.0, "tube": 0.0}
    assert crude_doc.data["exchangers"]["E-112"]["fouling"] == {"shell": 0.0009, "tube": 0.0009}
    for tag in crude_doc.data["exchangers"]:
        if tag != "E-112":
            assert changed["exchangers"][tag]["fouling"] == crude_doc.data["exchangers"][tag]["fouling"]
    thermal = case_from_mapping(changed).exchangers["E-112"]["spec"].thermal
    assert thermal.fouling_shell == 0.0 and thermal.fouling_tube == 0.0


def test_changes_never_touch_the_base_document(crude_doc):
    before = copy.deepcopy(crude_doc.data)
    changed = apply_changes(crude_doc.data, [
        {"set": "streams.crude.supply_temperature", "to": 40},
        {"scale": "streams.residue.flow", "by": 0.9},
        {"bypass": "E-109.cold", "fraction": 0.2},
        {"bypass": "E-110.cold", "fraction": 0.3},
        {"add_shells": "E-104", "count": 1},
        {"clean": "E-112"},
    ])
    assert crude_doc.data == before
    changed["exchangers"]["E-101"]["film"]["shell"] = 1.0  # nested data is not shared
    changed["exchangers"]["E-101"]["tubes"]["wall_conductivity"] = 1.0
    assert crude_doc.data == before


def test_a_failing_change_leaves_the_base_document_unchanged(crude_doc):
    before = copy.deepcopy(crude_doc.data)
    with pytest.raises(CaseError):
        apply_changes(crude_doc.data, [{"clean": "E-112"}, {"add_shells": "E-104", "count": 1},
                                       {"set": "streams.crud.flow", "to": 1}])
    assert crude_doc.data == before


def test_changes_must_be_a_list(crude_doc):
    with pytest.raises(CaseError):
        apply_changes(crude_doc.data, {"clean": "E-112"})


# ============================================================================= 3. variants


@pytest.fixture(scope="module")
def cooling_comparison(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cooling_study")
    study = load_study(write(folder, f"""
        title: product cooling options (test)
        base: {Path(COOLING).resolve()}
        variants:
          more_water:
            description: cooling water up 20 % and a hotter naphtha
            changes:
              - {{scale: streams.cooling_water.flow, by: 1.2}}
              - {{set: streams.naphtha.supply_temperature, to: 180}}
          third_shell:
            changes: [{{add_shells: E-304, count: 1}}]
          bypass_air:
            changes: [{{bypass: A-302.hot, fraction: 0.25}}]
          water_split:
            changes:
              - {{set: {CW_FIRST}, to: 0.55}}
              - {{set: splitters.cw_split.branches.second.fraction, to: 0.45}}
        """))
    return study, compare(study)


def _expected_variant_data():
    data = {}
    d = document_data(COOLING)
    d["streams"]["cooling_water"]["flow"] = CW_FLOW * 1.2
    d["streams"]["naphtha"]["supply_temperature"] = 180
    data["more_water"] = d
    d = document_data(COOLING)
    d["exchangers"]["E-304"]["shells"] = 3
    data["third_shell"] = d
    d = document_data(COOLING)
    d["exchangers"]["A-302"]["bypass"] = {"hot": 0.25}
    data["bypass_air"] = d
    data["water_split"] = cooling_data(first=0.55)
    return data


@pytest.mark.parametrize("name", ["more_water", "third_shell", "bypass_air", "water_split"])
def test_variant_result_equals_a_direct_simulation(cooling_comparison, name):
    _, comparison = cooling_comparison
    direct = simulate_data(_expected_variant_data()[name])
    got = comparison.results[name]
    assert_same_outputs(key_outputs(got), key_outputs(direct))
    numeric = direct.units.select_dtypes("number").columns
    pd.testing.assert_frame_equal(got.units[numeric], direct.units[numeric], rtol=1e-9, atol=1e-9)
    # the variant really differs from the base
    base = comparison.results["base"]
    assert not np.allclose(got.units["duty_kw"].dropna(), base.units["duty_kw"].dropna(), rtol=1e-6)


def test_base_column_is_the_unchanged_case(cooling_comparison):
    _, comparison = cooling_comparison
    assert list(comparison.results)[0] == "base"
    assert_same_outputs(key_outputs(comparison.results["base"]), key_outputs(simulate(COOLING)))


def test_comparison_table_columns_and_differences(cooling_comparison):
    study, comparison = cooling_comparison
    table = comparison.table
    names = list(study.variants)
    assert list(table.columns) == ["base", *names, *(f"{n} - base" for n in names)]
    for name in names:
        np.testing.assert_allclose(table[f"{name} - base"], table[name] - table["base"], rtol=0, atol=1e-9)
        result = comparison.results[name]
        # the table's rows are the scenario's key outputs and unit results
        for key, value in key_outputs(result).items():
            assert table.loc[key, name] == pytest.approx(value, rel=1e-12, abs=1e-12)
        for tag in ("E-301", "A-302", "E-303", "E-304"):
            for column in ("duty_kw", "hot_out_c", "cold_out_c"):
                assert table.loc[f"{tag} {column}", name] == pytest.approx(result.units.loc[tag, column], rel=1e-12)
    assert table.loc["E-303 duty_kw", "more_water - base"] == pytest.approx(
        comparison.results["more_water"].units.loc["E-303", "duty_kw"]
        - comparison.results["base"].units.loc["E-303", "duty_kw"], rel=1e-9)


def test_findings_gathered_from_every_scenario(tmp_path):
    study = load_study(write(tmp_path, """
        base: {demo: product_cooling}
        variants:
          little_water: {changes: [{set: streams.cooling_water.flow, to: 10 kg/s}]}
          hotter: {changes: [{set: streams.naphtha.supply_temperature, to: 185}]}
        """))
    comparison = compare(study)
    findings = comparison.findings
    for name, result in comparison.results.items():
        mine = findings[findings["scenario"] == name]
        assert len(mine) == len(result.findings)
        assert comparison.table.loc["limit_violations", name] == (result.findings["severity"] == "limit").sum()
    assert (findings["scenario"] == "little_water").any()
    assert not (findings["scenario"] == "base").any()


# ============================================================================= 4. specifications


def _spec_study(tmp_path, target, between=(0.2, 0.8), adjust=CW_FIRST, extra=""):
    return load_study(write(tmp_path, f"""
        base: {COOLING}
        specifications:
          s:
            adjust: {adjust}
            between: [{between[0]}, {between[1]}]
            target: {target}
            {extra}
        """))


def test_specification_reaches_a_reachable_target(tmp_path):
    goal = hot_out_e303(simulate_data(cooling_data(first=0.55)))
    study = _spec_study(tmp_path, f"{{value: E-303.hot_out, equals: {goal!r}}}")
    result = solve_specification(study, study.specifications[0])
    assert result.success
    assert result.achieved == pytest.approx(goal, abs=1e-4)
    assert result.target == goal
    assert 0.2 < result.value < 0.8
    assert result.value == pytest.approx(0.55, abs=1e-3)
    # the case at the value found: the other branch carries the rest, and it gives the target
    changes = adjust_changes(study, CW_FIRST, result.value)
    case = study.case(changes)
    fractions = case.splitters["cw_split"]["fractions"]
    assert fractions["first"] == pytest.approx(result.value, abs=1e-12)
    assert fractions["second"] == pytest.approx(1.0 - result.value, abs=1e-12)
    assert sum(fractions.values()) == pytest.approx(1.0, abs=1e-12)
    assert hot_out_e303(simulate_data(cooling_data(first=result.value))) == pytest.approx(goal, abs=1e-4)
    # the ends of the range bracket the target
    lo, hi = result.achievable
    assert min(lo, hi) <= goal <= max(lo, hi)
    assert result.evaluations >= 3


def test_adjusting_a_branch_fraction_rescales_the_others(tmp_path):
    study = _spec_study(tmp_path, "{value: E-303.hot_out, equals: 60}")
    changes = adjust_changes(study, CW_FIRST, 0.7)
    values = {c["set"]: c["to"] for c in changes}
    assert values[CW_FIRST] == 0.7
    assert values["splitters.cw_split.branches.second.fraction"] == pytest.approx(0.3, abs=1e-12)
    # three branches: the others keep their proportions
    data = document_data(COOLING)
    data["splitters"]["cw_split"]["branches"] = {
        "first": {"fraction": 0.2, "path": "E-303.cold -> cw_mix"},
        "second": {"fraction": 0.3, "path": "E-304.cold -> cw_mix"},
        "third": {"fraction": 0.5, "path": "cw_mix"},
    }
    import yaml

    (tmp_path / "three.yaml").write_text(yaml.safe_dump(data), encoding="utf-8")
    study3 = load_study(write(tmp_path, """
        base: three.yaml
        specifications:
          s:
            adjust: splitters.cw_split.branches.first.fraction
            between: [0.1, 0.9]
            target: {value: E-303.hot_out, equals: 60}
        """, name="study3.yaml"))
    changes = adjust_changes(study3, CW_FIRST, 0.6)
    fractions = study3.case(changes).splitters["cw_split"]["fractions"]
    assert fractions["first"] == pytest.approx(0.6, abs=1e-12)
    assert fractions["second"] == pytest.approx(0.4 * 0.3 / 0.8, abs=1e-12)
    assert fractions["third"] == pytest.approx(0.4 * 0.5 / 0.8, abs=1e-12)


def test_specification_on_a_difference(tmp_path):
    data = cooling_data(first=0.35)
    units = simulate_data(data).units
    goal = float(units.loc["E-303", "hot_out_c"] - units.loc["E-304", "hot_out_c"])
    study = _spec_study(tmp_path, f"{{difference: [E-303.hot_out, E-304.hot_out], equals: {goal!r}}}")
    result = solve_specification(study, study.specifications[0])
    assert result.success
    assert result.achieved == pytest.approx(goal, abs=1e-4)
    units = simulate_data(cooling_data(first=result.value)).units
    assert float(units.loc["E-303", "hot_out_c"] - units.loc["E-304", "hot_out_c"]) == pytest.approx(goal, abs=1e-4)


def test_specification_applies_its_changes_first(tmp_path):
    data = cooling_data(first=0.5, naphtha_supply=165)
    goal = hot_out_e303(simulate_data(data))
    study = _spec_study(tmp_path, f"{{value: E-303.hot_out, equals: {goal!r}}}",
                        extra="changes: [{set: streams.naphtha.supply_temperature, to: 165}]")
    result = solve_specification(study, study.specifications[0])
    assert result.success
    assert result.value == pytest.approx(0.5, abs=1e-3)
    assert hot_out_e303(simulate_data(cooling_data(first=result.value, naphtha_supply=165))) == pytest.approx(
        goal, abs=1e-4)


def test_specification_adjusting_a_plain_value(tmp_path):
    goal = hot_out_e303(simulate_data(cooling_data(cw_flow=80.0)))
    study = _spec_study(tmp_path, f"{{value: E-303.hot_out, equals: {goal!r}}}", between=(60, 120),
                        adjust="streams.cooling_water.flow")
    result = solve_specification(study, study.specifications[0])
    assert result.success
    assert result.value == pytest.approx(80.0, abs=1e-3)
    assert hot_out_e303(simulate_data(cooling_data(cw_flow=result.value))) == pytest.approx(goal, abs=1e-4)


@pytest.mark.parametrize("goal", [20.0, 150.0])
def test_infeasible_specification_reports_the_achievable_range(tmp_path, goal):
    study = _spec_study(tmp_path, f"{{value: E-303.hot_out, equals: {goal}}}")
    result = solve_specification(study, study.specifications[0])  # does not raise
    assert result.success is False
    assert result.value is None and result.achieved is None
    at_low = hot_out_e303(simulate_data(cooling_data(first=0.2)))
    at_high = hot_out_e303(simulate_data(cooling_data(first=0.8)))
    assert result.achievable[0] == pytest.approx(at_low, rel=1e-9)
    assert result.achievable[1] == pytest.approx(at_high, rel=1e-9)
    assert not min(at_low, at_high) <= goal <= max(at_low, at_high)
    assert f"gives {at_low:.1f} °C at the low end, {at_high:.1f} °C at the high end" in result.message  # 1 decimal
    assert f"{min(at_low, at_high)!r}" in result.message.exact  # the full numbers beside them


def test_infeasible_specification_through_the_command(tmp_path, capsys):
    study = write(tmp_path, f"""
        base: {COOLING}
        specifications:
          too_cold:
            adjust: {CW_FIRST}
            between: [0.2, 0.8]
            target: {{value: E-303.hot_out, equals: 20}}
        """)
    out_file = tmp_path / "out.json"
    code, out, err = run_cli(capsys, "compare", study, "--out", out_file)
    assert code == 0, err
    assert "Specification too_cold: NOT MET" in out
    import json

    document = json.loads(out_file.read_text(encoding="utf-8"))
    (row,) = document["specifications"]
    assert row["name"] == "too_cold" and row["success"] is False


# ============================================================================= 5. sweeps


def _sweep_study(tmp_path, grid: str, scale=False):
    return load_study(write(tmp_path, f"""
        base: {COOLING}
        sweeps:
          s:
            scale: {str(scale).lower()}
            grid:
{textwrap.indent(textwrap.dedent(grid).strip(), ' ' * 14)}
        """))


def test_one_dimensional_sweep_rows_equal_individual_runs(tmp_path):
    study = _sweep_study(tmp_path, "streams.cooling_water.flow: {from: 80, to: 110, steps: 4}")
    table = run_sweep(study, study.sweeps[0])
    assert len(table) == 4
    np.testing.assert_allclose(table["streams.cooling_water.flow"], [80, 90, 100, 110], rtol=1e-12)
    for _, row in table.iterrows():
        direct = key_outputs(simulate_data(cooling_data(cw_flow=float(row["streams.cooling_water.flow"]))))
        assert_same_outputs(row[direct.index], direct)
    assert table["heat_to_utilities_kw"].is_monotonic_increasing  # more water, more heat taken


def test_two_dimensional_sweep_rows_equal_individual_runs(tmp_path):
    study = _sweep_study(tmp_path, f"""
        streams.naphtha.supply_temperature: [160, 185]
        {CW_FIRST}: [0.3, 0.5, 0.7]
        """)
    table = run_sweep(study, study.sweeps[0])
    expected_points = list(itertools.product([160.0, 185.0], [0.3, 0.5, 0.7]))
    points = list(zip(table["streams.naphtha.supply_temperature"], table[CW_FIRST]))
    assert points == expected_points
    for _, row in table.iterrows():
        data = cooling_data(naphtha_supply=float(row["streams.naphtha.supply_temperature"]),
                            first=float(row[CW_FIRST]))
        direct = key_outputs(simulate_data(data))
        assert_same_outputs(row[direct.index], direct)
    assert table["heat_to_utilities_kw"].nunique() == 6


def test_sweep_with_scale_multiplies_the_base_value(tmp_path):
    study = _sweep_study(tmp_path, "streams.naphtha.flow: [0.8, 1.0, 1.2]", scale=True)
    table = run_sweep(study, study.sweeps[0])
    assert list(table["streams.naphtha.flow"]) == [0.8, 1.0, 1.2]  # the multipliers
    base = key_outputs(simulate(COOLING))
    assert_same_outputs(table.iloc[1][base.index], base)
    for _, row in table.iterrows():
        direct = key_outputs(simulate_data(cooling_data(naphtha_flow=NAPHTHA_FLOW * row["streams.naphtha.flow"])))
        assert_same_outputs(row[direct.index], direct)
    # and not the plain value: 1.2 kg/s of naphtha would be quite another case
    plain = key_outputs(simulate_data(cooling_data(naphtha_flow=1.2)))
    assert not np.isclose(table.iloc[2]["heat_to_utilities_kw"], plain["heat_to_utilities_kw"], rtol=1e-3)


def test_scaled_two_dimensional_sweep_of_a_branch_fraction(tmp_path):
    study = _sweep_study(tmp_path, f"""
        streams.cooling_water.flow: [0.9, 1.1]
        {CW_FIRST}: [0.5, 1.5]
        """, scale=True)
    table = run_sweep(study, study.sweeps[0])
    assert len(table) == 4
    for _, row in table.iterrows():
        data = cooling_data(cw_flow=CW_FLOW * row["streams.cooling_water.flow"], first=0.4 * row[CW_FIRST])
        direct = key_outputs(simulate_data(data))
        assert_same_outputs(row[direct.index], direct)


def test_sweep_point_making_the_case_invalid_is_an_error(tmp_path):
    with pytest.raises(CaseError) as info:  # found when the study is read, before anything runs
        study = _sweep_study(tmp_path, "streams.naphtha.flow: [20, -5]")
        run_sweep(study, study.sweeps[0])
    assert str(tmp_path / "study.yaml") in str(info.value) and "sweeps.s" in str(info.value)


# ============================================================================= 6. cleaning ranking


def _check_ranking(case, ranking, fouled_tags):
    fouled = simulate(case)
    heaters = [k for k in fouled.summary.index if k.endswith("_inlet_c")]
    assert sorted(ranking["exchanger"]) == sorted(fouled_tags)
    assert list(ranking.index) == list(range(1, len(fouled_tags) + 1))
    saved = ranking["fired_duty_saved_kw"].to_numpy()
    assert np.all(np.diff(saved) <= 0), "not sorted by the duty saved, descending"
    for _, row in ranking.iterrows():
        tag = row["exchanger"]
        clean = simulate(without_fouling(case, [tag]))
        expected = fouled.summary["fired_heater_duty_kw"] - clean.summary["fired_heater_duty_kw"]
        assert row["fired_duty_saved_kw"] == pytest.approx(expected, rel=1e-9, abs=1e-9)
        assert row["exchanger_duty_gained_kw"] == pytest.approx(
            clean.units.loc[tag, "duty_kw"] - fouled.units.loc[tag, "duty_kw"], rel=1e-9, abs=1e-9)
        for h in heaters:
            gain = clean.summary[h] - fouled.summary[h]
            assert row[f"{h.removesuffix('_inlet_c')}_inlet_gain_k"] == pytest.approx(gain, rel=1e-9, abs=1e-9)
    return fouled


def test_cleaning_ranking_on_a_small_fouled_case(tmp_path):
    path = write(tmp_path, FOULED_CASE, name="fouled.yaml")
    case = load_case(path)
    ranking = cleaning_ranking(case)
    _check_ranking(case, ranking, ["E-1", "E-3"])  # E-2 (plain U) and E-4 (no fouling) have nothing to clean
    # cleaning in the document (every fouling resistance of the unit to zero) gives the same saving
    fouled = simulate(case)
    for _, row in ranking.iterrows():
        data = document_data(path)
        data["exchangers"][row["exchanger"]]["fouling"] = {"shell": 0.0, "tube": 0.0}
        clean = simulate_data(data)
        assert row["fired_duty_saved_kw"] == pytest.approx(
            fouled.summary["fired_heater_duty_kw"] - clean.summary["fired_heater_duty_kw"], rel=1e-9)
        assert row["fired_duty_saved_kw"] > 0
    assert cleaning_ranking(path).equals(ranking)  # a path works as well as a case


def test_cleaning_ranking_of_the_crude_demo():
    """The crude demo: 12 fouled exchangers, 13 simulations."""
    case = load_case(CRUDE)
    ranking = cleaning_ranking(case)
    _check_ranking(case, ranking, [f"E-{n}" for n in range(101, 113)])
    assert "F-101_inlet_gain_k" in ranking.columns


def test_cleaning_ranking_with_nothing_fouled_is_empty():
    assert cleaning_ranking(load_case(COOLING)).empty


# ============================================================================= 7. the commands


@pytest.fixture(scope="module")
def crude_compare(tmp_path_factory):
    """``hxtrain compare`` on the bundled demo study, with an .xlsx output (once for the module)."""
    folder = tmp_path_factory.mktemp("crude_compare")
    out_file = folder / "study.xlsx"
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(["compare", str(CRUDE_STUDY), "--out", str(out_file)])
    return code, out.getvalue(), err.getvalue(), out_file


def test_compare_command_on_the_demo_study_writes_a_workbook(crude_compare):
    code, out, err, out_file = crude_compare
    assert code == 0, err
    assert out_file.is_file()
    sheets = pd.read_excel(out_file, sheet_name=None, index_col=None)
    assert {"comparison", "findings", "specifications"} <= set(sheets)
    table = pd.read_excel(out_file, sheet_name="comparison", index_col=0)
    variants = ["bypass_E-110_open", "extra_shell_E-104", "throughput_115", "clean_E-112"]
    assert list(table.columns) == ["base", *variants, *(f"{v} - base" for v in variants)]
    for v in variants:
        np.testing.assert_allclose(table[f"{v} - base"], table[v] - table["base"], atol=1e-6)
    # what the demo's variants say they do
    assert table.loc["F-101 duty_kw", "throughput_115"] > table.loc["F-101 duty_kw", "base"]
    assert table.loc["E-112 duty_kw", "clean_E-112"] > table.loc["E-112 duty_kw", "base"]
    assert table.loc["E-104 duty_kw", "extra_shell_E-104"] > table.loc["E-104 duty_kw", "base"]
    findings = sheets["findings"]
    for scenario in ["base", *variants]:
        n = ((findings["scenario"] == scenario) & (findings["severity"] == "limit")).sum()
        assert table.loc["limit_violations", scenario] == n
    specs = pd.read_excel(out_file, sheet_name="specifications", index_col=0)
    assert list(specs.index) == ["branch_balance", "e110_outlet_by_bypass"]
    assert specs["success"].astype(bool).all()
    # each number's column named with its unit: a temperature difference, a temperature
    assert specs.loc["branch_balance", "achieved_k"] == pytest.approx(0.0, abs=1e-4)
    assert specs.loc["e110_outlet_by_bypass", "achieved_c"] == pytest.approx(240.0, abs=1e-4)
    assert 0.3 < specs.loc["branch_balance", "value"] < 0.7
    assert 0.0 < specs.loc["e110_outlet_by_bypass", "value"] < 0.6


def test_compare_command_prints_the_table_and_ends_with_the_limits_box(crude_compare):
    code, out, err, out_file = crude_compare
    assert code == 0, err
    assert "Screening estimates" in out
    assert "Specification branch_balance: met" in out and "Specification e110_outlet_by_bypass: met" in out
    findings = pd.read_excel(out_file, sheet_name="findings")
    limits = int((findings["severity"] == "limit").sum())
    assert limits > 0
    body = out[: out.rindex("\nwrote ")].rstrip() if "\nwrote " in out else out.rstrip()
    lines = body.splitlines()
    assert lines[-1] == BANNER
    assert f"!! LIMITS VIOLATED: {limits}" in body
    box = body[body.index("!! LIMITS VIOLATED"):]
    assert len([line for line in box.splitlines() if line.startswith("!! [")]) == limits
    assert "[throughput_115]" in box and "[base]" in box


def test_limits_box_present_when_only_a_variant_violates_and_absent_otherwise(tmp_path, capsys):
    with_limit = write(tmp_path, """
        base: {demo: product_cooling}
        variants:
          little_water: {changes: [{set: streams.cooling_water.flow, to: 10 kg/s}]}
          hotter: {changes: [{set: streams.naphtha.supply_temperature, to: 180}]}
        """, name="with_limit.yaml")
    code, out, err = run_cli(capsys, "compare", with_limit)
    assert code == 0, err
    assert out.rstrip().splitlines()[-1] == BANNER
    box = out[out.index("LIMITS VIOLATED"):]
    assert "[little_water]" in box and "[base]" not in box and "[hotter]" not in box

    without = write(tmp_path, """
        base: {demo: product_cooling}
        variants:
          hotter: {changes: [{set: streams.naphtha.supply_temperature, to: 180}]}
        """, name="without.yaml")
    code, out, err = run_cli(capsys, "compare", without)
    assert code == 0, err
    assert "LIMITS VIOLATED" not in out and BANNER not in out


def test_study_text_box_counts_every_limit(tmp_path):
    study = load_study(write(tmp_path, """
        base: {demo: product_cooling}
        variants:
          little_water: {changes: [{set: streams.cooling_water.flow, to: 10 kg/s}]}
        """))
    comparison = compare(study)
    text = study_text(study, comparison, [])
    n = int((comparison.findings["severity"] == "limit").sum())
    assert n > 0 and f"LIMITS VIOLATED: {n}" in text and text.endswith(BANNER)


def test_sweep_command_writes_csv_rows_matching_individual_runs(tmp_path, capsys):
    study = write(tmp_path, f"""
        base: {COOLING}
        title: cooling sweeps
        sweeps:
          water:
            grid:
              streams.cooling_water.flow: [70, 95]
          naphtha_and_split:
            grid:
              streams.naphtha.flow: [0.9, 1.1]
              {CW_FIRST}: [0.5, 1.25]
            scale: true
        """)
    out_file = tmp_path / "sweep.csv"
    code, out, err = run_cli(capsys, "sweep", study, "--out", out_file)
    assert code == 0, err
    assert "Sweep water" in out and "Sweep naphtha_and_split" in out
    second = tmp_path / "sweep_naphtha_and_split.csv"
    assert out_file.is_file() and second.is_file()

    water = pd.read_csv(out_file, index_col=0)
    assert list(water["streams.cooling_water.flow_kg_s"]) == [70.0, 95.0]  # in the key's unit: named with it
    assert "streams.naphtha.flow" in pd.read_csv(second).columns  # factors of the base (scale): no unit
    for _, row in water.iterrows():
        direct = key_outputs(simulate_data(cooling_data(cw_flow=row["streams.cooling_water.flow_kg_s"])))
        assert_same_outputs(row[direct.index], direct)

    grid = pd.read_csv(second, index_col=0)
    assert len(grid) == 4
    for _, row in grid.iterrows():
        data = cooling_data(naphtha_flow=NAPHTHA_FLOW * row["streams.naphtha.flow"], first=0.4 * row[CW_FIRST])
        direct = key_outputs(simulate_data(data))
        assert_same_outputs(row[direct.index], direct)


def test_cleaning_command_prints_and_writes_the_ranking(tmp_path, capsys):
    case = write(tmp_path, FOULED_CASE, name="fouled.yaml")
    out_file = tmp_path / "ranking.csv"
    code, out, err = run_cli(capsys, "cleaning", case, "--out", out_file)
    assert code == 0, err
    expected = cleaning_ranking(load_case(case))
    assert str(case) in out
    order = [out.index(f" {tag} ") for tag in expected["exchanger"]]
    assert order == sorted(order) and len(order) == 2
    assert "E-2 " not in out and "E-4 " not in out
    assert f"{expected['fired_duty_saved_kw'].iloc[0]:,.1f}" in out  # kW with the one decimal the tables show
    written = pd.read_csv(out_file, index_col=0)
    assert list(written["exchanger"]) == list(expected["exchanger"])
    np.testing.assert_allclose(written["fired_duty_saved_kw"], expected["fired_duty_saved_kw"], rtol=1e-12)


def test_cleaning_command_on_a_case_without_fouling(capsys):
    code, out, err = run_cli(capsys, "cleaning", COOLING)
    assert code == 0, err
    assert "no exchanger or air cooler has fouling" in out


def test_cleaning_command_bad_case_exits_2(tmp_path, capsys):
    bad = write(tmp_path, FOULED_CASE.replace("flow: 50", "flow: -50"), name="bad.yaml")
    out_file = tmp_path / "ranking.csv"
    code, _, err = run_cli(capsys, "cleaning", bad, "--out", out_file)
    assert code == 2 and str(bad) in err and "streams.feed.flow" in err
    assert not out_file.exists()


def test_metric_reads_the_named_result():
    result = simulate(COOLING)
    assert metric(result, "E-303.hot_out") == result.units.loc["E-303", "hot_out_c"]
    assert metric(result, "E-304.cold_in") == result.units.loc["E-304", "cold_in_c"]
    assert metric(result, "A-302.duty") == result.units.loc["A-302", "duty_kw"]
    assert metric(result, "naphtha_rundown.inlet") == result.units.loc["naphtha_rundown", "inlet_c"]
    with pytest.raises(CaseError):
        metric(result, "E-999.duty")


def test_an_added_shell_brings_its_share_of_a_total_ua():
    """'ua' is the total of an exchanger's shells: a shell added (identical to those there) adds
    its share, as it adds area where U comes with an area per shell; removing one takes it away.
    The variant rates as the case written with two shells and twice the UA."""
    from hxtrain.network.changes import apply_changes
    from hxtrain.solver import simulate

    def case(shells, ua):
        return {"fluids": {"oil": {"cp": 2.5}, "feed": {"cp": 2.2}},
                "streams": {"hot": {"fluid": "oil", "flow": 20.0, "supply_temperature": 230.0, "path": "E-1.hot -> h"},
                            "cold": {"fluid": "feed", "flow": 30.0, "supply_temperature": 40.0, "path": "E-1.cold -> c"}},
                "exchangers": {"E-1": {"arrangement": "tema_e", "shells": shells, "ua": ua}},
                "products": {"h": {}, "c": {}}}

    added = apply_changes(case(1, "60 kW/K"), [{"add_shells": "E-1", "count": 1}])
    assert added["exchangers"]["E-1"]["shells"] == 2 and added["exchangers"]["E-1"]["ua"] == pytest.approx(120.0)
    removed = apply_changes(case(3, 90.0), [{"add_shells": "E-1", "count": -1}])
    assert removed["exchangers"]["E-1"]["ua"] == pytest.approx(60.0)
    duty = simulate(added).units.loc["E-1", "duty_kw"]
    assert duty == pytest.approx(simulate(case(2, 120.0)).units.loc["E-1", "duty_kw"], rel=1e-12)
    assert duty > 1.2 * simulate(case(1, 60.0)).units.loc["E-1", "duty_kw"]  # more area, more duty


def test_a_heaters_row_is_named_as_its_result_is():
    """A heater's or cooler's outlet is its result 'TAG.outlet' in specifications and Monte Carlo:
    the comparison names its row 'TAG outlet_c' alike, not after the side it is stored on."""
    from hxtrain.solver.studies import compare, metric

    study = load_study(demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml"))
    comparison = compare(study)
    rows = list(comparison.table.index)
    assert "F-101 outlet_c" in rows and "C-101 outlet_c" in rows
    assert not [r for r in rows if r.startswith(("F-101 ", "C-101 ")) and ("cold_out" in r or "hot_out" in r)]
    base = comparison.results["base"]
    assert comparison.table.loc["F-101 outlet_c", "base"] == metric(base, "F-101.outlet")
    assert comparison.table.loc["C-101 outlet_c", "base"] == metric(base, "C-101.outlet")


def _flow_sweep_beside_single_runs(tmp_path, capsys, severity):
    """The console of a two-point crude-flow sweep (85 % and 115 %), and for each point the
    findings of ``severity`` its row names and those a separate run of that point reports (both
    as 'unit check')."""
    study = write(tmp_path, f"""
        base: {CRUDE}
        sweeps:
          flow:
            scale: true
            grid:
              streams.crude.flow: [0.85, 1.15]
        """)
    out_file = tmp_path / "sweep.csv"
    code, out, err = run_cli(capsys, "sweep", study, "--out", out_file)
    assert code == 0, err
    column = {"limit": "violated_limits", "warning": "warning_names"}[severity]
    data, points = read_document(CRUDE).data, []
    for _, row in pd.read_csv(out_file, keep_default_na=False).iterrows():
        data["streams"]["crude"]["flow"] = f"{row['streams.crude.flow'] * 342.0} t/h"
        findings = simulate(case_from_mapping(copy.deepcopy(data), str(CRUDE))).findings
        found = findings[findings["severity"] == severity]
        points.append(([label for label in row[column].split("; ") if label],
                       {f"{u} {k}" for u, k in zip(found["unit"], found["kind"])}))
    return out, points


def test_a_sweep_names_the_limits_its_points_violate(tmp_path, capsys):
    """At 115 % crude flow four tube sides pass their allowable pressure drop: the sweep's
    report boxes each violated limit with the points where it is (it had printed only counts),
    and each row of the written table names its limits, the same ones a separate run of that
    point reports."""
    out, points = _flow_sweep_beside_single_runs(tmp_path, capsys, "limit")
    assert "LIMITS VIOLATED" in out and "E-102 pressure_drop (tube): 1 of 2 (50%), points 2" in out
    for named, expected in points:
        assert {label.split(" (")[0] for label in named} == expected


def test_a_sweep_names_the_warnings_it_counts(tmp_path, capsys):
    """A trial: a sweep's rows counted their warnings, and neither the console nor the file said
    which. Each row of the written table names them, as a separate run of that point reports
    them; the console lists each with the points it is in."""
    out, points = _flow_sweep_beside_single_runs(tmp_path, capsys, "warning")
    for k, (named, expected) in enumerate(points):
        assert {label.split(" (")[0] for label in named} == expected and expected
        for label in named:
            listed = next(line for line in out.splitlines() if line.startswith(f"  * {label}: "))
            assert listed.endswith((f"points {k + 1}", "points 1-2")), listed


def test_a_sweep_shows_small_swept_values_as_they_differ(tmp_path, capsys):
    """A bypass swept over 0, 0.001, 0.002 and 0.004 had shown 0.00 on every row: the swept
    values are shown with as many decimals as tell them apart (two significant digits), the
    results beside them as before."""
    study = write(tmp_path, f"""
        base: {CRUDE}
        sweeps:
          small_bypass:
            grid:
              exchangers.E-110.bypass.cold: [0.0, 0.001, 0.002, 0.004]
        """)
    code, out, err = run_cli(capsys, "sweep", study)
    assert code == 0, err
    rows = [line.split() for line in out.splitlines() if line.strip().startswith("0.00")]
    assert [row[0] for row in rows] == ["0.0000", "0.0010", "0.0020", "0.0040"]


@pytest.mark.parametrize("peak, goal, met", [(250.0, 245.0, True), (250.0, 255.0, False)])
def test_a_specification_whose_result_turns_inside_the_range_is_scanned(monkeypatch, peak, goal, met):
    """A result that peaks inside the adjusted range (a trial's exchanger duty against a flow)
    lies on one side of its target at both ends: checking the ends alone had said 'out of reach'
    of a target met inside. The range is scanned; the target is met where a turn crosses it (and
    the message says the ends do not bracket it and that another value meets it too), and where
    none does the reach quoted is the scan's, not the ends'. By hand: 230 + (peak - 230)·(1 -
    ((x - 0.3)/0.3)²) over [0, 0.6] meets 245 at x = 0.3 ± 0.3·√(1 - 15/20) = 0.15 and 0.45."""
    import hxtrain.solver.studies.specifications as specifications

    study = load_study(demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml"))
    spec = next(s for s in study.specifications if s.name == "e110_outlet_by_bypass")
    spec.target = dict(spec.target, equals=goal)
    last = {}
    original = specifications.adjust_changes

    def remembered(study, path, value, *args):
        last["x"] = value
        return original(study, path, value, *args)

    monkeypatch.setattr(specifications, "adjust_changes", remembered)
    monkeypatch.setattr(specifications, "simulate_at", lambda *args: None)
    monkeypatch.setattr(specifications, "metric", lambda result, name: 230.0 + (peak - 230.0) * (1.0 - ((last["x"] - 0.3) / 0.3) ** 2))
    result = specifications.solve_specification(study, spec)
    assert result.achievable == pytest.approx((230.0, 230.0))
    if met:
        assert result.success and result.value == pytest.approx(0.15, abs=1e-6) and result.achieved == pytest.approx(245.0)
        assert "the ends do not bracket the target; another value meets it too, between 0.45 and 0.4875" in result.message
    else:
        assert not result.success and result.value is None
        assert "not found in reach" in result.message and "from 230.0 °C to 250.0 °C over those" in result.message
        assert "a narrower peak or dip between them is not seen" in result.message


def test_a_shell_added_adds_its_share_of_a_reference_pressure_drop():
    """A reference drop is the whole exchanger's at its reference flow; a shell added in series
    adds its own: the demo study's third shell on E-104 (95 kPa for two) gives 1.5 times the
    drop, 142.5 kPa, above the 120 kPa allowable (it had stayed at 95 kPa: a missed limit).
    A study's set of the shell count does the same; a drop from geometry is per shell already."""
    data = read_document(demo_case_path("crude_preheat")).data
    base = simulate(case_from_mapping(data))
    added = simulate(case_from_mapping(apply_changes(data, [{"add_shells": "E-104", "count": 1}])))
    set_to_four = simulate(case_from_mapping(apply_changes(data, [{"set": "exchangers.E-104.shells", "to": 4}])))
    drop = {name: float(r.units.loc["E-104", "dp_tube_kpa"]) for name, r in
            (("base", base), ("added", added), ("four", set_to_four))}
    # the flow through each shell and its temperatures move a little with the duty: ~1 %
    assert drop["added"] == pytest.approx(1.5 * drop["base"], rel=0.02)
    assert drop["four"] == pytest.approx(2.0 * drop["base"], rel=0.03)
    assert "exchangers.E-104.pressure_drop.tube.allowable" in set(added.limits["key"])
    assert "exchangers.E-104.pressure_drop.tube.allowable" not in set(base.limits["key"])
    changed = apply_changes(data, [{"add_shells": "E-104", "count": 1}])
    assert changed["exchangers"]["E-104"]["pressure_drop"]["tube"]["reference"] == pytest.approx(142.5e3)
    assert data["exchangers"]["E-104"]["pressure_drop"]["tube"]["reference"] == "95 kPa"  # the input untouched


def test_a_specification_without_an_answer_at_a_value_leaves_the_rest_of_the_study_answered(tmp_path, capsys):
    """A trial's specification whose range reached values where the case has no answer (there:
    no steady state; here: a 340 °C tank heats the desalter's wash water past its data) had
    stopped the whole compare (exit 3, or exit 2 for a value found out of range while solving),
    naming neither the specification nor the value. Now that specification is reported without
    an answer, naming the value and the reason; the base, the variant and the other
    specification are answered."""
    (tmp_path / "case.yaml").write_text(Path(demo_case_path("crude_preheat")).read_text(encoding="utf-8"),
                                        encoding="utf-8")
    study = write(tmp_path, """
        base: case.yaml
        variants:
          warm: {changes: [{set: streams.crude.supply_temperature, to: 40}]}
        specifications:
          hot_tank:
            adjust: streams.crude.supply_temperature
            between: [30, 340]
            target: {value: E-101.cold_out, equals: 100}
          fine:
            adjust: streams.crude.supply_temperature
            between: [20, 40]
            target: {value: E-101.cold_out, equals: 60}
        """)
    code, out, err = run_cli(capsys, "compare", study)
    assert code == 0, err
    out = " ".join(out.split())
    assert ("Specification hot_tank: NOT MET - no answer: at streams.crude.supply_temperature = 340.0 °C the case has "
            "none (") in out and "wash_water" in out and "narrow 'between'" in out
    assert "Specification fine: met - streams.crude.supply_temperature = 34.9 °C gives 60.0 °C" in out
    assert "base warm warm - base" in out  # the comparison itself, answered


def test_a_variants_name_is_shown_as_the_study_writes_it(capsys):
    """Underscores of a result's column name become spaces in its heading; a variant's name is
    the user's own and keeps them (the comparison had headed 'extra shell E-104' where the list
    and every warning said 'extra_shell_E-104')."""
    code, out, err = run_cli(capsys, "compare", demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml"),
                             "--wide")
    assert code == 0, err
    heading = next(line for line in out.splitlines() if line.startswith("quantity"))
    assert "extra_shell_E-104" in heading and "extra_shell_E-104 - base" in heading and "extra shell" not in heading
