"""Write result files so that a reader never sees half of one, nor a stale one.

Every file of a result set is first written to a temporary name in the target folder; only
when all of them are complete are they renamed into place (a rename within one file system
is atomic). A failure part-way, Ctrl-C included, removes the temporaries and leaves the
previous results untouched.

A folder holds one run's files: the manifest MANIFEST lists the files femcav wrote there,
each under the name of its set ("solve", "pictures", "mesh", "sweep", ...). A run that
replaces a set removes the files of that set it did not write again (a solve with 4 modes
after one with 6 leaves no mode_05.png), and only those: a file femcav did not write is
never touched. Temporaries of runs that were killed (their process is gone) are removed
when the next run uses the folder.
"""

from __future__ import annotations

import errno
import json
import os
import re
import tempfile
import time
from contextlib import contextmanager
from pathlib import Path
from typing import Callable

MANIFEST = ".femcav-files.json"
# Temporaries: .NAME.PID.RANDOM.partial[.EXT] (RANDOM: mkstemp's 8 characters); the
# process id tells a live run's from a killed one's.
_PARTIAL = re.compile(r"^\.(.+)\.(\d+)\.[A-Za-z0-9_]{8}\.partial(\.[A-Za-z0-9]+)?$")
# Temporaries of earlier femcav versions, without the process id, count as stale after this
# long.
_OLD_PARTIAL = re.compile(r"^\..+\.[A-Za-z0-9_]{8}\.partial(\.[A-Za-z0-9]+)?$")
_OLD_PARTIAL_S = 3600.0
_active: set[Path] = set()      # this process's temporaries in use


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def temporary_path(folder: Path, name: str, suffix: str = "") -> Path:
    """A new empty file in ``folder`` for writing ``name``; ``suffix`` keeps the extension
    for writers that need it."""
    fd, tmp = tempfile.mkstemp(prefix=f".{name}.{os.getpid()}.", suffix=".partial" + suffix,
                               dir=folder)
    os.close(fd)
    os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes 0600; results are ordinary files
    _active.add(Path(tmp))
    return Path(tmp)


def intended_path(path: str) -> str:
    """The file a temporary stands for (``folder/.NAME.PID.RANDOM.partial`` ->
    ``folder/NAME``), for messages; other paths unchanged."""
    match = _PARTIAL.match(os.path.basename(path))
    return os.path.join(os.path.dirname(path), match.group(1)) if match else path


def _probe_writable(folder: Path) -> None:
    """OSError naming ``folder`` unless a file can be made in it (and is removed again)."""
    try:
        _discard(temporary_path(folder, "write-test"))
    except OSError as exc:
        raise OSError(exc.errno, f"cannot write files here: {exc.strerror}",
                      str(folder)) from None


def _discard(tmp: Path) -> None:
    _active.discard(tmp)
    tmp.unlink(missing_ok=True)


def _process_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:      # another user's live process
        return True
    return True


def remove_stale_temporaries(folder: Path) -> list[Path]:
    """Remove the temporaries in ``folder`` left by runs that were killed; return them."""
    removed = []
    if not folder.is_dir():
        return removed
    for path in folder.glob(".*.partial*"):
        if path in _active or not path.is_file():
            continue
        match = _PARTIAL.match(path.name)
        if match:
            stale = not _process_alive(int(match.group(2)))
        elif _OLD_PARTIAL.match(path.name):
            try:
                stale = time.time() - path.stat().st_mtime > _OLD_PARTIAL_S
            except OSError:
                continue
        else:            # not a name femcav makes: someone else's file
            continue
        if stale:
            path.unlink(missing_ok=True)
            removed.append(path)
    return removed


def prepare_output_folder(folder: str | Path) -> Path:
    """Make ``folder`` (and its parents) and prove that a file can be written in it, before
    any long work; remove stale temporaries. OSError (a file in the way, read-only,
    no permission) says why not."""
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise NotADirectoryError(errno.ENOTDIR, "exists and is a file, not a folder",
                                 str(folder))
    folder.mkdir(parents=True, exist_ok=True)
    remove_stale_temporaries(folder)
    _probe_writable(folder)
    return folder


def check_output_folder(folder: str | Path) -> Path:
    """Before any long work: OSError unless files can be written in ``folder`` (or, if it
    does not exist yet, in the folder it would be made in). Creates nothing and leaves
    nothing behind."""
    folder = Path(folder)
    probe = folder
    while not probe.exists() and probe != probe.parent:
        probe = probe.parent
    if not probe.is_dir():
        raise NotADirectoryError(errno.ENOTDIR, "exists and is a file, not a folder",
                                 str(probe))
    _probe_writable(probe)
    return folder


def write_file_atomically(path: Path, writer: Callable[[Path], None], suffix: str = "") -> None:
    """``writer(tmp)`` then rename to ``path``; the temporary is removed on any failure."""
    tmp = temporary_path(path.parent, path.name, suffix)
    try:
        writer(tmp)
        os.replace(tmp, path)
    finally:
        _discard(tmp)


class StagedFiles:
    def __init__(self, folder: Path):
        self.folder = folder
        self._staged: list[tuple[Path, Path]] = []

    def path_for(self, name: str, suffix: str = "") -> Path:
        """A temporary path to write ``name`` to; it is renamed into place on success."""
        tmp = temporary_path(self.folder, name, suffix)
        self._staged.append((tmp, self.folder / name))
        return tmp

    def adopt(self, tmp: Path, name: str) -> None:
        """Take ``tmp``, a temporary another process wrote in this folder (temporary_path),
        as ``name``: renamed into place on success, removed on a failure."""
        _active.add(tmp)
        self._staged.append((tmp, self.folder / name))

    def write_text(self, name: str, text: str) -> None:
        self.path_for(name).write_text(text, encoding="utf-8")

    def write_with(self, name: str, writer: Callable[[Path], None], suffix: str = "") -> None:
        """Call ``writer(tmp_path)``; ``suffix`` keeps the extension for writers that need it."""
        writer(self.path_for(name, suffix))

    @property
    def names(self) -> list[str]:
        return [final.name for _, final in self._staged]


def read_manifest(folder: Path) -> dict[str, str]:
    """File name -> set name, of the files femcav wrote into ``folder`` ({} if none)."""
    try:
        data = json.loads((folder / MANIFEST).read_text(encoding="utf-8"))
        files = data["files"]
        return {str(k): str(v) for k, v in files.items()} if isinstance(files, dict) else {}
    except (OSError, ValueError, KeyError, TypeError):
        return {}


def _commit(staged: StagedFiles, kind: str, replaces: tuple[str, ...]) -> None:
    folder = staged.folder
    before = read_manifest(folder)
    for tmp, final in staged._staged:
        os.replace(tmp, final)
        _active.discard(tmp)
    written = set(staged.names)
    after = {name: owner for name, owner in before.items()
             if owner not in replaces and name not in written}
    for name, owner in before.items():
        if owner in replaces and name not in written:
            (folder / name).unlink(missing_ok=True)
    after.update({name: kind for name in staged.names})
    write_file_atomically(folder / MANIFEST, lambda p: p.write_text(
        json.dumps({"format": "femcav-files", "files": dict(sorted(after.items()))},
                   indent=1) + "\n", encoding="utf-8"))


@contextmanager
def staged_output(folder: str | Path, kind: str = "results",
                  replaces: tuple[str, ...] | None = None):
    """Stage files into ``folder`` as set ``kind``; on success rename them into place and
    remove the files of the sets in ``replaces`` (default: ``kind`` itself) that this run
    did not write again. On any failure, Ctrl-C included, remove the temporaries."""
    folder = prepare_output_folder(folder)
    staged = StagedFiles(folder)
    try:
        yield staged
        _commit(staged, kind, (kind,) if replaces is None else tuple(replaces))
    finally:
        for tmp, _ in staged._staged:
            _discard(tmp)
