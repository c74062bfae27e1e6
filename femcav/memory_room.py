"""The memory this process may use, and how to print an amount of it.

The tightest of the machine's free memory, its control group's limit (cgroup v2 memory.max,
v1 memory.limit_in_bytes, less what the group already uses) and the process's own
ulimit -v / -d, the first two shared among the processes that solve at once (the workers of
a sweep with --jobs). Meshing (femcav.geometry.mesh_budget), the eigen backends
(femcav.eigen.selection) and the sweep workers all read it here.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

# Processes that share this machine's memory at once: the workers of a sweep each set it to
# their number (femcav.study.workers), so that each guards its own share.
_sharing_processes = 1
# Above this a limit file means "no limit" (cgroup v1 writes 2^63 rounded down to a page).
_NO_LIMIT = 1 << 60


def share_memory_among(processes: int) -> None:
    """Declare that ``processes`` processes (this one included) solve at the same time."""
    global _sharing_processes
    _sharing_processes = max(1, int(processes))


def share_note() -> str:
    """How the free memory was counted, when it is shared among processes."""
    if _sharing_processes == 1:
        return ""
    return (f" for this process, one of {_sharing_processes} solving at once (fewer --jobs "
            "leave each more)")


def available_bytes() -> int:
    """Memory this process may still use: the machine's and its control group's free memory
    shared among the processes that solve at once, and at most what this process's own
    address-space and data limits (ulimit -v, ulimit -d) leave."""
    own = process_room()
    return int(min(shared_room() / _sharing_processes, own if own is not None else math.inf))


def shared_room() -> int:
    """Free memory for all the processes of this run together: the smaller of the machine's
    (MemAvailable) and what the control group's limit leaves (cgroup v2 or v1)."""
    rooms = [r for r in (machine_available(), cgroup_room()) if r is not None]
    return max(0, min(rooms))


def machine_available() -> int:
    """Memory the operating system can give now (MemAvailable on Linux)."""
    try:
        with open("/proc/meminfo") as f:
            for line in f:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")


def process_room() -> int | None:
    """What RLIMIT_AS (ulimit -v) and RLIMIT_DATA (ulimit -d) leave above this process's
    current address space and data segment; None without such limits. Per process, so not
    shared among workers."""
    try:
        import resource
    except ImportError:         # not a POSIX system
        return None
    status = _status_kib()
    rooms = []
    for limit, used in ((resource.RLIMIT_AS, "VmSize"), (resource.RLIMIT_DATA, "VmData")):
        soft, _ = resource.getrlimit(limit)
        if soft != resource.RLIM_INFINITY and soft < _NO_LIMIT:
            rooms.append(max(0, soft - status.get(used, 0) * 1024))
    return min(rooms) if rooms else None


def _status_kib() -> dict[str, int]:
    try:
        with open("/proc/self/status") as f:
            return {k: int(v.split()[0]) for k, _, v in (line.partition(":") for line in f)
                    if v.strip().endswith("kB")}
    except OSError:
        return {}


def cgroup_room(proc_cgroup: str | None = None, root: str | Path = "/sys/fs/cgroup") -> int | None:
    """Limit minus use of this process's memory control group and of each group above it
    (the tightest counts); None when no limit is set or none can be read. ``proc_cgroup``
    (the text of /proc/self/cgroup) and ``root`` are for tests."""
    if proc_cgroup is None:
        try:
            proc_cgroup = Path("/proc/self/cgroup").read_text()
        except OSError:
            return None
    root = Path(root)
    rooms = []
    for line in proc_cgroup.splitlines():
        hierarchy, _, rest = line.partition(":")
        controllers, _, group = rest.partition(":")
        if hierarchy == "0" and controllers == "":            # cgroup v2
            base, files = root, ("memory.max", "memory.current")
        elif "memory" in controllers.split(","):               # cgroup v1
            base, files = root / "memory", ("memory.limit_in_bytes", "memory.usage_in_bytes")
        else:
            continue
        parts = [p for p in group.split("/") if p]
        for depth in range(len(parts), -1, -1):                # the group, then its parents
            room = _group_room(base.joinpath(*parts[:depth]), *files)
            if room is not None:
                rooms.append(room)
    return min(rooms) if rooms else None


def _group_room(folder: Path, limit_file: str, usage_file: str) -> int | None:
    try:
        limit = (folder / limit_file).read_text().strip()
        usage = int((folder / usage_file).read_text().strip())
    except (OSError, ValueError):
        return None
    if limit == "max" or not limit.isdigit() or int(limit) >= _NO_LIMIT:
        return None
    return max(0, int(limit) - usage)


def format_bytes(value: float) -> str:
    for unit, size in (("GB", 1e9), ("MB", 1e6)):
        if value >= size:
            return f"{value / size:.1f} {unit}"
    return f"{value / 1e3:.0f} kB"
