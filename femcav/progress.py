"""Progress lines on stderr for long work (silent when quiet), and warnings (always)."""

from __future__ import annotations

import sys
import time

from .errors import printable


class Progress:
    def __init__(self, quiet: bool = False, stream=None):
        self.quiet = quiet
        self._stream = stream
        self.start = time.perf_counter()

    @property
    def stream(self):
        # looked up at each line, so that a redirected sys.stderr is honoured
        return self._stream or sys.stderr

    def step(self, message: str) -> None:
        if not self.quiet:
            elapsed = time.perf_counter() - self.start
            # messages carry titles and file names from the case: escaped, one line each
            print(f"[{elapsed:7.2f} s] {printable(message)}", file=self.stream, flush=True)

    def warn(self, message: str) -> None:
        """A line the user must see even with --quiet (work redone, a request lowered)."""
        print(f"femcav: warning: {message}", file=self.stream, flush=True)


SILENT = Progress(quiet=True)
