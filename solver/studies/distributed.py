"""Studies on a Dask cluster: the batches of a sweep or a Monte Carlo run cut into pieces and
solved by the workers of a ``dask.distributed`` scheduler (Dask is an optional dependency:
``pip install "hxtrain[cluster]"``).

Nothing changes in what is computed: each piece is the same batch evaluation as in one process
(:func:`hxtrain.solver.simulation.batch.simulate_batch` hands the pieces to the cluster inside
:func:`on_cluster`), and the pieces come back in order. The default stays in-process; a study
goes to a cluster only when the user names a scheduler (``--scheduler tcp://host:8786``) or asks
for a local one (``--local-cluster N``: N worker processes on this machine).
"""

from __future__ import annotations

from contextlib import contextmanager

from hxtrain.network.errors import CaseError

PIECE_MINIMUM = 1000
"""Fewest scenarios sent to a worker as one piece: below that the transfer of the case and the
results costs more than the piece saves."""


class ClusterError(CaseError):
    """The cluster cannot be used: Dask is not installed, or the scheduler cannot be reached (bad
    input to the command: exit 2 with the reason)."""


class DaskPieces:
    """A Dask client seen as ``simulate_batch`` needs it: how many pieces, and an ordered map."""

    def __init__(self, client, minimum=PIECE_MINIMUM):
        self.client = client
        self.minimum = minimum

    @property
    def parts(self) -> int:
        """One piece per worker thread the scheduler knows of (at least one)."""
        threads = self.client.nthreads()
        return max(1, sum(threads.values()) if isinstance(threads, dict) else int(threads))

    def map(self, function, *arguments):
        futures = self.client.map(function, *arguments, pure=False)
        return self.client.gather(futures)


def _import_distributed():
    try:
        import distributed
    except ImportError:
        raise ClusterError("running on a cluster needs Dask: pip install \"hxtrain[cluster]\" "
                           "(dask[distributed])") from None
    return distributed


@contextmanager
def on_cluster(scheduler=None, local_workers=None, *, minimum=PIECE_MINIMUM, processes=True, timeout="10s"):
    """Run every batch inside this block on a Dask cluster: the scheduler at ``scheduler`` (an
    address such as ``tcp://10.0.0.5:8786``), or a local cluster of ``local_workers`` worker
    processes (threads with ``processes=False``) started here and closed on leaving."""
    from hxtrain.solver.simulation.batch import batches_on

    distributed = _import_distributed()
    cluster = None
    try:
        if scheduler:
            client = distributed.Client(scheduler, timeout=timeout)
        else:
            cluster = distributed.LocalCluster(n_workers=int(local_workers or 1), threads_per_worker=1,
                                               processes=processes, dashboard_address=None)
            client = distributed.Client(cluster)
    except (OSError, TimeoutError) as exc:
        raise ClusterError(f"cannot reach the Dask scheduler {scheduler or '(local)'}: {exc}") from None
    try:
        with batches_on(DaskPieces(client, minimum)):
            yield client
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def cluster_for(args):
    """The context a command's batches run in: a Dask cluster if the options ask for one, else
    this process (the default)."""
    from contextlib import nullcontext

    scheduler, local = getattr(args, "scheduler", None), getattr(args, "local_cluster", None)
    if local is not None and local < 1:
        raise ClusterError("--local-cluster needs at least 1 worker")
    if not scheduler and not local:
        return nullcontext()
    return on_cluster(scheduler, local)


__all__ = ["on_cluster", "DaskPieces", "ClusterError", "PIECE_MINIMUM", "cluster_for"]
