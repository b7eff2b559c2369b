"""Figures of a report as static SVG drawn by matplotlib (no JavaScript: they open offline and
print as they look): the temperature along each stream against the duty it has exchanged, a
T–Q picture per exchanger, and for a study the key totals and each exchanger's change of duty
per variant. Every value is shown in the report's units; text stays text (selectable, small)."""

from __future__ import annotations

import io
import re

import numpy as np
import pandas as pd

from hxtrain.solver.simulation.results import SimulationResult

from .display_units import Display
from .network_diagram import rows_of

HEATED, COOLED, LIMIT = "#2f6690", "#b4532a", "#d62828"
PALETTE = ("#3a7d44", "#7b4b94", "#c08a1e", "#4f7c8a", "#8e3b46", "#5c6b2f", "#6d597a", "#b56576", "#2a9d8f",
           "#8d6e63")
"""Colours of lines and bars that are neither heated nor cooled (streams one by one, variants):
never the blue and rust that mean heated and cooled in the diagram and the T-Q pictures."""
STYLE = {"svg.fonttype": "none", "font.size": 9, "font.family": "sans-serif", "axes.spines.top": False,
         "axes.spines.right": False, "axes.grid": True, "grid.color": "#e4e4e4", "svg.hashsalt": "hxtrain"}
"""Text as text (not outlines), and a fixed hash salt so the same report gives the same SVG."""


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")  # no screen: draw to files only
    import matplotlib.pyplot as plt

    return plt


def svg_of(figure) -> str:
    """A figure as an inline SVG element (no XML prolog, no fixed pixel size: it scales)."""
    plt = _pyplot()
    buffer = io.StringIO()
    figure.savefig(buffer, format="svg", bbox_inches="tight", metadata={"Date": None, "Creator": None})
    plt.close(figure)
    text = buffer.getvalue()
    text = re.sub(r"<metadata>.*?</metadata>", "", text[text.index("<svg"):], flags=re.S)
    return re.sub(r'<svg([^>]*?) width="[^"]*" height="[^"]*"', r'<svg\1 class="figure"', text, count=1)


def profile_points(row, units):
    """(units, |duty| of each, duty exchanged so far, temperatures) along a row of the network
    diagram: a point after every unit of the path (temperatures[i + 1] leaves its i-th unit; the
    row's own start and end junctions are not on it); a unit without a duty (a desalter, a drum)
    is a step at the same abscissa."""
    nodes = row.nodes[1:] if row.nodes[:1] == [row.start] else list(row.nodes)
    nodes = nodes[:-1] if nodes[-1:] == [row.end] else nodes
    duties = [abs(units.at[n, "duty_kw"]) if "duty_kw" in units and n in units.index and pd.notna(units.at[n, "duty_kw"])
              else 0.0 for n in nodes]
    exchanged = np.concatenate([[0.0], np.cumsum(duties)])
    return nodes, duties, exchanged, np.asarray(row.temperatures[: len(exchanged)], float)


def profiles_svg(result: SimulationResult, display: Display) -> str:
    """Temperature along each stream against the duty it has exchanged so far: heated streams on
    the left, cooled ones on the right, a marker at every unit."""
    plt = _pyplot()
    duty = display.column("x_kw")
    temperature = display.column("x_c")
    rows, _, _ = rows_of(result)
    units = result.units
    with plt.rc_context(STYLE):
        figure, axes = plt.subplots(1, 2, figsize=(11, 4.2), sharey=True)
        for ax, heated, title in ((axes[0], True, "Streams heated"), (axes[1], False, "Streams cooled")):
            chosen = [r for r in rows if r.heated == heated and len(r.temperatures) > 1]
            for k, row in enumerate(chosen):
                nodes, duties, exchanged, temps = profile_points(row, units)
                colour = PALETTE[k % len(PALETTE)]
                ax.plot(display.value("duty", exchanged), display.value("temperature", temps), "-o", color=colour,
                        markersize=3.5, linewidth=1.6, label=row.name)
                marked = [(n, q_at, t_at) for n, d, q_at, t_at, t_before in
                          zip(nodes, duties, exchanged[1:], temps[1:], temps[:-1]) if d > 0.0 or abs(t_at - t_before) > 0.05]
                for n, q_at, t_at in marked:
                    ax.annotate(n, (display.value("duty", q_at), display.value("temperature", t_at)), fontsize=6.5,
                                color=colour, xytext=(3, 3), textcoords="offset points")
            ax.set_title(title, loc="left", fontsize=10)
            ax.set_xlabel(f"duty exchanged along the stream ({duty.label})")
            if chosen:
                ax.legend(fontsize=7, frameon=False, loc="best")
        axes[0].set_ylabel(f"temperature ({temperature.label})")
        figure.tight_layout()
        return svg_of(figure)


def tq_svgs(result: SimulationResult, display: Display) -> dict:
    """One small T–Q picture per exchanger: the hot and cold sides' temperatures against the
    duty, counter-current (the cold inlet at the left), the smallest difference in the picture
    marked (a multipass shell's outlets, which meet inside it, are not in the picture); drawn in
    red where the exchanger violates a limit. Straight lines join the end temperatures, or the
    zones' boundaries where the exchanger is rated by zones; either way of the exchanger proper
    (a bypass rejoins after it: a bypassed side's line ends at its outlet inside)."""
    plt = _pyplot()
    units = result.units[result.units["group"] == "exchangers"]
    limited = set(result.limits["unit"])
    temperature = display.column("x_c")
    duty = display.column("x_kw")
    figures = {}
    with plt.rc_context(STYLE):
        for tag, row in units.iterrows():
            figure, ax = plt.subplots(figsize=(3.0, 2.3))
            zones = result.profiles.get(tag)
            if zones is None:
                q = display.value("duty", np.array([0.0, abs(row["duty_kw"])]))
                hot = display.value("temperature", np.array([_inside(row, "hot"), row["hot_in_c"]]))
                cold = display.value("temperature", np.array([row["cold_in_c"], _inside(row, "cold")]))
            else:
                q = display.value("duty", np.abs(zones["duty"]))
                hot, cold = (display.value("temperature", zones[side]) for side in ("hot", "cold"))
            ax.plot(q, hot, color=COOLED, linewidth=2, label="hot side")
            ax.plot(q, cold, color=HEATED, linewidth=2, label="cold side")
            approach_at = int(np.argmin(np.asarray(hot) - np.asarray(cold)))
            ax.plot([q[approach_at]] * 2, [hot[approach_at], cold[approach_at]], ":", color="#555", linewidth=1)
            bad = tag in limited
            ax.set_title(f"{tag}{'  limit violated' if bad else ''}", loc="left", fontsize=9,
                         color=LIMIT if bad else "#222", fontweight="bold")
            ax.set_xlabel(f"duty ({duty.label})", fontsize=7.5)
            ax.set_ylabel(temperature.label, fontsize=7.5)
            ax.tick_params(labelsize=7)
            if bad:
                for spine in ax.spines.values():
                    spine.set_color(LIMIT)
                    spine.set_linewidth(1.5)
            figure.tight_layout()
            figures[tag] = svg_of(figure)
    return figures


def _inside(row, side) -> float:
    """A side's outlet from the exchanger proper (°C): ahead of its bypass where it has one, the
    end of its line in the exchanger's T–Q picture (what the exchanger's duty, LMTD and F refer
    to; the bypass rejoins after it)."""
    inside = row.get(f"{side}_out_inside_c", np.nan)
    return float(inside) if np.isfinite(inside) else float(row[f"{side}_out_c"])


def study_totals_svg(comparison, display: Display) -> str:
    """The key totals of every answered scenario side by side."""
    plt = _pyplot()
    table = comparison.table
    scenarios = [c for c in table.columns if " - " not in str(c) and table[c].notna().any()]
    rows = [r for r in table.index if str(r).endswith("_kw") and " " not in str(r) and table.loc[r, scenarios].abs().max() > 0]
    duty = display.column("x_kw")
    with plt.rc_context(STYLE):
        figure, ax = plt.subplots(figsize=(10, 3.6))
        width = 0.8 / max(len(scenarios), 1)
        positions = np.arange(len(rows))
        for k, name in enumerate(scenarios):
            values = display.value("duty", table.loc[rows, name].astype(float).to_numpy())
            ax.bar(positions + k * width, values, width, label=name, color=PALETTE[k % len(PALETTE)])
        ax.set_xticks(positions + width * (len(scenarios) - 1) / 2,
                      [str(r).removesuffix("_kw").replace("_", " ") for r in rows], fontsize=8)
        ax.set_ylabel(duty.label)
        ax.legend(fontsize=8, frameon=False)
        ax.set_title("Key totals by scenario", loc="left", fontsize=10)
        figure.tight_layout()
        return svg_of(figure)


def study_duty_changes_svg(comparison, display: Display) -> str:
    """Each exchanger's (and heater's, cooler's) change of duty from the base, per variant."""
    plt = _pyplot()
    table = comparison.table
    differences = [c for c in table.columns if str(c).endswith(" - base")]
    rows = [r for r in table.index if str(r).endswith(" duty_kw")]
    duty = display.column("x_kw")
    with plt.rc_context(STYLE):
        figure, ax = plt.subplots(figsize=(10, max(2.5, 0.28 * len(rows) * max(1, len(differences)) ** 0.5 + 1)))
        height = 0.8 / max(len(differences), 1)
        positions = np.arange(len(rows))
        for k, name in enumerate(differences):
            values = display.value("duty", table.loc[rows, name].astype(float).fillna(0.0).to_numpy(), difference=True)
            ax.barh(positions + k * height, values, height, label=name, color=PALETTE[(k + 1) % len(PALETTE)])
        ax.set_yticks(positions + height * (len(differences) - 1) / 2, [str(r).split(" ")[0] for r in rows], fontsize=8)
        ax.invert_yaxis()
        ax.axvline(0, color="#333", linewidth=0.8)
        ax.set_xlabel(f"change of duty from the base ({duty.label})")
        ax.legend(fontsize=8, frameon=False)
        ax.set_title("Duty by unit: each variant against the base", loc="left", fontsize=10)
        figure.tight_layout()
        return svg_of(figure)
