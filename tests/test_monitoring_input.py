"""Plant data in: monitoring files (network/monitoring_file.py, network/measurement_points.py),
historian exports (solver/monitoring/historian.py) and steady-state windows
(solver/monitoring/windows.py).

Outside references: unit definitions (the international pound 0.45359237 kg exactly, 1959
agreement; the IT Btu 1055.05585262 J; °C = (°F - 32)·5/9; K = °C + 273.15 — all from
memory), identities of the network graph (a point's segment starts or ends at the unit it
names), pandas itself as the independent path for averages, and the malformed corpus in
tests/malformed_monitoring/ (MANIFEST.yaml says what each file breaks and what the error names).
"""

from __future__ import annotations

import os
import shutil
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml

from hxtrain.network import build_network, load_case
from hxtrain.network.errors import CaseError, format_path
from hxtrain.network.measurement_points import resolve_duty_unit, resolve_point, unit_conversion, unit_points
from hxtrain.network.monitoring_file import (DEFAULT_CO2_PER_FUEL, DEFAULT_FLOW_CHANGE, DEFAULT_UNCERTAINTY,
                                             load_monitoring, monitoring_from_mapping)
from hxtrain.network.quantities import QuantityError
from hxtrain.solver.demos import demo_case_path
from hxtrain.solver.monitoring.historian import read_history

HERE = Path(__file__).parent
CORPUS = HERE / "malformed_monitoring"
MANIFEST = yaml.safe_load((CORPUS / "MANIFEST.yaml").read_text(encoding="utf-8"))
REFUSED, SKIPPED = MANIFEST["refused"], MANIFEST["skipped"]
POUND = 0.45359237  # kg, exact by the 1959 international yard and pound agreement (from memory)
BTU_IT = 1055.05585262  # J, the International Table Btu (from memory)
MAX_MESSAGE_CHARS = 1000


# ----------------------------------------------------------------------------- helpers


def write_plant(folder: Path, tags: dict, data: pd.DataFrame | None = None, data_name="history.csv", **top) -> Path:
    """A monitoring file for the bundled crude demo in ``folder`` (and its data, if given)."""
    document = {"case": {"demo": "crude_preheat"}, "data": data_name, "tags": tags, **top}
    path = folder / "plant.yaml"
    path.write_text(yaml.safe_dump(document, sort_keys=False), encoding="utf-8")
    if data is not None:
        if data_name.endswith(".xlsx"):
            data.to_excel(folder / data_name, index=False)
        else:
            data.to_csv(folder / data_name, index=False)
    return path


def hourly(start, hours, **columns) -> pd.DataFrame:
    """A historian table: ISO times every hour, then the given columns (scalars or arrays)."""
    times = pd.date_range(start, periods=hours, freq="h")
    frame = pd.DataFrame({"time": times.strftime("%Y-%m-%d %H:%M")})
    for name, values in columns.items():
        frame[name] = np.broadcast_to(values, (hours,)) if np.ndim(values) == 0 else values
    return frame


@pytest.fixture(scope="module")
def crude_network():
    return build_network(load_case(demo_case_path("crude_preheat")))


# ----------------------------------------------------------------------------- the malformed corpus


def test_manifest_lists_every_monitoring_file_and_every_data_file_is_used():
    on_disk = {p.name for p in CORPUS.glob("*.yaml")} - {"MANIFEST.yaml", MANIFEST["base"]}
    listed = [e["file"] for e in REFUSED + SKIPPED]
    assert len(listed) == len(set(listed)), "a file is listed twice"
    assert on_disk == set(listed), (sorted(on_disk - set(listed)), sorted(set(listed) - on_disk))
    texts = "".join(p.read_text(encoding="utf-8") for p in CORPUS.glob("*.yaml"))
    unused = [p.name for p in (CORPUS / "data").iterdir() if f"data/{p.name}" not in texts]
    assert not unused, f"data files no monitoring file names: {unused}"
    assert len(REFUSED) >= 25 and sum(e["stage"] == "history" for e in REFUSED) >= 10


def test_the_corpus_base_is_valid_and_its_data_clean():
    """Each malformed file breaks one thing of base.yaml, so the base itself must pass."""
    monitoring = load_monitoring(CORPUS / MANIFEST["base"])
    history = read_history(monitoring)
    assert history.skipped.empty and history.samples.shape == (12, 6)
    assert np.allclose(history.samples["FI-1001"], 342 / 3.6)  # identity: t/h / 3.6 = kg/s


@pytest.mark.parametrize("entry", REFUSED, ids=[e["file"] for e in REFUSED])
def test_each_malformed_file_is_refused_naming_file_and_place(entry):
    path = CORPUS / entry["file"]
    with pytest.raises(CaseError) as caught:
        monitoring = load_monitoring(path)
        assert entry["stage"] == "history", f"{entry['file']} loaded; it should fail at load"
        read_history(monitoring)
    error = caught.value
    if entry["stage"] == "history":
        load_monitoring(path)  # the monitoring file itself is fine: the data are not
    text = str(error)
    expected_file = CORPUS / entry.get("error_file", entry["file"])
    assert Path(error.file).resolve() == expected_file.resolve(), text
    assert Path(error.file).name in text
    if entry["key"] is None:
        assert error.path == (), text
    else:
        assert format_path(error.path) == entry["key"] and entry["key"] in text, text
    if "row" in entry:
        assert f"row {entry['row']}" in text, text
    if "column" in entry:
        assert f"'{entry['column']}'" in text, text
    if "line" in entry:
        assert error.line == entry["line"], text
    assert entry["fragment"] in text, text
    assert len(text) <= MAX_MESSAGE_CHARS and "\n" not in text, text


@pytest.mark.parametrize("entry", SKIPPED, ids=[e["file"] for e in SKIPPED])
def test_bad_rows_are_skipped_with_a_reason_each(entry):
    history = read_history(load_monitoring(CORPUS / entry["file"]))
    found = [(int(r.row), r.column, r.reason) for r in history.skipped.itertuples()]
    assert found == [(e["row"], e["column"], e["reason"]) for e in entry["expect"]]
    assert len(history.samples) == entry["samples"]
    assert history.samples.index.is_monotonic_increasing and history.samples.index.is_unique
    # a bad cell blanks that tag only: the rest of its row stays
    for e in entry["expect"]:
        if e["column"] != "" and e["reason"] != "missing value":  # "": the whole row was skipped
            when = history.skipped.loc[history.skipped["row"] == e["row"], "time"].iloc[0]
            row = history.samples.loc[when]
            assert np.isnan(row[e["column"]]) and row.drop(e["column"]).notna().any()


FULL_BASE = {**yaml.safe_load((CORPUS / "base.yaml").read_text(encoding="utf-8")),
             "time_column": "time", "significance": 0.05,
             "steady_state": {"flow_change": "3 %", "temperature_change": 3, "minimum_samples": 2},
             "uncertainty": {"temperature": 1.0, "flow": "2 %", "duty": "5 %"},
             "projection": {"horizon": "26 weeks", "step": "7 days"}}
REPLACEMENTS = [None, -7, 10**400, "NaN", "5 furlong/fortnight", [1, 2], {"value": 1}, True, ""]


def key_paths(data, path=()):
    if isinstance(data, dict):
        for key, value in data.items():
            yield path + (key,)
            yield from key_paths(value, path + (key,))
    elif isinstance(data, list):
        for i, value in enumerate(data):
            yield path + (i,)
            yield from key_paths(value, path + (i,))


def test_any_value_replaced_by_junk_is_read_or_refused_with_a_key_path():
    """Every value of a full monitoring file replaced by junk of every type: the reader accepts
    it or raises a CaseError naming the file and a key path (never another exception)."""
    import copy

    monitoring_from_mapping(FULL_BASE, "full.yaml", CORPUS)
    for path in key_paths(FULL_BASE):
        for junk in REPLACEMENTS:
            data = copy.deepcopy(FULL_BASE)
            parent = data
            for part in path[:-1]:
                parent = parent[part]
            parent[path[-1]] = junk
            try:
                monitoring_from_mapping(data, "full.yaml", CORPUS)
            except CaseError as error:
                # a required key missing at the top is named in the message (its mapping is the file)
                assert error.file == "full.yaml" and (error.path or "missing key" in error.message), (path, junk)
                assert len(str(error)) <= MAX_MESSAGE_CHARS, (path, junk)


def test_a_directory_as_data_file_is_refused(tmp_path):
    (tmp_path / "history.csv").mkdir()
    monitoring = load_monitoring(write_plant(tmp_path, {"FI-1001": {"flow": "crude", "unit": "t/h"}}))
    with pytest.raises(CaseError) as caught:
        read_history(monitoring)
    assert caught.value.path == ("data",) and "not a regular file" in str(caught.value)


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0, reason="root reads any file")
def test_an_unreadable_data_file_is_refused(tmp_path):
    path = write_plant(tmp_path, {"FI-1001": {"flow": "crude", "unit": "t/h"}},
                       hourly("2026-01-01", 3, **{"FI-1001": 342}))
    (tmp_path / "history.csv").chmod(0)
    try:
        with pytest.raises(CaseError, match="permission denied"):
            read_history(load_monitoring(path))
    finally:
        (tmp_path / "history.csv").chmod(0o644)


# ----------------------------------------------------------------------------- a good file


GOOD_TAGS = {
    "FI-1001": {"flow": "crude", "unit": "t/h"},
    "FI-1002": {"flow": "residue", "unit": "lb/h", "uncertainty": "1 t/h"},
    "TI-1001": {"temperature": "crude", "unit": "degC", "uncertainty": 0.5},
    "TI-1011": {"temperature": "E-101.cold_out", "unit": "degF", "uncertainty": "0.9 degF"},
    "TI-1012": {"temperature": "E-101.hot_in", "unit": "K", "uncertainty": "1 K"},
    "FI-1101": {"flow": "crude_split.north", "unit": "kg/s", "uncertainty": "3 %"},
    "TI-1200": {"temperature": "F-101.inlet", "unit": "degF"},
    "TI-1300": {"temperature": "crude_mix", "unit": "degC", "column": "11TI1300.PV"},
    "TI-1400": {"temperature": "column_feed", "unit": "degC"},
    "JI-1201": {"duty": "F-101", "unit": "MW"},
    "JI-1202": {"duty": "F-101", "unit": "MMBtu/h"},
}


def good_data(hours=6):
    return hourly("2026-01-01", hours, **{
        "FI-1001": 342.0, "FI-1002": 100_000.0, "TI-1001": 30.0, "TI-1011": [212.0, 32.0, -40.0, 212.0, 212.0, 212.0],
        "TI-1012": 373.15, "FI-1101": 47.5, "TI-1200": 518.0, "11TI1300.PV": 250.0, "TI-1400": 365.0,
        "JI-1201": 25.0, "JI-1202": 100.0, "spare": 1.0})


def test_a_good_monitoring_file_is_read_with_its_defaults(tmp_path):
    path = write_plant(tmp_path, GOOD_TAGS, good_data(), window="6 h",
                       cleanings=[{"exchanger": "E-105", "date": "2026-03-14"},
                                  {"exchanger": "E-101", "date": "2026-02-01"}],
                       economics={"fuel_price": 8.0, "currency": "USD", "furnace_efficiency": "88 %"},
                       limits={"fired_duty": {"F-101": "30 MW"}, "inlet_temperature": {"F-101": "500 degF"}},
                       projection={"horizon": "13 weeks"})
    m = load_monitoring(path)
    assert m.file == str(path) and m.data_path == tmp_path / "history.csv" and m.time_column == "time"
    assert m.window == pd.Timedelta(hours=6) and m.steady_state.flow_change == DEFAULT_FLOW_CHANGE
    assert [c[0] for c in m.cleanings] == ["E-101", "E-105"]  # sorted by date
    assert m.cleanings[1][1] == pd.Timestamp("2026-03-14")
    assert m.economics["furnace_efficiency"] == pytest.approx(0.88)
    assert m.economics["co2_per_fuel"] == DEFAULT_CO2_PER_FUEL
    assert m.limits["fired_duty"]["F-101"] == pytest.approx(30_000.0)  # identity: 1 MW = 1000 kW
    assert m.limits["inlet_temperature"]["F-101"] == pytest.approx((500 - 32) * 5 / 9)  # °C = (°F - 32)·5/9
    assert m.projection.horizon == pd.Timedelta(days=91) and m.projection.step == pd.Timedelta(days=7)
    tags = m.tags
    assert tags["FI-1001"].relative_sigma == DEFAULT_UNCERTAINTY["flow"][1] and tags["FI-1001"].sigma is None
    assert tags["FI-1002"].sigma == pytest.approx(1 / 3.6)                # 1 t/h in kg/s (identity)
    assert tags["TI-1001"].sigma == 0.5                                   # a bare number: the default unit, K
    assert tags["TI-1011"].sigma == pytest.approx(0.5)                    # 0.9 °F of difference = 0.5 K
    assert tags["TI-1012"].sigma == pytest.approx(1.0)
    assert tags["FI-1101"].relative_sigma == pytest.approx(0.03)
    assert tags["TI-1200"].sigma == DEFAULT_UNCERTAINTY["temperature"][0]
    assert tags["JI-1201"].relative_sigma == DEFAULT_UNCERTAINTY["duty"][1]
    assert tags["TI-1300"].column == "11TI1300.PV" and tags["TI-1001"].column == "TI-1001"
    assert tags["JI-1201"].segment is None and tags["JI-1201"].point == "F-101"
    assert tags["FI-1001"].key == ("tags", "FI-1001")


def test_readings_are_converted_to_default_units_as_by_hand(tmp_path):
    """Hand values: t/h / 3.6 = kg/s; lb = 0.45359237 kg; °C = (°F - 32)·5/9 (212 °F boils water at
    1 atm = 100 °C; -40 is the same on both scales); K - 273.15; MW = 1000 kW; MMBtu/h = 1e6 IT Btu/h
    (pint's Btu is 1055.056 J, the ISO value: within 2e-7 of the IT Btu)."""
    history = read_history(load_monitoring(write_plant(tmp_path, GOOD_TAGS, good_data())))
    s = history.samples
    assert np.allclose(s["FI-1001"], 95.0, rtol=1e-12)
    assert np.allclose(s["FI-1002"], 100_000 * POUND / 3600, rtol=1e-12)
    assert np.allclose(s["TI-1011"], [100.0, 0.0, -40.0, 100.0, 100.0, 100.0], rtol=0, atol=1e-10)
    assert np.allclose(s["TI-1012"], 100.0, rtol=0, atol=1e-10)
    assert np.allclose(s["TI-1200"], (518 - 32) * 5 / 9, rtol=1e-12)
    assert np.allclose(s["TI-1300"], 250.0)
    assert np.allclose(s["JI-1201"], 25_000.0, rtol=1e-12)
    assert np.allclose(s["JI-1202"], 100e6 * BTU_IT / 3600 / 1000, rtol=2e-7)
    assert list(s.columns) == list(GOOD_TAGS) and history.unused_columns == ["spare"]
    assert history.skipped.empty and history.rows == 6


def test_an_xlsx_export_reads_as_the_same_csv_does(tmp_path):
    """Identity: one table written by pandas both ways reads back the same."""
    csv = read_history(load_monitoring(write_plant(tmp_path, GOOD_TAGS, good_data()))).samples
    xlsx_dir = tmp_path / "xlsx"
    xlsx_dir.mkdir()
    data = good_data()
    data["time"] = pd.to_datetime(data["time"])  # a workbook holds real date-times
    history = read_history(load_monitoring(write_plant(xlsx_dir, GOOD_TAGS, data, data_name="history.xlsx")))
    pd.testing.assert_frame_equal(history.samples, csv)
    assert history.sheet == "Sheet1"


def test_times_with_utc_offsets_are_refused_naming_row_and_column(tmp_path):
    """Daily windows run from the plant's midnight: times carrying a UTC offset are refused with
    the row and column, not shifted silently."""
    data = hourly("2026-01-01", 3, **{"FI-1001": 342.0})
    data["time"] = ["2026-01-01T02:00+02:00", "2026-01-01T01:00+00:00", "2026-01-01T03:00+01:00"]
    monitoring = load_monitoring(write_plant(tmp_path, {"FI-1001": {"flow": "crude", "unit": "t/h"}}, data))
    with pytest.raises(CaseError, match=r"history\.csv: row 2, column 'time': .*time-zone offset"):
        read_history(monitoring)


def test_a_case_file_beside_the_monitoring_file_is_found(tmp_path):
    shutil.copy(demo_case_path("crude_preheat"), tmp_path / "plant_case.yaml")
    path = write_plant(tmp_path, {"FI-1001": {"flow": "crude", "unit": "t/h"}})
    text = path.read_text(encoding="utf-8").replace("case:\n  demo: crude_preheat", "case: plant_case.yaml")
    path.write_text(text, encoding="utf-8")
    assert load_monitoring(path).case.file == str(tmp_path / "plant_case.yaml")


# ----------------------------------------------------------------------------- points and units


def test_points_resolve_to_the_segment_at_the_named_port(crude_network):
    """Graph identity: a point's segment leaves (or enters) the unit and port it names."""
    net = crude_network
    segment = lambda text: net.segments[resolve_point(net, text)]  # noqa: E731
    assert (segment("crude").source, segment("crude").source_port) == ("crude", "out")
    assert (segment("E-101.cold_out").source, segment("E-101.cold_out").source_port) == ("E-101", "cold")
    assert (segment("E-101.hot_in").target, segment("E-101.hot_in").target_port) == ("E-101", "hot")
    assert (segment("crude_split.north").source, segment("crude_split.north").source_port) == ("crude_split", "north")
    assert segment("crude_split.inlet").target == "crude_split"
    assert segment("crude_mix").source == "crude_mix" and segment("column_feed").target == "column_feed"
    assert segment("F-101.inlet").target == "F-101" and segment("F-101.outlet").source == "F-101"
    # every point of every unit names a segment touching that unit
    for name in net.units:
        for text, index in unit_points(net, name).items():
            seg = net.segments[index]
            assert name in (seg.source, seg.target), text
    with pytest.raises(CaseError, match="is not a point of crude_split"):
        resolve_point(net, "crude_split")  # one inlet, two outlets: ambiguous
    assert resolve_duty_unit(net, "C-101") == "C-101"
    with pytest.raises(CaseError, match="no duty of its own"):
        resolve_duty_unit(net, "crude_mix")


@pytest.mark.parametrize("unit, quantity, scale, offset", [
    ("degF", "temperature", 5 / 9, -32 * 5 / 9),          # °C = (°F - 32)·5/9
    ("K", "temperature", 1.0, -273.15),                    # K = °C + 273.15
    ("degR", "temperature", 5 / 9, -273.15),               # °R = K·9/5
    ("t/h", "flow", 1 / 3.6, 0.0),
    ("lb/h", "flow", POUND / 3600, 0.0),
    ("kg/s", "flow", 1.0, 0.0),
    ("MW", "duty", 1000.0, 0.0),
    ("Btu/h", "duty", BTU_IT / 3600 / 1000, 0.0),
    ("MMBtu/h", "duty", 1e6 * BTU_IT / 3600 / 1000, 0.0),
])
def test_unit_conversions_against_unit_definitions(unit, quantity, scale, offset):
    got_scale, got_offset = unit_conversion(unit, quantity)
    assert got_scale == pytest.approx(scale, rel=2e-7) and got_offset == pytest.approx(offset, rel=1e-12, abs=1e-12)


@pytest.mark.parametrize("unit, quantity", [("delta_degC", "temperature"), ("kW", "temperature"), ("degC", "flow"),
                                            ("m^3/h", "flow"), ("t/h", "duty"), ("MBtu/h", "duty"), ("", "flow"),
                                            ("5 kg/s", "flow"), ("furlong", "flow")])
def test_units_that_do_not_fit_are_refused(unit, quantity):
    with pytest.raises(QuantityError):
        unit_conversion(unit, quantity)


def test_the_reader_works_from_python_data_too():
    m = monitoring_from_mapping({"case": {"demo": "crude_preheat"}, "data": "x.xlsx",
                                 "tags": {"T": {"temperature": "crude", "unit": "degC"}}})
    assert m.projection is None and m.economics is None and m.cleanings == [] and m.significance == 0.05
    assert m.tags["T"].to_default_unit([10.0]) == pytest.approx([10.0])
    assert m.tags["T"].from_default_unit(m.tags["T"].to_default_unit([42.0])) == pytest.approx([42.0])


# ----------------------------------------------------------------------------- windows


def windows_of(tmp_path, tags, data, **top):
    monitoring = load_monitoring(write_plant(tmp_path, tags, data, **top))
    return monitoring, read_history(monitoring).windows(monitoring)


FLOW_AND_TEMPERATURE = {"FI-1001": {"flow": "crude", "unit": "t/h"},
                        "TI-1011": {"temperature": "E-101.cold_out", "unit": "degC"}}


def test_window_means_and_counts_match_pandas_grouping_by_start(tmp_path):
    """Independent path: group the samples by the floor of their time to the window."""
    rng = np.random.default_rng(3)
    data = hourly("2026-01-01 00:00", 48, **{"FI-1001": rng.normal(342, 2, 48), "TI-1011": rng.normal(60, 0.3, 48)})
    data.loc[[5, 6, 30], "TI-1011"] = np.nan
    _, windows = windows_of(tmp_path, FLOW_AND_TEMPERATURE, data, window="6 h")
    times = pd.to_datetime(data["time"])
    grouped = data.assign(start=times.dt.floor("6h")).groupby("start")
    assert np.allclose(windows.mean["FI-1001"], grouped["FI-1001"].mean() / 3.6, rtol=1e-12)
    assert np.allclose(windows.mean["TI-1011"], grouped["TI-1011"].mean(), rtol=1e-12)
    assert list(windows.count["TI-1011"]) == list(grouped["TI-1011"].count())
    assert list(windows.mean.index) == list(grouped.groups)  # labelled by window start


def test_a_step_in_flow_makes_exactly_the_window_containing_it_transient(tmp_path):
    """Steady-state test (common practice): a 10 % flow step one hour into a six-hour window
    moves the flow's range there by 10 % > 3 %; the next window's mean differs from that
    window's by 10 %/6 < 3 %, so it is steady again."""
    flow = np.full(48, 342.0)
    flow[13:] = 376.2  # +10 % from 13:00, inside the window 12:00-18:00
    _, windows = windows_of(tmp_path, FLOW_AND_TEMPERATURE, hourly("2026-01-01", 48, **{"FI-1001": flow,
                                                                                          "TI-1011": 60.0}),
                            window="6 h")
    assert list(windows.steady.index[~windows.steady]) == [pd.Timestamp("2026-01-01 12:00")]
    assert "FI-1001" in windows.reason[pd.Timestamp("2026-01-01 12:00")]
    assert (windows.reason[windows.steady] == "").all()


def test_a_temperature_step_at_a_window_boundary_is_caught_by_the_change_of_mean(tmp_path):
    """A 5 K step exactly at 12:00: no range inside any window, a 5 K > 3 K change of window
    mean from 06:00-12:00 to 12:00-18:00 (common practice threshold)."""
    temperature = np.where(np.arange(48) >= 12, 65.0, 60.0)
    _, windows = windows_of(tmp_path, FLOW_AND_TEMPERATURE,
                            hourly("2026-01-01", 48, **{"FI-1001": 342.0, "TI-1011": temperature}), window="6 h")
    assert list(windows.steady.index[~windows.steady]) == [pd.Timestamp("2026-01-01 12:00")]
    assert "since the window before" in windows.reason.iloc[2]


def test_too_few_samples_and_empty_windows_are_not_steady(tmp_path):
    data = hourly("2026-01-01", 24, **{"FI-1001": 342.0, "TI-1011": 60.0})
    data = data.drop(index=range(6, 12))                 # 06:00-12:00: no data at all
    data.loc[[13, 14, 15, 16], "TI-1011"] = np.nan       # 12:00-18:00: two temperatures only
    _, windows = windows_of(tmp_path, FLOW_AND_TEMPERATURE, data, window="6 h",
                            steady_state={"minimum_samples": 3})
    assert list(windows.steady) == [True, False, False, True]
    assert windows.reason.iloc[1] == "no data"
    assert windows.reason.iloc[2].startswith("too few samples (under 3): TI-1011 2 samples")


def test_a_tag_without_samples_in_a_window_leaves_it_nan_and_steady(tmp_path):
    """A missing instrument is unmeasured in that window (the reconciliation's business), not a
    reason to drop the window."""
    data = hourly("2026-01-01", 12, **{"FI-1001": 342.0, "TI-1011": 60.0})
    data.loc[0:5, "TI-1011"] = np.nan
    _, windows = windows_of(tmp_path, FLOW_AND_TEMPERATURE, data, window="6 h")
    assert np.isnan(windows.mean["TI-1011"].iloc[0]) and windows.steady.all()
    assert np.isnan(windows.sigma["TI-1011"].iloc[0])


def test_window_sigma_is_the_instrument_sigma_not_divided_by_the_count(tmp_path):
    """Spec: absolute sigma as given (0.9 °F of difference = 0.5 K); relative ones times the
    window mean; NOT divided by sqrt(n) (a bias does not average out)."""
    tags = {"FI-1001": {"flow": "crude", "unit": "t/h", "uncertainty": "2 %"},
            "TI-1011": {"temperature": "E-101.cold_out", "unit": "degF", "uncertainty": "0.9 degF"}}
    flow = np.repeat([342.0, 350.0], 6)
    _, windows = windows_of(tmp_path, tags, hourly("2026-01-01", 12, **{"FI-1001": flow, "TI-1011": 140.0}),
                            window="6 h")
    assert np.allclose(windows.sigma["TI-1011"], 0.5)
    assert np.allclose(windows.sigma["FI-1001"], 0.02 * np.array([342.0, 350.0]) / 3.6)
    assert (windows.count["FI-1001"] == 6).all()


def test_a_year_of_hourly_data_for_forty_tags_reads_and_averages_quickly(tmp_path, crude_network, capsys,
                                                                          monkeypatch):
    """Timing is printed, not asserted (run with -s to see it). The readings are noise about one
    value, not the plant's, so the unit-slip screen (tested on its own) is left out here."""
    monkeypatch.setattr("hxtrain.solver.monitoring.historian.screen_unit_slips", lambda history, monitoring: None)
    points = [p for unit in crude_network.units for p in unit_points(crude_network, unit)][:40]
    tags = {f"TI-{i}": {"temperature": p, "unit": "degF"} for i, p in enumerate(points[:30])}
    tags.update({f"FI-{i}": {"flow": p, "unit": "t/h"} for i, p in enumerate(points[30:])})
    rng = np.random.default_rng(1)
    data = hourly("2025-01-01", 8760, **{name: rng.normal(300.0, 1.0, 8760) for name in tags})
    monitoring = load_monitoring(write_plant(tmp_path, tags, data, window="1 day"))
    start = time.perf_counter()
    history = read_history(monitoring)
    middle = time.perf_counter()
    windows = history.windows(monitoring)
    end = time.perf_counter()
    assert history.samples.shape == (8760, 40) and len(windows.mean) == 365
    with capsys.disabled():
        print(f"\n8760 rows x 40 tags: read_history {middle - start:.3f} s, windows {end - middle:.3f} s")


def test_a_missing_tag_column_suggests_only_columns_no_other_tag_reads(tmp_path):
    """TI-1011's column is missing; 'TI-1001' is as close, but tag TI-1001 reads it, so suggesting
    it would send the user to break another tag; an unread 'TI-1O11' (a letter O) is suggested."""
    tags = {"TI-1001": {"temperature": "crude", "unit": "degC"},
            "TI-1011": {"temperature": "E-101.cold_out", "unit": "degC"}}
    for extra, suggested in ((None, None), ("TI-1O11", "TI-1O11")):
        columns = {"TI-1001": 25.0, **({extra: 60.0} if extra else {})}
        monitoring = load_monitoring(write_plant(tmp_path, tags, hourly("2026-01-01", 6, **columns)))
        with pytest.raises(CaseError) as caught:
            read_history(monitoring)
        text = str(caught.value)
        assert "has no column 'TI-1011' for tag TI-1011" in text and "'TI-1001'?" not in text
        assert (f"(did you mean '{suggested}'?)" in text) if suggested else "did you mean" not in text


def test_a_transmitter_out_of_service_leaves_its_tag_unmeasured_not_the_file_refused(tmp_path):
    """FI-1001 reads "comm fail" in 8 of 12 rows, every other cell good: its text cells are left
    out (the tag unmeasured there) and the file is read (a new user's trial: one dead transmitter
    had refused the whole file as "probably a wrong unit"). Eight of twelve readings impossible
    (a negative flow) still refuse it, naming the column: that is a unit slip or the wrong tag."""
    first, later = good_data(), good_data()
    later["time"] = pd.date_range("2026-01-01 06:00", periods=6, freq="h").strftime("%Y-%m-%d %H:%M")
    data = pd.concat([first, later], ignore_index=True)
    data["FI-1001"] = data["FI-1001"].astype(object)
    data.loc[2:9, "FI-1001"] = "comm fail"
    history = read_history(load_monitoring(write_plant(tmp_path, GOOD_TAGS, data)))
    left = history.skipped[history.skipped["reason"] == "not a number"]
    assert len(left) == 8 and set(left["column"]) == {"FI-1001"}
    assert history.samples["FI-1001"].notna().sum() == 4
    data.loc[2:9, "FI-1001"] = -50.0
    with pytest.raises(CaseError) as refused:
        read_history(load_monitoring(write_plant(tmp_path, GOOD_TAGS, data)))
    assert "8 of 12 data rows (67%) are bad" in str(refused.value) and "in column 'FI-1001'" in str(refused.value)


def test_the_window_after_a_ramp_is_not_judged_by_its_change_from_the_ramp(tmp_path):
    """A temperature ramps 10 K across 12:00-18:00 and stays: that window moved within itself
    (its trend) and is transient; the next, level at the new value, differs from its mean by 5 K,
    which says nothing of it (a new user's trial: a steady day had been set aside only for its
    difference from the transient day before). A step at a window boundary after a steady window is
    still caught (test above)."""
    hours = np.arange(48)
    temperature = 60.0 + np.clip(hours - 12, 0, 6) * 10.0 / 6.0
    _, windows = windows_of(tmp_path, FLOW_AND_TEMPERATURE,
                            hourly("2026-01-01", 48, **{"FI-1001": 342.0, "TI-1011": temperature}), window="6 h")
    assert list(windows.steady.index[~windows.steady]) == [pd.Timestamp("2026-01-01 12:00")]
    assert "across the window" in windows.reason.iloc[2]


def test_a_repeated_time_keeps_the_first_copy_and_says_whether_the_copies_agree(tmp_path):
    """Rows 4 and 6 repeat the times of rows 3 and 5 (the header is row 1): the first copies are
    kept; row 4 reads the same, row 6 reads TI-1001 differently (a trial's export dropped such a
    conflicting copy without a word). The console names each repeated row, and a negative flow
    (an impossible reading) with its row and time, not only their counts."""
    from hxtrain.solver.reporting.monitoring_text import _skipped_lines

    data = good_data()
    data.loc[2, "time"], data.loc[4, "time"] = data.loc[1, "time"], data.loc[3, "time"]
    data.loc[2, "FI-1001":] = data.loc[1, "FI-1001":]
    data.loc[4, "TI-1001"] = 99.9
    data.loc[5, "FI-1001"] = -5.0
    history = read_history(load_monitoring(write_plant(tmp_path, GOOD_TAGS, data)))
    repeated = history.skipped[history.skipped["reason"] == "time repeated"].set_index("row")["detail"]
    assert repeated.to_dict() == {4: "the time of row 3, whose readings are kept; this row's are the same",
                                  6: "the time of row 5, whose readings are kept; this row's differ: TI-1001 99.9 "
                                     "against 30.0: which copy is right?"}
    lines = _skipped_lines(history.skipped)
    named = "    2026-01-01 01:00 (data file row 4): the time of row 3, whose readings are kept; this row's are the same"
    assert named in lines
    assert any(line.startswith("    FI-1001 at 2026-01-01 05:00 (data file row 7): -5 t/h") for line in lines)
