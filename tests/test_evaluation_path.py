"""One evaluation path for one scenario or many, and units added through the section registry.

Regression tests for the three disagreements between the one-case and the batch paths (a recycle
fraction of 1, a negative flow given to a Case object, sweeps whose table depended on the path
swept), and a unit type added with one reader, one class and one registry line.
"""

import textwrap

import numpy as np
import pytest

import hxtrain.network.sections as registry
from hxtrain.network import CaseError, case_from_mapping, load_case
from hxtrain.network.sections import UnitSection
from hxtrain.network.study import load_study
from hxtrain.solver import simulate, simulate_batch
from hxtrain.solver.demos import demo_case_path
from hxtrain.solver.studies import run_sweep
from hxtrain.units.protocol import COOLERS, Parameter, UnitBase, UnitReport


def test_a_negative_flow_given_with_a_case_object_is_not_valid():
    """Values are checked whatever the case is given as (file, mapping or Case)."""
    case = load_case(demo_case_path("crude_preheat"))
    table = simulate_batch(case, {"streams.crude.flow": np.array([-5.0, 95.0])}).table
    assert list(table["success"]) == [False, True]
    assert list(table["status"]) == [2, 0]
    assert "streams.crude.flow" in table.loc[0, "message"]
    assert np.isnan(table.loc[0, "fired_heater_duty_kw"]) and np.isfinite(table.loc[1, "fired_heater_duty_kw"])


def test_a_sweep_has_one_schema_whether_or_not_its_path_varies_in_a_batch(tmp_path):
    """A flow sweep (one batch) and a shell-count sweep (a batch of one per point) give tables
    with the same columns after the swept path; both points of each answer."""
    study = tmp_path / "study.yaml"
    study.write_text(textwrap.dedent(f"""
        base: {demo_case_path("crude_preheat")}
        sweeps:
          by_flow: {{grid: {{streams.crude.flow: [90, 95]}}}}
          by_shells: {{grid: {{exchangers.E-104.shells: [1, 2]}}}}
        """))
    loaded = load_study(study)
    by_flow, by_shells = (run_sweep(loaded, sweep) for sweep in loaded.sweeps)
    assert list(by_flow.columns)[1:] == list(by_shells.columns)[1:]
    assert by_flow["success"].all() and by_shells["success"].all()
    assert list(by_shells["exchangers.E-104.shells"]) == [1, 2]


# ----------------------------------------------------------------------------- a new unit type


class HeatLoss(UnitBase):
    """A test unit: a fixed heat loss (kW) from one stream to the surroundings, rated with the
    stream's mean cp over the temperature drop it causes (enthalpy balance)."""

    kind = "heat loss"
    group = "heaters_and_coolers"

    def __init__(self, name, key, loss):
        self.name, self.key, self.loss = name, key, np.asarray(loss, dtype=float)

    def parameters(self):
        return (Parameter("loss", "duty", 0.0),)

    def set_parameter(self, name, values):
        if name != "loss":
            return super().set_parameter(name, values)
        self.loss = np.asarray(values, dtype=float)

    def _outlet(self, inlets):
        t, m, fluid = inlets.t[:, 0], inlets.m[:, 0], inlets.fluids[0]
        return fluid.temperature(fluid.enthalpy(t) - self.loss / m, guess=t)

    def outlet_temperatures(self, inlets):
        return self._outlet(inlets)[:, None]

    def report(self, inlets):
        loss = np.broadcast_to(self.loss, (inlets.batch,))
        t_out = self._outlet(inlets)
        return UnitReport({"duty": loss, "t_hot_in": inlets.t[:, 0], "t_hot_out": t_out}, heat_added=-loss,
                          totals={COOLERS: loss}, metrics={"duty": loss, "outlet": t_out})


def _read_heat_loss(f, reading):
    from hxtrain.network import quantities as q

    data = {"loss": f.quantity("loss", q.DUTY)}
    f.finish()
    return data


def _build_heat_loss(name, key, data, building):
    return HeatLoss(name, key, data["loss"])


CASE_WITH_A_LOSS = {
    "fluids": {"oil": {"cp": 2.0}},
    "streams": {"oil": {"fluid": "oil", "flow": 10.0, "supply_temperature": 200.0, "path": "L-1 -> out"}},
    "heat_losses": {"L-1": {"loss": 100.0}},
    "products": {"out": {}},
}


def test_a_unit_type_is_one_reader_one_class_and_one_registry_line(monkeypatch):
    """Registering a section is all it takes: the case reads it (unknown keys refused), paths pass
    through it, the solver rates it and adds its duty to the totals without knowing its type."""
    line = UnitSection("heat_losses", "heat loss", "heat-loss tags to their duty", _read_heat_loss,
                       _build_heat_loss, through=(None,))
    monkeypatch.setattr(registry, "UNIT_SECTIONS", registry.UNIT_SECTIONS + (line,))
    result = simulate(case_from_mapping(CASE_WITH_A_LOSS))
    assert result.units.loc["out", "inlet_c"] == pytest.approx(200.0 - 100.0 / (10.0 * 2.0), abs=1e-9)
    assert result.summary["cooler_duty_kw"] == pytest.approx(100.0)
    assert result.balance["relative_imbalance"] < 1e-12
    batch = simulate_batch(CASE_WITH_A_LOSS, {"heat_losses.L-1.loss": np.array([0.0, 200.0])}).table
    assert list(batch["cooler_duty_kw"]) == pytest.approx([0.0, 200.0])
    with pytest.raises(CaseError) as info:
        case_from_mapping({**CASE_WITH_A_LOSS, "heat_losses": {"L-1": {"loss": 100.0, "los": 1}}})
    assert "heat_losses.L-1" in str(info.value)


def test_without_the_registry_line_the_section_is_unknown():
    """The same case without the registry line: 'heat_losses' is an unknown top-level key."""
    with pytest.raises(CaseError) as info:
        case_from_mapping(CASE_WITH_A_LOSS)
    assert "heat_losses" in str(info.value)


def test_a_batch_never_changes_the_case_it_was_given():
    """Scenario values are set on the network's units, not on the Case: after a batch varying
    fouling, the same Case object simulates as before."""
    case = load_case(demo_case_path("crude_preheat"))
    before = simulate(case).summary["fired_heater_duty_kw"]
    simulate_batch(case, {"exchangers.E-104.fouling.shell": np.array([0.0, 0.004])})
    assert case.exchangers["E-104"]["spec"].fouling["shell"] == pytest.approx(0.0009)
    assert simulate(case).summary["fired_heater_duty_kw"] == pytest.approx(before, rel=1e-12)
