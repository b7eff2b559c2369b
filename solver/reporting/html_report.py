"""``hxtrain report``: one self-contained HTML file of a case or a study.

Everything is inline — styles, the network diagram (our own SVG) and the figures (matplotlib's
static SVG) — and there is no script, so the file opens offline, in any browser, and prints as
it looks. Order: the caution; the violated limits first (and the warnings), each linked to its
unit; the totals; the network with its temperatures and limits; the temperature profile of
every stream; a T–Q picture per exchanger; the tables. A study shows its scenarios' limits, the
key totals and each unit's change of duty as charts, the comparison table and the base case's
network. Values are in the units chosen (``--units``, ``settings.display_units``).
"""

from __future__ import annotations

import datetime
import time
from html import escape
from pathlib import Path

import pandas as pd

from hxtrain.solver import package_version
from hxtrain.solver.simulation.results import CAUTION, SimulationResult

from .console_tables import cells
from .display_units import Display, current, difference_columns
from .files import with_whole_counts
from .network_diagram import network_svg
from .report_style import STYLE
from .text import DRUM_DIGITS, DRUM_TITLE, DRUM_WORDS, EXCHANGER_WORDS, ONE_STREAM_WORDS, PRODUCT_TARGETS, \
    SEPARATOR_WORDS, SERVICE_WORDS, STREAM_WORDS, drum_table, exchanger_table, one_stream_table, separator_table, \
    service_table, stream_table

FORMATS = (".html", ".htm")


def _page(title: str, body: list[str]) -> str:
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{escape(title)}</title><style>{STYLE}</style></head><body><main>"
            + "".join(body) + "</main></body></html>\n")


def _header(title: str, source: str, display: Display) -> list[str]:
    written = datetime.datetime.now().astimezone().isoformat(sep=" ", timespec="minutes")
    units = "US customary" if display.system == "us" else "SI"
    if display.overrides:
        units += " (chosen in the case: " + ", ".join(f"{k} {v}" for k, v in display.overrides.items()) + ")"
    return [f"<header><h1>{escape(title)}</h1><p class=\"meta\">{escape(source)} · written {escape(written)} · "
            f"hxtrain {escape(package_version())} · units: {escape(units)}</p></header>",
            f"<section id=\"caution\" class=\"caution\"><strong>Caution.</strong> {escape(CAUTION)}</section>"]


def _finding_items(findings: pd.DataFrame, display: Display, scenario=False, linked=frozenset()) -> str:
    """The findings as list items, each unit linked to its table row where it has one (``linked``)."""
    items = []
    for row in findings.itertuples():
        where = f"[{escape(row.scenario)}] " if scenario else ""
        link = f"<a href=\"#unit-{escape(row.unit)}\">{escape(row.unit)}</a>" if row.unit in linked else escape(row.unit)
        items.append(f"<li>{where}{link}: {escape(display.message(row.message))} <code>{escape(str(row.key))}</code></li>")
    return "<ul>" + "".join(items) + "</ul>"


def limits_section(findings: pd.DataFrame, display: Display, scenario=False, failures=None, linked=frozenset()) -> str:
    """Violated limits first, boxed; then warnings; then scenarios with no answer (a study);
    ``linked``: the units with a table row to link to."""
    limits = findings[findings["severity"] == "limit"]
    warnings = findings[findings["severity"] == "warning"]
    # red with a limit violated, amber with only warnings or scenarios without an answer, green with nothing
    tone = "" if len(limits) else " warned" if len(warnings) or failures else " none"
    parts = [f"<section id=\"limits\" class=\"limits{tone}\">"]
    if len(limits):
        parts.append(f"<h2>Limits violated: {len(limits)}</h2>{_finding_items(limits, display, scenario, linked)}")
    else:
        parts.append("<h2>No limit violated</h2>")
    if failures:
        parts.append(f"<h3>Scenarios with no answer: {len(failures)}</h3><ul>"
                     + "".join(f"<li>{escape(m)}</li>" for m in failures.values()) + "</ul>")
    if len(warnings):
        parts.append(f"<h3>Warnings: {len(warnings)}</h3>{_finding_items(warnings, display, scenario, linked)}")
    parts.append("</section>")
    return "".join(parts)


def html_table(frame: pd.DataFrame, display: Display, words=None, digits=None, ids=False, limited=(),
               caption="", merged=False) -> str:
    """A table with words and units as two header lines, numbers in their units' decimals;
    ``ids``: rows get ``id="unit-NAME"`` (the targets of the links); rows of ``limited`` units
    are highlighted; ``merged``: columns of one heading in several units (each row filling one of
    them: specifications aiming at a temperature or a difference) shown as one, each number with
    its unit (:func:`_merged_by_heading`)."""
    headings, units, columns = cells(frame, display, words, digits)
    if merged:
        headings, units, columns = _merged_by_heading(headings, units, columns)
    numbered = isinstance(frame.index, pd.RangeIndex) and frame.index.name is None
    index_name = "" if numbered else escape(str(frame.index.name or ""))
    head = ("<tr>" + ("" if numbered else f"<th>{index_name}</th>") + "".join(f"<th>{escape(h)}</th>" for h in headings)
            + "</tr><tr class=\"units\">" + ("" if numbered else "<th></th>")
            + "".join(f"<th>{escape(u)}</th>" for u in units) + "</tr>")
    body = []
    for r, name in enumerate(frame.index):
        attributes = f" id=\"unit-{escape(str(name))}\"" if ids else ""
        if name in limited:
            attributes += " class=\"limit\""
        cells_html = "".join(f"<td>{escape(column[r])}</td>" for column in columns)
        body.append(f"<tr{attributes}>" + ("" if numbered else f"<th>{escape(str(name))}</th>") + cells_html + "</tr>")
    title = f"<caption>{escape(caption)}</caption>" if caption else ""
    return f"<div class=\"table\"><table>{title}<thead>{head}</thead><tbody>{''.join(body)}</tbody></table></div>"


def _merged_by_heading(headings, units, columns):
    """Columns that share a heading but not a unit made one: each row's filled cell, followed by
    its unit; the unit line left empty there. Other columns as they were.

    >>> _merged_by_heading(["name", "achieved", "achieved"], ["", "K", "°C"], [["a", "b"], ["0.00", ""], ["", "240.0"]])
    (['name', 'achieved'], ['', ''], [['a', 'b'], ['0.00 K', '240.0 °C']])
    """
    kept = []  # (heading, unit, cells)
    for heading in dict.fromkeys(headings):
        at = [k for k, h in enumerate(headings) if h == heading]
        if len({units[k] for k in at}) == 1:
            kept += [(heading, units[k], columns[k]) for k in at]
        else:
            kept.append((heading, "", [next((f"{columns[k][r]} {units[k]}".strip() for k in at if columns[k][r]), "")
                                       for r in range(len(columns[at[0]]))]))
    return [h for h, _, _ in kept], [u for _, u, _ in kept], [c for _, _, c in kept]


def _totals(result: SimulationResult, display: Display) -> str:
    from hxtrain.units.protocol import TOTALS

    s, duty, temperature = result.summary, display.column("x_kw"), display.column("x_c")
    cards = [(text, f"{display.value('duty', s[key]):,.{duty.digits}f} {duty.label}") for key, text in TOTALS.items()
             if key in s and (s[key] != 0.0 or key in ("fired_heater_duty_kw", "heat_recovered_kw"))]
    cards += [(f"{k.removesuffix('_inlet_c')} inlet temperature",
               f"{display.value('temperature', v):,.1f} {temperature.label}") for k, v in s.items() if k.endswith("_inlet_c")]
    cards.append(("energy balance closes to", f"{result.balance['relative_imbalance']:.1e} (relative)"))
    return ("<section id=\"totals\"><h2>Totals</h2><div class=\"cards\">"
            + "".join(f"<div class=\"card\"><span>{escape(a)}</span><b>{escape(b)}</b></div>" for a, b in cards)
            + "</div></section>")


def case_body(result: SimulationResult, display: Display) -> list[str]:
    """The sections of a case's report (after the header)."""
    from .figures import profiles_svg, tq_svgs

    limited = set(result.limits["unit"])
    with_rows = {"exchangers": exchanger_table(result), "one_stream": one_stream_table(result),
                 "separators": separator_table(result), "drums": drum_table(result)}  # tables whose rows are link targets
    linked = frozenset().union(*(frame.index for frame in with_rows.values()))
    body = [limits_section(result.findings, display, linked=linked), _totals(result, display),
            "<section id=\"network\"><h2>Network</h2><p class=\"note\">Heated streams run left to right (blue), cooled "
            "streams right to left (rust); each exchanger joins its two streams; a dashed arc round one is a bypass; "
            "temperatures are on the segments; a "
            "unit with a violated limit is ringed in red and marked !, one with a warning in amber. Click a unit for "
            f"its table row.</p><figure>{network_svg(result, display, linked)}</figure></section>",
            "<section id=\"profiles\"><h2>Temperature along each stream</h2>"
            f"<figure>{profiles_svg(result, display)}</figure></section>"]
    pictures = tq_svgs(result, display)
    if pictures:
        body.append("<section id=\"tq\"><h2>T–Q picture of each exchanger</h2><p class=\"note\">Hot side (rust) "
                    "and cold side (blue) against the duty, counter-current; the dotted line is the smallest "
                    "difference in the picture. In a multipass shell the two outlets also meet inside the shell, "
                    "which the picture does not show: the table's approach includes it.</p><div class=\"grid\">"
                    + "".join(f"<figure id=\"tq-{escape(t)}\">{svg}</figure>" for t, svg in pictures.items())
                    + "</div></section>")
    tables = [html_table(with_rows["exchangers"], display, EXCHANGER_WORDS, ids=True, limited=limited,
                         caption="Exchangers (P, R, NTU on the hot-side basis)")]
    service = service_table(result)
    if len(service):
        tables.append(html_table(service, display, SERVICE_WORDS, {"re_tube": 0}, caption="Exchangers in service"))
    one_stream = with_rows["one_stream"]
    if len(one_stream):
        tables.append(html_table(one_stream, display, ONE_STREAM_WORDS, ids=True, limited=limited,
                                 caption="Heaters and coolers"))
    separators = with_rows["separators"]
    if len(separators):
        tables.append(html_table(separators, display, SEPARATOR_WORDS, ids=True, limited=limited,
                                 caption="Desalters (outlets leave at one temperature from the balance)"))
    drums = with_rows["drums"]
    if len(drums):
        tables.append(html_table(drums, display, DRUM_WORDS, DRUM_DIGITS, ids=True, limited=limited,
                                 caption=DRUM_TITLE))
    targets = result.units.get("target_deviation_k")
    if targets is not None and targets.notna().any():
        tables.append(html_table(targets.dropna().to_frame("deviation_k"), display, {"deviation_k": "deviation"},
                                 caption=PRODUCT_TARGETS))
    tables.append(html_table(stream_table(result), display, STREAM_WORDS, caption="Stream segments"))
    body.append("<section id=\"tables\"><h2>Tables</h2>" + "".join(tables) + "</section>")
    body.append(f"<footer>{escape(result.message)}</footer>")
    return body


def case_report(result: SimulationResult, display: Display | None = None) -> str:
    display = (display or current()).for_result(result)
    body = _header(result.title or str(result.case_file), f"case file {result.case_file}", display)
    return _page(result.title or "hxtrain report", body + case_body(result, display))


def study_report(study, comparison, display: Display | None = None, specifications=()) -> str:
    """A study's report: every scenario's limits, the charts, the comparison, the specifications
    (solved, :func:`.specifications.solve_specifications`), the base network."""
    from .figures import study_duty_changes_svg, study_totals_svg

    base = comparison.results.get("base")
    display = (display or current()).with_case(_base_case(base))
    body = _header(study.title or str(study.file), f"study file {study.file}", display)
    body.append(limits_section(comparison.findings, display, scenario=True, failures=comparison.failures))
    variants = "".join(f"<li><b>{escape(n)}</b>{': ' + escape(d) if d else ''} <span class=\"changes\">"
                       f"({escape(_changes_as_written(changes))})</span></li>"
                       for n, (d, changes, _) in study.variants.items())
    changes = (f"<figure>{study_duty_changes_svg(comparison, display)}</figure>" if study.variants
               else "<p>The study has no variants: no changes from the base to draw.</p>")
    body.append(f"<section id=\"variants\"><h2>Variants</h2><ul>{variants}</ul>"
                f"<figure>{study_totals_svg(comparison, display)}</figure>{changes}</section>")
    table = display.frame(with_whole_counts(comparison.table), difference_columns(comparison.table))
    body.append("<section id=\"tables\"><h2>Side by side</h2>"
                + html_table(_restore_names(table, comparison.table, display), display.__class__(),
                             {column: column for column in comparison.table.columns},
                             caption="Scenarios and their differences from the base (each row's unit in its name; "
                                     "a difference of two temperatures is in kelvin or Δ°F)") + "</section>")
    if specifications:
        from hxtrain.solver.studies.specifications import specification_table

        unmet = ' class="limit"'
        items = "".join(f"<li{'' if spec.success else unmet}><b>{escape(spec.name)}</b>: "
                        f"{'met' if spec.success else 'NOT MET'} - {escape(display.message(spec.message))} "
                        f"({spec.evaluations} simulations)</li>" for spec in specifications)
        body.append(f"<section id=\"specifications\"><h2>Specifications</h2><ul>{items}</ul>"
                    + html_table(specification_table(specifications).drop(columns="message"), display,
                                 digits={"value": 4},  # a fraction as the text above gives it (0.5995, not 0.60)
                                 caption="Each specification's adjusted value and what it reached", merged=True)
                    + "</section>")
    if base is not None:
        body.append("<section id=\"network\"><h2>The base case</h2>"
                    f"<figure>{network_svg(base, display)}</figure></section>")
    return _page(study.title or "hxtrain study", body)


def _changes_as_written(changes) -> str:
    """A variant's changes as its study file writes them ("bypass: E-110.cold, fraction: 0.3")."""
    return "; ".join(", ".join(f"{k}: {v}" for k, v in change.items()) if isinstance(change, dict) else str(change)
                     for change in changes)


def _base_case(result):
    return None if result is None else result.network.case


def _restore_names(converted: pd.DataFrame, original: pd.DataFrame, display: Display) -> pd.DataFrame:
    """The converted comparison with its row names in words, each with its shown unit
    ("E-101 duty (MMBtu/h)"; the rows are in the order of ``original``'s)."""
    names = []
    for name in original.index:
        column = display.column(name)
        words = (column.stem if column else str(name)).replace("_", " ")
        names.append(f"{words} ({column.label})" if column else words)
    return converted.set_axis(pd.Index(names, name="quantity"))


def report_command(args) -> int:
    """``hxtrain report``: simulate, draw, write the file atomically; say where, how big, how long."""
    from hxtrain.network.reading import read_document
    from hxtrain.solver.demos import DEMO_CASES, demo_case_path

    from .files import check_output_path, write_atomically

    started = time.perf_counter()
    if args.target and args.demo:
        from hxtrain.network import CaseError

        raise CaseError("give either a case or study file, or --demo, not both")
    target = args.target or demo_case_path(args.demo or DEMO_CASES[0])
    out = Path(args.out or "report.html")
    check_output_path(out, {"input file": target}, formats=FORMATS)
    document = read_document(target)
    if isinstance(document.data, dict) and "base" in document.data:
        from hxtrain.network.study import load_study
        from hxtrain.solver.studies import compare, solve_specifications

        study = load_study(target)
        check_output_path(out, {"study file": study.file, "base case": study.base.file}, formats=FORMATS)
        page = study_report(study, compare(study), specifications=solve_specifications(study))
    else:
        from hxtrain.solver.simulation.results import simulate

        page = case_report(simulate(target))
    data = page.encode("utf-8")
    write_atomically(out, [out], [lambda: data])
    print(f"wrote {out} ({len(data):,} bytes) in {time.perf_counter() - started:.1f} s")
    return 0
