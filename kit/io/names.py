"""Metadata fields from file names, with patterns such as ``"{lot}-{serial}"``.

A pattern is literal text with ``{field}`` place-holders. It must match the whole file
stem. A field is text as written in the name (``{serial}`` keeps "01"); the pattern says
when it is a number: ``{serial:int}`` matches digits and gives an ``int``,
``{temp_c:float}`` a decimal number and gives a ``float``.
"""

from __future__ import annotations

import re
from functools import lru_cache
from pathlib import Path
from typing import Any

from kit.capture import Finding

_FIELD = re.compile(r"\{([A-Za-z_][A-Za-z0-9_]*)(?::(int|float))?\}")

#: What a typed field matches, and how it is read.
_TYPES = {None: (".+?", str), "int": ("[+-]?[0-9]+", int),
          "float": ("[+-]?(?:[0-9]+\\.?[0-9]*|\\.[0-9]+)(?:[eE][+-]?[0-9]+)?", float)}


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
        parts.append(f"(?P<{name}>{_TYPES[m.group(2)][0]})")
        pos = m.end()
    parts.append(re.escape(pattern[pos:]))
    bad = re.search(r"\{[A-Za-z_][A-Za-z0-9_]*:[^}]*\}", _FIELD.sub("", pattern))
    if bad:
        raise ValueError(f"name pattern {pattern!r}: {bad.group(0)} has an unknown type; "
                         "write {name} for text, {name:int} or {name:float} for a number")
    if not names:
        raise ValueError(f"name pattern {pattern!r} has no {{field}}")
    return re.compile("^" + "".join(parts) + "$")


@lru_cache(maxsize=64)
def _types(pattern: str) -> dict[str, Any]:
    """Field name -> reader (str, int or float) by the pattern's ``{name:type}``."""
    return {m.group(1): _TYPES[m.group(2)][1] for m in _FIELD.finditer(pattern)}


def number_fields(pattern: str) -> tuple[str, ...]:
    """The fields of a pattern that give numbers: ``{name:int}`` and ``{name:float}``, in
    pattern order (a plain ``{name}`` is text, even when the name holds digits)."""
    return tuple(k for k, read in _types(pattern).items() if read is not str)


def parse_name(stem: str, pattern: str, path: str | None = None) -> tuple[dict[str, Any], Finding | None]:
    """Fields of ``stem`` by ``pattern``.

    Returns
    -------
    fields : dict
        Field name to value: text, or int / float where the pattern says ``{name:int}`` /
        ``{name:float}``; empty when the name does not match.
    finding : Finding or None
        A warning when the name does not match the pattern.
    """
    rx = compile_pattern(pattern)
    m = rx.match(stem)
    if not m:
        return {}, Finding("warning", f"file name {stem!r} does not match the pattern {pattern!r}",
                           None, "rename the file or change the pattern", "name-pattern", path)
    read = _types(pattern)
    return {k: read[k](v) for k, v in m.groupdict().items()}, None


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


#: What separates the parts of a file stem for :func:`guess_pattern`.
_SEPARATORS = re.compile(r"([-_ ]+)")


def guess_pattern(names) -> str | None:
    """A name pattern read off a folder's file stems, or None when none can be told.

    Each stem is cut at its separators (``-``, ``_``, space). The shape shared by most
    stems (the same separators in the same order) is kept; stems of another shape (a
    check resistor among the parts) are left out. Of that shape, the last part that
    differs between the stems is ``{serial}``; the first part is ``{lot}``; any other part
    that differs is ``{field<n>}`` (its position, from 1); the other parts stay literal
    text. Every field is text (``{serial}`` keeps "01"): the user says when one is a
    number. ``["pzd7-01", "pzd7-02", "check_resistor"]`` gives ``"{lot}-{serial}"``.

    Parameters
    ----------
    names : iterable of str
        File stems (names without their extension, see :func:`stem_of`).

    Returns
    -------
    str or None
        None when no two stems share a shape with at least two parts of which one
        differs.
    """
    shapes: dict[tuple[str, ...], list[list[str]]] = {}
    for name in dict.fromkeys(str(n) for n in names):
        cut = _SEPARATORS.split(name)
        if len(cut) < 3 or not all(cut[0::2]):
            continue  # one part only, or a separator at either end
        shapes.setdefault(tuple(cut[1::2]), []).append(cut[0::2])
    best = max(shapes.items(), key=lambda kv: (len(kv[1]), -len(kv[0])), default=None)
    if best is None or len(best[1]) < 2:
        return None
    seps, rows = best
    columns = list(zip(*rows))
    differs = [len(set(c)) > 1 for c in columns]
    if not any(differs):
        return None
    last = max(i for i, d in enumerate(differs) if d)
    out = []
    for i, col in enumerate(columns):
        if i == last:
            out.append("{serial}")
        elif i == 0:
            out.append("{lot}")
        elif differs[i] or "{" in col[0] or "}" in col[0]:
            out.append(f"{{field{i + 1}}}")
        else:
            out.append(col[0])
        if i < len(seps):
            out.append(seps[i])
    return "".join(out)
