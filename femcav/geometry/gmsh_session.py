"""A gmsh model session and its conversion into a TaggedMesh.

Builders describe their part as a Layout (parts.py), which is meshed here and read back through
a ``.msh`` file with the same reader as an imported mesh, so built and imported meshes take one
path into the model.
"""

from __future__ import annotations

import tempfile
from contextlib import contextmanager
from pathlib import Path

from ..errors import InputError
from .importer import read_mesh
from .mesh import TaggedMesh


# Printed when Ctrl-C ends a run inside gmsh; the exit status is the shell's for SIGINT.
INTERRUPTED = "femcav: interrupted while meshing; nothing written"
EXIT_INTERRUPTED = 130


@contextmanager
def gmsh_model(name: str):
    """Yield the initialised ``gmsh`` module with an empty model; always finalises.

    Ctrl-C inside the session ends the process (see ``_ends_on_interrupt``).
    """
    import gmsh

    with _ends_on_interrupt():
        gmsh.initialize(readConfigFiles=False, interruptible=False)
        try:
            gmsh.option.setNumber("General.Terminal", 0)
            gmsh.option.setNumber("General.NumThreads", 1)  # reproducible meshes
            gmsh.model.add(name)
            yield gmsh
        finally:
            gmsh.finalize()


@contextmanager
def _ends_on_interrupt():
    """While gmsh works, a Ctrl-C prints one line and ends the process with status 130.

    Python raises KeyboardInterrupt only between bytecodes, and gmsh's meshing is one long
    call into C that has no way to be stopped, so Ctrl-C used to wait for the whole mesh.
    Python's own C-level signal handler writes the signal number to the wakeup file
    descriptor at once, whatever the main thread is doing; a watcher thread (ctypes releases
    the GIL during the gmsh call) reads it and ends the process. Nothing has been written by
    then: results are staged after meshing. gmsh's own option (initialize(interruptible=True))
    restores the default action of SIGINT instead, which ends the process without a word.
    Only the main thread receives signals; elsewhere, or where SIGINT is ignored, this does
    nothing.
    """
    import signal
    import socket
    import threading

    if (threading.current_thread() is not threading.main_thread()
            or signal.getsignal(signal.SIGINT) in (signal.SIG_IGN, None)):
        yield
        return
    if signal.getsignal(signal.SIGINT) == signal.SIG_DFL:   # let Python's handler see it
        signal.signal(signal.SIGINT, signal.default_int_handler)
        restore_handler = signal.SIG_DFL
    else:
        restore_handler = None
    reader, writer = socket.socketpair()
    writer.setblocking(False)
    previous = signal.set_wakeup_fd(writer.fileno(), warn_on_full_buffer=False)

    def watch() -> None:
        while data := reader.recv(64):
            if signal.SIGINT in data:
                import os
                import sys

                print(INTERRUPTED, file=sys.stderr, flush=True)
                os._exit(EXIT_INTERRUPTED)

    watcher = threading.Thread(target=watch, name="femcav-mesh-interrupt", daemon=True)
    watcher.start()
    try:
        yield
    finally:
        signal.set_wakeup_fd(previous)
        writer.close()               # the watcher reads end-of-file and returns
        watcher.join()
        reader.close()
        if restore_handler is not None:
            signal.signal(signal.SIGINT, restore_handler)


def write_and_read(gmsh, source: str) -> TaggedMesh:
    """Write the meshed model to a temporary .msh and read it back as a TaggedMesh."""
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "built.msh"
        gmsh.option.setNumber("Mesh.MshFileVersion", 4.1)
        gmsh.write(str(path))
        try:
            mesh = read_mesh(path, straighten_folded=True)
        except InputError as exc:     # name the part, not the temporary file
            raise InputError(exc.message, source=source) from None
    return TaggedMesh(**{**mesh.__dict__, "source": source})
