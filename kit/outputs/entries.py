"""The entries of a lot as the tables see them: captures or failures, and results by capture.

A lot is a list of entries, one per input: a :class:`kit.Capture`, or a failure (a
:class:`kit.CaptureError` for a file that could not be read, a :class:`Failure` record for
a step of an analysis that could not be done). Results per capture (fits, resonances,
corrected captures) are given in capture order or keyed by capture name, SHA-256 or path;
:func:`lookup` finds a capture's entry either way. Failures become error rows of the
tables, never exceptions.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from kit.capture import Capture, CaptureError
from kit.results import Result
from kit.units import SUFFIXES

__all__ = ["Failure", "as_list", "key_candidates", "lookup", "failure_reason", "result_dict",
           "num", "flags_text", "safe_name", "split_unit", "suffix_of_unit", "unit_column"]


@dataclass(frozen=True)
class Failure(Result):
    """A step that could not be done for one input: which step, why, and where.

    ``step`` is "import", "correction", "resonance" or "fit"; ``reason`` is plain words;
    ``path`` and ``line`` name the file (and line) concerned where known. ``ok`` is always
    False. Batch runs carry these instead of results; the summary shows them as error rows
    (import, correction) or in the step's flags (resonance, fit).
    """

    step: str
    reason: str
    path: str | None = None
    line: int | None = None
    ok: bool = False

    _ROWS = (("step", "step", ""), ("path", "file", ""), ("line", "line", ""))

    @property
    def heading(self) -> str:
        return f"{self.step} failed"

    @classmethod
    def of(cls, step: str, exc: BaseException, path: Any = None) -> "Failure":
        """The failure of ``step`` from an exception (a CaptureError keeps its reason/line)."""
        if isinstance(exc, CaptureError):
            return cls(step, str(exc.reason), exc.path or (None if path is None else str(path)),
                       exc.line)
        return cls(step, f"{type(exc).__name__}: {exc}", None if path is None else str(path))

    def error(self) -> CaptureError:
        """The same failure as a :class:`kit.CaptureError` (for an input that gives no capture)."""
        return CaptureError(self.reason, self.path, self.line)


def as_list(captures: Any) -> list[Any]:
    """Entries (Capture or CaptureError) from a Capture, an iterable, or a load_folder table."""
    if isinstance(captures, Capture):
        return [captures]
    import pandas as pd

    if isinstance(captures, pd.DataFrame):
        from kit.io.folder import capture_of

        out: list[Any] = []
        for i in captures.index:
            rec = captures.loc[i]
            if rec.get("status") == "error":
                out.append(CaptureError(str(rec.get("message", "refused")), rec.get("path")))
            else:
                out.append(capture_of(captures, i))
        return out
    return [c.error() if isinstance(c, Failure) else c for c in captures]


def key_candidates(cap: Any, index: int) -> list[Any]:
    """Keys a result of ``cap`` may be filed under: sha256, name, path, then its index."""
    keys: list[Any] = []
    for attr in ("sha256", "name", "path"):
        v = getattr(cap, attr, None)
        if v is not None:
            keys += [v, str(v)]
    return keys + [index]


def lookup(table: Any, cap: Any, index: int) -> Any:
    """The entry of ``table`` for a capture: a mapping by sha256/name/path, or a list by order."""
    if table is None:
        return None
    if isinstance(table, Mapping):
        for k in key_candidates(cap, index):
            if k in table:
                return table[k]
        return None
    if isinstance(table, (list, tuple)):
        return table[index] if index < len(table) else None
    raise TypeError(f"results must be a dict keyed by capture name/sha256/path or a list in "
                    f"capture order, got {type(table).__name__}")


def failure_reason(obj: Any) -> str | None:
    """Words for an entry that is a failure (Failure record or exception), else None."""
    if isinstance(obj, Failure):
        return obj.reason
    if isinstance(obj, CaptureError):
        return str(obj.reason)
    if isinstance(obj, BaseException):
        return f"{type(obj).__name__}: {obj}"
    return None


def result_dict(obj: Any) -> dict[str, Any] | None:
    """A result as a plain dict (a dict, or an object with ``to_dict()``); None stays None."""
    if obj is None:
        return None
    if isinstance(obj, Mapping):
        return dict(obj)
    if hasattr(obj, "to_dict"):
        return dict(obj.to_dict())
    raise TypeError(f"a result must be a dict or have to_dict(), got {type(obj).__name__}")


def num(v: Any) -> float:
    """A finite float, or NaN (None, booleans, text and infinities are missing values)."""
    if v is None or isinstance(v, bool):
        return math.nan
    try:
        x = float(v)
    except (TypeError, ValueError):
        return math.nan
    return x if math.isfinite(x) else math.nan


def flags_text(v: Any) -> str:
    """Flags as one text cell, joined by "; "."""
    if v is None:
        return ""
    if isinstance(v, str):
        return v
    return "; ".join(str(x) for x in v)


def safe_name(s: str) -> str:
    """Lower-case letters, digits and underscores only (for column names)."""
    out = "".join(c if c.isalnum() else "_" for c in str(s).lower()).strip("_")
    return out or "x"


def split_unit(name: str) -> tuple[str, str]:
    """``name`` split into its stem and unit suffix: ``("fs", "_hz")``; ``("k_eff", "")``.

    The suffixes are those of :data:`kit.units.SUFFIXES` (docs/nomenclature.md); the
    longest one that matches wins.
    """
    low = name.lower()
    for suffix, _unit in sorted(SUFFIXES, key=lambda su: -len(su[0])):
        if low.endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)], name[-len(suffix):]
    return name, ""


def suffix_of_unit(unit: str) -> str:
    """The name suffix of a unit symbol (``"Ω"`` -> ``"_ohm"``); "" for none or unknown."""
    for suffix, u in SUFFIXES:
        if u == unit:
            return suffix
    return ""


def unit_column(name: str, tag: str) -> str:
    """Column ``name`` with ``tag`` put before its unit suffix, so the unit stays last.

    ``unit_column("c0_f", "stderr") == "c0_stderr_f"``; a name without a unit suffix gets
    the tag at the end (``"k_eff_stderr"``).
    """
    stem, suffix = split_unit(name)
    return f"{stem}_{tag}{suffix}"
