"""Atomic writing of files made by other libraries (images, VTK): temp file, then rename."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

__all__ = ["atomic_save"]


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def atomic_save(path: str | os.PathLike, write: Callable[[str], object]) -> Path:
    """Let `write(tmp_name)` write a file, then move it onto `path` in one rename.

    The temporary file is in the same folder and keeps the extension of `path` (some writers
    pick the format from it). Readers see the old file or the whole new one. The file gets the
    usual permissions (0666 less the umask).
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.stem}.", suffix=path.suffix)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path
