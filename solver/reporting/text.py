"""Plain-text report of a simulation for the terminal.

Violated limits and warnings come last, boxed, so they are the last thing on the screen.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from hxtrain.units.protocol import TOTALS

from hxtrain.solver.simulation.results import SimulationResult

EXCHANGER_COLUMNS = {
    "duty_kw": "duty kW",
    "hot_in_c": "hot in °C",
    "hot_out_c": "hot out °C",
    "cold_in_c": "cold in °C",
    "cold_out_c": "cold out °C",
    "ua_kw_per_k": "UA kW/K",
    "ntu_hot": "NTU",
    "p_hot": "P",
    "r_hot": "R",
    "f": "F",
    "lmtd_k": "LMTD K",
    "min_approach_k": "approach K",
    "findings": "findings",
}
SERVICE_COLUMNS = {
    "u_source": "U from",
    "u_service_w_m2k": "U service",
    "u_clean_w_m2k": "U clean",
    "fouling_shell_m2k_w": "fouling shell",
    "fouling_tube_m2k_w": "fouling tube",
    "h_shell_w_m2k": "h shell",
    "h_tube_w_m2k": "h tube",
    "re_tube": "Re tube",
    "dp_shell_kpa": "dp shell kPa",
    "dp_tube_kpa": "dp tube kPa",
}
ONE_STREAM_COLUMNS = {"type": "type", "heat_source": "heat source", "duty_kw": "duty kW", "in_c": "inlet °C",
                      "out_c": "outlet °C", "findings": "findings"}
STREAM_COLUMNS = {"segment": "segment", "flow_kg_s": "flow kg/s", "heat_capacity_rate_kw_per_k": "m·cp kW/K",
                  "temperature_c": "temperature °C"}


def _formatted(frame: pd.DataFrame, digits=2) -> str:
    return frame.to_string(float_format=lambda v: fixed(v, digits), na_rep="")


def fixed(value: float, digits: int) -> str:
    """``value`` with ``digits`` decimals and thousands separators; a value that rounds to zero
    is shown without a sign (an idle cooler's duty is -0.0 in floating point, "0.0" to a reader).

    >>> fixed(-0.0, 1), fixed(-0.004, 2), fixed(-1234.5, 1)
    ('0.0', '0.00', '-1,234.5')
    """
    text = f"{value:,.{digits}f}"
    return text[1:] if text.startswith("-") and not text.strip("-0.,") else text


def _section(title: str) -> str:
    return f"\n{title}\n{'-' * len(title)}"


def in_group(result: SimulationResult, group: str) -> pd.DataFrame:
    """The rows of the units table that their units show in section ``group``."""
    return result.units[result.units["group"] == group]


def exchanger_table(result: SimulationResult) -> pd.DataFrame:
    table = in_group(result, "exchangers")
    table = table[[c for c in EXCHANGER_COLUMNS if c in table]].rename(columns=EXCHANGER_COLUMNS)
    return table.rename_axis("exchanger")


def service_table(result: SimulationResult) -> pd.DataFrame:
    """U (W/m²·K), fouling (m²·K/W), films and pressure drops, for exchangers that have them."""
    units = in_group(result, "exchangers")
    columns = [c for c in SERVICE_COLUMNS if c in units and c != "u_source"]
    if not columns:
        return pd.DataFrame()
    table = units[["u_source", *columns]].rename(columns=SERVICE_COLUMNS).rename_axis("exchanger")
    for name in ("fouling shell", "fouling tube"):
        if name in table:
            table[name] = table[name].map(lambda v: "" if pd.isna(v) else f"{v:.5f}")
    return table


def one_stream_table(result: SimulationResult) -> pd.DataFrame:
    table = in_group(result, "heaters_and_coolers").copy()
    heated = table["cold_in_c"].notna() if "cold_in_c" in table else pd.Series(False, index=table.index)
    table["in_c"] = np.where(heated, table.get("cold_in_c"), table.get("hot_in_c"))
    table["out_c"] = np.where(heated, table.get("cold_out_c"), table.get("hot_out_c"))
    columns = [c for c in ONE_STREAM_COLUMNS if c in table]
    return table[columns].rename(columns=ONE_STREAM_COLUMNS).rename_axis("unit").fillna("")


def boxed(title: str, lines, count=None) -> list[str]:
    """A block of lines framed so that it stands out at the end of a report (violated limits);
    the title gives ``count`` (default: the number of lines)."""
    lines = list(lines)
    if not lines:
        return []
    count = len(lines) if count is None else count
    return ["", "!" * 78, f"!! {title}: {count}", "!" * 78, *(f"!! {line}" for line in lines), "!" * 78]


def findings_box(result: SimulationResult) -> str:
    findings = result.findings
    limits = findings[findings["severity"] == "limit"]
    warnings = findings[findings["severity"] == "warning"]
    lines = boxed("LIMITS VIOLATED", (f"{row.unit}: {row.message}  [{row.key}]" for row in limits.itertuples()))
    if len(warnings):
        lines += ["", f"Warnings: {len(warnings)}"]
        lines += [f"  * {row.unit}: {row.message}" for row in warnings.itertuples()]
    if not len(findings):
        lines += ["", "No limit violated and no warnings."]
    return "\n".join(lines)


def text_report(result: SimulationResult, extra: str = "") -> str:
    """The report; ``extra`` (more sections) goes before the limits and warnings, which stay last."""
    s, b = result.summary, result.balance
    parts = [
        f"hxtrain: {result.title or result.case_file}",
        f"case file: {result.case_file}",
        f"NOTE: {result.caution}",
        f"\n{result.message}",
        _section("Exchangers (P, R, NTU on the hot-side basis)"),
        _formatted(exchanger_table(result), 2),
    ]
    service = service_table(result)
    if len(service):
        parts += [_section("Exchangers in service (U and h in W/m²·K, fouling in m²·K/W)"), _formatted(service, 1)]
    one_stream = one_stream_table(result)
    if len(one_stream):
        parts += [_section("Heaters and coolers"), _formatted(one_stream, 1)]
    targets = result.units.get("target_deviation_k")
    if targets is not None and targets.notna().any():
        parts += [_section("Products with a target temperature (deviation = actual - target)"),
                  _formatted(targets.dropna().to_frame("deviation K"), 1)]
    streams = result.streams[list(STREAM_COLUMNS)].rename(columns=STREAM_COLUMNS)
    parts += [_section("Stream segments"), _formatted(streams, 2)]
    if len(result.tears):
        tears = result.tears[["tear_stream", "iterations", "accelerators", "final_residual_k"]]
        parts += [_section("Tear streams"), tears.to_string(index=False, float_format=lambda v: f"{v:.2e}")]
    width = max(len(text) for text in TOTALS.values()) + 1
    total_lines = [f"  {(text + ':').ljust(width)} {s[key]:>12,.1f} kW" for key, text in TOTALS.items()
                   if key in s and (s[key] != 0.0 or key in ("fired_heater_duty_kw", "heat_recovered_kw"))]
    heater_lines = [f"  {k.removesuffix('_inlet_c')} inlet temperature: {v:,.2f} °C" for k, v in s.items()
                    if k.endswith("_inlet_c")]
    parts += [
        _section("Totals"),
        *total_lines,
        *heater_lines,
        f"  energy balance: in {b['enthalpy_in_supplies_kw']:,.1f} kW + added {b['heat_added_net_kw']:,.1f} kW"
        f" - out {b['enthalpy_out_products_kw']:,.1f} kW = {b['imbalance_kw']:.3g} kW"
        f" (relative {b['relative_imbalance']:.1e})",
        extra,
        findings_box(result),
    ]
    return "\n".join(parts)
