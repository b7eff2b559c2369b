"""A batch's rows for scenarios it could not solve (solver/simulation/results.py,
network/scenarios.py), from a new user's trial of the Python API: a scenario refused as not
valid showed the iterations of the others, and a flow of 0 was refused with a bound that was not
the real one ("it must be above 0", while 1e-7 kg/s was refused too, as a case file refuses it)."""

from __future__ import annotations

import numpy as np
import pytest

from hxtrain.network.errors import CaseError
from hxtrain.network.case import case_from_mapping
from hxtrain.solver.demos import demo_case_path
from hxtrain.solver.simulation.batch import simulate_batch


def test_scenarios_not_valid_took_part_in_no_iteration_and_say_the_case_files_reason():
    flows = np.array([0.0, -10.0, np.nan, 1e-7, 95.0])
    table = simulate_batch(demo_case_path("crude_preheat"), {"streams.crude.flow": flows}).table
    assert table["status_text"].tolist() == ["not valid"] * 4 + ["success"]
    assert table["iterations"].tolist()[:4] == [0, 0, 0, 0] and table["iterations"].iloc[4] > 0
    for k in (0, 1, 3):
        assert "below the smallest plausible mass flow, 1e-06 kg/s" in table["message"].iloc[k]
    assert table["message"].iloc[2] == "streams.crude.flow: nan is not a finite number"


def test_the_batch_refuses_a_zero_flow_with_the_words_a_case_file_uses():
    """The same value in a case file: the same reason."""
    import yaml

    document = yaml.safe_load(demo_case_path("crude_preheat").read_text(encoding="utf-8"))
    document["streams"]["crude"]["flow"] = 0.0
    with pytest.raises(CaseError) as refused:
        case_from_mapping(document)
    table = simulate_batch(demo_case_path("crude_preheat"), {"streams.crude.flow": [0.0]}).table
    assert "below the smallest plausible mass flow, 1e-06 kg/s" in str(refused.value)
    assert "below the smallest plausible mass flow, 1e-06 kg/s" in table["message"].iloc[0]
