"""Metadata fields from file names, with patterns such as ``"{lot}-{serial}"``.

A pattern is literal text with ``{field}`` place-holders. It must match the whole file
stem. Values that read as integers or decimal numbers become ``int`` or ``float``.
"""

from __future__ import annotations

import re
from functools import lru_cache
from pathlib import Path
from typing import Any

from kit.capture import Finding

_FIELD = re.compile(r"\{([A-Za-z_][A-Za-z0-9_]*)\}")


@lru_cache(maxsize=64)
def compile_pattern(pattern: str) -> re.Pattern[str]:
    """Regular expression for a name pattern; raises ValueError on a bad pattern."""
    parts: list[str] = []
    pos = 0
    names: set[str] = set()
    for m in _FIELD.finditer(pattern):
        parts.append(re.escape(pattern[pos: m.start()]))
        name = m.group(1)
        if name in names:
            raise ValueError(f"name pattern {pattern!r} uses {{{name}}} twice")
        names.add(name)
        parts.append(f"(?P<{name}>.+?)")
        pos = m.end()
    parts.append(re.escape(pattern[pos:]))
    if not names:
        raise ValueError(f"name pattern {pattern!r} has no {{field}}")
    return re.compile("^" + "".join(parts) + "$")


def _convert(text: str) -> Any:
    try:
        return int(text)
    except ValueError:
        pass
    try:
        return float(text)
    except ValueError:
        return text


def parse_name(stem: str, pattern: str, path: str | None = None) -> tuple[dict[str, Any], Finding | None]:
    """Fields of ``stem`` by ``pattern``.

    Returns
    -------
    fields : dict
        Field name to value (int, float or str); empty when the name does not match.
    finding : Finding or None
        A warning when the name does not match the pattern.
    """
    rx = compile_pattern(pattern)
    m = rx.match(stem)
    if not m:
        return {}, Finding("warning", f"file name {stem!r} does not match the pattern {pattern!r}",
                           None, "rename the file or change the pattern", "name-pattern", path)
    return {k: _convert(v) for k, v in m.groupdict().items()}, None


def suffix_of(path: str | Path) -> str:
    """The extension of a file name, with the dot: ``".s2p"`` also for a file named only
    ``.s2p`` (which :attr:`pathlib.Path.suffix` takes for a hidden file without one)."""
    name = Path(path).name
    if name.startswith(".") and name.count(".") == 1:
        return name
    return Path(name).suffix


def stem_of(path: str | Path) -> str:
    """The file name without its extension (``""`` for a file named only ``.s2p``)."""
    name = Path(path).name
    return name[: len(name) - len(suffix_of(name))]
