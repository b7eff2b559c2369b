"""The ``uncertainty`` section of a study file: distributions on batchable key paths, for a
Monte Carlo run (``hxtrain uncertainty STUDY``; sampling and statistics are in
:mod:`hxtrain.solver.studies.monte_carlo`).

::

    uncertainty:
      samples: 2000                   # scenarios drawn (default 1000)
      seed: 7                         # the same seed draws the same samples (default 1)
      inputs:
        streams.crude.flow: {distribution: normal, mean: 95, sd: 4, between: [80, 110]}
        streams.crude.supply_temperature: {distribution: uniform, low: 25, high: 35}
        exchangers.E-112.fouling.tube: {distribution: triangular, low: 0.0003, mode: 0.0006, high: 0.0009}

Every input is a key path that can vary within a batch (:mod:`.batch`); values are numbers in the
key's default unit or text with units (``sd`` of a temperature is a difference: ``"2 delta_degF"``).
``between`` bounds any distribution (a normal one is then truncated there); a normal input
without it is checked at mean ± 4 sd. The ends of each input's range are checked as case values
before anything is simulated, so an input that would ask for an impossible case is refused with
its key path.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import quantities as q
from .batch import BATCHABLE, check_values, is_batchable
from .changes import key_kind, study_number
from .fields import Fields, describe

SEED_LARGEST = 2**32 - 1
"""The largest seed a study takes (numpy's seed sequence takes any, this keeps files portable)."""

DISTRIBUTIONS = {"normal": ("mean", "sd"), "uniform": ("low", "high"), "triangular": ("low", "mode", "high")}
NORMAL_CHECK_SPAN = 4.0
"""Standard deviations either side of the mean checked as case values for an unbounded normal."""
MAX_SAMPLES = 1_000_000


@dataclass
class Distribution:
    """One uncertain input: its key path, distribution, parameters (default units) and bounds."""

    path: str
    family: str
    """``normal``, ``uniform`` or ``triangular``."""
    parameters: dict
    low: float = -np.inf
    high: float = np.inf
    key: tuple = ()

    def span(self) -> tuple[float, float]:
        """The smallest and largest values a sample can take."""
        p = self.parameters
        if self.family == "normal":
            ends = (p["mean"] - NORMAL_CHECK_SPAN * p["sd"], p["mean"] + NORMAL_CHECK_SPAN * p["sd"])
        else:
            ends = (p["low"], p["high"])
        return max(ends[0], self.low), min(ends[1], self.high)


@dataclass
class Uncertainty:
    inputs: list
    samples: int = 1000
    seed: int = 1
    key: tuple = ("uncertainty",)


def read_uncertainty(top: Fields, base_document):
    """The study's ``uncertainty`` section (None when it has none), checked against the base case."""
    f = top.mapping("uncertainty", what="a mapping with samples, seed and inputs")
    if f is None:
        return None
    samples = f.integer("samples", 1000, 2, MAX_SAMPLES)
    seed = f.integer("seed", 1, 0, SEED_LARGEST)
    section = f.mapping("inputs", required=True, what="a mapping of key paths to their distributions")
    inputs = []
    for path in section.value:
        section.allowed.add(path)
        inputs.append(_input(section, str(path), base_document))
    if not inputs:
        raise section.error(None, "give at least one input: a key path with its distribution")
    f.text("description")
    f.finish()
    return Uncertainty(inputs, samples, seed, f.path)


def _input(section: Fields, path, base_document) -> Distribution:
    from .study import attributed  # the study reader's: errors without a file get the study's

    where = section.path + (path,)
    with attributed(section.doc):  # a path that is no key at all is named with the nearest that are
        kind = key_kind(path, where)
    if not is_batchable(path):
        raise section.error(path, f"'{path}' cannot vary within a batch, so it cannot be sampled; the paths that can: "
                                  f"{', '.join(BATCHABLE)}")
    f = Fields(section.doc, where, section.value[path], "a mapping with 'distribution' and its parameters")
    name = f.choice("distribution", tuple(DISTRIBUTIONS))
    spread = q.TEMPERATURE_DIFFERENCE if kind is q.TEMPERATURE else kind
    parameters = {}
    for parameter in DISTRIBUTIONS[name]:
        raw = f.raw(parameter)
        if parameter == "sd" and isinstance(raw, (int, float)) and not raw > 0:  # before the quantity's own range
            raise f.error("sd", f"the standard deviation must be above 0, got {raw:g}")
        with attributed(section.doc):
            parameters[parameter] = study_number(raw, spread if parameter == "sd" else kind, where + (parameter,))
    low, high = -np.inf, np.inf
    if f.has("between"):
        between = f.raw("between")
        if not isinstance(between, list) or len(between) != 2:
            raise f.error("between", f"expected [low, high], got {describe(between)}")
        with attributed(section.doc):
            low, high = (study_number(v, kind, where + ("between", i)) for i, v in enumerate(between))
        if not low < high:
            raise f.error("between", f"expected low < high, got {low:g} and {high:g}")
    f.text("description")
    f.finish()
    _check_parameters(f, name, parameters, low, high)
    distribution = Distribution(path, name, parameters, low, high, where)
    span = "its range (mean ± 4 sd without 'between')" if name == "normal" and not f.has("between") else "its range"
    with attributed(section.doc):
        check_values(base_document, {path: np.array(distribution.span())}, where, span)
    return distribution


def _check_parameters(f: Fields, name, p, low, high):
    if name == "normal" and not p["sd"] > 0.0:
        raise f.error("sd", f"the standard deviation must be above 0, got {p['sd']:g}")
    if name in ("uniform", "triangular") and not p["low"] < p["high"]:
        raise f.error("high", f"expected low < high, got {p['low']:g} and {p['high']:g}")
    if name == "triangular" and not p["low"] <= p["mode"] <= p["high"]:
        raise f.error("mode", f"the mode must lie from low to high ({p['low']:g} to {p['high']:g}), got {p['mode']:g}")
    centre = p["mean"] if name == "normal" else p["mode"] if name == "triangular" else 0.5 * (p["low"] + p["high"])
    if not low <= centre <= high and np.isfinite(low):
        raise f.error("between", f"the distribution's centre {centre:g} lies outside 'between' [{low:g}, {high:g}]")
    if name != "normal" and np.isfinite(low) and (high <= p["low"] or low >= p["high"]):
        raise f.error("between", "'between' and [low, high] do not overlap: no value can be drawn")


__all__ = ["Uncertainty", "Distribution", "read_uncertainty", "DISTRIBUTIONS"]
