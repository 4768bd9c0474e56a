"""Atomic file writes: a temporary file in the target folder, renamed into place.

Same folder means same filesystem, so the rename is atomic on POSIX (PITFALLS §1): a reader
never sees half a file, and an interrupted write leaves the old file whole and no temporary
file behind.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable
from pathlib import Path

__all__ = ["atomic_write"]


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def atomic_write(target: str | os.PathLike, write: Callable[[str], None], suffix: str) -> Path:
    """Call ``write(tmp)`` on ``.<name>.<random><suffix>`` beside ``target``, then rename it.

    The file gets the permissions a plain ``open`` would give (0666 less the umask).
    """
    target = Path(target)
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=suffix)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
    return target
