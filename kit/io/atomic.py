"""Atomic file writes: a temporary file in the same folder, flushed, then ``os.replace``.

A reader sees either the old file or the whole new one, never a half-written file, and an
interrupted write leaves the old file in place. Every writer of the kit goes through here.

Files and folders get the permissions the user's umask gives a plain ``open``/``mkdir``
(usually 0644 and 0755), not the private 0600/0700 of the temporary-file functions, so that
colleagues can open a report or an export folder.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def current_umask() -> int:
    """The process's umask (read without changing it where the platform allows)."""
    try:  # Linux: no race with other threads
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def as_created(path: str | os.PathLike, folder: bool = False) -> None:
    """Give ``path`` the mode a plain ``open`` (0666) or ``mkdir`` (0777) would, under the umask."""
    os.chmod(path, (0o777 if folder else 0o666) & ~current_umask())


def write_bytes(path: str | os.PathLike, data: bytes, durable: bool = True) -> Path:
    """Write ``data`` to ``path`` atomically (the folder is created if needed).

    ``durable=False`` skips the flush to disk (``fsync``): the file is still whole or absent,
    but a power cut may lose it. Only for files that can be made again (cache entries).
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            if durable:
                fh.flush()
                os.fsync(fh.fileno())
        as_created(tmp)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def write_text(path: str | os.PathLike, text: str, durable: bool = True) -> Path:
    """Write UTF-8 text with ``\\n`` line ends to ``path`` atomically (see :func:`write_bytes`)."""
    return write_bytes(path, text.encode("utf-8"), durable)
