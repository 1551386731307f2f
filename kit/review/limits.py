"""The limits file: acceptance limits of a lot, read, checked and written as TOML.

A limits file is TOML in a format of our own (see docs/limits.md): bounds on any summary
column (``[quantity.fs_hz]`` with ``min`` and/or ``max``) and masks on a curve
(``[[mask]]``: |Z| in ohm or |Sij| in dB between a lower and an upper bound over a
frequency span). :func:`load_limits` and :func:`parse_limits` read and validate one (a
bad file raises :class:`LimitsError` naming the file, line and fix); :meth:`Limits.to_toml`
and :meth:`Limits.save` write one. Verdicts and margins are in :mod:`kit.review.verdicts`,
the drawing of limits on axes in :mod:`kit.review.drawing`.

References
----------
.. [1] TOML v1.0.0 specification (toml.io), read with Python's standard ``tomllib``.
"""

from __future__ import annotations

import math
import os
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import CaptureError
from kit.io.atomic import write_text
from kit.units import column_label, unit_of

FORMAT = "sweepbook-limits"
FORMAT_VERSION = 1
#: Curves a mask can bound (their unit is that of the name's suffix). ``sIJ_db`` for any
#: port pair is accepted too.
CURVES = ("z_mag_ohm", "s11_db")
_S_DB = re.compile(r"^s([1-9])([1-9])_db$")
_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_Q_KEYS = {"min", "max", "label", "required"}
_M_KEYS = {"name", "curve", "f_min_hz", "f_max_hz", "lower", "upper", "z_method", "port"}
#: Span coverage tolerance: a capture whose grid stops within this fraction of the span
#: short of an end still covers it (common practice, no source).
SPAN_TOL = 1e-9


class LimitsError(CaptureError):
    """A limits file cannot be used; the message names the file, line and the fix."""


# --------------------------------------------------------------------------- model
@dataclass(frozen=True)
class QuantityLimit:
    """Bounds on one summary column (either may be None).

    ``required=False`` makes a missing value not count against completeness.
    """

    name: str
    min: float | None = None
    max: float | None = None
    label: str = ""
    required: bool = True

    @property
    def shown(self) -> str:
        """The name a reader sees: the limit's own label, else its column's
        (:func:`kit.units.column_label`): "fs", never the column name "fs_hz"."""
        return self.label or column_label(self.name)[0]


@dataclass(frozen=True)
class Mask:
    """A curve must stay between ``lower`` and ``upper`` over ``f_min_hz..f_max_hz``.

    A bound is a number, or a pair ``[at f_min, at f_max]`` joined by a straight line in
    frequency (linear, in the curve's unit). ``z_method`` and ``port`` say how |Z| is
    obtained (see :func:`kit.impedance`).
    """

    name: str
    curve: str
    f_min_hz: float
    f_max_hz: float
    lower: float | tuple[float, float] | None = None
    upper: float | tuple[float, float] | None = None
    z_method: str = "reflection"
    port: int = 1

    @property
    def unit(self) -> str:
        return curve_unit(self.curve)

    def bound(self, which: str, f_hz: np.ndarray) -> np.ndarray | None:
        """The lower or upper bound at the frequencies ``f_hz`` (None when absent)."""
        b = self.lower if which == "lower" else self.upper
        if b is None:
            return None
        if isinstance(b, tuple):
            t = (np.asarray(f_hz, float) - self.f_min_hz) / (self.f_max_hz - self.f_min_hz)
            return b[0] + (b[1] - b[0]) * t
        return np.full(np.shape(f_hz), float(b))


@dataclass(frozen=True)
class Limits:
    """A set of limits: quantity bounds and curve masks, with the file they came from."""

    quantities: tuple[QuantityLimit, ...] = ()
    masks: tuple[Mask, ...] = ()
    name: str = ""
    source: str | None = None

    def to_toml(self) -> str:
        """The limits as TOML text in the documented format (readable by :func:`load_limits`)."""
        out = [f"# sweepbook limits file (format {FORMAT} {FORMAT_VERSION}, see docs/limits.md)",
               f"format = {toml_str(FORMAT)}", f"version = {FORMAT_VERSION}"]
        if self.name:
            out.append(f"name = {toml_str(self.name)}")
        for q in self.quantities:
            out += ["", f"[quantity.{toml_key(q.name)}]"]
            if q.min is not None:
                out.append(f"min = {toml_num(q.min)}")
            if q.max is not None:
                out.append(f"max = {toml_num(q.max)}")
            if q.label:
                out.append(f"label = {toml_str(q.label)}")
            if not q.required:
                out.append("required = false")
        for m in self.masks:
            out += ["", "[[mask]]", f"name = {toml_str(m.name)}", f"curve = {toml_str(m.curve)}",
                    f"f_min_hz = {toml_num(m.f_min_hz)}", f"f_max_hz = {toml_num(m.f_max_hz)}"]
            for key in ("lower", "upper"):
                b = getattr(m, key)
                if isinstance(b, tuple):
                    out.append(f"{key} = [{toml_num(b[0])}, {toml_num(b[1])}]")
                elif b is not None:
                    out.append(f"{key} = {toml_num(b)}")
            if m.curve == "z_mag_ohm":
                out.append(f"z_method = {toml_str(m.z_method)}")
                out.append(f"port = {int(m.port)}")
        return "\n".join(out) + "\n"

    def save(self, path: str | os.PathLike) -> Path:
        """Write :meth:`to_toml` to ``path`` atomically (temporary file, then rename)."""
        path = Path(path)
        write_text(path, self.to_toml())
        return path

    def draw(self, ax, curve: str = "z_mag_ohm", f_scale: float = 1.0, quantities: bool = True,
             **style: Any) -> list:
        """Draw the limits on matplotlib axes; see :func:`kit.review.drawing.draw_limits`."""
        from kit.review.drawing import draw_limits

        return draw_limits(ax, self, curve=curve, f_scale=f_scale, quantities=quantities, **style)


def s_ports(curve: str) -> tuple[int, int] | None:
    """0-based (i, j) of an ``sIJ_db`` curve name (``"s21_db"`` -> (1, 0)); None otherwise."""
    m = _S_DB.match(curve)
    return None if m is None else (int(m.group(1)) - 1, int(m.group(2)) - 1)


def curve_unit(curve: str) -> str:
    """Unit of a mask curve name ("Ω" or "dB", by :func:`kit.units.unit_of`).

    Raises
    ------
    ValueError
        For a curve a mask cannot bound.
    """
    if curve in CURVES or _S_DB.match(curve):
        return unit_of(curve)
    raise ValueError(f"unknown curve {curve!r}; use z_mag_ohm or sIJ_db (e.g. s11_db, s21_db)")


# --------------------------------------------------------------------------- TOML writing
# The standard library reads TOML (tomllib) but does not write it: these scalar writers are
# the kit's one home for it (limits files here, procedure files in kit.batch.procedure).
def toml_str(s: str) -> str:
    """A TOML basic string with every special character escaped (TOML 1.0, "String")."""
    out = ['"']
    for ch in str(s):
        o = ord(ch)
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ch == "\r":
            out.append("\\r")
        elif o < 0x20 or o == 0x7F or 0xD800 <= o <= 0xDFFF:
            out.append(f"\\u{o:04X}" if o < 0xD800 else "\\uFFFD")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def toml_key(k: str) -> str:
    return k if _BARE_KEY.match(k) else toml_str(k)


def toml_num(x: float) -> str:
    x = float(x)
    if not math.isfinite(x):
        raise LimitsError(f"a limit must be a finite number, got {x!r}")
    r = repr(x)
    return r if ("." in r or "e" in r or "E" in r) else r + ".0"


# --------------------------------------------------------------------------- reading
def _line_of(text: str, pattern: str) -> int | None:
    m = re.search(pattern, text, re.MULTILINE)
    return None if m is None else text.count("\n", 0, m.start()) + 1


def _where(src: str, line: int | None) -> str:
    return src + (f":{line}" if line else "")


def _number(v: Any, what: str, where: str) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(float(v)):
        raise LimitsError(f"{where}: {what} must be a finite number, got {v!r}")
    return float(v)


def parse_limits(text: str, source: str = "<limits>") -> Limits:
    """Limits from TOML text; raises LimitsError naming ``source``, the line and the fix."""
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise LimitsError(f"{source}: not valid TOML: {exc}") from None
    return limits_from_dict(doc, source, text)


def limits_from_dict(doc: dict[str, Any], source: str = "<limits>", text: str = "") -> Limits:
    """Limits from an already parsed TOML table (e.g. the [limits] table of another file).

    Same checks and messages as :func:`parse_limits`; ``text`` (the TOML source, if known)
    only serves to name lines in messages.
    """
    if not isinstance(doc, dict):
        raise LimitsError(f"{source}: limits must be a table, got {type(doc).__name__}")
    fmt = doc.get("format", FORMAT)
    if fmt != FORMAT:
        where = _where(source, _line_of(text, r"^[ \t]*format"))
        raise LimitsError(f"{where}: format is {fmt!r}, expected {FORMAT!r}")
    ver = doc.get("version", FORMAT_VERSION)
    if ver != FORMAT_VERSION:
        raise LimitsError(f"{source}: limits format version {ver!r} is not supported "
                          f"(this kit reads version {FORMAT_VERSION})")
    unknown = set(doc) - {"format", "version", "name", "quantity", "mask"}
    if unknown:
        k = sorted(unknown)[0]
        where = _where(source, _line_of(text, r"^[ \t]*\[?[ \t]*" + re.escape(k)))
        raise LimitsError(f"{where}: unknown entry {k!r}; a limits file has "
                          "[quantity.<column>] tables "
                          "and [[mask]] entries")
    quantities = []
    qdoc = doc.get("quantity", {})
    if not isinstance(qdoc, dict):
        raise LimitsError(f"{source}: 'quantity' must be tables such as [quantity.fs_hz]")
    for qname, q in qdoc.items():
        line = _line_of(text, r"^[ \t]*\[[ \t]*quantity\.[ \t]*\"?" + re.escape(qname))
        where = _where(source, line)
        if not isinstance(q, dict):
            raise LimitsError(f"{where}: quantity.{qname} must be a table with min and/or max")
        bad = set(q) - _Q_KEYS
        if bad:
            raise LimitsError(f"{where}: quantity.{qname} has unknown key(s) "
                              f"{', '.join(sorted(bad))}; allowed: min, max, label, required")
        lo = None if "min" not in q else _number(q["min"], f"quantity.{qname}.min", where)
        hi = None if "max" not in q else _number(q["max"], f"quantity.{qname}.max", where)
        if lo is None and hi is None:
            raise LimitsError(f"{where}: quantity.{qname} gives neither min nor max")
        if lo is not None and hi is not None and lo > hi:
            raise LimitsError(f"{where}: quantity.{qname} has min {lo:g} above max {hi:g}; "
                              "swap them")
        req = q.get("required", True)
        if not isinstance(req, bool):
            raise LimitsError(f"{where}: quantity.{qname}.required must be true or false")
        quantities.append(QuantityLimit(qname, lo, hi, str(q.get("label", "")), req))
    masks = []
    mdoc = doc.get("mask", [])
    if not isinstance(mdoc, list):
        raise LimitsError(f"{source}: masks are written [[mask]] (an array of tables)")
    mask_lines = [text.count("\n", 0, m.start()) + 1
                  for m in re.finditer(r"^[ \t]*\[\[[ \t]*mask[ \t]*\]\]", text, re.MULTILINE)]
    names = set()
    for i, m in enumerate(mdoc):
        where = _where(source, mask_lines[i] if i < len(mask_lines) else None)
        bad = set(m) - _M_KEYS
        if bad:
            raise LimitsError(f"{where}: mask {i + 1} has unknown key(s) {', '.join(sorted(bad))}; "
                              f"allowed: {', '.join(sorted(_M_KEYS))}")
        for k in ("curve", "f_min_hz", "f_max_hz"):
            if k not in m:
                raise LimitsError(f"{where}: mask {i + 1} needs '{k}'")
        curve = m["curve"]
        try:
            curve_unit(str(curve))
        except ValueError as exc:
            raise LimitsError(f"{where}: mask {i + 1}: {exc}") from None
        f0 = _number(m["f_min_hz"], "f_min_hz", where)
        f1 = _number(m["f_max_hz"], "f_max_hz", where)
        if not 0 <= f0 < f1:
            raise LimitsError(f"{where}: mask {i + 1}: need 0 <= f_min_hz < f_max_hz, got "
                              f"{f0:g} and {f1:g}")
        bounds = {}
        for k in ("lower", "upper"):
            v = m.get(k)
            if isinstance(v, list):
                if len(v) != 2:
                    raise LimitsError(f"{where}: mask {i + 1}: {k} is a number or a pair "
                                      "[at f_min_hz, at f_max_hz]")
                v = (_number(v[0], k, where), _number(v[1], k, where))
            elif v is not None:
                v = _number(v, k, where)
            bounds[k] = v
        if bounds["lower"] is None and bounds["upper"] is None:
            raise LimitsError(f"{where}: mask {i + 1} gives neither lower nor upper")
        if bounds["lower"] is not None and bounds["upper"] is not None:
            lo = np.atleast_1d(bounds["lower"])
            hi = np.atleast_1d(bounds["upper"])
            if np.any(np.broadcast_to(lo, (2,)) > np.broadcast_to(hi, (2,))):
                raise LimitsError(f"{where}: mask {i + 1} has lower above upper")
        name = mask_name(m, i)
        if name in names:
            raise LimitsError(f"{where}: two masks are named {name!r}; names must differ")
        names.add(name)
        z_method = str(m.get("z_method", "reflection"))
        if z_method not in ("reflection", "series-through", "shunt-through"):
            raise LimitsError(f"{where}: mask {i + 1}: z_method {z_method!r} must be reflection, "
                              "series-through or shunt-through")
        port = m.get("port", 1)
        if isinstance(port, bool) or not isinstance(port, int) or port < 1:
            raise LimitsError(f"{where}: mask {i + 1}: port must be a whole number >= 1")
        masks.append(Mask(name, str(curve), f0, f1, bounds["lower"], bounds["upper"],
                          z_method, port))
    return Limits(tuple(quantities), tuple(masks), str(doc.get("name", "")), source)


def mask_name(mask: dict[str, Any], i: int) -> str:
    """The name of mask ``i`` (0-based) of a list: its ``name``, else ``mask<i + 1>``."""
    return str(mask.get("name") or f"mask{i + 1}")


def load_limits(path: str | os.PathLike) -> Limits:
    """Read a limits file (TOML, format in docs/limits.md).

    Raises
    ------
    LimitsError
        Naming the file, the line where it can tell, what is wrong and what to do.
    """
    path = Path(path)
    try:
        text = path.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise LimitsError(f"{path}: limits file not found") from None
    except UnicodeDecodeError:
        raise LimitsError(f"{path}: a limits file must be UTF-8 text") from None
    except OSError as exc:
        raise LimitsError(f"{path}: cannot read the limits file: {exc.strerror or exc}") from None
    return parse_limits(text, str(path))
