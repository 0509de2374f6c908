"""The one way the package replaces a file: write aside, flush, rename over.

A crash (or a killed process) leaves either the old file or the new one, never
a half-written one.

References
----------
.. [1] POSIX.1-2017, rename(): replacing the destination is atomic.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def atomic_write_text(path, text: str, *, encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``path`` so that a crash leaves the old file or the new one:
    a temporary file in the same folder, flushed to disk, then renamed over ``path``."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=path.name + ".", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding=encoding, newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return path
