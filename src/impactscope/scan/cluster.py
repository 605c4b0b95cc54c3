"""Run project batches on a Dask distributed cluster; the client keeps writing the store.

`address` is a scheduler address (`tcp://host:8786`) or `local`, which starts a LocalCluster with
two single-threaded worker processes on this machine. Every worker needs impactscope installed
and the corpus readable at the same path as on the client; batches travel as picklable projects
(a project that cannot be pickled is scanned on the client). Dask is an optional extra.
"""

from __future__ import annotations

import contextlib
import itertools
from typing import TYPE_CHECKING, Any, Generator, Iterable, Iterator

from impactscope.errors import InputError
from impactscope.scan.executor import Batch, Scanned, picklable_batch, scan_batch, scan_batch_remote
from impactscope.scan.job import ScanJob

if TYPE_CHECKING:  # pragma: no cover
    from distributed import Client

LOCAL = "local"


class ClusterError(InputError):
    """The cluster cannot be used: Dask is missing or the scheduler cannot be reached."""


def _distributed() -> Any:
    try:
        import distributed
    except ImportError:
        raise ClusterError(
            "--cluster needs Dask distributed, which is not installed; "
            "install it with `pip install 'impactscope[cluster]'`"
        ) from None
    return distributed


@contextlib.contextmanager
def connect(address: str, *, timeout: float = 15.0) -> Iterator["Client"]:
    """A client of the scheduler at `address`, or of a two-worker LocalCluster for `local`."""
    distributed = _distributed()
    if address == LOCAL:
        with distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
        ) as cluster, distributed.Client(cluster) as client:
            yield client
        return
    try:
        client = distributed.Client(address, timeout=f"{timeout}s")
    except (OSError, TimeoutError) as exc:
        raise ClusterError(
            f"cannot reach a Dask scheduler at {address!r} ({exc}); start one with `dask scheduler` "
            "and pass its address, e.g. --cluster tcp://host:8786, or use --cluster local"
        ) from None
    with client:
        yield client


def scan_on_cluster(address: str, batches: Iterable[Batch], job: ScanJob) -> Generator[Scanned, None, None]:
    """`run_cluster` on a client of `address`, connected only once there is work to send
    (a warm rescan with nothing changed never starts or contacts a cluster)."""
    work = iter(batches)
    first = next(work, None)
    if first is None:
        return
    with connect(address) as client:
        yield from run_cluster(itertools.chain((first,), work), job, client)


def run_cluster(
    batches: Iterable[Batch],
    job: ScanJob,
    client: "Client",
    *,
    window: int | None = None,
) -> Generator[Scanned, None, None]:
    """Yield results as batches finish on the cluster; a bounded number of batches is in flight."""
    distributed = _distributed()
    workers = max(len(client.scheduler_info().get("workers", {})), 1)
    limit = window or workers * 3
    finished = distributed.as_completed()
    pending: set[Any] = set()  # references only to unfinished work, so results are not pinned
    # The job (change list, surface, settings) goes to every worker once, not with every task.
    shipped = client.scatter(job, broadcast=True)
    try:
        for batch in batches:
            if not picklable_batch(batch):
                yield from scan_batch(batch, job)
                continue
            future = client.submit(scan_batch_remote, shipped, batch, pure=False)
            pending.add(future)
            finished.add(future)
            while len(pending) >= limit:
                done = next(finished)
                pending.discard(done)
                yield from done.result()
        for done in finished:
            pending.discard(done)
            yield from done.result()
    finally:
        if pending:
            client.cancel(list(pending))


__all__ = ["LOCAL", "ClusterError", "connect", "run_cluster", "scan_on_cluster"]
