"""Write result files so that a reader never sees half of one.

Every file of a result set is first written to a temporary name in the target folder; only
when all of them are complete are they renamed into place (a rename within one file system
is atomic). A failure part-way leaves the previous results untouched.
"""

from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import Callable


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


class StagedFiles:
    def __init__(self, folder: Path):
        self.folder = folder
        self._staged: list[tuple[Path, Path]] = []

    def path_for(self, name: str) -> Path:
        """A temporary path to write ``name`` to; it is renamed into place on success."""
        fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".partial", dir=self.folder)
        os.close(fd)
        os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes 0600; results are ordinary files
        self._staged.append((Path(tmp), self.folder / name))
        return Path(tmp)

    def write_text(self, name: str, text: str) -> None:
        self.path_for(name).write_text(text, encoding="utf-8")

    def write_with(self, name: str, writer: Callable[[Path], None], suffix: str = "") -> None:
        """Call ``writer(tmp_path)``; ``suffix`` keeps the extension for writers that need it."""
        tmp = self.path_for(name)
        if suffix:
            renamed = tmp.with_name(tmp.name + suffix)
            tmp.rename(renamed)
            self._staged[-1] = (renamed, self._staged[-1][1])
            tmp = renamed
        writer(tmp)


@contextmanager
def staged_output(folder: str | Path):
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    staged = StagedFiles(folder)
    try:
        yield staged
    except BaseException:
        for tmp, _ in staged._staged:
            tmp.unlink(missing_ok=True)
        raise
    for tmp, final in staged._staged:
        os.replace(tmp, final)
