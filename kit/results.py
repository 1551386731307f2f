"""One protocol for every result object of the kit.

A result is a frozen dataclass that mixes in :class:`Result` and lists the rows it shows in
``_ROWS`` as ``(field, label, unit)``. It then has, with no more code:

* ``to_dict()``: plain JSON data (tuples become lists, numpy scalars floats, missing
  values NaN); ``from_dict(d)`` builds the same object back (``from_dict(to_dict())`` is
  equal to the original);
* ``report()``: text, one row per line with units; ``_repr_html_()``: the same as an HTML
  table, every piece of text escaped;
* ``ok`` and ``reason``: a result that could not be computed says so (``ok`` False and a
  plain reason); it never raises for that. Bad *input* raises :class:`kit.CaptureError`.

Results with a picture add ``plot(ax=None)`` returning the axes.
"""

from __future__ import annotations

import dataclasses
import html
import math
import types
import typing
from typing import Any, ClassVar

import numpy as np

from kit._text import html_rows
from kit.units import percent, quantity

__all__ = ["Result", "nan_if_none", "plain"]


def nan_if_none(v: Any) -> float:
    """``float(v)``, with None (and anything not a number) as NaN: the kit's missing value."""
    if v is None:
        return math.nan
    try:
        return float(v)
    except (TypeError, ValueError):
        return math.nan


def plain(v: Any) -> Any:
    """JSON-friendly copy: tuples and arrays become lists, numpy scalars Python numbers."""
    if isinstance(v, Result):
        return v.to_dict()
    if isinstance(v, dict):
        return {str(k): plain(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [plain(x) for x in v]
    if isinstance(v, np.ndarray):
        if np.iscomplexobj(v):
            return {"re": v.real.tolist(), "im": v.imag.tolist()}
        return v.tolist()
    if isinstance(v, np.generic):
        return v.item()
    if isinstance(v, complex):
        return {"re": v.real, "im": v.imag}
    return v


def _is_tuple_type(tp: Any) -> bool:
    origin = typing.get_origin(tp)
    if origin is tuple:
        return True
    if origin in (typing.Union, types.UnionType):
        return any(_is_tuple_type(a) for a in typing.get_args(tp))
    return tp is tuple


class Result:
    """Mixin for frozen dataclass results: dict round trip, text and HTML views, ok/reason."""

    #: (field, label, unit) rows shown by report() and _repr_html_().
    _ROWS: ClassVar[tuple[tuple[str, str, str], ...]] = ()

    # -- identity --------------------------------------------------------------
    @property
    def heading(self) -> str:
        """Heading of the text and HTML views (a subclass may override it)."""
        name = getattr(self, "name", None)
        return f"{type(self).__name__}" + (f" of {name}" if name else "")

    # -- dict round trip --------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-friendly dict of every field."""
        return {f.name: plain(getattr(self, f.name)) for f in dataclasses.fields(self)}

    @classmethod
    def from_dict(cls, d: dict[str, Any]):
        """The result back from :meth:`to_dict` (unknown keys are ignored)."""
        hints = typing.get_type_hints(cls)
        kw: dict[str, Any] = {}
        for f in dataclasses.fields(cls):
            if f.name not in d:
                continue
            v = d[f.name]
            if isinstance(v, dict) and set(v) == {"re", "im"}:
                re, im = np.asarray(v["re"], float), np.asarray(v["im"], float)
                v = complex(re, im) if re.ndim == 0 else re + 1j * im
            elif isinstance(v, list) and _is_tuple_type(hints.get(f.name)):
                v = tuple(tuple(x) if isinstance(x, list) else x for x in v)
            kw[f.name] = v
        return cls(**kw)

    # -- text and HTML ------------------------------------------------------------
    def view_rows(self) -> list[tuple[str, str]]:
        """(label, value with unit) for each row of ``_ROWS``, by :func:`kit.units.quantity`:
        an SI prefix, "± standard error" where :meth:`stderr_of` gives one, frequencies to
        six significant digits (four otherwise) when no uncertainty sets the precision;
        counts as whole numbers; a row of unit "%" holds a fraction and is shown as a
        percentage (:func:`kit.units.percent`); "not found" for a missing value."""
        out = []
        for key, label, unit in self._ROWS:
            v = getattr(self, key, None)
            if v is None or (isinstance(v, float) and math.isnan(v)):
                out.append((label, "not found"))
                continue
            if isinstance(v, (int, np.integer)) and not isinstance(v, bool):
                out.append((label, f"{v:,} {unit}".strip()))
                continue
            if unit == "%":  # the row holds a fraction [1], shown as a percentage
                out.append((label, percent(v)))
                continue
            se = self.stderr_of(key)
            out.append((label, quantity(v, unit, stderr=se, digits=6 if unit == "Hz" else 4)))
        return out

    def stderr_of(self, key: str) -> float | None:
        """Standard error of the row ``key`` (None when the result states none)."""
        return None

    def _footer(self) -> list[str]:
        lines = []
        flags = getattr(self, "flags", None)
        if flags is not None:
            lines.append(f"flags: {', '.join(flags) if flags else 'none'}")
        if not getattr(self, "ok", True):
            lines.append(f"not computed: {getattr(self, 'reason', '') or 'no reason given'}")
        return lines

    def report(self) -> str:
        """Text view: title, one row per line, flags and the reason when not ok."""
        rows = self.view_rows()
        width = max((len(k) for k, _ in rows), default=0)
        lines = [self.heading] + [f"  {k:<{width}}  {v}" for k, v in rows]
        return "\n".join(lines + [f"  {x}" for x in self._footer()])

    def _repr_html_(self) -> str:
        e = html.escape
        body = html_rows(self.view_rows())
        foot = "".join(f"<div>{e(x)}</div>" for x in self._footer())
        return f"<div><b>{e(self.heading)}</b><table>{body}</table>{foot}</div>"
