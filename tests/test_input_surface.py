"""The whole input surface of a case file, swept: every value of a few valid cases replaced by
values a case file must never crash on or quietly accept.

The cases are tests/valid/small_train.yaml as it is, and two richer versions of it that between
them use every key of the case format (cp as polynomial, table and petroleum data, viscosity
points, exchangers rated by geometry, by film data, by a clean U with a tube wall, bypasses,
limits, pressure drops, a fixed-duty heater, every setting). For every value in them:

* a number (or a list element, or a quantity with units) is replaced by 0, a negative number,
  1e-300, 5e-324 (the smallest denormal), 1e300, a 400-digit integer, the texts "NaN" and "inf",
  a quantity with units of the wrong kind, a list, a mapping, ``true`` and ``null``;
* a text (a name, a path, a choice) by a number, a list, an empty text and an empty list;
* a mapping or a list by a text, a list, a mapping with an unknown key and an empty one.

Each changed case goes through ``hxtrain check`` and, when check accepts it, ``hxtrain run``,
in-process under a time limit. The run must end with exit 0 or 2 — never an internal error
(exit 1), never non-convergence on a value that should have been refused (exit 3), never a hang —
and exit 2 must come with one short message naming the file and the key path of the changed value
(or of its mapping). Exit 0 is allowed only where the new value is plausible for its key: the
rules are in :func:`may_accept` (zero fouling or bypass, a temperature of −10 °C, ...), written
here independently of the readers' own plausibility table.

Further down: every quantity set to the ends of its plausible range (accepted and safe to run)
and just past them (refused naming the key); property tests (hypothesis) of the quantity reader,
of split fractions down to denormals and of cp polynomials; the degree spellings; misspelt keys;
the tube-count bound against a brute-force count.
"""

from __future__ import annotations

import copy
import math
import re
import signal
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from hxtrain.network import CaseError, case_from_mapping
from hxtrain.network import quantities as q
from hxtrain.network.exchangers import LAYOUT_CELL, most_tubes
from hxtrain.network.fields import Fields
from hxtrain.solver.cli.main import main

HERE = Path(__file__).parent
BASE_CASE = HERE / "valid" / "small_train.yaml"
TIME_LIMIT_S = 10
"""Per command; a valid case of this size takes well under a second."""

STARTS_WITH_NUMBER = re.compile(r"^\s*[-+]?(\d|\.\d)")
HUGE_INTEGER = 10**400
WRONG_UNITS = "5 furlong/fortnight"
"""A speed: the wrong kind for every key of the case format."""

NUMBER_REPLACEMENTS = {
    "zero": 0,
    "negative": -7,
    "tiny": 1e-300,
    "denormal": 5e-324,
    "huge": 1e300,
    "400 digits": HUGE_INTEGER,
    "NaN text": "NaN",
    "inf text": "inf",
    "wrong units": WRONG_UNITS,
    "list": [1, 2],
    "mapping": {"value": 1},
    "true": True,
    "null": None,
}
TEXT_REPLACEMENTS = {"number": 42, "list": ["a", "b"], "empty text": "", "empty list": []}
CONTAINER_REPLACEMENTS = {"text": "oops", "list": ["oops"], "mapping": {"oops": 1}, "empty": None}
"""For a mapping or a list; "empty" puts an empty one of the same type in its place."""


# ----------------------------------------------------------------------------- the cases swept


def base_case() -> dict:
    return yaml.safe_load(BASE_CASE.read_text(encoding="utf-8"))


def rich_case() -> dict:
    """small_train with every fluid form and an exchanger rated from geometry (E-1) and one
    from film data with a tube wall (E-2); a fixed-duty heater; every setting."""
    data = base_case()
    data["settings"] = {"minimum_approach": 10, "minimum_f": 0.75, "tolerance": 1e-6, "max_iterations": 200}
    data["fluids"] = {
        "crude": {"cp": {"polynomial": [1.8, 0.0035]}, "description": "a light crude",
                  "viscosity": {"points": [[40, "8 cP"], [250, "0.9 cP"]]},
                  "conductivity": 0.12, "density": 820, "valid_range": [0, 400], "extrapolate": False},
        "gas_oil": {"cp": {"table": [[20, 2.0], [300, "0.67 Btu/lb/degF"]]}, "viscosity": "1.5 cP",
                    "conductivity": "0.065 Btu/h/ft/degF", "density": "49 lb/ft^3"},
        "residue": {"petroleum": {"api_gravity": 22, "watson_k": 11.7}},
        "diesel": {"petroleum": {"specific_gravity": 0.85, "watson_k": 11.9}},
    }
    data["exchangers"]["E-1"] = {
        "arrangement": "tema_e", "shell_side": "hot", "tube_passes": 2, "shells": 1,
        "geometry": {"tube_outer_diameter": "19.05 mm", "tube_inner_diameter": "14.83 mm", "tube_length": "6.1 m",
                     "tubes": 400, "tube_pitch": "25.4 mm", "tube_layout": "square", "baffle_spacing": "0.3 m",
                     "baffles": 18, "shell_inner_diameter": "0.75 m", "wall_conductivity": 45},
        "fouling": {"shell": 3e-4, "tube": "0.002 h*ft^2*degF/Btu"},
        "pressure_drop": {"shell": {"allowable": "1.5 bar"}, "tube": {"allowable": 150000}},
        "design_temperature": {"shell": 350, "tube": "500 degF"},
        "maximum_flow": {"hot": 60, "cold": "250 t/h"},
        "bypass": {"cold": 0.05},
    }
    data["exchangers"]["E-2"] = {
        "arrangement": "tema_e", "shell_side": "hot", "shells": 2, "shells_in_parallel": 1, "tube_passes": 4,
        "film": {"shell": 1200, "tube": "160 Btu/h/ft^2/degF"}, "area_per_shell": 40,
        "reference_flow": {"shell": 40, "tube": 30}, "reference_temperature": {"shell": 200, "tube": 120},
        "flow_exponent": {"shell": 0.6, "tube": 0.8}, "reference_reynolds_tube": 12000,
        "tubes": {"outer_diameter": "19.05 mm", "inner_diameter": 0.01483, "wall_conductivity": 45},
        "fouling": {"shell": 2e-4, "tube": 3e-4},
        "pressure_drop": {"shell": {"reference": "0.4 bar", "allowable": "1 bar"}, "tube": {"reference": 40000}},
        "description": "feed / product",
    }
    data["heaters"]["H-1"] = {"duty": "5 MW", "design_temperature": 400, "description": "fired heater"}
    return data


def other_forms_case() -> dict:
    """small_train with the remaining exchanger forms: crossflow with a clean U (E-1), a parallel
    set of double-pipe units with a fixed UA (E-2); a cooler duty; shell/tube limits by side."""
    data = base_case()
    data["exchangers"]["E-1"] = {
        "arrangement": "crossflow", "mixed_side": "cold", "shell_side": "cold", "clean_u": 450,
        "clean_resistance_shell_share": 0.5, "area_per_shell": 90,
        "reference_flow": {"shell": 50, "tube": 40}, "fouling": {"shell": 1e-4, "tube": 2e-4},
        "bypass": {"tube": 0.1}, "maximum_flow": {"shell": 80, "tube": 80},
    }
    data["exchangers"]["E-2"] = {"arrangement": "double_pipe", "shells_in_parallel": 2, "ua": "80 kW/K"}
    data["coolers"]["C-1"] = {"duty": 4000, "design_temperature": 300}
    data["products"]["heated_feed"] = {"target_temperature": "480 degF"}
    return data


VARIANTS = {"small_train": base_case, "rich": rich_case, "other_forms": other_forms_case}


# ----------------------------------------------------------------------------- walking a case


def nodes(value, path=()):
    """Every (path, value) below ``value`` (the root itself excluded), depth first."""
    children = value.items() if isinstance(value, dict) else enumerate(value) if isinstance(value, list) else ()
    for key, child in children:
        yield path + (key,), child
        yield from nodes(child, path + (key,))


def is_numberlike(value) -> bool:
    if isinstance(value, bool):
        return False
    if isinstance(value, (int, float)):
        return True
    return isinstance(value, str) and STARTS_WITH_NUMBER.match(value) is not None


def replacements(value) -> tuple[str, dict]:
    """The family of ``value`` ("number", "text" or "container") and its replacements."""
    if isinstance(value, (dict, list)):
        return "container", {**CONTAINER_REPLACEMENTS, "empty": type(value)()}
    if is_numberlike(value):
        return "number", NUMBER_REPLACEMENTS
    return "text", TEXT_REPLACEMENTS


def replaced(data, path, new):
    changed = copy.deepcopy(data)
    node = changed
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = new
    return changed


def dump(data) -> str:
    return yaml.dump(data, Dumper=getattr(yaml, "CSafeDumper", yaml.SafeDumper), sort_keys=False)


# ----------------------------------------------------------------------------- what may be accepted

TEMPERATURE_KEYS = {"supply_temperature", "outlet_temperature", "target_temperature", "design_temperature",
                    "reference_temperature"}
SIGNED_KEYS = {"api_gravity"}
"""Plausible at zero and below: the API gravity of the heaviest residues (SG above 1.076)."""
ZERO_ALLOWED_KEYS = {"fouling", "bypass", "fraction", "duty", "minimum_approach", "minimum_f", "baffles", "ua", "u"}
"""Keys where 0 (and so a value that rounds to it) is a real case: a clean side, a closed
bypass, a branch taking nothing, a heater off, an exchanger out of service."""


def describes_temperature(path) -> bool:
    """A temperature level: a key above, or the first element of a [T, value] pair or a range."""
    if any(key in TEMPERATURE_KEYS for key in path if isinstance(key, str)):
        return True
    if "valid_range" in path:
        return True
    return len(path) >= 3 and path[-1] == 0 and path[-3] in ("table", "points")


def may_accept(path, family, label) -> bool:
    """May ``hxtrain check``/``run`` accept the case with the value at ``path`` (of ``family``)
    replaced by the replacement called ``label``? Only where the new value is plausible there."""
    if family == "container":
        return label == "empty"  # no settings, no bypass, a product with no target: all fine
    if family == "text":
        return label == "empty text" and path[-1] in ("title", "description")
    if label == "null":
        return True  # an optional key left out (a required one must be reported)
    named = {key for key in path if isinstance(key, str)}
    signed = describes_temperature(path) or ("polynomial" in path and path[-1] != 0) or bool(named & SIGNED_KEYS)
    if label == "negative":
        return signed
    if label in ("zero", "tiny", "denormal"):
        return signed or bool(named & ZERO_ALLOWED_KEYS)
    return False


# ----------------------------------------------------------------------------- running a command


class TimedOut(BaseException):
    """Raised by the alarm; a BaseException so that the CLI's catch-all does not swallow it."""


@dataclass
class Outcome:
    code: int | str
    err: str


def run_command(capsys, *args) -> Outcome:
    def alarm(signum, frame):
        raise TimedOut

    previous = signal.signal(signal.SIGALRM, alarm)
    signal.setitimer(signal.ITIMER_REAL, TIME_LIMIT_S)
    capsys.readouterr()
    try:
        code = main([str(a) for a in args])
    except TimedOut:
        code = "hang"
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
    return Outcome(code, capsys.readouterr().err)


KEY_PATH = re.compile(r"\b(title|description|settings|fluids|streams|exchangers|heaters|coolers|mixers|splitters"
                      r"|products)(\.[\w-]+)*")


def problems_with(capsys, case_file: Path, path, family, label) -> list[str]:
    """What is wrong with how check and run handle one changed case (empty: all fine)."""
    check = run_command(capsys, "check", case_file)
    outcome = check if check.code != 0 else run_command(capsys, "run", case_file)
    command = "check" if outcome is check else "run"
    if outcome.code == 2:
        text = outcome.err.strip()
        # a value refused as read names its own key (or its mapping); one missing, or found wrong
        # only once temperatures are known, may be reported where it takes effect
        where = ".".join(str(p) for p in path[:2])
        named = where in text if command == "check" and label not in ("null", "empty") else KEY_PATH.search(text)
        if case_file.name not in text or not named or "Traceback" in text or len(text.splitlines()) > 6:
            return [f"{family} -> {label}: {command} message does not name the file and {where}: {text[:300]}"]
        return []
    if outcome.code == 0:
        return [] if may_accept(path, family, label) else [f"{family} -> {label}: accepted (absurd value)"]
    return [f"{family} -> {label}: {command} gave exit {outcome.code}: {outcome.err.strip()[:300]}"]


def sweep_items():
    items = []
    for variant, make in VARIANTS.items():
        for path, value in nodes(make()):
            items.append(pytest.param(variant, path, id=f"{variant}:{'.'.join(map(str, path))}"))
    return items


# ----------------------------------------------------------------------------- the tests


@pytest.mark.parametrize("variant", VARIANTS)
def test_swept_cases_are_valid_as_given(variant, tmp_path, capsys):
    """Each replacement breaks one value of a case that passes check and run unchanged."""
    case_file = tmp_path / f"{variant}.yaml"
    case_file.write_text(dump(VARIANTS[variant]()), encoding="utf-8")
    for command in ("check", "run"):
        outcome = run_command(capsys, command, case_file)
        assert outcome.code == 0, outcome.err


@pytest.mark.parametrize("variant,path", sweep_items())
def test_every_replacement_is_refused_cleanly_or_plausible(variant, path, tmp_path, capsys):
    data = VARIANTS[variant]()
    family, options = replacements(dict(nodes(data))[path])
    failures = []
    for label, new in options.items():
        case_file = tmp_path / f"{variant}.yaml"
        case_file.write_text(dump(replaced(data, path, new)), encoding="utf-8")
        failures += problems_with(capsys, case_file, path, family, label)
    assert not failures, "\n".join(failures)


# ----------------------------------------------------------------------------- the ends of every range


def quantities_read(data) -> dict:
    """Key path -> Kind of every value the readers read with ``Fields.quantity`` in ``data``."""
    seen = {}
    original = Fields.quantity

    def recording(self, key, kind, *args, **kwargs):
        if isinstance(self.value.get(key), (int, float, str)):
            seen[self.path + (key,)] = kind
        return original(self, key, kind, *args, **kwargs)

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(Fields, "quantity", recording)
        case_from_mapping(copy.deepcopy(data))
    return seen


def range_items():
    items = []
    for variant in ("rich", "other_forms"):
        for path, kind in quantities_read(VARIANTS[variant]()).items():
            items.append(pytest.param(variant, path, kind, id=f"{variant}:{'.'.join(map(str, path))}"))
    return items


def just_outside(kind) -> list[float]:
    values = []
    if math.isfinite(kind.low):
        values.append(kind.low - max(abs(kind.low) * 1e-3, 1e-3 * (kind.high - kind.low), 1e-12))
    if math.isfinite(kind.high):
        values.append(kind.high * (1.0 + 1e-3) + 1e-12)
    return values


@pytest.mark.parametrize("variant,path,kind", range_items())
def test_ends_of_the_plausible_range_run_and_beyond_them_are_refused(variant, path, kind, tmp_path, capsys):
    """The readers apply the plausibility table to every quantity: its ends are accepted as read
    (whatever else they then make impossible is reported cleanly, exit 2; a run never crashes,
    hangs or fails to converge on them), and a value just past an end is refused naming the key."""
    data = VARIANTS[variant]()
    key = ".".join(map(str, path))
    case_file = tmp_path / "case.yaml"
    for end in (kind.low, kind.high):
        if not math.isfinite(end):
            continue
        case_file.write_text(dump(replaced(data, path, end)), encoding="utf-8")
        check = run_command(capsys, "check", case_file)
        outcome = check if check.code != 0 else run_command(capsys, "run", case_file)
        assert outcome.code in (0, 2), f"{end}: exit {outcome.code}: {outcome.err[:400]}"
        refused = re.search(r"(smallest|largest|outside the) plausible", outcome.err.split(case_file.name)[-1])
        assert not (key in outcome.err and refused), f"{end} refused as implausible: {outcome.err}"
    for beyond in just_outside(kind):
        case_file.write_text(dump(replaced(data, path, beyond)), encoding="utf-8")
        outcome = run_command(capsys, "check", case_file)
        assert outcome.code == 2 and key in outcome.err, f"{beyond}: exit {outcome.code}: {outcome.err[:400]}"


def test_every_bounded_kind_says_where_its_range_comes_from():
    """The table's rule: each range names its source, or says it is common practice."""
    kinds = [k for k in vars(q).values() if isinstance(k, q.Kind)]
    assert len(kinds) >= 25
    for kind in kinds:
        if math.isfinite(kind.low) or math.isfinite(kind.high):
            assert kind.low < kind.high and kind.basis, kind


# ----------------------------------------------------------------------------- properties (hypothesis)

BOUNDED_KINDS = [k for k in vars(q).values() if isinstance(k, q.Kind)]
UNIT_WORDS = ["", "kg/s", "t/h", "degC", "degF", "°F", "deg C", "K", "kW", "MW", "W/m^2/K", "Btu/h/ft^2/degF",
              "m", "mm", "in", "ft", "cP", "Pa*s", "bar", "psi", "%", "F", "C", "kJ/kg/C", "m**99", "(", "kg/s/s",
              "1e308 kg", "inch**-1e308", "℃"]


@settings(max_examples=300)
@given(kind=st.sampled_from(BOUNDED_KINDS),
       value=st.one_of(st.floats(allow_nan=True, allow_infinity=True, allow_subnormal=True),
                       st.integers(min_value=-(10**600), max_value=10**600),
                       st.text(max_size=40),
                       st.builds(lambda x, u: f"{x!r} {u}", st.floats(allow_subnormal=True),
                                 st.sampled_from(UNIT_WORDS))))
def test_the_quantity_reader_returns_a_plausible_number_or_says_why_not(kind, value):
    try:
        number = q.to_default_unit(value, kind)
    except q.QuantityError as exc:
        assert str(exc) and len(str(exc)) < 600
        return
    assert isinstance(number, float) and math.isfinite(number)
    assert kind.low <= number <= kind.high


@settings(max_examples=25, suppress_health_check=[HealthCheck.function_scoped_fixture])  # capsys is read per run
@given(share=st.one_of(st.floats(min_value=0.0, max_value=1.0, allow_subnormal=True),
                       st.sampled_from([5e-324, 1e-310, 2.2e-16, 1e-15, 1.0 - 1e-16])))
def test_a_split_anywhere_down_to_denormals_runs_or_is_refused(share, tmp_path_factory, capsys):
    """A branch fraction and its complement (they sum to one) from the whole float range."""
    data = base_case()
    branches = data["splitters"]["feed_split"]["branches"]
    branches["through"]["fraction"], branches["around"]["fraction"] = share, 1.0 - share
    case_file = tmp_path_factory.mktemp("split") / "split.yaml"
    case_file.write_text(dump(data), encoding="utf-8")
    check = run_command(capsys, "check", case_file)
    outcome = check if check.code != 0 else run_command(capsys, "run", case_file)
    assert outcome.code in (0, 2), f"exit {outcome.code}: {outcome.err[:400]}"
    if 0.0 < share < q.FRACTION.least_nonzero:
        assert outcome.code == 2 and "splitters.feed_split.branches.through.fraction" in outcome.err


@settings(max_examples=150)
@given(coefficients=st.lists(st.floats(min_value=-1e30, max_value=1e30, allow_subnormal=True), min_size=1,
                             max_size=4))
def test_a_cp_polynomial_is_refused_or_plausible_everywhere_it_will_be_used(coefficients):
    """Checked on a grid 20 times finer than the reader's: where no valid_range is given the
    reader's span is -50 to 600 °C, which is then the fluid's valid range (it is used nowhere
    else: tests/test_defects_review.py)."""
    from hxtrain.network.fluids import DEFAULT_SPAN

    data = base_case()
    data["fluids"]["crude"] = {"cp": {"polynomial": coefficients}}
    try:
        case = case_from_mapping(data)
    except CaseError as exc:
        assert exc.path[:3] == ("fluids", "crude", "cp")
        return
    assert case.fluids["crude"].valid_range == DEFAULT_SPAN == (-50.0, 600.0)
    cp = case.fluids["crude"].cp(np.linspace(-50.0, 600.0, 2001))
    assert np.all(cp >= q.SPECIFIC_HEAT.low * (1 - 1e-9)) and np.all(cp <= q.SPECIFIC_HEAT.high * (1 + 1e-9))


# ----------------------------------------------------------------------------- degrees, misspelt keys


@pytest.mark.parametrize("text,kind,expected", [
    ("90 °F", q.TEMPERATURE, (90 - 32) / 1.8), ("90 ° F", q.TEMPERATURE, (90 - 32) / 1.8),
    ("90 deg F", q.TEMPERATURE, (90 - 32) / 1.8), ("90 degrees F", q.TEMPERATURE, (90 - 32) / 1.8),
    ("90 degree Fahrenheit", q.TEMPERATURE, (90 - 32) / 1.8), ("90 ℉", q.TEMPERATURE, (90 - 32) / 1.8),
    ("90 °C", q.TEMPERATURE, 90.0), ("90 degrees Celsius", q.TEMPERATURE, 90.0), ("90 ℃", q.TEMPERATURE, 90.0),
    ("18 °F", q.TEMPERATURE_DIFFERENCE, 10.0), ("10 deg C", q.TEMPERATURE_DIFFERENCE, 10.0),
    ("0.5 Btu/lb/°F", q.SPECIFIC_HEAT, 0.5 * 4.1868), ("0.5 Btu/lb/deg F", q.SPECIFIC_HEAT, 0.5 * 4.1868),
])
def test_degrees_written_out_or_with_the_sign_are_read(text, kind, expected):
    """°F/°C as data sheets print them. 1 Btu/lb·°F = 4.1868 kJ/kg·K with the International Table
    Btu; pint's Btu is 1055.056 J, 1.4e-7 above it, hence the tolerance."""
    assert q.to_default_unit(text, kind) == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("text,kind,hint", [
    ("90 F", q.TEMPERATURE, "write '90 degF'"), ("90 C", q.TEMPERATURE, "write '90 degC'"),
    ("0.5 Btu/lb/F", q.SPECIFIC_HEAT, "write '0.5 Btu/lb/degF'"),
    ("60 Btu/h/ft^2/F", q.HEAT_TRANSFER_COEFFICIENT, "write '60 Btu/h/ft^2/degF'"),
])
def test_a_bare_c_or_f_is_refused_with_the_spelling_to_use(text, kind, hint):
    with pytest.raises(q.QuantityError, match=re.escape(hint)):
        q.to_default_unit(text, kind)


@pytest.mark.parametrize("text,expected", [("165 psia", 165 * 6.894757293168361), ("10 bara", 1000.0),
                                           ("450 kPaa", 450.0)])
def test_absolute_pressure_units_as_the_trade_writes_them_are_read(text, expected):
    """psia and bara are psi and bar (pressures in a case are absolute); 1 psi = 6.894757293 kPa
    (NIST SP 811, from memory)."""
    assert q.to_default_unit(text, q.STEAM_PRESSURE) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text", ["150 psig", "10 barg", "500 kPag", "10 bar(g)"])
def test_a_gauge_pressure_is_refused_saying_to_give_the_absolute(text):
    """The local atmosphere is not known here: a gauge pressure is refused with the reason."""
    with pytest.raises(q.QuantityError, match="a gauge pressure: give the absolute pressure"):
        q.to_default_unit(text, q.PRESSURE)


@pytest.mark.parametrize("unit,default", sorted(q.PLAIN_FACTORS))
def test_units_read_without_pint_convert_to_the_very_number_pint_gives(unit, default):
    """The common units are read from a table, without loading pint (start-up): each must give
    bit for bit what pint gives, for magnitudes across the plausible ranges."""
    ureg = q.registry()
    kind = next(k for k in vars(q).values() if isinstance(k, q.Kind) and k.unit == default)
    for magnitude in (1.0, 0.3, 2.5, 7.1, 42.0, 310.0, 1e-4, 123456.789, 1 / 3, 9e-3):
        by_pint = float(ureg.Quantity(magnitude, ureg.parse_units(unit)).to(default).magnitude)
        assert q._parse(f"{magnitude!r} {unit}", kind) == by_pint, (magnitude, unit)
    units = ureg.parse_units(unit)  # the reports' conversion, read from the same table
    pint_scale = (float(ureg.Quantity(1.0, units).to(default).magnitude)
                  - float(ureg.Quantity(0.0, units).to(default).magnitude))
    assert q.conversion_to(unit, kind) == (pint_scale, 0.0)


def geometry_case(**geometry_changes):
    data = rich_case()
    geometry = data["exchangers"]["E-1"]["geometry"]
    for key, value in geometry_changes.items():
        if value is None:
            del geometry[key]
        else:
            geometry[key] = value
    return data


def test_a_different_key_of_similar_spelling_is_not_taken_for_a_misspelling():
    """tube_inner_diameter is read after tube_outer_diameter and differs from it by three
    letters: with the outer diameter missing the message must not suggest renaming the inner."""
    with pytest.raises(CaseError) as raised:
        case_from_mapping(geometry_case(tube_outer_diameter=None))
    assert "missing key 'tube_outer_diameter'" in str(raised.value)
    assert "did you mean" not in str(raised.value)


def test_a_misspelt_required_key_is_named_with_the_key_meant():
    with pytest.raises(CaseError) as raised:
        case_from_mapping(geometry_case(tubes=None, tubse=400))
    assert raised.value.path[-1] == "tubse"
    assert "missing key 'tubes'; found unknown key 'tubse' — did you mean 'tubes'?" in str(raised.value)


# ----------------------------------------------------------------------------- geometry


def lattice_count(shell_diameter, pitch, layout, outer_diameter, offsets=8) -> int:
    """Most tubes of the layout whose circles lie inside the shell, by trying lattice offsets."""
    limit = (shell_diameter - outer_diameter) / 2.0
    n = int(limit / pitch) + 2
    i, j = np.meshgrid(np.arange(-n, n + 1), np.arange(-n, n + 1))
    if layout == "square":
        x, y = i * pitch, j * pitch
    else:
        x, y = (i + 0.5 * j) * pitch, j * pitch * math.sqrt(3.0) / 2.0
    best = 0
    for a in np.linspace(0.0, pitch, offsets, endpoint=False):
        for b in np.linspace(0.0, pitch, offsets, endpoint=False):
            best = max(best, int(np.sum(np.hypot(x + a, y + b) <= limit)))
    return best


@pytest.mark.parametrize("layout", list(LAYOUT_CELL))
@pytest.mark.parametrize("diameters", [2, 3, 5, 8, 13, 21, 34, 55])
def test_the_tube_count_bound_holds_against_a_brute_force_count(layout, diameters):
    """most_tubes is an upper bound (never below what fits, counted tube by tube on the lattice
    with tubes 1/1.25 of the pitch across) and, for a real shell of 20 pitches or more, within 35 %
    of it: tight enough to catch a bundle that cannot exist."""
    pitch = 0.0254
    shell = diameters * pitch
    counted = lattice_count(shell, pitch, layout, pitch / 1.25)
    bound = most_tubes(shell, pitch, layout)
    assert bound >= counted
    if diameters >= 20:
        assert bound <= 1.35 * counted


def test_a_real_recycle_is_not_taken_for_a_loop_without_supply():
    """The bundled feed-effluent demo recycles part of its effluent to the feed mixer."""
    from hxtrain.network import load_case
    from hxtrain.solver.demos import demo_case_path

    case = load_case(demo_case_path("feed_effluent"))
    assert case.mixers and case.splitters


@pytest.mark.parametrize("written, hinted", [("supply_temp", True), ("temperature", True), ("inlet_temperature", True),
                                             ("tin", False)])
def test_a_missing_key_names_the_key_written_in_its_place(written, hinted):
    """A stream written with 'supply_temp', 'temperature' or 'inlet_temperature' for
    'supply_temperature' is refused for the missing key, and the message names the key the user
    wrote (a new user's trial: only the missing key was named, the unknown one never, as its
    check comes after); a key with nothing in common gets no hint."""
    stream = {"fluid": "oil", "flow": 3.0, written: 250.0, "path": "E-1.hot -> o"}
    data = {"fluids": {"oil": {"cp": 2.0}},
            "streams": {"hot": stream, "cold": {"fluid": "oil", "flow": 3.0, "supply_temperature": 50.0,
                                                "path": "E-1.cold -> c"}},
            "exchangers": {"E-1": {"arrangement": "counterflow", "ua": 4.0}}, "products": {"o": {}, "c": {}}}
    with pytest.raises(CaseError) as raised:
        case_from_mapping(data, "x.yaml")
    message = str(raised.value)
    assert "streams.hot: missing key 'supply_temperature'" in message
    assert (f"if '{written}' is meant for it, write 'supply_temperature'" in message) == hinted


def test_a_pressure_drop_on_a_fixed_u_exchanger_says_what_it_needs():
    """A reference pressure drop scales with flow from the films' reference flows: an exchanger
    rated by a fixed U has none, and the message says so and what would do (a new user's trial
    read "needs 'reference_flow'" with 'reference_flow' in the file, refused there as unknown)."""
    data = {"fluids": {"oil": {"cp": 2.0}},
            "streams": {"hot": {"fluid": "oil", "flow": 3.0, "supply_temperature": 250.0, "path": "E-1.hot -> o"},
                        "cold": {"fluid": "oil", "flow": 3.0, "supply_temperature": 50.0, "path": "E-1.cold -> c"}},
            "exchangers": {"E-1": {"arrangement": "counterflow", "u": 300.0, "area_per_shell": 20.0,
                                   "pressure_drop": {"tube": {"reference": "0.5 bar"}}}},
            "products": {"o": {}, "c": {}}}
    with pytest.raises(CaseError) as raised:
        case_from_mapping(data, "x.yaml")
    message = str(raised.value)
    assert "exchangers.E-1.pressure_drop" in message and "a fixed 'ua' or 'u' does not have" in message
    assert "'clean_u' or 'film'" in message


@pytest.mark.parametrize("text, kind, meant", [("2500 kw", q.DUTY, "kW"), ("5 mw", q.DUTY, "MW"),
                                               ("8.53 MMBTU/h", q.DUTY, "MMBtu/h"), ("108 T/h", q.MASS_FLOW, "t/h")])
def test_a_unit_in_the_wrong_letter_case_is_refused_with_its_spelling(text, kind, meant):
    """Units are read as written (T is the tesla, M mega, m milli or the metre): a unit of the
    right letters in the wrong case is refused, and the message gives the spelling meant (a new
    user's trial: '2500 kw' and '108 T/h' had been refused without it)."""
    with pytest.raises(q.QuantityError) as raised:
        q.to_default_unit(text, kind)
    assert f"letter case matters in units: write {meant!r}" in str(raised.value)
