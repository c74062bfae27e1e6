"""Study points on a Dask cluster: each point a task, results written here as they arrive.

``--cluster tcp://host:8786`` connects to a running Dask scheduler (started by hand, by a
batch system through dask-jobqueue, ...); ``--cluster local:N`` starts a cluster of N worker
processes on this machine (one thread each, listening on 127.0.0.1 only) for the run. Dask
is imported here only, and only when a study is given ``--cluster``.

A task's inputs are the point's validated case tables (the case text, parsed) and its
fingerprint (femcav.study.fingerprint); the worker solves and returns the result, and the
client (this process) writes it into the result folder at once, atomically
(femcav.study.point_store). So a worker that dies loses only its point in flight (the
scheduler gives it to another worker), a client that dies or is stopped loses only the
points in flight (the next run resumes from the folder), and no two processes ever write
the same point. A task that raises (a bad mesh at that value, a memory refusal) or whose
workers keep dying is recorded with its error and the others go on.

An imported mesh file is read by the worker at the case's path: on a cluster of several
machines that path must be on a file system they share.
"""

from __future__ import annotations

import logging
import re
import signal
import time
from contextlib import contextmanager
from dataclasses import dataclass

from ..errors import InputError, ResourceError
from ..progress import Progress

LOCAL_PREFIX = "local:"
SCHEDULER_ADDRESS = re.compile(r"^(tcp|tls|inproc|ws|wss)://[^\s/]+$")
CONNECT_TIMEOUT = "20s"
MAX_LOCAL_WORKERS = 256


@dataclass(frozen=True)
class ClusterAddress:
    scheduler: str | None = None     # a running scheduler, or None for a local cluster
    local_workers: int = 0

    def __str__(self) -> str:
        return self.scheduler or f"{LOCAL_PREFIX}{self.local_workers}"


def parse_cluster_address(text: str) -> ClusterAddress:
    """``tcp://host:port`` (any scheme Dask speaks) or ``local:N``; InputError otherwise."""
    if not isinstance(text, str):
        raise InputError(f"an address such as tcp://host:8786 or local:2, got {text!r}",
                         field="--cluster")
    if text.startswith(LOCAL_PREFIX):
        count = text[len(LOCAL_PREFIX):]
        if not count.isdigit() or not 1 <= int(count) <= MAX_LOCAL_WORKERS:
            raise InputError(f"local:N takes a worker count from 1 to {MAX_LOCAL_WORKERS}, "
                             f"got {text!r}", field="--cluster")
        return ClusterAddress(local_workers=int(count))
    if not SCHEDULER_ADDRESS.match(text):
        raise InputError(f"a scheduler address such as tcp://host:8786, or local:N for N "
                         f"worker processes here; got {text!r}", field="--cluster")
    return ClusterAddress(scheduler=text)


@contextmanager
def cluster_client(address: ClusterAddress, progress: Progress):
    """A connected ``distributed.Client`` for the ``with`` block; a local cluster is
    started before and stopped after. The dashboard's address (or why there is none) goes
    to stderr."""
    import distributed

    cluster = None
    # Ctrl-C is the client's to handle: local workers started with it ignored keep it
    # ignored through exec (as femcav.study.workers does for --jobs).
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        if address.scheduler is None:
            # A free port, not Dask's usual 8787, which another run may hold. (Without
            # bokeh the address still serves Dask's health and metrics pages.)
            cluster = distributed.LocalCluster(
                n_workers=address.local_workers, processes=True, threads_per_worker=1,
                host="127.0.0.1", dashboard_address=":0", silence_logs=logging.ERROR,
                worker_dashboard_address=None)
            client = distributed.Client(cluster, timeout=CONNECT_TIMEOUT)
        else:
            try:
                client = distributed.Client(address.scheduler, timeout=CONNECT_TIMEOUT)
            except (OSError, TimeoutError) as exc:
                raise InputError(f"no Dask scheduler answered at {address.scheduler} "
                                 f"within {CONNECT_TIMEOUT} ({type(exc).__name__})",
                                 field="--cluster") from None
    except BaseException:
        if cluster is not None:
            cluster.close()
        raise
    finally:
        signal.signal(signal.SIGINT, previous)
    # Dask's own log lines (a traceback when the scheduler goes away) would break the
    # house rule of one line per failure: what matters reaches the user as an exception.
    dask_logs = [logging.getLogger(name) for name in list(logging.root.manager.loggerDict)
                 if name == "distributed" or name.startswith("distributed.")]
    levels = [log.level for log in dask_logs]
    for log in dask_logs:
        log.setLevel(logging.CRITICAL)
    try:
        progress.step(f"cluster {address}: {len(client.nthreads())} workers, "
                      f"{_dashboard_line(client, address)}")
        yield client
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
        for log, level in zip(dask_logs, levels):
            log.setLevel(level)


def _has_dashboard_library() -> bool:
    import importlib.util
    return importlib.util.find_spec("bokeh") is not None


def _dashboard_line(client, address: ClusterAddress) -> str:
    if "dashboard" not in client.scheduler_info().get("services", {}):
        return "no dashboard (the scheduler runs none)"
    if address.scheduler is None and not _has_dashboard_library():
        return "no dashboard (the bokeh package is not installed)"
    # a remote scheduler draws it only if bokeh is installed where it runs
    return f"dashboard at {client.dashboard_link}"


def run_on_worker(function, share: int, task):
    """What a worker runs: ``function(task)``, with the memory guard told how many workers
    share this machine's memory (femcav.memory_room)."""
    from .. import memory_room

    memory_room.share_memory_among(share)
    return function(task)


def _comm_errors() -> tuple:
    """The exceptions that say the scheduler has gone (not that a task failed)."""
    from concurrent.futures import CancelledError

    from distributed.comm.core import CommClosedError
    return (CommClosedError, CancelledError)


@dataclass(frozen=True)
class ClusterPool:
    """The cluster as the sweep sees it: tasks in, each result handed over as it arrives."""

    client: object
    share: int                      # workers sharing one machine's memory (1: unknown)

    def run(self, function, tasks: dict, deliver, progress: Progress, noun: str = "point"
            ) -> dict[int, str]:
        """Run ``function(task)`` for every ``index -> task``; ``deliver(index, result)``
        for each success, here, as it arrives. Returns index -> error text of the tasks
        that failed. Ctrl-C cancels what is left and is raised again."""
        import distributed

        futures = {self.client.submit(run_on_worker, function, self.share, task,
                                      pure=False, key=f"femcav-{noun}-{index}-{time.time_ns()}"):
                   index for index, task in tasks.items()}
        failed: dict[int, str] = {}
        done, t0 = 0, time.perf_counter()
        try:
            for future in distributed.as_completed(list(futures)):
                index = futures.pop(future)
                if future.status == "finished":
                    deliver(index, future.result())
                    done += 1
                    what = "solved"
                elif future.status == "error":
                    failed[index] = _error_text(future)
                    what = f"FAILED ({failed[index]})"
                else:               # "lost" or "cancelled": the scheduler has gone
                    raise _cluster_lost(f"a task was {future.status}")
                finished = done + len(failed)
                left = len(futures)
                eta = (time.perf_counter() - t0) / finished * left
                counts = (f"{done} done, {_running(self.client, futures)} running, "
                          f"{len(failed)} failed, {left} to go, about {eta:.0f} s left")
                if _on_terminal(progress):
                    _draw_bar(progress, finished, finished + left, counts,
                              f"{noun} {index + 1} {what}" if index in failed else None)
                else:
                    progress.step(f"{noun} {index + 1} {what}: {counts}")
        except _comm_errors() as exc:
            raise _cluster_lost(type(exc).__name__) from None
        except BaseException:
            self.client.cancel(list(futures))   # points in flight are lost; the rest kept
            raise
        return failed


    def gather(self, function, tasks: list) -> list:
        """``[function(task) for task in tasks]``, run at once on the cluster; the first
        task's error is raised here. Ctrl-C cancels them."""
        futures = [self.client.submit(run_on_worker, function, self.share, task, pure=False)
                   for task in tasks]
        try:
            return self.client.gather(futures)
        except _comm_errors() as exc:
            raise _cluster_lost(type(exc).__name__) from None
        except BaseException:
            self.client.cancel(futures)
            raise


BAR_WIDTH = 30


def _on_terminal(progress: Progress) -> bool:
    """A person watches: one bar redrawn in place instead of a line per task."""
    isatty = getattr(progress.stream, "isatty", None)
    return not progress.quiet and callable(isatty) and isatty()


def _draw_bar(progress: Progress, finished: int, total: int, counts: str,
              failure: str | None) -> None:
    stream = progress.stream
    if failure is not None:             # a failure keeps its own line above the bar
        print(f"\r\x1b[K{failure}", file=stream)
    filled = BAR_WIDTH * finished // max(total, 1)
    end = "\n" if finished == total else ""
    print(f"\r\x1b[K[{'#' * filled}{'.' * (BAR_WIDTH - filled)}] {counts}", end=end,
          file=stream, flush=True)


def _cluster_lost(why: str) -> ResourceError:
    return ResourceError(f"the connection to the Dask scheduler was lost ({why}); the points "
                         "solved so far are kept: run again to go on")


def _error_text(future) -> str:
    try:
        exc = future.exception()
    except Exception as other:  # noqa: BLE001 - a cancelled future raises instead
        exc = other
    text = str(exc).splitlines()[0] if str(exc) else ""
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def _running(client, futures: dict) -> int:
    """How many of the tasks still to come a worker is running now (one scheduler query)."""
    keys = {f.key for f in futures}
    try:
        # "processing" also counts the tasks a worker holds queued: at most one a thread runs
        return min(sum(len(keys.intersection(k)) for k in client.processing().values()),
                   sum(client.nthreads().values()))
    except Exception:  # noqa: BLE001 - a count for the progress line only
        return 0


@contextmanager
def cluster_pool(address: ClusterAddress, progress: Progress):
    with cluster_client(address, progress) as client:
        yield ClusterPool(client=client, share=address.local_workers or 1)


@contextmanager
def optional_cluster_pool(address: str | None, progress: Progress):
    """A ClusterPool for the address text (``--cluster``), or None without one (Dask is
    then not imported)."""
    if address is None:
        yield None
        return
    with cluster_pool(parse_cluster_address(address), progress) as pool:
        yield pool
