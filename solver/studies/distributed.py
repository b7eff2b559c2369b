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

import gc
import logging
import sys
import threading
from contextlib import contextmanager

from hxtrain.network.errors import CaseError

PIECE_MINIMUM = 1000
"""Fewest scenarios sent to a worker as one piece: below that the transfer of the case and the
results costs more than the piece saves."""
CONNECT_SECONDS = 10.0
"""Seconds to reach the scheduler and finish Dask's handshake with it."""
WORKER_WAIT_SECONDS = 10.0
"""Seconds to wait for a scheduler without workers to get one before refusing it."""
SCHEMES = ("tcp", "tls", "ws", "wss", "ucx", "inproc")
"""The address schemes Dask's schedulers listen on (``http`` is a dashboard, not a scheduler)."""
EXIT_CLUSTER_LOST = 4
"""Exit code of a study whose cluster failed while it ran (a network failure, not bad input)."""
WATCH_SECONDS = 1.0
"""While the pieces are out, how often the scheduler is asked whether it still has workers."""
WORKERS_GONE_SECONDS = 30.0
"""Seconds a scheduler may go without any worker while pieces are out before the study is given
up as lost: a worker's nanny restarts it within seconds, and a scheduler left with none would
hold the pieces forever (a trial killed every worker of an external cluster: no end, no word)."""


class ClusterError(CaseError):
    """The cluster cannot be used: Dask is not installed, the address is not a scheduler's, the
    scheduler cannot be reached or has no workers (bad input to the command: exit 2 with the
    reason)."""


class ClusterLost(Exception):
    """The cluster failed while the study ran (the scheduler or its workers lost): no result is
    given (exit :data:`EXIT_CLUSTER_LOST`)."""

    exit_code = EXIT_CLUSTER_LOST


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
        """The results of ``function`` over the argument lists, in order; a failure of the cluster
        itself (not of a piece's own solve, whose error comes back as it was raised) is
        :class:`ClusterLost`."""
        try:
            futures = self.client.map(function, *arguments, pure=False)
            self._wait_while_workers(futures)
            return self.client.gather(futures)
        except _cluster_failures() as exc:
            raise ClusterLost(f"the Dask cluster failed while the study ran ({type(exc).__name__}: {exc}); no "
                              "result is given: run again when the scheduler and its workers are up") from None

    def _wait_while_workers(self, futures):
        """Until every piece is done, or the scheduler has had no worker for
        :data:`WORKERS_GONE_SECONDS` (then :class:`ClusterLost`, the pieces cancelled)."""
        import time

        gone_since, waiting = None, list(futures)
        while waiting:
            try:  # a piece's own error is raised here, as gather would
                waiting[0].result(timeout=WATCH_SECONDS)
                waiting.pop(0)
                continue
            except TimeoutError:
                pass
            if self.client.scheduler_info().get("workers"):
                gone_since = None
                continue
            gone_since = gone_since or time.monotonic()
            if time.monotonic() - gone_since >= WORKERS_GONE_SECONDS:
                self.client.cancel(futures)
                raise ClusterLost(f"every worker of the Dask cluster was lost while the study ran, and none came "
                                  f"back in {WORKERS_GONE_SECONDS:g} s; no result is given: run again when the "
                                  "scheduler has workers")


def _cluster_failures():
    import distributed
    from distributed.client import FutureCancelledError

    return FutureCancelledError, distributed.KilledWorker, OSError, TimeoutError


def _import_distributed():
    try:
        import distributed
    except ImportError:
        raise ClusterError("running on a cluster needs Dask: pip install \"hxtrain[cluster]\" (from a clone: "
                           "pip install \".[cluster]\"; it brings dask[distributed])") from None
    return distributed


def checked_address(scheduler: str) -> str:
    """The scheduler's address as given, refused (:class:`ClusterError`) where it cannot be one:
    empty, a scheme Dask does not listen on (a dashboard's ``http://``), or no port.

    >>> checked_address("tcp://10.0.0.5:8786"), checked_address("10.0.0.5:8786")
    ('tcp://10.0.0.5:8786', '10.0.0.5:8786')
    """
    text = scheduler.strip()
    example = "such as tcp://10.0.0.5:8786"
    if not text:
        raise ClusterError(f"--scheduler needs the scheduler's address, {example}")
    scheme, given, rest = text.partition("://")
    scheme, rest = (scheme.lower(), rest) if given else ("tcp", text)
    if scheme not in SCHEMES:
        dashboard = ": an http:// address is the scheduler's dashboard, not the scheduler" if scheme.startswith(
            "http") else ""
        raise ClusterError(f"{text!r} is not a Dask scheduler's address ({example}; the scheme one of "
                           f"{', '.join(SCHEMES)}){dashboard}")
    address = f"{scheme}://{rest}" if given else text
    if scheme == "inproc":  # an in-process scheduler's address names no host and port
        return address
    host, colon, port = rest.rpartition(":")
    if not (colon and port.isdigit()):
        raise ClusterError(f"{text!r} has no port: give the scheduler's, {example} (8786 unless it was started "
                           "with another; 8787 is usually its dashboard)")
    if not host:
        raise ClusterError(f"{text!r} has no host: give the scheduler's, {example} (127.0.0.1 on this machine)")
    if not 0 < int(port) < 65536:
        raise ClusterError(f"{text!r}: port {port} is not a port (1 to 65535)")
    return address


def _connected(distributed, scheduler, timeout):
    """A client of the scheduler at ``scheduler``, within :data:`CONNECT_SECONDS` (Dask's own
    timeout covers the connection, not a server that accepts it and never answers: a web
    dashboard's port), else :class:`ClusterError` with the reason."""
    outcome = {}

    def connect():
        try:
            outcome["client"] = distributed.Client(scheduler, timeout=timeout)
        except BaseException as exc:  # noqa: BLE001 - whatever it was, it is reported below
            # The kind and text only: the exception's frames hold the half-made client, and were
            # that garbage collected later in a thread starting another Dask loop, its close would
            # wait forever on the loop-runner lock that thread holds (a test run hung so).
            outcome["error"] = (type(exc), str(exc))
        if "error" in outcome:
            gc.collect()

    attempt = threading.Thread(target=connect, daemon=True)
    attempt.start()
    attempt.join(CONNECT_SECONDS + 5.0)
    if attempt.is_alive():
        raise ClusterError(f"the Dask scheduler {scheduler} did not answer within {CONNECT_SECONDS + 5.0:g} s: is that "
                           "the scheduler's port (8786 unless started with another), not its dashboard's (8787)?")
    if "error" in outcome:
        kind, text = outcome["error"]
        if issubclass(kind, (OSError, TimeoutError)):
            raise ClusterError(f"cannot reach the Dask scheduler {scheduler}: {text}")
        raise ClusterError(f"what answers at {scheduler} is not a Dask scheduler ({kind.__name__}: {text[:120]})")
    return outcome["client"]


def _with_workers(client, scheduler):
    """``client``, once its scheduler has a worker (waited for :data:`WORKER_WAIT_SECONDS`)."""
    try:
        client.wait_for_workers(1, timeout=WORKER_WAIT_SECONDS)
    except (TimeoutError, OSError):
        client.close()
        raise ClusterError(f"the Dask scheduler {scheduler} has no workers (waited {WORKER_WAIT_SECONDS:g} s): start "
                           f"some with 'dask worker {scheduler}'") from None
    return client


def describe(client, where) -> str:
    """One line saying which cluster a study runs on and what it has."""
    threads = client.nthreads()
    return f"on the Dask cluster {where}: {len(threads)} worker(s), {sum(threads.values())} thread(s)"


@contextmanager
def on_cluster(scheduler=None, local_workers=None, *, minimum=PIECE_MINIMUM, processes=True, timeout="10s",
               announce=None):
    """Run every batch inside this block on a Dask cluster: the scheduler at ``scheduler`` (an
    address such as ``tcp://10.0.0.5:8786``, which must have a worker), or a local cluster of
    ``local_workers`` worker processes (threads with ``processes=False``) started here and
    closed on leaving. ``announce``: called with a line saying which cluster and its workers."""
    from hxtrain.solver.simulation.batch import batches_on

    distributed = _import_distributed()
    cluster = None
    if scheduler is not None:
        scheduler = checked_address(scheduler)
        client = _with_workers(_connected(distributed, scheduler, timeout), scheduler)
    else:
        try:
            # the workers' own log lines (a task cancelled by Ctrl-C) off the shared screen: a
            # piece's failure comes back to the command, which words it
            cluster = distributed.LocalCluster(n_workers=int(local_workers or 1), threads_per_worker=1,
                                               processes=processes, dashboard_address=None,
                                               silence_logs=logging.CRITICAL)
        except (OSError, TimeoutError) as exc:
            raise ClusterError(f"cannot start a local Dask cluster: {exc}") from None
        client = distributed.Client(cluster)
    try:
        if announce is not None:
            announce(describe(client, scheduler or "started here"))
        with batches_on(DaskPieces(client, minimum)), _quiet_dask():
            yield client
    finally:
        with _quiet_dask():
            client.close()
            if cluster is not None:
                cluster.close()


@contextmanager
def _quiet_dask():
    """Dask's own log lines and warnings kept off the screen (a lost scheduler logs tracebacks
    while the client tries to reconnect; a large piece warns of its size): what matters reaches
    the user as :class:`ClusterLost` or the study's result."""
    import logging
    import warnings

    loggers = [logging.getLogger(name) for name in list(logging.root.manager.loggerDict)
               if name == "distributed" or name.startswith("distributed.")]  # dask sets some children's levels
    levels = [logger.level for logger in loggers]
    for logger in loggers:
        logger.setLevel(logging.CRITICAL + 1)
    try:
        with warnings.catch_warnings():
            warnings.filterwarnings("ignore", category=UserWarning, module="distributed")
            yield
    finally:
        for logger, level in zip(loggers, levels):
            logger.setLevel(level)


def cluster_for(args):
    """The context a command's batches run in: a Dask cluster if the options ask for one, else
    this process (the default)."""
    from contextlib import nullcontext

    scheduler, local = getattr(args, "scheduler", None), getattr(args, "local_cluster", None)
    if local is not None and local < 1:
        raise ClusterError("--local-cluster needs at least 1 worker")
    if scheduler is None and not local:
        return nullcontext()
    return on_cluster(scheduler, local, announce=lambda line: print(line, file=sys.stderr))


__all__ = ["on_cluster", "DaskPieces", "ClusterError", "ClusterLost", "PIECE_MINIMUM", "cluster_for", "checked_address"]
