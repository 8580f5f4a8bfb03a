"""Where the windows computation runs: processes here, or a dask.distributed cluster (extra vigil[dask]).

`--scheduler local` starts a LocalCluster of `jobs` worker processes on 127.0.0.1 (no
dashboard) for the run; `--scheduler tcp://HOST:PORT` joins a running scheduler and its
workers. Either way the tasks go through the client's concurrent.futures executor and the
workers write their tables as Parquet files into a chunk folder that this process reads and
empties (vigil.sweep), so only file names travel through the scheduler. Workers on other
machines need a chunk folder they all see (`--chunk-dir`); by default it is a temporary
folder here.
"""

from __future__ import annotations

import logging
import tempfile
from concurrent.futures import Executor
from contextlib import ExitStack, contextmanager
from pathlib import Path
from typing import Iterator, NamedTuple

from vigil.errors import ArgumentError

CONNECT_TIMEOUT_S = 20
WORKER_WAIT_S = 60
_INSTALL_HINT = "install the optional extra: pip install 'vigil[dask]'"


class Workers(NamedTuple):
    """What vigil.sweep needs to hand out work: an executor (None: processes of its own),
    the number of workers, and the chunk folder (None: tables come back directly)."""

    executor: Executor | None
    count: int
    chunk_dir: Path | None


@contextmanager
def workers_for(scheduler: str | None, jobs: int = 1, chunk_dir: Path | None = None) -> Iterator[Workers]:
    """The workers to plan with, for as long as the `with` block lasts (a local cluster's own
    log is kept quiet: its workers' failures reach this process as the tasks' exceptions).

    scheduler: None (jobs processes on this machine), "local" (a dask LocalCluster of jobs
    processes on 127.0.0.1) or "tcp://HOST:PORT" (a running dask scheduler). chunk_dir: the
    folder shared with the workers (default: a temporary folder here, removed afterwards).

    Examples
    --------
    >>> with workers_for("local", jobs=2) as workers:  # doctest: +SKIP
    ...     table = plan_windows_chunked(targets, sites, {}, start, end, jobs=workers.count,
    ...                                  executor=workers.executor, chunk_dir=workers.chunk_dir)
    """
    if scheduler is None:
        yield Workers(None, jobs, None)
        return
    if scheduler != "local" and not scheduler.startswith("tcp://"):
        raise ArgumentError("scheduler", f"expected 'local' or tcp://HOST:PORT, got {scheduler!r}")
    try:
        from dask.distributed import Client, LocalCluster
        import pyarrow  # noqa: F401  (workers write Parquet)
    except ImportError as exc:
        raise ArgumentError("scheduler", f"dask.distributed is not available ({exc.name} missing); "
                                         f"{_INSTALL_HINT}") from None
    with ExitStack() as stack:
        if scheduler == "local":
            cluster = stack.enter_context(LocalCluster(n_workers=jobs, threads_per_worker=1, processes=True,
                                                       host="127.0.0.1", dashboard_address=None,
                                                       silence_logs=logging.CRITICAL))
            client = stack.enter_context(Client(cluster))
        else:
            client = stack.enter_context(_connect(Client, scheduler))
        if chunk_dir is None:
            chunk_dir = Path(stack.enter_context(tempfile.TemporaryDirectory(prefix="vigil-chunks-")))
        elif not Path(chunk_dir).is_dir():
            raise ArgumentError("chunk_dir", f"{chunk_dir} is not a folder")
        yield Workers(client.get_executor(pure=False), _worker_count(client, scheduler), Path(chunk_dir))


def _connect(client_class, address: str):
    try:
        return client_class(address, timeout=f"{CONNECT_TIMEOUT_S}s")
    except (OSError, TimeoutError) as exc:
        raise ArgumentError("scheduler", f"cannot reach {address} within {CONNECT_TIMEOUT_S} s ({exc})") from None


def _worker_count(client, scheduler: str) -> int:
    try:
        client.wait_for_workers(1, timeout=WORKER_WAIT_S)
    except TimeoutError:
        raise ArgumentError("scheduler", f"{scheduler} has no workers (waited {WORKER_WAIT_S} s)") from None
    return max(1, len(client.scheduler_info()["workers"]))
