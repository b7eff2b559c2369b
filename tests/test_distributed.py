"""Studies on Dask: a sweep-sized batch and a Monte Carlo run on a LocalCluster give the same
answers as in one process (threads, ``processes=False``, so that CI stays fast)."""

import time

import numpy as np
import pytest

pytest.importorskip("distributed")

from hxtrain.network.study import load_study  # noqa: E402
from hxtrain.solver import demo_case_path  # noqa: E402
from hxtrain.solver.simulation.batch import simulate_batch  # noqa: E402
from hxtrain.solver.studies import distributed as distributed_module  # noqa: E402
from hxtrain.solver.studies.distributed import ClusterError, on_cluster  # noqa: E402
from hxtrain.solver.studies.monte_carlo import run_uncertainty  # noqa: E402

from test_monte_carlo import STUDY  # noqa: E402


@pytest.fixture(scope="module")
def cluster():
    with on_cluster(local_workers=2, minimum=5, processes=False) as client:
        yield client


def test_a_batch_on_a_local_cluster_equals_the_local_batch(cluster, monkeypatch):
    """30 crude-demo scenarios cut into one piece per worker: every piece went to the cluster,
    and temperatures and totals agree with the batch solved here to 1e-9 K (each scenario
    converges on its own; pieces differ only in batch-wide stage choices)."""
    pieces = []
    original = distributed_module.DaskPieces.map

    def counted(self, function, *arguments):
        pieces.append(len(arguments[0]))
        return original(self, function, *arguments)

    path = demo_case_path("crude_preheat")
    values = {"streams.crude.flow": np.linspace(70.0, 110.0, 30), "exchangers.E-110.bypass.cold": np.linspace(0, 0.3, 30)}
    start = time.perf_counter()
    here = simulate_batch(path, values)
    local_seconds = time.perf_counter() - start
    monkeypatch.setattr(distributed_module.DaskPieces, "map", counted)
    with _same_cluster(cluster):
        start = time.perf_counter()
        there = simulate_batch(path, values)
        cluster_seconds = time.perf_counter() - start
    assert pieces == [2]
    assert there.table["success"].all() and len(there.table) == 30
    np.testing.assert_allclose(there.temperature, here.temperature, rtol=0, atol=1e-9)
    np.testing.assert_allclose(there.table["fired_heater_duty_kw"], here.table["fired_heater_duty_kw"], rtol=1e-12)
    print(f"\n30 scenarios: {local_seconds:.2f} s here, {cluster_seconds:.2f} s on a 2-worker local cluster")


def _same_cluster(client):
    from hxtrain.solver.simulation.batch import batches_on

    return batches_on(distributed_module.DaskPieces(client, minimum=5))


def test_monte_carlo_on_a_local_cluster_equals_the_local_run(cluster, tmp_path):
    path = tmp_path / "uncertain.yaml"
    path.write_text(STUDY, encoding="utf-8")
    study = load_study(path)
    here = run_uncertainty(study)
    with _same_cluster(cluster):
        there = run_uncertainty(study)
    np.testing.assert_allclose(there.percentiles[["p10", "p50", "p90"]].to_numpy(),
                               here.percentiles[["p10", "p50", "p90"]].to_numpy(), rtol=1e-9)
    np.testing.assert_allclose(there.tornado["swing_kw"], here.tornado["swing_kw"], rtol=1e-9)


def test_an_unreachable_scheduler_is_bad_input():
    """A scheduler that does not answer (a local port nothing listens on) is reported, exit 2."""
    with pytest.raises(ClusterError, match="cannot reach"):
        with on_cluster("tcp://127.0.0.1:9", timeout="1s"):
            pass
