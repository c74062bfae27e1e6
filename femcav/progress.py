"""Progress lines on stderr for long work; silent when quiet."""

from __future__ import annotations

import sys
import time

from .errors import printable


class Progress:
    def __init__(self, quiet: bool = False, stream=None):
        self.quiet = quiet
        self.stream = stream or sys.stderr
        self.start = time.perf_counter()

    def step(self, message: str) -> None:
        if not self.quiet:
            elapsed = time.perf_counter() - self.start
            # messages carry titles and file names from the case: escaped, one line each
            print(f"[{elapsed:7.2f} s] {printable(message)}", file=self.stream, flush=True)


SILENT = Progress(quiet=True)
