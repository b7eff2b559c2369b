"""Monte Carlo uncertainty: the inputs of a study's ``uncertainty`` section sampled, every sample
solved in one batch, and what the spread of the inputs does to the results.

* Sampling: one ``numpy.random.Generator`` (PCG64) seeded with the study's ``seed``; each input
  in the order of the study file draws its uniform numbers from it and maps them through its
  distribution's inverse CDF restricted to its bounds (an exactly truncated distribution, not a
  clipped one): the same seed gives the same samples on every machine and with any cluster.
* Percentiles: P10, P50 and P90 (and the mean) over the samples that have an answer, of the
  run totals, the fired heaters' inlet temperatures and every unit's duty and outlet
  temperatures (the named results units declare: ``TAG.duty``, ``TAG.hot_out``, ...).
* Tornado: each input alone at its own P10 and at its P90 (of its samples) with every other at
  its P50, one batch of 2k + 1 scenarios; the swing of the fired heaters' duty, largest first.
  Beside it, each input's rank (Spearman) correlation with that duty over the samples.

Samples that have no answer (not valid, not converged) are counted and left out of the
statistics, never averaged in.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from hxtrain.network.uncertainty import SEED_LARGEST
from hxtrain.units.protocol import FIRED_HEATERS, TOTALS

from hxtrain.solver.reporting.display_units import ending_of_key

from hxtrain.solver.simulation.batch import simulate_batch

PERCENTILES = (10, 50, 90)
FURNACE = FIRED_HEATERS


@dataclass
class UncertaintyResult:
    samples: pd.DataFrame
    """One row per sample: the inputs drawn and the batch table's results."""
    percentiles: pd.DataFrame
    """One row per result: P10, P50, P90, mean and the samples with an answer."""
    tornado: pd.DataFrame
    """One row per input: its P10 and P90, the furnace duty at each (others at P50), the swing,
    and its rank correlation with the furnace duty over the samples."""
    seed: int
    failed: int
    tornado_gaps: list = field(default_factory=list)
    """Why a tornado end has no answer: (input, percentile, its value there, the message) per
    input end whose scenario has none."""

    def tables(self) -> dict:
        return {"uncertainty_percentiles": self.percentiles, "uncertainty_tornado": self.tornado,
                "uncertainty_samples": self.samples}

    def shown_tables(self, display) -> dict:
        """:meth:`tables` as reports show them in ``display``'s units: the percentiles indexed by
        result (each row converted by its quantity; ``E-101.duty`` is a duty), the tornado's
        duties named with their unit and each input's values in its own unit (``input_unit``),
        the samples' inputs named with their unit."""
        tornado = self.tornado.rename(columns={f"{FURNACE}_at_p10": "fired_heater_duty_at_p10_kw",
                                               f"{FURNACE}_at_p90": "fired_heater_duty_at_p90_kw"})
        columns = [_input_column(path, display) for path in tornado["input"]]
        for end in ("input_p10", "input_p90"):
            tornado[end] = [float(c.convert([v])[0]) if c else v for c, v in zip(columns, tornado[end])]
        tornado.insert(1, "input_unit", [c.label if c else "" for c in columns])
        samples = self.samples.rename(columns={p: f"{p}{ending_of_key(p)}" for p in self.tornado["input"]})
        from hxtrain.solver.reporting.text import limit_counts

        limits = limit_counts(self.samples).drop(columns="rows").rename(columns={"scenarios": "samples"})
        return {"uncertainty_percentiles": self.percentiles.set_index("result"), "uncertainty_tornado": tornado,
                "uncertainty_samples": samples, "limits": limits}


def draw(uncertainty, samples=None, seed=None) -> dict:
    """Key path -> array of ``samples`` values (the study's count and seed unless given)."""
    count = int(samples or uncertainty.samples)
    rng = np.random.default_rng(uncertainty.seed if seed is None else int(seed))
    return {d.path: inverse_cdf(d, rng.random(count)) for d in uncertainty.inputs}


def inverse_cdf(distribution, u):
    """Values of ``distribution`` at probabilities ``u`` of its (bounded) range."""
    from scipy.special import ndtr, ndtri

    p, low, high = distribution.parameters, distribution.low, distribution.high
    if distribution.family == "normal":
        a, b = ndtr((low - p["mean"]) / p["sd"]), ndtr((high - p["mean"]) / p["sd"])
        return p["mean"] + p["sd"] * ndtri(a + u * (b - a))
    lo, hi = max(p["low"], low), min(p["high"], high)
    if distribution.family == "uniform":
        return lo + u * (hi - lo)
    mode = p["mode"]

    def cdf(x):
        return np.where(x <= mode, (x - p["low"]) ** 2 / ((p["high"] - p["low"]) * (mode - p["low"]) or 1.0),
                        1.0 - (p["high"] - x) ** 2 / ((p["high"] - p["low"]) * (p["high"] - mode) or 1.0))

    q = cdf(lo) + u * (cdf(hi) - cdf(lo))
    split = (mode - p["low"]) / (p["high"] - p["low"])
    with np.errstate(invalid="ignore"):
        return np.where(q <= split, p["low"] + np.sqrt(q * (p["high"] - p["low"]) * (mode - p["low"])),
                        p["high"] - np.sqrt((1.0 - q) * (p["high"] - p["low"]) * (p["high"] - mode)))


def run_uncertainty(study, samples=None, seed=None) -> UncertaintyResult:
    """The Monte Carlo run of ``study.uncertainty`` on the study's base case."""
    uncertainty = study.uncertainty
    seed = uncertainty.seed if seed is None else int(seed)
    drawn = draw(uncertainty, samples, seed)
    case = study.case()
    batch = simulate_batch(case, drawn, metrics=True)
    table = batch.table
    ok = table["success"].to_numpy(bool)
    percentiles = _percentiles(table[ok], _result_columns(table, [*case.streams, *case.splitters]))
    tornado, gaps = _tornado(case, drawn, table, ok)
    return UncertaintyResult(table, percentiles, tornado, seed, int(np.sum(~ok)), gaps)


def _result_columns(table, repeating=()) -> list:
    """Totals and heater inlets first, then each unit's duty and outlets; not the outlets of the
    units ``repeating`` what enters them: supplies (their supply temperatures, inputs: constant
    unless drawn, and then in the tornado) and splitters (their inlet's temperature, listed where
    it is made)."""
    units = [c for c in table.columns if "." in c and not c.startswith(("streams.", "exchangers.", "heaters.",
                                                                        "coolers.", "splitters."))]
    inputs = {f"{name}.outlet" for name in repeating}
    named = [c for c in units if c.rsplit(".", 1)[1] in ("duty", "hot_out", "cold_out", "outlet") and c not in inputs]
    headline = [c for c in table.columns if c in TOTALS or c.endswith("_inlet_c")]
    return headline + named


def _percentiles(table, columns) -> pd.DataFrame:
    rows = []
    for column in columns:
        values = table[column].to_numpy(float)
        values = values[np.isfinite(values)]
        if values.size == 0:
            continue
        p10, p50, p90 = np.percentile(values, PERCENTILES)
        rows.append({"result": column, "p10": p10, "p50": p50, "p90": p90, "mean": float(np.mean(values)),
                     "samples": int(values.size)})
    return pd.DataFrame(rows, columns=["result", "p10", "p50", "p90", "mean", "samples"])


def _tornado(case, drawn, table, ok) -> pd.DataFrame:
    """One input at a time at its P10 and P90, the others at their P50: the furnace duty."""
    paths = list(drawn)
    middle = {p: float(np.percentile(drawn[p], 50)) for p in paths}
    values = {p: [middle[p]] for p in paths}
    for path in paths:
        for q in (10, 90):
            for p in paths:
                values[p].append(float(np.percentile(drawn[path], q)) if p == path else middle[p])
    ends = simulate_batch(case, {p: np.array(v) for p, v in values.items()}).table
    swings = ends[FURNACE].to_numpy(float)
    rows, gaps = [], []
    duty = table[FURNACE].to_numpy(float)
    for i, path in enumerate(paths):
        low, high = swings[1 + 2 * i], swings[2 + 2 * i]
        gaps += [(path, q, values[path][k], ends["message"][k])
                 for q, k in ((10, 1 + 2 * i), (90, 2 + 2 * i)) if not ends["success"][k]]
        rows.append({"input": path, "input_p10": values[path][1 + 2 * i], "input_p90": values[path][2 + 2 * i],
                     f"{FURNACE}_at_p10": low, f"{FURNACE}_at_p90": high, "swing_kw": high - low,
                     "rank_correlation": _rank_correlation(drawn[path][ok], duty[ok])})
    result = pd.DataFrame(rows)
    order = np.argsort(-np.abs(result["swing_kw"].to_numpy(float)), kind="stable")
    return result.iloc[order].reset_index(drop=True), gaps


def _varies(values) -> bool:
    """Whether ``values`` spread by more than round-off (1e-9 of their size)."""
    values = np.asarray(values, float)
    return bool(values.size) and float(np.ptp(values)) > 1e-9 * (1.0 + float(np.max(np.abs(values))))


def _rank_correlation(x, y) -> float:
    """Spearman's rank correlation (Pearson's on the ranks; ties are rare in continuous samples)."""
    if len(x) < 3:
        return float("nan")
    if not _varies(x) or not _varies(y):  # ranks of round-off mean nothing
        return float("nan")
    rx, ry = np.argsort(np.argsort(x)), np.argsort(np.argsort(y))
    return float(np.corrcoef(rx, ry)[0, 1])


def uncertainty_text(result: UncertaintyResult, study, display=None) -> str:
    """The console report: percentiles, the tornado, how many samples had no answer (in the
    command's units and width)."""
    from hxtrain.solver.reporting.console_tables import fixed, render, render_any
    from hxtrain.solver.reporting.display_units import current
    from hxtrain.solver.reporting.text import boxed, fitted, limits_over_scenarios, paths_of_the_case, \
        warnings_over_scenarios

    display = display or current()
    tables = result.shown_tables(display)
    samples = len(result.samples)
    lines = [f"Uncertainty: {study.title or study.file}", f"{samples:,} samples, seed {result.seed}; "
             f"{result.failed:,} without an answer (left out)", "", "Percentiles over the samples",
             "----------------------------", render_any(tables["uncertainty_percentiles"], display, index="result")]
    tornado = tables["uncertainty_tornado"].copy()
    for end in ("input_p10", "input_p90"):  # each input in its own unit's decimals (lb/h whole, °F one)
        tornado[end] = [fixed(value, _input_digits(path, display)) for path, value in zip(tornado["input"], tornado[end])]
    lines += ["", f"What moves the fired heaters' duty most (each input alone at its P10 and P90, the others at P50)",
              "-" * 96]
    if _varies(result.samples[FURNACE].dropna()):
        lines.append(render(tornado, display, digits={"rank_correlation": 3}))
        for path, q, value, message in result.tornado_gaps:
            column = _input_column(path, display)
            shown = (f"{fixed(float(column.convert([value])[0]), column.digits)} {column.label}" if column
                     else f"{value:.4g}")
            lines += fitted(f"{path} at its P{q} ({shown}), the others at P50, has no answer: "
                            f"{display.message(message)}", display)
    else:
        lines.append("The fired heaters' duty does not vary over the samples (none in this case, or none that the inputs "
                     "reach): nothing to rank.")
    lines += boxed(f"SAMPLES WITH NO ANSWER, LEFT OUT OF THE PERCENTILES ({paths_of_the_case(study)})",
                   _reasons(result.samples, display),
                   count=f"{result.failed:,} of {samples:,}")
    lines += limits_over_scenarios(result.samples, "samples", display)
    lines += warnings_over_scenarios(result.samples, "samples", display)
    return "\n".join(lines)


_NUMBER = re.compile(r"-?\d[\d,]*(?:\.\d+)?(?:[eE][-+]?\d+)?")


def _reasons(samples, display) -> list:
    """The reasons samples have no answer, alike messages (the same words, other numbers)
    counted together, most common first, each with one of its messages."""
    failed = samples.loc[~samples["success"].astype(bool), "message"]
    groups = {}
    for message in failed:
        groups.setdefault(_NUMBER.sub("#", str(message)), []).append(message)
    return [f"{len(group):,} sample(s), e.g. {display.message(group[0])}"
            for group in sorted(groups.values(), key=len, reverse=True)]


def _input_column(path, display):
    """How an uncertain input is shown (its unit, decimals, conversion); None without a unit."""
    ending = ending_of_key(path)
    return display.column(f"x{ending}") if ending else None


def _input_digits(path, display) -> int:
    """Decimals of an uncertain input as shown: its unit's, or four for a number without one."""
    column = _input_column(path, display)
    return column.digits if column else 4


def uncertainty_command(args, write, say_written) -> int:
    """``hxtrain uncertainty STUDY``: the run, its tables written (``--out``) before the report."""
    from hxtrain.network import CaseError
    from hxtrain.network.study import load_study

    from hxtrain.solver.reporting.display_units import adopt_case_units, current
    from hxtrain.solver.reporting.text import note_lines
    from hxtrain.solver.simulation.results import CAUTION
    from hxtrain.solver.studies.distributed import cluster_for

    study = load_study(args.study)
    if study.uncertainty is None:
        raise CaseError("the study has no 'uncertainty' section (inputs with distributions)", file=study.file,
                        path=("uncertainty",))
    if args.samples is not None and not 2 <= args.samples <= 1_000_000:
        raise CaseError("--samples must be from 2 to 1,000,000")
    if args.seed is not None and not 0 <= args.seed <= SEED_LARGEST:
        raise CaseError(f"--seed must be a whole number from 0 to {SEED_LARGEST:,} (as the study file's "
                        "'uncertainty.seed')")
    adopt_case_units(study.case())
    with cluster_for(args):
        result = run_uncertainty(study, args.samples, args.seed)
    written = write(result.shown_tables(current()), args,
                    {"study": study.file, "title": study.title, "seed": result.seed, "caution": CAUTION},
                    {"study file": study.file, "base case": study.base.file})
    print(uncertainty_text(result, study))
    print("\n" + "\n".join(note_lines(current())))
    say_written(written)
    return 0


__all__ = ["uncertainty_command", "run_uncertainty", "draw", "inverse_cdf", "uncertainty_text", "UncertaintyResult", "PERCENTILES"]
