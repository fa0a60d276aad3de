"""Running on a dask cluster.

``use_cluster()`` connects to an existing dask scheduler, or starts a ``LocalCluster`` of
worker processes on this machine, and makes it the default for every computation in the
suite: nothing else changes in user code. Processes rather than threads, because NetCDF
and HDF5 reads hold a global lock inside one process, so decompression only runs in
parallel across processes.
"""

from __future__ import annotations

import os

__all__ = ["use_cluster", "current_client", "close_cluster", "TaskProgress", "Superseded"]

_client = None


class Superseded(Exception):
    """Raised inside a computation that is no longer wanted, to stop it (never shown to users)."""


def _callback_base():
    from dask.callbacks import Callback

    return Callback


class TaskProgress(_callback_base()):
    """The suite's one dask progress callback (local schedulers).

    ``on_fraction(done / total)`` is called as tasks finish, at most once per ``step``
    of progress, from the thread running the computation; ``is_current()`` returning
    False stops the computation at its next task with :class:`Superseded`.  Hooks fired
    by computations of other threads (another widget at the same time) are ignored.
    With a ``dask.distributed`` client these hooks are not called (see
    :func:`compute_on_cluster`).

    Parameters
    ----------
    on_fraction : callable, optional
        ``on_fraction(fraction)`` with the share of tasks done, in [0, 1].
    is_current : callable, optional
        ``is_current()`` returns False once the result is no longer wanted.
    step : float, default 0.02
        The least progress between two calls of ``on_fraction`` (1.0 is always reported).

    Examples
    --------
    >>> import dask.array as da
    >>> from climwidgets.scale import TaskProgress
    >>> seen = []
    >>> with TaskProgress(on_fraction=seen.append, step=0.5):
    ...     total = float(da.ones(8, chunks=2).sum().compute(scheduler="sync"))
    >>> total, seen[-1]
    (8.0, 1.0)
    """

    def __init__(self, on_fraction=None, is_current=None, step: float = 0.02):
        import threading

        super().__init__()
        self.on_fraction = on_fraction
        self.is_current = is_current
        self.step = float(step)
        self.thread = threading.get_ident()
        self.total = 1
        self.done = 0
        self._last = -1.0

    def _mine(self):
        import threading

        return threading.get_ident() == self.thread

    def _start_state(self, dsk, state):
        if not self._mine():
            return
        self.total = max(
            1, len(state["ready"]) + len(state["waiting"]) + len(state.get("running", ())) + len(state["finished"])
        )
        self.done = len(state["finished"])
        self._last = -1.0
        self._report()

    def _pretask(self, key, dsk, state):
        if self._mine() and self.is_current is not None and not self.is_current():
            raise Superseded(key)

    def _posttask(self, key, result, dsk, state, worker_id):
        if not self._mine():
            return
        self.done += 1
        self._report()

    def _report(self):
        fraction = min(1.0, self.done / self.total)
        if self.on_fraction is not None and (fraction - self._last >= self.step or fraction == 1.0):
            self._last = fraction
            self.on_fraction(fraction)


def use_cluster(address=None, n_workers=None, threads_per_worker: int = 1, memory_limit="auto", **cluster_kwargs):
    """Connect to a dask scheduler (``address``, e.g. "tcp://10.0.0.5:8786") or start a LocalCluster.

    Returns the ``distributed.Client``; it is registered as dask's default scheduler, so
    ``.compute()`` anywhere in the suite runs on it. Call ``close_cluster()`` to go back to
    the threaded scheduler.

    Parameters
    ----------
    address : str, optional
        The scheduler's address; None starts a LocalCluster of worker processes here.
    n_workers : int, optional
        Worker processes of the LocalCluster (default: the number of CPUs).
    threads_per_worker : int, default 1
        Threads in each worker process.
    memory_limit : str or int, default "auto"
        Memory per worker, as dask.distributed takes it (``"4GB"``, bytes, ``"auto"``).
    **cluster_kwargs
        Further arguments of ``distributed.LocalCluster``.

    Returns
    -------
    distributed.Client
        The client, registered as the default scheduler.

    Examples
    --------
    Starting worker processes takes seconds, so the example is not run as a doctest:

    >>> from climwidgets.scale import close_cluster, use_cluster
    >>> client = use_cluster(n_workers=2)  # doctest: +SKIP
    >>> close_cluster()  # back to the threaded scheduler
    """
    global _client
    from distributed import Client, LocalCluster

    close_cluster()
    if address is not None:
        _client = Client(address, set_as_default=True)
    else:
        import dask

        n = n_workers or os.cpu_count() or 1
        # distributed starts workers with MALLOC_TRIM_THRESHOLD_ set, which switches off
        # glibc's growing mmap threshold: every array over 128 KiB is then a fresh mmap,
        # page-faulted and zeroed on each task. The fused climatology allocates several
        # such arrays per chunk and its workers spent 25-35 % more CPU than the same graph
        # on threads (benchmarks/out/cluster.md); its tasks hand on small partials, so the
        # trimming it buys is not needed. A value set in the environment is still inherited.
        with dask.config.set({"distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None}):
            cluster = LocalCluster(
                n_workers=n,
                threads_per_worker=threads_per_worker,
                processes=True,
                memory_limit=memory_limit,
                dashboard_address=":0",
                **cluster_kwargs,
            )
        _client = Client(cluster, set_as_default=True)
    return _client


def current_client():
    """The distributed client in use (ours or one the user made), or None.

    Returns
    -------
    distributed.Client or None
        The default client, or None when computations run on a local scheduler.

    Examples
    --------
    >>> from climwidgets.scale import current_client
    >>> current_client() is None  # no cluster in this session
    True
    """
    try:
        from distributed import get_client

        return get_client()
    except (ImportError, ValueError):
        return None


def close_cluster() -> None:
    """Close the client (and the LocalCluster) that :func:`use_cluster` opened, if any.

    A client the user made themselves is left alone.

    Returns
    -------
    None

    Examples
    --------
    >>> from climwidgets.scale import close_cluster
    >>> close_cluster()  # nothing open: does nothing
    """
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
