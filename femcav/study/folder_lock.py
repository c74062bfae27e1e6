"""One run at a time in a study's output folder.

Two sweeps writing the same points would overwrite each other's files and mix two cases'
points. A run holds an exclusive lock (flock) on ``.femcav-lock`` in its folder for as long
as it works there; the file names the process that holds it, so that a second run can say
which one. The operating system releases the lock when the holder ends, however it ends
(a killed run leaves no stale lock behind).
"""

from __future__ import annotations

import fcntl
import os
from contextlib import contextmanager
from pathlib import Path

from ..errors import InputError

LOCK_NAME = ".femcav-lock"


@contextmanager
def folder_lock(folder: Path):
    """Hold the folder (made if need be) for the duration of the ``with`` block; InputError
    naming the holder's process id when another run holds it."""
    folder.mkdir(parents=True, exist_ok=True)
    fd = os.open(folder / LOCK_NAME, os.O_RDWR | os.O_CREAT, 0o644)   # not inherited
    try:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = os.pread(fd, 64, 0).decode(errors="replace").strip()
            who = f"process {holder}" if holder.isdigit() else "another process"
            raise InputError(f"{who} is running a study in this folder; wait for it to end "
                             "or give another --out", source=str(folder)) from None
        os.ftruncate(fd, 0)
        os.pwrite(fd, f"{os.getpid()}\n".encode(), 0)
        yield
    finally:
        os.close(fd)            # releases the lock
