"""Schedule files in (network/schedule_file.py): values and units read back, cleaning durations
rounded up to whole steps, forbidden periods as step indices, the bundled demo, and the
malformed corpus in tests/malformed_schedules/ (MANIFEST.yaml says what each file breaks and
what the error names).

Outside references: unit definitions (1 t/h = 1/3.6 kg/s; a day is 24 h and 86 400 s; 1 ft =
0.3048 m exactly, 1959 agreement; the IT Btu 1055.05585262 J; a Fahrenheit degree of difference
is 5/9 K; °C = (°F - 32)·5/9 — all from memory), the calendar counted by hand (2027-01-04 is a
Monday; 2028 is a leap year), the series-resistance identity (a tube-side resistance referred
to the outside area counts times D_o/D_i) with the demo case file's own numbers, and the
parameter tables of hxtrain.units.fouling_models.MODELS (the models' declared interface).
"""

from __future__ import annotations

import copy
import functools
import math
import operator
from pathlib import Path

import pandas as pd
import pytest
import yaml

from hxtrain.network.errors import CaseError, format_path
from hxtrain.network.schedule_file import CleaningTerms, load_schedule, schedule_from_mapping, steps_covering
from hxtrain.solver.demos import demo_case_path
from hxtrain.units.fouling_models import MODELS
from test_monitoring_input import key_paths

HERE = Path(__file__).parent
CORPUS = HERE / "malformed_schedules"
MANIFEST = yaml.safe_load((CORPUS / "MANIFEST.yaml").read_text(encoding="utf-8"))
REFUSED = MANIFEST["refused"]
DEMO = HERE.parent / "cases" / "crude_schedule.yaml"
MAX_MESSAGE_CHARS = 1000
FOOT, BTU_IT = 0.3048, 1055.05585262  # m, J (from memory)
HOUR_FT2_DEGF_PER_BTU = 3600.0 * FOOT**2 * (5.0 / 9.0) / BTU_IT  # in m²·K/W (unit definitions)
BTU_TOLERANCE = 2e-7
"""pint's Btu is the ISO 31-4 value, 1055.056 J (from memory): 1.4e-7 above the IT Btu."""

BASE = {
    "case": {"demo": "crude_preheat"}, "start": "2027-01-04", "horizon": "52 weeks", "step": "1 week",
    "fouling": {"exchangers": {"E-104": {"model": "asymptotic", "r_inf": 0.0025, "tau": "150 days"}}},
    "economics": {"fuel_price": 8.0, "currency": "USD"},
    "cleaning": {"default": {"cost": 45000, "duration": "2 weeks"}},
}


def schedule(**changes):
    """BASE with top-level keys replaced, checked from Python data."""
    data = copy.deepcopy(BASE)
    data.update(copy.deepcopy(changes))
    return schedule_from_mapping(data, "plan.yaml")


def refusal(**changes) -> CaseError:
    with pytest.raises(CaseError) as caught:
        schedule(**changes)
    return caught.value


# ----------------------------------------------------------------------------- the malformed corpus


def test_manifest_lists_every_schedule_file():
    on_disk = {p.name for p in CORPUS.glob("*.yaml")} - {"MANIFEST.yaml", MANIFEST["base"]}
    listed = [e["file"] for e in REFUSED]
    assert len(listed) == len(set(listed)), "a file is listed twice"
    assert on_disk == set(listed), (sorted(on_disk - set(listed)), sorted(set(listed) - on_disk))
    assert len(REFUSED) >= 20


def test_the_corpus_base_is_valid():
    """Each malformed file breaks one thing of base.yaml, so the base itself must pass."""
    plan = load_schedule(CORPUS / MANIFEST["base"])
    assert set(plan.fouling) == {"E-104", "E-110", "E-112"} and plan.steps == 52


@pytest.mark.parametrize("entry", REFUSED, ids=[e["file"] for e in REFUSED])
def test_each_malformed_schedule_is_refused_naming_file_and_key_path(entry):
    with pytest.raises(CaseError) as caught:
        load_schedule(CORPUS / entry["file"])
    error, text = caught.value, str(caught.value)
    found = {"file": Path(error.file).resolve(), "key": format_path(error.path) or None, "line": error.line}
    wanted = {"file": (CORPUS / entry.get("error_file", entry["file"])).resolve(), "key": entry["key"],
              "line": entry.get("line", error.line)}
    assert found == wanted, text
    assert all(part in text for part in (Path(error.file).name, entry["key"] or "", entry["fragment"])), text
    assert len(text) <= MAX_MESSAGE_CHARS and "\n" not in text, text


# ----------------------------------------------------------------------------- a good file read back


GOOD = """
title: read-back test
case: {demo: crude_preheat}
start: 2027-01-04
horizon: 104 weeks
step: 7 days
fouling:
  exchangers:
    E-101: {model: linear, rate: "1.0e-7 m^2*K/W/h", initial: 0.0004}
    E-104: {model: asymptotic, r_inf: "0.0025 m^2*K/W", tau: 3600 h, initial: "0.0068 h*ft^2*degF/Btu"}
    E-112: {model: ebert_panchal, alpha: 18000, beta: -0.66, activation_energy: 68 kJ/mol,
            gamma: "3.9352e-12 m^2*K/W/s/Pa", r_f0: 0.0001}
operation:
  - {from: 2027-01-04, set: {streams.crude.flow: 342 t/h}}
  - from: 2027-07-01
    set: {streams.crude.supply_temperature: 95 degF, splitters.crude_split.branches.north.fraction: 40 %}
economics: {fuel_price: 8.0, currency: EUR, furnace_efficiency: 88 %, co2_per_fuel: 0.0561 t/GJ, co2_price: 80}
cleaning:
  default: {cost: 45000, duration: 2 weeks}
  exchangers:
    E-112: {cost: 70000, duration: 10 days}
    E-101: {allowed: false}
  at_most_at_once: 2
furnace: {heater: F-101, maximum_duty: 109.2 MMBtu/h, throughput: streams.crude.flow, lost_throughput_value: 12}
baselines: {fixed_intervals: [26 weeks, 273 days], fouling_threshold: "0.002 m^2*K/W"}
"""


@pytest.fixture(scope="module")
def good(tmp_path_factory):
    path = tmp_path_factory.mktemp("schedule") / "plan.yaml"
    path.write_text(GOOD, encoding="utf-8")
    return load_schedule(path)


def test_a_good_schedule_reads_back_its_horizon(good):
    """Calendar by hand: 104 weeks = 728 days from 2027-01-04 (365 to 2028-01-04, then 363 of
    the leap year 2028) end on 2029-01-01."""
    assert good.title == "read-back test" and good.case.file == str(demo_case_path("crude_preheat"))
    assert good.start == pd.Timestamp("2027-01-04") and good.step == pd.Timedelta(days=7) and good.steps == 104
    assert good.end == pd.Timestamp("2029-01-01")
    assert good.monitoring_file is None


def test_fouling_parameters_are_in_the_models_units(good):
    """Unit definitions: per hour x 24 = per day; 3600 h = 150 days; per second x 86 400 = per
    day; 1 h·ft²·°F/Btu = 3600 · 0.3048² · 5/9 / 1055.05585262 m²·K/W."""
    e101, e104, e112 = good.fouling["E-101"], good.fouling["E-104"], good.fouling["E-112"]
    assert (e101.model, e104.model, e112.model) == ("linear", "asymptotic", "ebert_panchal")
    assert e101.parameters == pytest.approx({"r_f0": 0.0, "rate": 2.4e-6}, rel=1e-12)
    assert e104.parameters == pytest.approx({"r_f0": 0.0, "r_inf": 0.0025, "tau": 150.0}, rel=1e-12)
    assert e104.initial == pytest.approx(0.0068 * HOUR_FT2_DEGF_PER_BTU, rel=BTU_TOLERANCE)
    assert e112.parameters == pytest.approx({"r_f0": 1e-4, "alpha": 18000.0, "beta": -0.66,
                                             "activation_energy": 68000.0, "gamma": 3.9352e-12 * 86400.0}, rel=1e-12)
    for law in good.fouling.values():  # exactly the model's parameter table, r_f0 included
        assert list(law.parameters) == [p.name for p in MODELS[law.model].parameters]


def test_default_initial_fouling_is_the_cases_on_the_outside_area(good):
    """Identity: R_total = R_shell + R_tube · D_o/D_i, with E-112's numbers as the demo case file
    writes them (fouling 0.0009 both sides, tubes 19.05 mm / 14.83 mm)."""
    raw = yaml.safe_load(demo_case_path("crude_preheat").read_text(encoding="utf-8"))["exchangers"]["E-112"]
    outer, inner = (float(raw["tubes"][k].split()[0]) for k in ("outer_diameter", "inner_diameter"))
    expected = raw["fouling"]["shell"] + raw["fouling"]["tube"] * outer / inner
    assert good.fouling["E-112"].initial == pytest.approx(expected, rel=1e-12)


def test_operation_economics_and_furnace_in_default_units(good):
    """342 t/h / 3.6 = 95 kg/s; 95 °F = 35 °C; 40 % = 0.4; 0.0561 t/GJ = 56.1 kg/GJ;
    109.2 MMBtu/h = 109.2e6 · 1055.05585262 J / 3600 s."""
    (first, set1), (second, set2) = good.operation
    assert first == pd.Timestamp("2027-01-04") and second == pd.Timestamp("2027-07-01")
    assert set1 == {"streams.crude.flow": pytest.approx(95.0, rel=1e-12)}
    assert set2 == {"streams.crude.supply_temperature": pytest.approx(35.0, rel=1e-12),
                    "splitters.crude_split.branches.north.fraction": pytest.approx(0.4, rel=1e-12)}
    assert good.economics == {"fuel_price": 8.0, "currency": "EUR", "furnace_efficiency": pytest.approx(0.88),
                              "co2_per_fuel": pytest.approx(56.1), "co2_price": 80.0}
    assert good.furnace.heater == "F-101" and good.furnace.throughput == "streams.crude.flow"
    assert good.furnace.maximum_duty == pytest.approx(109.2e6 * BTU_IT / 3600.0 / 1000.0, rel=BTU_TOLERANCE)
    assert good.furnace.lost_value == 12.0


def test_cleaning_terms_and_baselines(good):
    """10 days at 7-day steps occupies 2 steps (rounded up); 273 days = 39 weeks."""
    assert good.cleaning == {"E-101": CleaningTerms(45000.0, 2, False), "E-104": CleaningTerms(45000.0, 2, True),
                             "E-112": CleaningTerms(70000.0, 2, True)}
    assert good.at_most_at_once == 2 and good.not_allowed == []
    assert good.baselines == {"fixed_intervals": [26, 39], "intervals_left_out": [],
                              "fouling_threshold": {t: pytest.approx(0.002) for t in ("E-101", "E-104", "E-112")}}


def test_baselines_default_to_the_intervals_shorter_than_the_horizon():
    """The design's defaults are 26, 39, 52 and 78 weeks; over 52 weeks only 26 and 39 remain,
    and the two left out are kept for the report to say so."""
    plan = schedule()
    assert plan.baselines["fixed_intervals"] == [26, 39]
    assert plan.baselines["intervals_left_out"] == [pd.Timedelta(weeks=52), pd.Timedelta(weeks=78)]
    assert plan.cleaning == {"E-104": CleaningTerms(45000.0, 2, True)}
    assert plan.at_most_at_once == 1


def test_new_limit_violations_are_refused_unless_the_file_allows_them():
    """The key reaches the horizon the optimiser scores (what it changes is tested in
    test_scheduling.py); anything but true/false is refused with its key path."""
    from hxtrain.solver.scheduling.setup import build_horizon

    assert schedule().new_limits_allowed is False
    allowing = schedule(cleaning={**BASE["cleaning"], "allow_new_limit_violations": True})
    assert allowing.new_limits_allowed is True
    assert build_horizon(allowing)[0].new_limits_allowed is True
    error = refusal(cleaning={**BASE["cleaning"], "allow_new_limit_violations": "sometimes"})
    assert "cleaning.allow_new_limit_violations" in str(error) and "true or false" in str(error)


# ----------------------------------------------------------------------------- whole steps


@pytest.mark.parametrize("duration, step, expected", [
    ("10 days", "1 week", 2), ("14 days", "1 week", 2), ("15 days", "1 week", 3), ("1 h", "1 week", 1),
    ("2 weeks", "1 day", 14), ("36 h", "1 day", 2), ("24 h", "1 day", 1), ("0.5 day", "12 h", 1),
])
def test_cleaning_durations_round_up_to_whole_steps(duration, step, expected):
    """Identity: an exchanger out of service for any part of a step is out for the whole step,
    ceil(duration / step), counted by hand for each row."""
    # 26 weeks: in 12-hour steps a year would be more steps than the optimiser plans
    plan = schedule(step=step, horizon="26 weeks", cleaning={"default": {"cost": 1000, "duration": duration}})
    assert plan.cleaning["E-104"].duration_steps == expected
    hours = {"h": 1, "day": 24, "days": 24, "week": 168, "weeks": 168}
    duration_h, step_h = (float(t.split()[0]) * hours[t.split()[1]] for t in (duration, step))
    assert steps_covering(pd.Timedelta(hours=duration_h), pd.Timedelta(hours=step_h)) == expected


def test_a_horizon_of_part_steps_is_refused_naming_the_nearest_whole_numbers():
    """100 days in 3-day steps is 33.3 steps: 99 days (33) or 102 days (34)."""
    error = refusal(horizon="100 days", step="3 days")
    assert error.path == ("horizon",) and "use 99 days (33 steps) or 102 days (34 steps)" in str(error)


@pytest.mark.parametrize("period, expected", [
    (("2027-12-01", "2027-12-31"), (47, 51)),    # days 331 to 361 of the horizon; 47·7 = 329, 51·7 = 357
    (("2027-01-04", "2027-01-04"), (0, 0)),      # the first day alone
    (("2027-01-10", "2027-01-10"), (0, 0)),      # a Sunday: day 6, the last of step 0
    (("2027-01-11", "2027-01-11"), (1, 1)),      # a Monday: day 7, the first of step 1
    (("2027-01-11", "2027-01-17"), (1, 1)),      # exactly step 1
    (("2027-01-10", "2027-01-11"), (0, 1)),      # a weekend across two steps
    (("2026-12-20", "2027-01-12"), (0, 1)),      # begins before the horizon
    (("2027-12-27", "2028-03-01"), (51, 51)),    # day 357 = 51·7, runs past the end (2028-01-02)
    (("2027-01-05", "2027-01-11 06:00"), (0, 1)),  # a time: up to that moment only
])
def test_forbidden_periods_become_the_steps_they_overlap(period, expected):
    """Calendar by hand, 2027-01-04 a Monday, weekly steps: step k covers days 7k to 7k + 6; a
    'to' date includes its whole day."""
    plan = schedule(cleaning={"default": {"cost": 1000, "duration": "1 week"},
                              "not_allowed": [{"from": period[0], "to": period[1], "why": "test"}]})
    assert plan.not_allowed == [expected + ("test",)]


# ----------------------------------------------------------------------------- the models' parameter tables


@pytest.mark.parametrize("model", sorted(MODELS))
def test_each_models_parameters_are_read_within_its_bounds(model):
    """Every parameter of the model's table is a key (r_f0 optional); a value just past a finite
    bound is refused naming that key."""
    table = MODELS[model].parameters
    values = {p.name: (p.bounds[0] + p.bounds[1]) / 2 if math.isfinite(p.bounds[1]) else p.bounds[0] + 1.0
              for p in table if p.name != "r_f0"}
    fouling = {"exchangers": {"E-104": {"model": model, **values}}}
    assert schedule(fouling=fouling).fouling["E-104"].parameters == pytest.approx(dict(values, r_f0=0.0))
    for p in table:
        if p.name == "r_f0":
            continue
        high, low = p.bounds[1], p.bounds[0]
        past = {p.name: high * 1.01 + 1e-12 if math.isfinite(high) else low - abs(low) - 1.0}
        error = refusal(fouling={"exchangers": {"E-104": {"model": model, **values, **past}}})
        assert error.path == ("fouling", "exchangers", "E-104", p.name), str(error)
        missing = {k: v for k, v in values.items() if k != p.name}
        error = refusal(fouling={"exchangers": {"E-104": {"model": model, **missing}}})
        assert f"missing key '{p.name}'" in str(error)


# ----------------------------------------------------------------------------- the demo and relative paths


def test_the_demo_schedule_takes_the_plant_data_models():
    """The bundled demo names the plant-data demo's monitoring file; every exchanger of the crude
    demo takes fouling, so each has cleaning terms. Forbidden periods by hand: 2027-12-01 is day
    331 (step 47), 2028-02-01 day 393 (56.1 steps: last step 56); 2028-09-04 day 609 = 87·7, to
    2028-09-18 = day 623 = 89·7 (last step 88)."""
    plan = load_schedule(DEMO)
    assert plan.monitoring_file.resolve() == (DEMO.parent / "plant_data" / "crude_monitoring.yaml").resolve()
    assert list(plan.cleaning) == [f"E-{n}" for n in range(101, 113)]
    assert not plan.cleaning["E-101"].allowed and plan.cleaning["E-112"] == CleaningTerms(70000.0, 3, True)
    assert plan.steps == 104 and plan.at_most_at_once == 2
    assert [p[:2] for p in plan.not_allowed] == [(47, 56), (87, 88)]
    assert plan.furnace.maximum_duty == pytest.approx(32500.0)


def test_a_case_beside_the_schedule_is_found_and_errors_name_the_schedule(tmp_path):
    (tmp_path / "train.yaml").write_text(demo_case_path("crude_preheat").read_text(encoding="utf-8"), encoding="utf-8")
    data = dict(copy.deepcopy(BASE), case="train.yaml")
    assert Path(schedule_from_mapping(data, "plan.yaml", tmp_path).case.file) == tmp_path / "train.yaml"
    data["cleaning"]["at_most_at_once"] = True
    with pytest.raises(CaseError) as caught:
        schedule_from_mapping(data, "plan.yaml", tmp_path)
    assert caught.value.file == "plan.yaml" and caught.value.path == ("cleaning", "at_most_at_once")


# ----------------------------------------------------------------------------- robustness


JUNK = (None, [], {}, "abc", -1, 10**400, float("nan"), True, "1e400 kg/s")


def variants(document, replacements):
    """(key path, value, a copy of ``document`` with that value at that path) for every key path
    (:func:`test_monitoring_input.key_paths`) and every replacement."""
    for path in key_paths(document):
        for junk in replacements:
            data = copy.deepcopy(document)
            holder = functools.reduce(operator.getitem, path[:-1], data)
            holder[path[-1]] = junk
            yield path, junk, data


def test_any_value_replaced_by_junk_is_read_or_refused_with_a_key_path():
    """The reader never fails with anything but a CaseError naming the file (an invariant of every
    reader of the case format), whatever value stands at any key of the corpus base."""
    base = yaml.safe_load((CORPUS / MANIFEST["base"]).read_text(encoding="utf-8"))
    checked = 0
    for path, junk, data in variants(base, JUNK):
        try:
            schedule_from_mapping(data, "plan.yaml", CORPUS)
        except CaseError as exc:
            assert exc.file == "plan.yaml" and len(str(exc)) <= MAX_MESSAGE_CHARS, (path, junk, str(exc))
        checked += 1
    assert checked > 300


def test_a_written_law_without_initial_starts_from_the_plant_datas_fouling_where_there_is_one():
    """A law written without ``initial`` beside plant data starts from the plant data's fouling
    now, not from the case's design fouling (a trial had overridden only E-104's rate and got
    every cost built on the case's value, 40 % off the measured one, with no word); the laws
    table says where each start came from. Without plant data for it, the case's fouling."""
    from hxtrain.solver.scheduling.horizon import ExchangerLaw
    from hxtrain.solver.scheduling.setup import written_laws

    plan = schedule(fouling={"exchangers": {"E-104": {"model": "linear", "rate": 1e-6},
                                            "E-110": {"model": "linear", "rate": 2e-6, "initial": 0.0007}}})
    assert not plan.fouling["E-104"].initial_written and plan.fouling["E-110"].initial_written
    measured = {name: ExchangerLaw("linear", {"r_f0": 0.0, "rate": 0.0}, {"r_f0": 0.0, "rate": 0.0}, value)
                for name, value in (("E-104", 0.000842), ("E-110", 0.0011))}
    laws, table = written_laws(plan, measured)
    assert laws["E-104"].initial == 0.000842 and laws["E-110"].initial == 0.0007  # a written initial stands
    sources = table.set_index("exchanger")["source"]
    assert sources["E-104"].endswith("(no initial given: the plant data's fouling now)")
    assert sources["E-110"] == "written in the schedule file"
    laws, table = written_laws(plan, {})
    assert laws["E-104"].initial == plan.fouling["E-104"].initial  # the case's (checked above)
    assert table.set_index("exchanger")["source"]["E-104"].endswith("(no initial given: the case's fouling)")


def test_an_asymptote_below_the_plant_datas_fouling_is_refused_at_its_key():
    """An asymptotic law (r_f0 + r_inf = 0.0017) read without ``initial``: the case's fouling lies
    below its asymptote, but the plant data's fouling now, 0.0019, lies above it: refused at
    r_inf, naming where the start came from."""
    from hxtrain.solver.scheduling.horizon import ExchangerLaw
    from hxtrain.solver.scheduling.setup import written_laws

    plan = schedule(fouling={"exchangers": {"E-104": {"model": "asymptotic", "r_inf": 0.0017, "tau": "90 days"}}})
    assert plan.fouling["E-104"].initial < 0.0017  # the case's, 0.00158
    measured = {"E-104": ExchangerLaw("linear", {"r_f0": 0.0, "rate": 0.0}, {"r_f0": 0.0, "rate": 0.0}, 0.0019)}
    above = "the plant data's fouling now 0.0019 m²·K/W lies above the asymptote"
    with pytest.raises(CaseError, match=above) as error:
        written_laws(plan, measured)
    assert error.value.path == ("fouling", "exchangers", "E-104", "r_inf") and error.value.file == "plan.yaml"


def test_a_cleaning_longer_than_the_horizon_leaves_that_exchanger_uncleaned_and_says_so():
    """A horizon shortened to try a plan: the default cleaning (3 weeks) is longer than the 2-week
    horizon, E-104's own (2 weeks) just fits (it had been refused as "does not fit", and so had
    the whole file for the default's sake): E-110 is never cleaned, and the report's list of
    what lies beyond the horizon names it with the key path of the duration it took."""
    plan = schedule(horizon="2 weeks", fouling={"exchangers": {
        "E-104": {"model": "linear", "rate": 1e-6}, "E-110": {"model": "linear", "rate": 2e-6}}},
        cleaning={"default": {"cost": 45000, "duration": "3 weeks"},
                  "exchangers": {"E-104": {"cost": 50000, "duration": "2 weeks"}}})
    assert plan.steps == 2
    assert plan.cleaning["E-104"] == CleaningTerms(50000.0, 2, True)
    assert plan.cleaning["E-110"] == CleaningTerms(45000.0, 3, False)
    assert plan.beyond_horizon == [("cleaning.default.duration",
                                    "E-110's cleaning, 3 steps of 1 week (rounded up to whole steps): never cleaned")]


def test_an_asymptote_below_the_cases_fouling_is_refused_where_the_plant_data_give_none():
    """Beside plant data, a law without ``initial`` is checked against its asymptote only once its
    start is known; where the plant data give no fouling for that exchanger the start is the
    case's (E-104: 0.00158), and an asymptote below it is refused as it is without plant data
    (it had passed)."""
    from hxtrain.network.schedule_file import FoulingLaw
    from hxtrain.solver.scheduling.setup import written_laws

    plan = schedule()
    case_fouling = plan.fouling["E-104"].initial
    plan.fouling["E-104"] = FoulingLaw("asymptotic", {"r_f0": 0.0, "r_inf": 0.001, "tau": 90.0}, case_fouling, False)
    with pytest.raises(CaseError, match="the case's fouling \\(the default initial\\) 0.001581 m²·K/W lies above"):
        written_laws(plan, {})
