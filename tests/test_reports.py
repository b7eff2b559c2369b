"""Reports people look at: display units, console tables that fit, the workbook, the HTML report,
and the trade's units on input."""

import json
import re

import numpy as np
import openpyxl
import pytest
import yaml

from hxtrain.network import case_from_mapping
from hxtrain.network import quantities as q
from hxtrain.network.case import DISPLAY_KINDS
from hxtrain.solver import demo_case_path, simulate
from hxtrain.solver.reporting.display_units import DISPLAY_TABLE, Display
from hxtrain.solver.reporting.html_report import case_report
from hxtrain.solver.reporting.text import text_report

from cli_helpers import fits_the_width, run_in_process

DEMOS = ("crude_preheat", "feed_effluent", "product_cooling")


@pytest.fixture(scope="module")
def results():
    return {demo: simulate(demo_case_path(demo)) for demo in DEMOS}


# ----------------------------------------------------------------------------- display units


def test_the_units_table_covers_every_quantity_a_case_may_choose():
    assert {row.quantity for row in DISPLAY_TABLE} == set(DISPLAY_KINDS)


@pytest.mark.parametrize("column, stored, shown", [
    ("hot_in_c", 100.0, 212.0),                 # °F = 1.8 °C + 32 (definition of the degree Fahrenheit)
    ("lmtd_k", 10.0, 18.0),                     # a difference: 1 K = 1.8 °F
    ("duty_kw", 293.07107, 1.0),                # 1 MMBtu/h = 293.07107 kW (NIST SP 811, Btu_IT, from memory)
    ("flow_kg_s", 1.0, 7936.6414),              # 1 kg/s = 3600 / 0.45359237 lb/h (the pound's definition)
    ("dp_tube_kpa", 6.894757, 1.0),             # 1 psi = 6.894757 kPa (NIST SP 811, from memory)
    ("u_service_w_m2_k", 5.678263, 1.0),         # 1 Btu/h·ft²·°F = 5.678263 W/m²·K (NIST SP 811, from memory)
    ("fouling_shell_m2_k_w", 0.17611, 1.0),      # 1 h·ft²·°F/Btu = 0.17611 m²·K/W (the inverse)
])
def test_us_units_against_published_factors(column, stored, shown):
    converted = Display("us").column(column).convert([stored])[0]
    assert converted == pytest.approx(shown, rel=2e-6)


def test_a_case_chooses_units_per_quantity_and_the_choice_is_checked():
    data = yaml.safe_load(demo_case_path("feed_effluent").read_text())
    data.setdefault("settings", {})["display_units"] = {"temperature": "degF", "duty": "MW"}
    case = case_from_mapping(data)
    display = Display("si").with_case(case)
    assert display.column("hot_in_c").label == "°F" and display.column("duty_kw").name == "duty_mw"
    assert display.column("flow_kg_s").label == "kg/s"
    data["settings"]["display_units"] = {"temperature": "kg"}
    with pytest.raises(Exception, match=r"settings\.display_units\.temperature"):
        case_from_mapping(data)


def test_messages_show_their_numbers_in_the_chosen_units():
    assert Display("us").message("reaches 281.1 °C, above 280.0 °C") == "reaches 538.0 °F, above 536.0 °F"
    assert Display("si").message("reaches 281.1 °C") == "reaches 281.1 °C"


@pytest.mark.parametrize("text, kind, expected", [
    ("25 MMBtu/h", q.DUTY, 7326.7778),                       # 25 × 293.07107 kW
    ("50000 bbl/d at 870 kg/m^3", q.MASS_FLOW, 60.03426),    # 50000 × 0.158987 m³ / 86400 s × 870 (barrel: 42 US gal)
    ("60 Btu/h·ft²·°F", q.HEAT_TRANSFER_COEFFICIENT, 340.6958),
])
def test_the_trades_units_are_read(text, kind, expected):
    assert q.to_default_unit(text, kind) == pytest.approx(expected, rel=1e-5)


def test_a_volume_flow_without_a_density_is_refused_with_a_hint():
    with pytest.raises(q.QuantityError, match="volume flow.*at 870 kg/m"):
        q.to_default_unit("50000 bbl/d", q.MASS_FLOW)


# ----------------------------------------------------------------------------- the console


@pytest.mark.parametrize("demo", DEMOS)
def test_the_console_report_fits_120_columns_and_wide_prints_everything(demo, results):
    result = results[demo]
    fitted = text_report(result, display=Display())
    assert fits_the_width(fitted)
    wide = text_report(result, display=Display(wide=True))
    for column in ("hot in", "UA", "LMTD", "approach", "segment"):
        assert column in fitted and column in wide
    assert "…" not in wide
    for tag in result.units.index[result.units["group"] == "exchangers"]:
        assert re.search(rf"^{re.escape(tag)}\s", fitted, re.MULTILINE)


def test_us_units_on_the_console(capsys):
    code, out, err = run_in_process(capsys, "run", "--units", "us")
    assert code == 0, err
    assert "°F" in out and "MMBtu/h" in out and "°C" not in out.split("Totals")[1]
    assert fits_the_width(out)


# ----------------------------------------------------------------------------- files


def test_the_workbook_has_units_formats_frozen_headers_and_a_limits_sheet(tmp_path, capsys):
    target = tmp_path / "r.xlsx"
    assert run_in_process(capsys, "run", "--units", "us", "--out", target)[0] == 0
    book = openpyxl.load_workbook(target)
    assert book.sheetnames[:2] == ["about", "limits"]
    limits = book["limits"]
    assert limits.sheet_properties.tabColor is not None and limits["A2"].fill.fgColor.rgb.endswith("FFC7CE")
    assert "E-112" in [c.value for c in limits["A"]]
    units = book["units"]
    assert units.freeze_panes == "B2"
    header = [c.value for c in units[1]]
    assert "duty_mmbtu_h" in header and "hot_in_f" in header and "duty_kw" not in header
    duty = header.index("duty_mmbtu_h") + 1
    assert any(units.cell(row, duty).number_format == "#,##0.000" for row in range(2, units.max_row + 1))
    about = dict((a, b) for a, b in book["about"].iter_rows(min_row=2, values_only=True))
    assert about["units"].startswith("US customary") and "caution" in about
    # a value too small for its column's decimals is shown in scientific form (a trial saw the
    # energy balance's 1.2e-14 as 0.00)
    for row in book["about"].iter_rows(min_row=2):
        if isinstance(row[1].value, float) and 0.0 < abs(row[1].value) < 0.005:
            assert row[1].number_format == "0.00E+00", row[0].value
    assert any(isinstance(b, float) and 0.0 < abs(b) < 0.005 for b in about.values())


def test_json_and_csv_carry_the_unit_in_every_key(tmp_path, capsys):
    assert run_in_process(capsys, "run", "--units", "us", "--out", tmp_path / "r.json")[0] == 0
    document = json.loads((tmp_path / "r.json").read_text())
    assert document["display_units"]["temperature"]["unit"] == "°F"
    assert "heat_recovered_mmbtu_h" in document["summary"]
    assert run_in_process(capsys, "run", "--out", tmp_path / "r.csv")[0] == 0
    assert "duty_kw" in (tmp_path / "r.csv").read_text().splitlines()[0]


# ----------------------------------------------------------------------------- the HTML report


def test_the_html_report_is_self_contained_with_limits_first(results):
    page = case_report(results["crude_preheat"], Display())
    assert "<script" not in page  # nothing runs, nothing is fetched: no scripts, no outside resources
    assert not re.search(r'(src|href)="(https?:)?//|@import|url\((?!#)', page)
    sections = [m.group(1) for m in re.finditer(r'<section id="([a-z]+)"', page)]
    assert sections[:4] == ["caution", "limits", "totals", "network"]
    assert 'href="#unit-E-112"' in page and 'id="unit-E-112"' in page
    assert page.count("<svg") == 2 + 12  # network, profiles, one T–Q picture per exchanger


def test_hxtrain_report_writes_a_case_and_a_study(tmp_path, capsys):
    code, out, err = run_in_process(capsys, "report", "--demo", "product_cooling", "--units", "us",
                                    "--out", tmp_path / "c.html")
    assert code == 0, err and "bytes" in out
    assert "°F" in (tmp_path / "c.html").read_text()
    code, out, err = run_in_process(capsys, "report", demo_case_path("crude_preheat").with_name(
        "crude_preheat_study.yaml"), "--out", tmp_path / "s.html")
    assert code == 0, err
    page = (tmp_path / "s.html").read_text()
    assert "Duty by unit" in page and "Key totals" in page and 'id="limits"' in page


def test_hxtrain_report_refuses_an_output_that_is_not_html(tmp_path, capsys):
    code, out, err = run_in_process(capsys, "report", "--out", tmp_path / "r.pdf")
    assert code == 2 and ".html" in err


def test_the_diagram_draws_a_bypass_branch_with_its_stream_and_no_unit_on_another_units_link():
    """A cooled stream split, one branch straight into a mixer (no temperature change along it):
    every row of that stream runs right to left like the stream, and no two units share a
    vertical where their links would overlap (a junction is moved half a column)."""
    from pathlib import Path

    from hxtrain.network import load_case
    from hxtrain.solver.reporting import network_diagram as diagram

    result = simulate(load_case(Path(__file__).parent / "valid" / "split_branch_to_mixer.yaml"))
    rows, placed, junctions = diagram.rows_of(result)
    gas_oil = [r for r in rows if r.name.startswith(("gas_oil", "go_split", "go_mix"))]
    assert len(gas_oil) == 4 and not any(r.heated for r in gas_oil)
    column = diagram.columns(rows)
    ordered = diagram.ordered_rows(rows, column)
    y = {row.name: k for k, row in enumerate(ordered)}
    spans = {}
    for row in ordered:
        for node in row.nodes:
            spans.setdefault(node, []).append(y[row.name])
    x = {n: diagram.COLUMN * c for n, c in column.items()}
    diagram._apart(x, spans, junctions)
    for a in x:
        for b in x:
            if a < b and x[a] == x[b]:
                assert max(spans[a]) < min(spans[b]) or max(spans[b]) < min(spans[a]), (a, b)
    svg = diagram.network_svg(result, Display())
    assert svg.count('stroke="#2f6690" stroke-width="3"') == 1  # only the feed row is drawn in the heated colour


def test_a_bypass_is_in_the_table_and_drawn_round_its_unit_on_its_side():
    """A quarter of the oil round E-1 and 40 % of the water round E-2: the exchanger table gives
    each fraction on its side, and the diagram draws one dashed arc per bypass, on the row of
    the side bypassed, titled with the fraction; E-1's tag is lifted over its arc (a new user's
    trial: bypasses had not been drawn at all)."""
    from hxtrain.solver.reporting import network_diagram as diagram

    data = {"fluids": {"oil": {"cp": 2.4}, "water": {"cp": 4.18}},
            "streams": {"oil": {"fluid": "oil", "flow": 20, "supply_temperature": 180,
                                "path": "E-1.hot -> E-2.hot -> oil_out"},
                        "water": {"fluid": "water", "flow": 40, "supply_temperature": 30,
                                  "path": "E-2.cold -> E-1.cold -> water_out"}},
            "exchangers": {"E-1": {"arrangement": "counterflow", "ua": 40, "bypass": {"hot": 0.25}},
                           "E-2": {"arrangement": "counterflow", "ua": 30, "bypass": {"cold": 0.4}}},
            "products": {"oil_out": {}, "water_out": {}}}
    result = simulate(case_from_mapping(data, "<test>"))
    table = result.units
    assert table.at["E-1", "hot_bypass_fraction"] == 0.25 and np.isnan(table.at["E-1", "cold_bypass_fraction"])
    assert table.at["E-2", "cold_bypass_fraction"] == 0.4 and np.isnan(table.at["E-2", "hot_bypass_fraction"])
    svg = diagram.network_svg(result, Display())
    arcs = re.findall(r'<path d="M[^"]+ Q([\d.]+),([\d.]+) [^"]+" fill="none" stroke="(#\w+)"[^>]*><title>([^<]+)</title>',
                      svg)
    assert sorted(a[3] for a in arcs) == ["E-1: 25% of the hot side goes round it (bypass)",
                                          "E-2: 40% of the cold side goes round it (bypass)"]
    drawn = diagram.rows_of(result)[0]
    rows = {r.name: diagram.TOP + diagram.ROW * k
            for k, r in enumerate(diagram.ordered_rows(drawn, diagram.columns(drawn)))}
    by_unit = {title[:3]: (float(y), colour) for _, y, colour, title in arcs}
    assert by_unit["E-1"] == (rows["oil"] - 2 * diagram.BYPASS_RISE, diagram.COOLED)    # above the oil, the top row
    assert by_unit["E-2"] == (rows["water"] + 2 * diagram.BYPASS_RISE, diagram.HEATED)  # below the water
    assert f'y="{rows["oil"] - 14 - diagram.BYPASS_RISE}" text-anchor="middle" font-weight="bold"' in svg
    assert ">bypass hot 25%</text>" in svg and ">bypass cold 40%</text>" in svg  # in print too, not only a title


def test_a_loop_through_both_sides_of_an_exchanger_draws_its_bypass_on_the_side_bypassed():
    """A feed-effluent loop: one path passes E-2's cold side, a heater, then E-2's hot side, and
    an air cooler. The cold side's bypass is drawn once, on the heated (blue) stream (a trial
    found no arc at all, and a hot bypass drawn on both); the air cooler, whose process is its hot
    side, is drawn as a cooler, not in the heaters' colour."""
    from hxtrain.solver.reporting import network_diagram as diagram

    data = {"fluids": {"feed": {"cp": 2.3}},
            "streams": {"feed": {"fluid": "feed", "flow": 20, "supply_temperature": 40,
                                 "path": "E-2.cold -> F-1 -> E-2.hot -> A-1 -> product"}},
            "heaters": {"F-1": {"outlet_temperature": 350}},
            "exchangers": {"E-2": {"arrangement": "counterflow", "ua": 60, "bypass": {"cold": 0.1}}},
            "air_coolers": {"A-1": {"tube_rows": 4, "tube_passes": 2, "ua": 40,
                                    "air": {"inlet_temperature": 30, "flow": 150}}},
            "products": {"product": {}}}
    result = simulate(case_from_mapping(data, "<test>"))
    svg = diagram.network_svg(result, Display())
    arcs = re.findall(r'fill="none" stroke="(#\w+)"[^>]*><title>([^<]+)</title>', svg)
    assert arcs == [(diagram.HEATED, "E-2: 10% of the cold side goes round it (bypass)")], arcs
    assert ">bypass cold 10%</text>" in svg
    cooler = re.search(r'<rect [^>]*fill="(#\w+)"[^>]*/>\s*<text[^>]*>A-1<', svg)
    heater = re.search(r'<rect [^>]*fill="(#\w+)"[^>]*/>\s*<text[^>]*>F-1<', svg)
    assert (cooler.group(1), heater.group(1)) == (diagram.COOLS, diagram.HEATS)


def test_a_hot_stream_whose_exchanger_is_bypassed_whole_is_still_drawn_cooled():
    """The oil all round its one exchanger: its temperature does not change, but it passes a hot
    side, so it is drawn cooled (rust, right to left) and profiled among the cooled streams (a new
    user's trial found it drawn as a heated stream)."""
    from hxtrain.solver.reporting import network_diagram as diagram

    data = {"fluids": {"oil": {"cp": 2.4}, "water": {"cp": 4.18}},
            "streams": {"oil": {"fluid": "oil", "flow": 20, "supply_temperature": 180, "path": "E-1.hot -> oil_out"},
                        "water": {"fluid": "water", "flow": 40, "supply_temperature": 30,
                                  "path": "E-1.cold -> water_out"}},
            "exchangers": {"E-1": {"arrangement": "counterflow", "ua": 40, "bypass": {"hot": 1.0}}},
            "products": {"oil_out": {}, "water_out": {}}}
    rows = {r.name: r for r in diagram.rows_of(simulate(case_from_mapping(data, "<test>")))[0]}
    assert not rows["oil"].heated and rows["water"].heated


def test_profile_points_keep_each_unit_at_its_own_temperature():
    """The stream profiles put a point after every unit of a path: on the crude demo's crude, a
    desalter (no duty) is a step down at E-103's abscissa, and E-104's point is E-104's outlet
    (the first version shifted every point after a unit without a duty by one)."""
    from hxtrain.solver.reporting.figures import profile_points
    from hxtrain.solver.reporting.network_diagram import rows_of

    result = simulate(demo_case_path("crude_preheat"))
    rows = {row.name: row for row in rows_of(result)[0]}
    nodes, duties, exchanged, temps = profile_points(rows["crude"], result.units)
    assert nodes == ["E-101", "E-102", "E-103", "D-101", "E-104"]
    streams = result.streams.set_index("segment")
    assert temps[4] == streams.loc["D-101.crude -> E-104.cold", "temperature_c"]
    assert temps[5] == streams.loc["E-104.cold -> crude_split", "temperature_c"]
    assert duties[3] == 0.0 and exchanged[4] == exchanged[3]
    assert exchanged[5] - exchanged[4] == pytest.approx(result.units.loc["E-104", "duty_kw"], rel=1e-12)
    nodes, _, _, temps = profile_points(rows["crude_mix"], result.units)
    assert nodes == ["E-109", "E-110", "E-111", "E-112"] and len(temps) == 5


def test_a_study_without_variants_reports_without_an_empty_chart(tmp_path, capsys):
    """Defect: a study of specifications only drew an empty 'changes from the base' chart, and
    matplotlib's warning about its empty legend reached the terminal."""
    import warnings

    from hxtrain.solver.cli.main import main

    study = tmp_path / "specs.yaml"
    study.write_text(f"base: {demo_case_path('product_cooling')}\nspecifications:\n  naphtha:\n"
                     "    adjust: streams.cooling_water.flow\n    between: [40, 120]\n"
                     "    target: {value: E-304.hot_out, equals: 45}\n", encoding="utf-8")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert main(["report", str(study), "--out", str(tmp_path / "r.html")]) == 0
    page = (tmp_path / "r.html").read_text(encoding="utf-8")
    assert "no variants" in page and capsys.readouterr().err == ""


def test_the_side_by_side_rows_name_their_shown_unit(tmp_path):
    """Defect: the study report's rows read "heat recovered mmbtu h" (a file's column ending in
    words); they read "heat recovered (MMBtu/h)"."""
    from hxtrain.solver.cli.main import main

    study = demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml")
    assert main(["report", str(study), "--units", "us", "--out", str(tmp_path / "r.html")]) == 0
    page = (tmp_path / "r.html").read_text(encoding="utf-8")
    for row in ("heat recovered (MMBtu/h)", "F-101 inlet (°F)", "E-101 duty (MMBtu/h)", "limit violations"):
        assert f"<th>{row}</th>" in page
    assert "mmbtu h" not in page
    assert "<th>limit violations</th><td>1<" in page  # a count as a whole number


def test_the_html_reports_carry_what_the_console_does(tmp_path, capsys):
    """A third trial found the HTML short of the console: the products' target deviations in a
    case's report, the specifications (met or not, with their table) in a study's."""
    result = simulate(demo_case_path("product_cooling"))
    deviations = result.units["target_deviation_k"].dropna()
    assert len(deviations) and "Products with a target temperature" in case_report(result)
    study = demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml")
    code, out, err = run_in_process(capsys, "report", study, "--out", tmp_path / "s.html")
    assert code == 0, err
    page = (tmp_path / "s.html").read_text(encoding="utf-8")
    # each variant with what it changes, as the study file writes it (a trial: names alone)
    assert "(bypass: E-110.cold, fraction: 0.3)" in page and "(add_shells: E-104, count: 1)" in page
    section = page[page.index('<section id="specifications">'):]
    assert "branch_balance" in section and "e110_outlet_by_bypass" in section and "met - " in section
    # the table's value as the text gives it (a fraction had shown 0.60 beside 0.5995 in the text)
    values = [re.findall(rf"{key} = (0\.\d{{4}}) gives", section)[0] for key in ("fraction", "cold")]
    assert len(values) == 2 and all(f"<td>{value}</td>" in section for value in values), values
    # one column per quantity, each number with its unit where the specifications aim at
    # different kinds (a difference in K, an outlet in °C): the table had shown each heading twice
    table = section[section.index("<table>"):section.index("</table>")]
    headings = re.findall(r"<th>([^<]*)</th>", table[:table.index('<tr class="units">')])
    assert headings.count("achieved") == 1 and headings.count("at low end") == 1, headings
    assert "<td>0.00 K</td>" in table and "<td>240.0 °C</td>" in table


@pytest.mark.parametrize("demo", ["crude_preheat", "desalter_and_reactor", "naphtha_vaporiser", "study"])
def test_every_link_of_a_report_has_its_target(tmp_path, capsys, demo):
    """A trial's link checker: the diagram linked every unit to '#unit-NAME', but splitters and
    mixers have no table row, and a study's page has no unit tables at all (21 dangling links).
    Only units with a row are links now; every href in the page names an id in it."""
    source = (demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml") if demo == "study"
              else demo_case_path(demo))
    code, out, err = run_in_process(capsys, "report", source, "--out", tmp_path / "r.html")
    assert code == 0, err
    page = (tmp_path / "r.html").read_text(encoding="utf-8")
    targets = set(re.findall(r'href="#([^"]+)"', page))
    assert targets - set(re.findall(r'id="([^"]+)"', page)) == set()
    if demo == "crude_preheat":
        assert {"unit-E-101", "unit-F-101", "unit-V-101"} <= targets and "unit-crude_split" not in targets


def test_colours_keep_their_meaning():
    """Blue is heated and rust cooled, in the diagram and the T-Q pictures: lines of another
    meaning (each stream, each variant) never take them; a heater is not drawn in the amber of a
    warning or the red of a limit."""
    from hxtrain.solver.reporting import figures, network_diagram

    assert not {figures.HEATED, figures.COOLED, figures.LIMIT}.intersection(figures.PALETTE)
    assert network_diagram.HEATS not in (network_diagram.WARNING, network_diagram.LIMIT)


def test_a_bypassed_side_ends_its_tq_line_at_its_outlet_inside_the_exchanger(monkeypatch):
    """An exchanger's T–Q picture is of the exchanger proper: the 30 %-bypassed water's line ends
    at 30 + Q / (0.7 · 40 · 4.18), its outlet inside (what UA, LMTD and F refer to), not at the
    mixed outlet after the bypass rejoins (a new user read the mixed one off the picture)."""
    import matplotlib.axes

    from hxtrain.solver.reporting import figures
    from test_defects_physics import _bypassed_water_case

    result = simulate(case_from_mapping(_bypassed_water_case(90.0), "<test>"))
    drawn = {}
    original = matplotlib.axes.Axes.plot

    def recording(self, x, y, *args, **kwargs):
        drawn.setdefault(kwargs.get("label"), []).append(np.asarray(y, float))
        return original(self, x, y, *args, **kwargs)

    monkeypatch.setattr(matplotlib.axes.Axes, "plot", recording)
    figures.tq_svgs(result, Display())
    row = result.units.loc["E-1"]
    inside = 30.0 + row["duty_kw"] / (0.7 * 40.0 * 4.18)
    assert drawn["cold side"][0][-1] == pytest.approx(inside, rel=1e-12)
    assert row["cold_out_c"] < inside - 1.0
    assert drawn["hot side"][0][0] == pytest.approx(row["hot_out_c"], rel=1e-12)  # no bypass on the hot side


def test_the_energy_balance_line_says_what_added_holds_where_a_unit_changes_the_fluid():
    """Where a reactor changes the fluid, 'added' in the balance line holds more than the duties
    (a new user could not tie it to them: the difference of the two fluids' enthalpy references
    at the inlet temperature): the line says so, naming the unit; with no fluid change it does not."""
    with_reactor = text_report(simulate(demo_case_path("desalter_and_reactor")))
    assert "'added' is the heat from outside plus, at R-301, the difference of the fluids' enthalpy" in with_reactor
    assert "'added' is" not in text_report(simulate(demo_case_path("crude_preheat")))


def test_the_limits_box_is_green_only_when_there_is_nothing_to_see():
    """The HTML report's box: red with a limit violated, amber with warnings only (a new user saw
    warnings listed in a green 'No limit violated' box), green with neither."""
    from hxtrain.solver.reporting.html_report import limits_section

    findings = simulate(demo_case_path("crude_preheat")).findings
    assert (findings["severity"] == "limit").any() and (findings["severity"] == "warning").any()
    box = {name: limits_section(part, Display()) for name, part in (
        ("limit", findings), ("warnings", findings[findings["severity"] == "warning"]), ("nothing", findings.iloc[:0]))}
    assert 'class="limits"' in box["limit"] and "Limits violated: " in box["limit"]
    assert 'class="limits warned"' in box["warnings"] and "Warnings: " in box["warnings"]
    assert 'class="limits none"' in box["nothing"]
