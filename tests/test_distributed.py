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


def test_a_failed_connection_leaves_no_half_made_client_behind():
    """The client Dask half-made before failing is collected where it failed: left to a later
    garbage collection, its close ran inside another client's start, which holds Dask's
    loop-runner lock, and waited on that lock for ever (a CI run hung so)."""
    import gc

    import distributed

    def clients():
        return {id(o) for o in gc.get_objects() if isinstance(o, distributed.Client)}

    gc.collect()
    before = clients()
    gc.disable()  # no collection by chance: only the one made where the connection failed
    try:
        with pytest.raises(ClusterError, match="cannot reach"):
            with on_cluster("tcp://127.0.0.1:9", timeout="1s"):
                pass
        left = clients() - before
    finally:
        gc.enable()
    assert not left


@pytest.mark.parametrize("address, fragment", [
    ("", "needs the scheduler's address"), ("   ", "needs the scheduler's address"),
    ("http://127.0.0.1:8787", "is the scheduler's dashboard"), ("not a url", "has no port"),
    ("tcp://10.0.0.5", "has no port"), ("10.0.0.5:port", "has no port"),
    (":8799", "has no host"), ("tcp://127.0.0.1:99999", "port 99999 is not a port"),
    ("ftp://10.0.0.5:21", r"the scheme one of tcp, tls, ws, wss, ucx, inproc\)$"),
])
def test_what_cannot_be_a_scheduler_address_is_refused_before_connecting(address, fragment):
    """A dashboard's http:// address, an address without a port or host, a port that is none
    (a trial's ':8799' had been said to have no port, 99999 had waited 12 s for a connection,
    and 'TCP://' had been called a dashboard), or none at all: bad input
    (exit 2), said before any connection (these had been an internal error, or, for "", a
    silent run in this process)."""
    with pytest.raises(ClusterError, match=fragment):
        with on_cluster(address):
            pass


def _server(answer):
    """A local TCP server on a free port that sends ``answer`` (or nothing, and holds the
    connection open, where it is None) to whoever connects; returns its address."""
    import socket
    import threading

    listener = socket.socket()
    listener.bind(("127.0.0.1", 0))
    listener.listen(4)
    held = []

    def serve():
        while True:
            connection, _ = listener.accept()
            held.append(connection)
            if answer is not None:
                connection.sendall(answer)

    threading.Thread(target=serve, daemon=True).start()
    return f"tcp://127.0.0.1:{listener.getsockname()[1]}"


def test_a_service_that_is_not_a_scheduler_is_named_so():
    """Something else on the port (here a server that greets like SSH): Dask reads its banner
    as a message length of exabytes; reported as not a Dask scheduler, exit 2 (had been an
    internal error asking for 2.8 EiB)."""
    with pytest.raises(ClusterError, match="is not a Dask scheduler"):
        with on_cluster(_server(b"SSH-2.0-OpenSSH_9.2p1 Debian\r\n" * 3), timeout="2s"):
            pass


def test_a_port_that_accepts_and_never_answers_is_given_up_on(monkeypatch):
    """A web dashboard's port accepts the connection and waits for a request: Dask's timeout
    does not cover that, and the command had hung for minutes. Given up after
    CONNECT_SECONDS (+5 s), naming the likely mix-up of ports."""
    monkeypatch.setattr(distributed_module, "CONNECT_SECONDS", 0.5)
    start = time.perf_counter()
    with pytest.raises(ClusterError, match="did not answer within 5.5 s: is that the scheduler's port"):
        with on_cluster(_server(None), timeout="30s"):
            pass
    assert time.perf_counter() - start < 15.0


def test_a_scheduler_without_workers_is_refused(monkeypatch):
    """A scheduler with no worker would leave the study to this process without a word: after
    WORKER_WAIT_SECONDS it is refused, saying how to start a worker."""
    import distributed

    monkeypatch.setattr(distributed_module, "WORKER_WAIT_SECONDS", 0.5)
    with distributed.LocalCluster(n_workers=0, processes=False, dashboard_address=":0") as empty:
        with pytest.raises(ClusterError, match="has no workers .* start some with 'dask worker"):
            with on_cluster(empty.scheduler_address):
                pass


def test_a_cluster_lost_mid_run_is_its_own_failure_with_no_result(tmp_path, monkeypatch, capsys):
    """The scheduler lost while the pieces are out: no result and no output file, exit 4 with
    the reason (had been exit 1, "a fault in hxtrain"). A piece's own error is not this: it
    comes back as it was raised."""
    from distributed.client import FutureCancelledError

    from hxtrain.solver.cli.main import main

    class Piece:
        def __init__(self, error):
            self.error = error

        def result(self, timeout=None):
            raise self.error

    class LostClient:
        error = FutureCancelledError("piece-1", reason="scheduler-connection-lost")

        def map(self, function, *arguments, pure=False):
            return [Piece(self.error) for _ in arguments[0]]

        def gather(self, futures):
            raise self.error

        def nthreads(self):
            return {"w1": 1, "w2": 1}

        def close(self):
            pass

    @__import__("contextlib").contextmanager
    def lost(scheduler=None, local_workers=None, announce=None, **kwargs):
        from hxtrain.solver.simulation.batch import batches_on

        with batches_on(distributed_module.DaskPieces(LostClient(), minimum=5)):
            yield None

    monkeypatch.setattr(distributed_module, "on_cluster", lost)
    study = tmp_path / "uncertain.yaml"
    study.write_text(STUDY, encoding="utf-8")
    out = tmp_path / "mc.csv"
    assert main(["uncertainty", str(study), "--scheduler", "tcp://127.0.0.1:8786", "--out", str(out)]) == 4
    err = capsys.readouterr().err
    assert "the Dask cluster failed while the study ran" in err and "internal error" not in err
    assert not list(tmp_path.glob("mc*"))

    class Refusing(LostClient):
        error = ClusterError("a piece's own bad input")

    with pytest.raises(ClusterError, match="own bad input"):
        distributed_module.DaskPieces(Refusing()).map(len, [1])


def test_a_cluster_whose_workers_are_all_lost_is_given_up_on(monkeypatch):
    """Every worker gone while its pieces are out, the scheduler still up: the pieces would wait
    for a worker forever (a trial killed an external cluster's workers: no end, no word). After
    WORKERS_GONE_SECONDS without any, the study is lost (ClusterLost, exit 4)."""
    import distributed

    from hxtrain.solver.studies.distributed import ClusterLost, DaskPieces

    monkeypatch.setattr(distributed_module, "WATCH_SECONDS", 0.2)
    monkeypatch.setattr(distributed_module, "WORKERS_GONE_SECONDS", 1.0)
    with distributed.LocalCluster(n_workers=1, processes=False, threads_per_worker=1, dashboard_address=":0") as lone:
        with distributed.Client(lone) as client:
            name = next(iter(lone.workers))
            closer = __import__("threading").Timer(0.5, lambda: lone.sync(lone.workers[name].close))
            closer.start()
            start = time.monotonic()
            with pytest.raises(ClusterLost, match="every worker of the Dask cluster was lost"):
                DaskPieces(client).map(time.sleep, [1.0, 1.0, 1.0])
            closer.join()
            assert time.monotonic() - start < 15.0


def test_a_scheme_in_capitals_is_read_as_the_scheme():
    assert distributed_module.checked_address("TCP://127.0.0.1:8786") == "tcp://127.0.0.1:8786"
