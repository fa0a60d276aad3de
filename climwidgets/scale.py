"""Running on a dask cluster.

``use_cluster()`` connects to an existing dask scheduler, or starts a ``LocalCluster`` of
worker processes on this machine, and makes it the default for every computation in the
suite: nothing else changes in user code. Processes rather than threads, because NetCDF
and HDF5 reads hold a global lock inside one process, so decompression only runs in
parallel across processes.
"""

from __future__ import annotations

import os

__all__ = ["use_cluster", "current_client", "close_cluster"]

_client = None


def use_cluster(address=None, n_workers=None, threads_per_worker: int = 1, memory_limit="auto", **cluster_kwargs):
    """Connect to a dask scheduler (``address``, e.g. "tcp://10.0.0.5:8786") or start a LocalCluster.

    Returns the ``distributed.Client``; it is registered as dask's default scheduler, so
    ``.compute()`` anywhere in the suite runs on it. Call ``close_cluster()`` to go back to
    the threaded scheduler.
    """
    global _client
    from distributed import Client, LocalCluster

    close_cluster()
    if address is not None:
        _client = Client(address, set_as_default=True)
    else:
        n = n_workers or os.cpu_count() or 1
        cluster = LocalCluster(n_workers=n, threads_per_worker=threads_per_worker, processes=True,
                               memory_limit=memory_limit, dashboard_address=":0", **cluster_kwargs)
        _client = Client(cluster, set_as_default=True)
    return _client


def current_client():
    """The distributed client in use (ours or one the user made), or None."""
    try:
        from distributed import get_client

        return get_client()
    except (ImportError, ValueError):
        return None


def close_cluster() -> None:
    global _client
    if _client is not None:
        cluster = getattr(_client, "cluster", None)
        _client.close()
        if cluster is not None and _client.scheduler is not None:
            cluster.close()
        _client = None


def compute_on_cluster(lazy, client, on_progress=None, is_current=None, poll_seconds: float = 0.2):
    """Compute ``lazy`` on a distributed client, reporting progress and stopping when stale.

    ``on_progress(fraction)`` is called as tasks finish (from the client's event loop);
    ``is_current()`` returning False cancels the work and raises ``Superseded``-style
    ``CancelledComputation``.
    """
    from distributed import wait
    from distributed.diagnostics.progressbar import ProgressBar

    future = client.compute(lazy)

    class _Bar(ProgressBar):
        def _draw_bar(self, remaining, all, **kwargs):
            if on_progress is not None and all:
                on_progress((all - remaining) / all)

        def _draw_stop(self, **kwargs):
            if on_progress is not None:
                on_progress(1.0)

    if on_progress is not None:
        bar = _Bar([future], scheduler=client.scheduler.address, complete=True)
        client.loop.add_callback(bar.listen)
    while True:
        try:
            wait([future], timeout=poll_seconds)
            return future.result()
        except TimeoutError:
            pass
        if is_current is not None and not is_current():
            future.cancel()
            raise CancelledComputation("a newer request replaced this computation")


class CancelledComputation(Exception):
    """A cluster computation cancelled because its result is no longer wanted."""
