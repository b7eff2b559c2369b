"""The tables of ``monitor`` and ``schedule`` as they are shown and written: every column that
holds a quantity is named with its unit's ending (``duty_kw``, ``fouling_m2_k_w``, ``bias_k``), so
that :class:`.display_units.Display` converts and labels it like any result table; money carries
the economics' currency (``cost_per_day_usd``); fitted fouling-law parameters are numbers in
columns of their own, each named with its unit.

The monitoring and scheduling code keeps its tables in SI under its own names; only these
names are added, on the way out.
"""

from __future__ import annotations

import re

import pandas as pd

from hxtrain.units.fouling_models import MODELS

STATE_NAMES = {"duty": "duty_kw", "ua": "ua_kw_k", "u_service": "u_service_w_m2_k", "u_clean": "u_clean_w_m2_k",
               "fouling": "fouling_m2_k_w", "t_mean_shell": "t_mean_shell_c", "t_mean_tube": "t_mean_tube_c",
               "h_shell": "h_shell_w_m2_k", "h_tube": "h_tube_w_m2_k", "fouling_sigma": "fouling_sigma_m2_k_w",
               "fouling_expanded": "fouling_expanded_m2_k_w", "p": "p_hot", "r": "r_hot"}
"""The back-calculated state (kW, kW/K, W/m²·K, m²·K/W, °C) with its units' endings; P and R on the
hot-side basis, as in a simulation's units table."""
FIT_NAMES = {"residual_rms": "residual_rms_m2_k_w", "fouling_now": "fouling_now_m2_k_w"}
CLEANING_NAMES = {"drop": "drop_m2_k_w", "drop_sigma": "drop_sigma_m2_k_w"}
COST_NAMES = {"fuel_gj_per_day": "fuel_per_day_gj", "co2_t_per_day": "co2_per_day_t",
              "co2_t_cumulative": "co2_cumulative_t"}
"""Fuel energy is a quantity of the units table (GJ or MMBtu); CO₂ and throughput stay in
tonnes (metric tonnes are what emissions are reported in, in either system)."""
MONEY = ("cost_per_day", "cost_cumulative", "cleaning_cost", "fuel_cost", "co2_cost", "lost_throughput_cost",
         "total_cost", "ranked_cost", "cost_of_fouling", "optimised_saves", "cost")
"""Columns of money, in the economics' currency."""
TAG_ENDINGS = {"temperature": "_k", "flow": "_kg_s", "duty": "_kw"}
"""The ending of a reading less another estimate of it (a bias, an adjustment), by what the tag
measures: a temperature's is a difference (K; °F of difference in US units, never offset)."""
PARAMETER_ENDINGS = {"m2.K/W": "_m2_k_w", "m2.K/W/day": "_per_day_m2_k_w", "m2.K/W/day/Pa": "_per_day_per_pa_m2_k_w",
                     "day": "_days", "J/mol": "_j_per_mol", "-": ""}
"""A fouling model's parameter units (units/fouling_models.py) as column endings: the fouling
part of a rate is converted like any fouling resistance, per day (and per pascal) stays."""


def money(table: pd.DataFrame, currency: str) -> pd.DataFrame:
    """Money columns named with the currency: ``total_cost`` -> ``total_cost_usd``."""
    slug = re.sub(r"[^0-9a-z]+", "_", str(currency).lower()).strip("_")
    return table.rename(columns={c: f"{c}_{slug}" for c in MONEY if c in table.columns}) if slug else table


VALUE_ENDINGS = {**TAG_ENDINGS, "temperature": "_c"}
"""The ending of a reading itself, by what the tag measures."""


def by_tag_quantity(table: pd.DataFrame, quantities, columns, endings=None) -> pd.DataFrame:
    """Each of ``columns`` (in the unit of the quantity its row's tag measures: ``quantities``,
    one per row) split into one column per quantity present, named with that unit's ending
    (``bias`` -> ``bias_k``, ``bias_kg_s``, ``bias_kw``), in the place of the original."""
    table = table.copy()
    kinds = pd.Series(list(quantities), index=table.index, dtype=object)
    for column in columns:
        if column not in table.columns:
            continue
        at = table.columns.get_loc(column)
        values = pd.to_numeric(table.pop(column), errors="coerce")
        for quantity, ending in (endings or TAG_ENDINGS).items():
            rows = (kinds == quantity).to_numpy()
            if rows.any():
                table.insert(at, f"{column}{ending}", values.where(rows))
                at += 1
    return table


def tag_quantities(monitoring, tags) -> list:
    """What each of ``tags`` measures (temperature, flow or duty)."""
    return [monitoring.tags[t].quantity if t in monitoring.tags else None for t in tags]


def parameter_column(name: str, unit: str, suffix: str = "") -> str:
    """A law parameter's column: ``rate`` in m²·K/W per day -> ``rate_per_day_m2_k_w``
    (``suffix`` before the ending: ``rate_sigma_per_day_m2_k_w``)."""
    ending = PARAMETER_ENDINGS.get(unit)
    if ending is None:
        ending = "_" + re.sub(r"[^0-9a-z]+", "_", unit.lower()).strip("_")
    return f"{name}{suffix}{ending}"


def _units_of(model: str) -> dict:
    law = MODELS.get(model)
    return {q.name: q.unit for q in law.parameters} if law is not None else {}


def spread_parameters(table: pd.DataFrame, spread: dict, model_column="model") -> pd.DataFrame:
    """Columns holding a mapping per row (``parameters``: name -> value in the model's units)
    replaced by one numeric column per parameter, named with its unit (:func:`parameter_column`);
    ``spread``: column -> suffix of the names (``{"standard_errors": "_sigma"}``)."""
    table = table.copy()
    for column, suffix in spread.items():
        if column not in table.columns:
            continue
        at = table.columns.get_loc(column)
        mappings = table.pop(column)
        names, rows = {}, []
        for model, values in zip(table[model_column], mappings):
            units = _units_of(model)
            row = {}
            for name, value in (values.items() if isinstance(values, dict) else ()):
                key = parameter_column(name, units.get(name, "-"), suffix)
                names.setdefault(key, None)
                row[key] = float(value)
            rows.append(row)
        for key in names:
            table.insert(at, key, [row.get(key, float("nan")) for row in rows])
            at += 1
    return table


WORDS = (("_per_day_per_pa", " per day·Pa"), ("_per_day", " per day"), ("_days", " (days)"),
         ("_j_per_mol", " (J/mol)"), ("_sigma", " σ"), ("_after_cleaning", " after cleaning"))


def parameter_words(columns, display) -> dict:
    """Console headings of law parameter columns: the parameter's name as the model writes it
    (``r_f0``), what its unit ending does not say in words (per day), and units outside the
    units table in brackets (``tau (days)``); the shown unit goes on the line below."""
    headings = {}
    for name in columns:
        column = display.column(name)
        text = column.stem if column is not None else str(name)
        for ending, words in WORDS:
            text = text.replace(ending, words)
        headings[name] = text
    return headings
