"""Plain-text report of a simulation for the terminal.

It keeps to 120 columns (tables too wide go on in a continuation block that repeats the row
names; long text is cut) unless ``--wide`` asks for everything, and shows values in the units
chosen (``--units``, a case's ``settings.display_units``): see :mod:`.display_units`. Violated
limits and warnings come last, boxed, so they are the last thing on the screen.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np
import pandas as pd

from hxtrain.units.protocol import TOTALS

from hxtrain.solver.simulation.results import CAUTION, SimulationResult

from .console_tables import WIDTH, fixed, render  # noqa: F401  (fixed: the one number format, used here and by others)
from .display_units import Display, current

EXCHANGER_WORDS = {"duty_kw": "duty", "hot_in_c": "hot in", "hot_out_c": "hot out", "cold_in_c": "cold in",
                   "cold_out_c": "cold out", "hot_out_vapour_fraction": "hot out vapour",
                   "cold_out_vapour_fraction": "cold out vapour", "air_flow_kg_s": "air flow", "ua_kw_k": "UA", "ntu_hot": "NTU", "p_hot": "P", "r_hot": "R",
                   "f": "F", "lmtd_k": "LMTD", "hot_out_inside_c": "hot out inside",
                   "cold_out_inside_c": "cold out inside", "hot_bypass_fraction": "hot bypass",
                   "cold_bypass_fraction": "cold bypass", "min_approach_k": "approach",
                   "internal_approach_k": "approach inside",
                   "findings": "findings"}
SERVICE_WORDS = {"u_source": "U from", "u_service_w_m2_k": "U service", "u_clean_w_m2_k": "U clean",
                 "fouling_shell_m2_k_w": "fouling shell", "fouling_tube_m2_k_w": "fouling tube",
                 "h_shell_w_m2_k": "h shell", "h_tube_w_m2_k": "h tube", "re_tube": "Re tube",
                 "dp_shell_kpa": "dp shell", "dp_tube_kpa": "dp tube"}
ONE_STREAM_WORDS = {"type": "type", "heat_source": "heat source", "outlet_fluid": "outlet fluid", "duty_kw": "duty",
                    "in_c": "inlet",
                    "out_c": "outlet", "ua_kw_k": "UA", "effectiveness": "effectiveness",
                    "steam_saturation_c": "steam at", "steam_kg_s": "steam",
                    "condensate_kg_s": "condensate",
                    "findings": "findings"}
SEPARATOR_WORDS = {"type": "type", "inlet_c": "crude in", "wash_water_in_c": "wash water in", "outlet_c": "outlet",
                   "crude_drop_k": "crude drop", "brine_kg_s": "brine", "findings": "findings"}
"""The desalters' table (units in the ``separators`` group)."""
DRUM_WORDS = {"inlet_c": "inlet", "inlet_vapour_fraction": "feed vaporised", "vapour_kg_s": "vapour",
              "liquid_kg_s": "liquid", "outlet_c": "out (both)", "outer_iterations": "outer iterations",
              "findings": "findings"}
"""The flash drums' table (units in the ``drums`` group)."""
DRUM_DIGITS = {"inlet_vapour_fraction": 4, "outer_iterations": 0}
DRUM_TITLE = "Flash drums (split at the inlet state; vapour and liquid leave at one temperature from the balance)"
STREAM_WORDS = {"segment": "segment", "flow_kg_s": "flow", "heat_capacity_rate_kw_k": "m·cp",
                "temperature_c": "temperature", "vapour_fraction": "vapour fraction"}
DIGITS = {"re_tube": 0}
def stream_table(result: SimulationResult) -> pd.DataFrame:
    """The stream segments' columns the reports show (the vapour fraction where a fluid is on a curve)."""
    return result.streams[[c for c in STREAM_WORDS if c in result.streams]]


def _section(title: str) -> str:
    return f"\n{title}\n{'-' * len(title)}"


def in_group(result: SimulationResult, group: str) -> pd.DataFrame:
    """The rows of the units table that their units show in section ``group``."""
    return result.units[result.units["group"] == group]


def exchanger_table(result: SimulationResult) -> pd.DataFrame:
    table = in_group(result, "exchangers")
    return table[[c for c in EXCHANGER_WORDS if c in table]].rename_axis("exchanger")


def service_table(result: SimulationResult) -> pd.DataFrame:
    """U, fouling, films and pressure drops, for exchangers that have them."""
    units = in_group(result, "exchangers")
    columns = [c for c in SERVICE_WORDS if c in units and c != "u_source"]
    if not columns:
        return pd.DataFrame()
    return units[["u_source", *columns]].rename_axis("exchanger")


def one_stream_table(result: SimulationResult) -> pd.DataFrame:
    table = in_group(result, "heaters_and_coolers").copy()
    heated = table["cold_in_c"].notna() if "cold_in_c" in table else pd.Series(False, index=table.index)
    table["in_c"] = np.where(heated, table.get("cold_in_c"), table.get("hot_in_c"))
    table["out_c"] = np.where(heated, table.get("cold_out_c"), table.get("hot_out_c"))
    # columns only some units fill (a steam heater's steam use) only where one of these has them
    shown = [c for c in ONE_STREAM_WORDS if c in table and (c in ("type", "findings") or table[c].notna().any())]
    return table[shown].rename_axis("unit")


def separator_table(result: SimulationResult, group="separators", words=None) -> pd.DataFrame:
    """The rows of units in ``group`` (desalters; flash drums with ``drums``) and the columns of
    ``words`` (default :data:`SEPARATOR_WORDS`)."""
    table = in_group(result, group)
    return table[[c for c in (words or SEPARATOR_WORDS) if c in table]].rename_axis("unit")


def drum_table(result: SimulationResult) -> pd.DataFrame:
    return separator_table(result, "drums", DRUM_WORDS)


RATING = ("ua_kw_k", "ntu_hot", "p_hot", "r_hot", "f", "lmtd_k", "hot_bypass_fraction", "hot_out_inside_c",
          "cold_bypass_fraction", "cold_out_inside_c")
"""The exchanger table's rating columns: a block of their own in the fitted report (all of the
exchanger proper: where a side has a bypass, the fraction going round and its outlet inside,
ahead of the bypass, too)."""


PRODUCT_TARGETS = "Products with a target temperature (deviation = actual - target)"


def _exchanger_blocks(table: pd.DataFrame, display: Display) -> list[str]:
    """The exchanger table whole (wide), or as duties and temperatures, then the rating."""
    if display.wide:
        return [render(table, display, EXCHANGER_WORDS)]
    rating = [c for c in table if c in RATING]
    return [render(table.drop(columns=rating), display, EXCHANGER_WORDS), "",
            render(table[rating], display, EXCHANGER_WORDS)]


def boxed(title: str, lines, count=None, display: Display | None = None) -> list[str]:
    """A block of lines framed so that it stands out at the end of a report (violated limits);
    the title gives ``count`` (default: the number of lines). Lines longer than the console width
    are wrapped unless the display is wide."""
    display = display or current()
    lines = list(lines)
    if not lines:
        return []
    count = len(lines) if count is None else count
    if not display.wide:
        lines = [part for line in lines for part in (textwrap.wrap(line, WIDTH - 3, subsequent_indent="   ") or [""])]
    return ["", "!" * 78, f"!! {title}: {count}", "!" * 78, *(f"!! {line}" for line in lines), "!" * 78]


def paths_of_the_case(study) -> str:
    """Where the key paths of a study's scenario messages are: the study's base case file (a
    scenario's reason names a key of the case, e.g. a fluid's data range, not of the study)."""
    return f"key paths in the case {Path(study.base.file).name}"


def limits_over_scenarios(table, noun: str, display: Display | None = None, name_rows: str = "") -> list[str]:
    """The boxed lines naming each limit the scenarios of a batch ``table`` violate (its
    ``violated_limits`` column) and in how many of them (``noun``: "points of sweep x",
    "samples"), most often first (:func:`limit_counts`); with ``name_rows`` ("point") also which
    rows, counted from 1 (a sweep's points); none where no scenario violates one."""
    lines, hit = _counted_lines(table, "violated_limits", name_rows)
    return boxed("LIMITS VIOLATED", lines, count=f"{len(lines)} limit(s), in {hit:,} of {len(table):,} {noun}",
                 display=display)


def warnings_over_scenarios(table, noun: str, display: Display | None = None, name_rows: str = "") -> list[str]:
    """As :func:`limits_over_scenarios` for the warnings (``warning_names``), listed, not boxed:
    a table's ``warnings`` column counts them, and this says which."""
    lines, hit = _counted_lines(table, "warning_names", name_rows)
    if not lines:
        return []
    say = display.message if display is not None else str
    return [f"\nWarnings: {len(lines)}, in {hit:,} of {len(table):,} {noun}",
            *(f"  * {say(line)}" for line in lines)]


def _counted_lines(table, column, name_rows):
    """(a line per finding named in ``column``, with its count, share and rows; how many rows
    name any)."""
    counts, total = limit_counts(table, column), len(table)
    lines = [f"{row.limit}: {row.scenarios:,} of {total:,} ({row.share:.0%})"
             + (f", {name_rows}s {row.rows}" if name_rows else "") for row in counts.itertuples()]
    return lines, int(sum(bool(text) for text in table.get(column, ())))


def limit_counts(table, column="violated_limits") -> pd.DataFrame:
    """Each limit the scenarios of a batch ``table`` violate (its ``violated_limits`` column; or
    the findings named in another ``column``), most often first: in how many scenarios, their
    share, and which rows (counted from 1, as runs): the console's box and the files' ``limits``
    table."""
    from hxtrain.solver.simulation.results import LIMIT_SEPARATOR

    rows_of = {}
    for row, text in enumerate(table.get(column, ())):
        for label in (text.split(LIMIT_SEPARATOR) if isinstance(text, str) and text else ()):
            rows_of.setdefault(label, []).append(row + 1)
    ordered = sorted(rows_of.items(), key=lambda item: (-len(item[1]), item[0]))
    return pd.DataFrame({"limit": [label for label, _ in ordered], "scenarios": [len(rows) for _, rows in ordered],
                         "share": [len(rows) / max(len(table), 1) for _, rows in ordered],
                         "rows": [_row_list(rows) for _, rows in ordered]},
                        columns=["limit", "scenarios", "share", "rows"])


def _row_list(rows, shown=12) -> str:
    """Row numbers as runs ("1-3, 7"), the first ``shown`` runs and how many more."""
    runs, start = [], rows[0]
    for before, row in zip(rows, rows[1:] + [None]):
        if row != before + 1:
            runs.append(f"{start}" if start == before else f"{start}-{before}")
            start = row
    more = f" and {len(runs) - shown} more run(s)" if len(runs) > shown else ""
    return ", ".join(runs[:shown]) + more


def fitted(text: str, display: Display, indent: str = "    ", break_on_hyphens=True) -> list[str]:
    """``text`` as lines within the console width (unless the display is wide), continuation
    lines indented by ``indent``; ``break_on_hyphens=False`` keeps 1.0e-10 and E-112 whole."""
    return [text] if display.wide else (textwrap.wrap(text, WIDTH, subsequent_indent=indent,
                                                      break_on_hyphens=break_on_hyphens) or [""])


def note_lines(display: Display, caution: str = CAUTION) -> list[str]:
    """The caution every report carries, "NOTE: ...", within the console width."""
    return fitted(f"NOTE: {caution}", display, indent="      ")


def findings_box(result: SimulationResult, display: Display | None = None) -> str:
    display = (display or current()).for_result(result)
    findings = result.findings
    limits = findings[findings["severity"] == "limit"]
    warnings = findings[findings["severity"] == "warning"]
    lines = []
    if len(warnings):  # before the box: the violated limits are what the report ends on
        lines += ["", f"Warnings: {len(warnings)}"]
        for row in warnings.itertuples():
            lines += fitted(f"  * {row.unit}: {display.message(row.message)}", display)
    lines += boxed("LIMITS VIOLATED", (f"{row.unit}: {display.message(row.message)}  [{row.key}]"
                                       for row in limits.itertuples()), display=display)
    if not len(findings):
        lines += ["", "No limit violated and no warnings."]
    return "\n".join(lines)


def totals_lines(result: SimulationResult, display: Display) -> list[str]:
    s, b = result.summary, result.balance
    duty = display.column("x_kw")
    width = max(len(text) for text in TOTALS.values()) + 1
    lines = [f"  {(text + ':').ljust(width)} {fixed(display.value('duty', s[key]), duty.digits):>14} {duty.label}"
             for key, text in TOTALS.items()
             if key in s and (s[key] != 0.0 or key in ("fired_heater_duty_kw", "heat_recovered_kw"))]
    temperature = display.column("x_c")
    lines += [f"  {k.removesuffix('_inlet_c')} inlet temperature: "
              f"{fixed(display.value('temperature', v), 2)} {temperature.label}"
              for k, v in s.items() if k.endswith("_inlet_c")]
    flows = [fixed(display.value("duty", b[k]), duty.digits) for k in
             ("enthalpy_in_supplies_kw", "heat_added_net_kw", "enthalpy_out_products_kw")]
    lines.append(f"  energy balance: in {flows[0]} + added {flows[1]} - out {flows[2]} {duty.label} = "
                 f"{display.value('duty', b['imbalance_kw']):.3g} {duty.label} (relative {b['relative_imbalance']:.1e})")
    changing = result.units.index[result.units["outlet_fluid"].notna()] if "outlet_fluid" in result.units else []
    if len(changing):  # enthalpies are on each fluid's own reference: a change of fluid moves it
        lines += textwrap.wrap(f"'added' is the heat from outside plus, at {', '.join(changing)}, the difference of "
                               "the fluids' enthalpy references (the outlet fluid's enthalpy less the inlet fluid's at "
                               "the inlet temperature): not a duty", WIDTH - 4, initial_indent="    ",
                               subsequent_indent="    ")
    return lines


def text_report(result: SimulationResult, extra: str = "", display: Display | None = None) -> str:
    """The report; ``extra`` (more sections) goes before the limits and warnings, which stay last.
    ``display``: units and width (default: the command's choice, :func:`.display_units.current`)."""
    display = (display or current()).for_result(result)
    parts = [
        f"hxtrain: {result.title or result.case_file}",
        f"case file: {result.case_file}",
        *note_lines(display, result.caution),
        f"\n{result.message}",
    ]
    exchangers = exchanger_table(result)
    if len(exchangers):
        parts += [_section("Exchangers (P, R, NTU on the hot-side basis)"), *_exchanger_blocks(exchangers, display)]
    service = service_table(result)
    if len(service):
        parts += [_section("Exchangers in service"), render(service, display, SERVICE_WORDS, DIGITS)]
    one_stream = one_stream_table(result)
    if len(one_stream):
        parts += [_section("Heaters and coolers"), render(one_stream, display, ONE_STREAM_WORDS)]
    separators = separator_table(result)
    if len(separators):
        parts += [_section("Desalters (outlets leave at one temperature from the balance)"),
                  render(separators, display, SEPARATOR_WORDS)]
    drums = drum_table(result)
    if len(drums):
        parts += [_section(DRUM_TITLE), render(drums, display, DRUM_WORDS, DRUM_DIGITS)]
    targets = result.units.get("target_deviation_k")
    if targets is not None and targets.notna().any():
        parts += [_section(PRODUCT_TARGETS),
                  render(targets.dropna().to_frame("deviation_k"), display)]
    streams = stream_table(result)
    parts += [_section("Stream segments"), render(streams, display, STREAM_WORDS, index="")]
    if len(result.tears):
        tears = result.tears[["tear_stream", "iterations", "accelerators", "final_residual_k"]]
        parts += [_section("Tear streams"), render(tears, display, digits={"final_residual_k": ".2e"})]
    parts += [_section("Totals"), *totals_lines(result, display), extra, findings_box(result, display)]
    return "\n".join(parts)
