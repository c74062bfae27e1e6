"""The exit statuses of the femcav command, one table for the code and the README.

A script that runs femcav can tell from the status alone what went wrong and whether the
result files can be used: 0 and 3 leave complete result files (3 with the doubtful modes
flagged); every other status leaves the result files of the previous run untouched and no
temporary file behind.
"""

from __future__ import annotations

OK = 0
INPUT_ERROR = 2            # a mistake in the case file or the command line; nothing written
CHECKS_FAILED = 3          # a mode failed its checks or the mesh does not resolve it, a
                           # study point failed on a cluster (femcav verify: a reference
                           # case failed)
OUT_OF_MEMORY = 4          # out of memory, a sweep worker process was killed, or the
                           # Dask scheduler of --cluster was lost
FILE_SYSTEM = 5            # a file or folder could not be written or read: read-only,
                           # no permission, disk full, a file where a folder should be
BROKEN_RESULT_FOLDER = 6   # femcav show: the folder is not a complete femcav result folder
INTERRUPTED = 130          # stopped by Ctrl-C (128 + SIGINT, the shell's convention)

MEANINGS = {
    OK: "success",
    INPUT_ERROR: "a mistake in the input (one line naming the file and the key); nothing "
                 "is written",
    CHECKS_FAILED: "a mode failed its checks or is not resolved by the mesh, or a sweep "
                   "point failed on a cluster; the results are written and those modes or "
                   "points flagged",
    OUT_OF_MEMORY: "out of memory, a sweep worker process was killed, or the Dask "
                   "scheduler was lost; nothing new is written (a sweep keeps the points "
                   "solved so far)",
    FILE_SYSTEM: "a file or folder could not be written or read (read-only, no "
                 "permission, disk full, a file in the way); the previous results stay",
    BROKEN_RESULT_FOLDER: "femcav show: the folder is not a complete femcav result folder",
    INTERRUPTED: "interrupted by Ctrl-C; temporary files are removed, the previous "
                 "results stay",
}


def epilog() -> str:
    """The exit statuses in one paragraph, for --help."""
    return "Exit status: " + "; ".join(f"{code} {text.split(';')[0]}"
                                       for code, text in MEANINGS.items()) + "."
