"""The exceptions the command line turns into one line and an exit status.

Anything the user can fix (a wrong key, a bad unit, a mesh that does not match the case) is
raised as :class:`InputError`; the command line prints it as one line and exits with status 2.
A run that the machine cannot carry (memory ran out, a worker process was killed) raises
:class:`ResourceError` or MemoryError. A result folder that ``femcav show`` cannot use is
:class:`BrokenResultFolder`. The environment's failures (OSError: read-only or full disk, no
permission; Ctrl-C) are caught at the command line's edge (femcav.cli, statuses in
femcav.exit_codes). Every other exception is a bug in femcav and keeps its traceback.
"""

from __future__ import annotations


class InputError(Exception):
    """A mistake in the user's input, located by source (a file) and field (a key path).

    Below the case layer the solver knows no file keys: it names the request parameter at
    fault as ``option`` ("order", "method", ...), and the case layer, which knows where each
    parameter is written (case.in_case: the [solve] table), turns it into a field."""

    def __init__(self, message: str, *, source: str | None = None, field: str | None = None,
                 option: str | None = None):
        super().__init__(message)
        self.message = message
        self.source = source
        self.field = field
        self.option = option

    def located(self, *, source: str | None = None, field: str | None = None) -> "InputError":
        """The same error with a source or field filled in where it was still unknown."""
        return InputError(self.message, source=self.source or source, field=self.field or field,
                          option=self.option)

    def __str__(self) -> str:
        where = ": ".join(part for part in (self.source, self.field or self.option) if part)
        # Keys, file names and values in a message come from the user: escaped here, in the
        # one place every message is formatted, so no raise site can forget it.
        return printable(f"{where}: {self.message}" if where else self.message)


def printable(text: str) -> str:
    """``text`` with every control or other non-printable character written as its escape
    (ESC as \\x1b, a newline as \\n, a right-to-left override as \\u202e), so that text from
    a case file can neither drive the terminal nor break a one-line message."""
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii")
                   for ch in str(text))


class ResourceError(Exception):
    """The machine could not give what the run needed (memory, a worker process)."""


class BrokenResultFolder(Exception):
    """A result folder that femcav show cannot use: files missing, garbled or of another
    kind. The command line prints it as one line and exits with its own status."""

    def __init__(self, folder, message: str):
        super().__init__(message)
        self.folder = str(folder)
        self.message = message

    def __str__(self) -> str:
        return printable(f"{self.folder}: {self.message}")
