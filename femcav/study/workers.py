"""Worker processes for a study: no more than fit, and none outliving the run.

How many: a request for ``--jobs N`` is lowered to the CPU cores this process may run on
(os.sched_getaffinity) and to what fits in memory: the free memory shared by all the
workers (femcav.memory_room.shared_room: the machine's, and the control group's limit)
over what one worker needs (its interpreter and libraries, WORKER_BASE_BYTES, plus the
solver's own peak estimate for a point, with a margin since neighbouring points differ).
Each worker then guards its solves with its share of that memory.

Ending with the parent: workers are started with "spawn" (not fork: a forked child inherits
the locks of the parent's BLAS, OpenMP and gmsh threads and can hang on them). On Linux each
asks the kernel for SIGTERM when its parent dies (prctl PR_SET_PDEATHSIG), and every worker
also watches its parent's process id from a thread, so that a parent ended by SIGKILL, a
crash or SIGTERM takes its workers with it instead of leaving them writing points.
"""

from __future__ import annotations

import ctypes
import multiprocessing
import os
import signal
import sys
import threading
import time
from concurrent.futures import ProcessPoolExecutor

from .. import memory_room as memory

# Resident size of a worker once femcav, scipy and gmsh are imported: 134 MB measured
# (Python 3.11, ru_maxrss after the imports); rounded up for the mesh and assembly.
WORKER_BASE_BYTES = 300e6
PEAK_MARGIN = 1.5            # a later point may mesh finer than the one measured
PARENT_POLL_SECONDS = 0.5
_PR_SET_PDEATHSIG = 1


def cpu_count() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:       # not Linux
        return os.cpu_count() or 1


def usable_jobs(requested: int, pending: int, peak_estimate_bytes: float | None,
                shared_bytes: float | None = None) -> tuple[int, str | None]:
    """(processes to start, why fewer than ``requested``, or None)."""
    limits = [(cpu_count(), "CPU cores available to this process")]
    if peak_estimate_bytes is not None:
        shared = memory.shared_room() if shared_bytes is None else shared_bytes
        per_job = WORKER_BASE_BYTES + PEAK_MARGIN * peak_estimate_bytes
        limits.append((max(1, int(shared // per_job)),
                       f"workers of about {memory.format_bytes(per_job)} each fit in "
                       f"{memory.format_bytes(shared)} free"))
    jobs, why = min([(requested, None)] + limits, key=lambda lw: lw[0])
    return min(jobs, max(1, pending)), why


def worker_pool(jobs: int) -> ProcessPoolExecutor:
    return ProcessPoolExecutor(max_workers=jobs,
                               mp_context=multiprocessing.get_context("spawn"),
                               initializer=_start_worker, initargs=(os.getpid(), jobs))


def _start_worker(parent_pid: int, jobs: int) -> None:
    memory.share_memory_among(jobs)
    _die_with_parent(parent_pid)


def _die_with_parent(parent_pid: int) -> None:
    if sys.platform.startswith("linux"):
        try:
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGTERM), 0, 0, 0)
        except (OSError, AttributeError):
            pass                 # the watching thread below still covers it
    if os.getppid() != parent_pid:       # the parent died before the request took hold
        os._exit(1)
    threading.Thread(target=_watch_parent, args=(parent_pid,), daemon=True,
                     name="femcav-parent-watch").start()


def _watch_parent(parent_pid: int) -> None:
    while os.getppid() == parent_pid:
        time.sleep(PARENT_POLL_SECONDS)
    os.kill(os.getpid(), signal.SIGTERM)


def submit_without_ctrl_c(pool: ProcessPoolExecutor, function, tasks) -> list:
    """Submit ``function`` for every task, the workers started with Ctrl-C ignored: it is the parent's to
    handle (it stops the workers), and a worker that took it too would print its own
    traceback. Submitting starts the workers; they inherit the ignored signal through exec,
    so it holds from their first line (imports included). (Not pool.map: on Ctrl-C it
    cancels the futures, and Python 3.11's executor then raises in its own thread when the
    stopped workers break the pool.)"""
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        return [pool.submit(function, task) for task in tasks]
    finally:
        signal.signal(signal.SIGINT, previous)


def stop_workers(pool: ProcessPoolExecutor) -> None:
    """End the workers now (the executor has no public way to end a running task): the
    executor then sees a broken pool and fails the points not done, so leaving the ``with``
    block does not wait for them. Their temporaries are removed by the next run."""
    for process in list((getattr(pool, "_processes", None) or {}).values()):
        process.terminate()
