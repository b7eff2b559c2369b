"""Monte Carlo uncertainty: study-file distributions, reproducible draws, percentiles and the
tornado table; bad input named by file and key path."""

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from hxtrain.network import CaseError
from hxtrain.network.study import load_study
from hxtrain.network.uncertainty import Distribution
from hxtrain.solver.cli.main import main
from hxtrain.solver.simulation.batch import simulate_batch
from hxtrain.solver.studies.monte_carlo import draw, inverse_cdf, run_uncertainty

STUDY = """\
base: {demo: crude_preheat}
title: crude preheat under uncertainty
uncertainty:
  samples: 60
  seed: 11
  inputs:
    streams.crude.flow: {distribution: normal, mean: 95, sd: 4, between: [88, 102]}
    streams.crude.supply_temperature: {distribution: uniform, low: 25, high: 35}
    exchangers.E-112.fouling.tube: {distribution: triangular, low: 0.0003, mode: 0.0006, high: 0.0009}
"""


@pytest.fixture
def study_file(tmp_path) -> Path:
    path = tmp_path / "uncertain.yaml"
    path.write_text(STUDY, encoding="utf-8")
    return path


@pytest.mark.parametrize("distribution,reference", [
    (Distribution("x", "normal", {"mean": 10.0, "sd": 2.0}, 7.0, 15.0), stats.truncnorm(-1.5, 2.5, loc=10.0, scale=2.0)),
    (Distribution("x", "normal", {"mean": 10.0, "sd": 2.0}), stats.norm(10.0, 2.0)),
    (Distribution("x", "uniform", {"low": 1.0, "high": 4.0}), stats.uniform(1.0, 3.0)),
    (Distribution("x", "triangular", {"low": 0.0, "mode": 1.0, "high": 4.0}), stats.triang(0.25, 0.0, 4.0)),
])
def test_inverse_cdf_matches_scipy_stats(distribution, reference):
    """The quantile functions against scipy.stats (truncnorm, norm, uniform, triang: an outside
    implementation of the same distributions)."""
    u = np.linspace(0.001, 0.999, 41)
    np.testing.assert_allclose(inverse_cdf(distribution, u), reference.ppf(u), rtol=1e-9, atol=1e-9)


def test_bounded_triangular_stays_inside_and_keeps_its_shape():
    """Bounds truncate: the samples lie in [between] and follow the triangular CDF restricted
    there (scipy.stats.triang as the reference)."""
    d = Distribution("x", "triangular", {"low": 0.0, "mode": 1.0, "high": 4.0}, 0.5, 3.0)
    u = np.linspace(0.0, 1.0, 11)
    x = inverse_cdf(d, u)
    ref = stats.triang(0.25, 0.0, 4.0)
    expected = ref.ppf(ref.cdf(0.5) + u * (ref.cdf(3.0) - ref.cdf(0.5)))
    np.testing.assert_allclose(x, expected, rtol=1e-9, atol=1e-12)
    assert x.min() >= 0.5 and x.max() <= 3.0


def test_the_same_seed_draws_the_same_samples(study_file):
    study = load_study(study_file)
    first, again = draw(study.uncertainty), draw(study.uncertainty)
    other = draw(study.uncertainty, seed=12)
    for path in first:
        np.testing.assert_array_equal(first[path], again[path])
        assert not np.array_equal(first[path], other[path])
        d = next(i for i in study.uncertainty.inputs if i.path == path)
        low, high = d.span()
        assert np.all((first[path] >= low) & (first[path] <= high))


def test_percentiles_and_tornado_come_from_the_batch(study_file):
    """The percentiles are those of the samples' batch results; the tornado's first row is the
    input with the largest swing of the furnace duty, and its two ends are that input alone at
    its P10 and P90 with the others at their P50 (solved again here)."""
    study = load_study(study_file)
    result = run_uncertainty(study)
    assert result.failed == 0 and len(result.samples) == 60
    duty = result.samples["fired_heater_duty_kw"].to_numpy()
    row = result.percentiles.set_index("result").loc["fired_heater_duty_kw"]
    np.testing.assert_allclose([row.p10, row.p50, row.p90], np.percentile(duty, [10, 50, 90]), rtol=1e-12)
    assert "E-101.duty" in set(result.percentiles["result"]) and "E-101.cold_out" in set(result.percentiles["result"])
    # a supply's outlet is its supply temperature, an input (drawn here: in the tornado), not a
    # result; a splitter's repeats its inlet's, listed where it is made
    repeating = [f"{name}.outlet" for name in (*study.case().streams, *study.case().splitters)]
    assert {"crude.outlet", "crude_split.outlet"} <= set(repeating) & set(result.samples.columns)
    assert not set(repeating) & set(result.percentiles["result"])
    swings = result.tornado["swing_kw"].abs().to_numpy()
    assert np.all(np.diff(swings) <= 0)
    top = result.tornado.iloc[0]
    assert top["input"] == "streams.crude.flow" and top["rank_correlation"] > 0.9
    drawn = draw(study.uncertainty)
    values = {p: np.full(2, np.percentile(v, 50)) for p, v in drawn.items()}
    values[top["input"]] = np.array([top["input_p10"], top["input_p90"]])
    again = simulate_batch(study.case(), values).table["fired_heater_duty_kw"].to_numpy()
    np.testing.assert_allclose(again, [top["fired_heater_duty_kw_at_p10"], top["fired_heater_duty_kw_at_p90"]],
                               rtol=1e-9)


def test_the_command_reports_and_writes(study_file, tmp_path, capsys):
    out = tmp_path / "mc.json"
    assert main(["uncertainty", str(study_file), "--samples", "20", "--seed", "3", "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "P10" in text.upper() and "streams.crude.flow" in text and out.exists()


@pytest.mark.parametrize("inputs,key", [
    ("exchangers.E-104.shells: {distribution: uniform, low: 1, high: 2}", "exchangers.E-104.shells"),
    ("streams.crude.flow: {distribution: lognormal, mean: 95}", "distribution"),
    ("streams.crude.flow: {distribution: normal, mean: 95, sd: 0}", "sd"),
    ("streams.crude.flow: {distribution: normal, mean: 95, sd: -2}", "standard deviation must be above 0"),
    ("streams.crude.flow: {distribution: triangular, low: 90, mode: 80, high: 100}", "mode"),
    ("streams.crude.flow: {distribution: uniform, low: -10, high: 100}", "streams.crude.flow"),
])
def test_bad_uncertainty_input_names_the_key(tmp_path, inputs, key):
    path = tmp_path / "bad.yaml"
    path.write_text(f"base: {{demo: crude_preheat}}\nuncertainty:\n  inputs:\n    {inputs}\n", encoding="utf-8")
    with pytest.raises(CaseError) as error:
        load_study(path)
    assert str(path) in str(error.value) and key in str(error.value)
    assert main(["uncertainty", str(path)]) == 2


def test_without_a_fired_heater_the_tornado_ranks_nothing(tmp_path, capsys):
    """The product cooling train has no fired heater: its duty is zero in every sample, and rank
    correlations with a constant (of round-off) mean nothing: none is given, and the report says
    why instead of a table."""
    study = tmp_path / "u.yaml"
    study.write_text("base: {demo: product_cooling}\nuncertainty:\n  samples: 40\n  seed: 3\n  inputs:\n"
                     "    streams.cooling_water.flow: {distribution: uniform, low: 60, high: 90}\n", encoding="utf-8")
    result = run_uncertainty(load_study(study))
    assert result.tornado["rank_correlation"].isna().all()
    assert main(["uncertainty", str(study)]) == 0
    assert "does not vary over the samples" in capsys.readouterr().out


def test_the_report_names_the_limits_the_samples_violate(study_file, capsys):
    """Most samples put E-112's cold side above its design temperature: the report boxes that
    limit with its count, and each sample's row names the limits it violates (the count of the
    box is that of the rows naming it; the rows' limit count agrees)."""
    result = run_uncertainty(load_study(study_file))
    named = result.samples["violated_limits"]
    hit = named.str.contains("E-112 design_temperature")
    assert 0 < hit.sum() < len(named)
    counted = result.samples["limit_violations"].fillna(0).to_numpy()
    assert np.array_equal(counted, [len(t.split("; ")) if t else 0 for t in named])
    assert main(["uncertainty", str(study_file)]) == 0
    out = capsys.readouterr().out
    assert "LIMITS VIOLATED" in out and f"E-112 design_temperature (cold): {hit.sum():,} of 60" in out


def test_samples_without_an_answer_say_why_and_so_does_the_tornado(tmp_path, capsys):
    """Charge flows below what the reactor branch takes have no answer: the report counts them
    under their reason, with one of their messages, and where the tornado's P10 falls among
    them its blank end says why (it had been left blank without a word)."""
    study = tmp_path / "u.yaml"
    study.write_text("base: {demo: desalter_and_reactor}\nuncertainty:\n  samples: 200\n  seed: 1\n  inputs:\n"
                     "    streams.raw_charge.flow: {distribution: uniform, low: 15, high: 40}\n", encoding="utf-8")
    result = run_uncertainty(load_study(study))
    failed = ~result.samples["success"].astype(bool)
    assert 0 < failed.sum() < 200 and result.failed == failed.sum()
    assert [(path, q) for path, q, _, _ in result.tornado_gaps] == [("streams.raw_charge.flow", 10)]
    assert main(["uncertainty", str(study)]) == 0
    out = " ".join(capsys.readouterr().out.split())
    assert (f"SAMPLES WITH NO ANSWER, LEFT OUT OF THE PERCENTILES (key paths in the case desalter_and_reactor.yaml): "
            f"{failed.sum()} of 200") in out
    assert f"{failed.sum()} sample(s), e.g. splitters.charge_split" in out
    assert "streams.raw_charge.flow at its P10 (" in out and "has no answer: splitters.charge_split" in out


@pytest.mark.parametrize("seed", ["-1", "4294967296"])
def test_a_seed_outside_the_study_files_range_is_refused_at_the_command_line(study_file, seed, capsys):
    """The study file takes seeds 0 to 2^32 - 1; --seed the same (-1 had been an internal
    error, a larger one taken)."""
    assert main(["uncertainty", str(study_file), "--seed", seed]) == 2
    assert "--seed must be a whole number from 0 to 4,294,967,295" in capsys.readouterr().err
