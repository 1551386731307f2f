"""Atomic file writes: a temporary file in the same folder, flushed, then ``os.replace``.

A reader sees either the old file or the whole new one, never a half-written file, and an
interrupted write leaves the old file in place. Every writer of the kit goes through here.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_bytes(path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (the folder is created if needed)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def write_text(path: str | os.PathLike, text: str) -> Path:
    """Write UTF-8 text with ``\\n`` line ends to ``path`` atomically."""
    return write_bytes(path, text.encode("utf-8"))
