"""Limits and verdicts: does a capture meet its acceptance limits, and by how much.

A limits file is TOML in a format of our own (see docs/limits.md): bounds on any summary
column (``[quantity.fs_hz]`` with ``min`` and/or ``max``) and masks on a curve
(``[[mask]]``: |Z| in ohm or |Sij| in dB between a lower and an upper bound over a
frequency span). :func:`verdict` says "pass", "fail" or "incomplete", gives the reasons in
words and the margin of every check: how far the value is inside (positive) or outside
(negative) its nearest bound, in the quantity's unit and relative to the bound.

References
----------
.. [1] TOML v1.0.0 specification (toml.io), read with Python's standard ``tomllib``.
.. [2] |S| in dB = 20 log10 |S|; methods sheet section 8.3 (return loss, ECSS glossary).
"""

from __future__ import annotations

import math
import os
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

FORMAT = "sweepbook-limits"
FORMAT_VERSION = 1
#: Curves a mask can bound, with their unit. ``sIJ_db`` for any port pair is accepted too.
CURVES = {"z_mag_ohm": "ohm", "s11_db": "dB"}
_S_DB = re.compile(r"^s([1-9])([1-9])_db$")
_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_Q_KEYS = {"min", "max", "label", "required"}
_M_KEYS = {"name", "curve", "f_min_hz", "f_max_hz", "lower", "upper", "z_method", "port"}
#: Span coverage tolerance: a capture whose grid stops within this fraction of the span
#: short of an end still covers it (common practice, no source).
SPAN_TOL = 1e-9


class LimitsError(ValueError):
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
               f"format = {_toml_str(FORMAT)}", f"version = {FORMAT_VERSION}"]
        if self.name:
            out.append(f"name = {_toml_str(self.name)}")
        for q in self.quantities:
            out += ["", f"[quantity.{_toml_key(q.name)}]"]
            if q.min is not None:
                out.append(f"min = {_toml_num(q.min)}")
            if q.max is not None:
                out.append(f"max = {_toml_num(q.max)}")
            if q.label:
                out.append(f"label = {_toml_str(q.label)}")
            if not q.required:
                out.append("required = false")
        for m in self.masks:
            out += ["", "[[mask]]", f"name = {_toml_str(m.name)}", f"curve = {_toml_str(m.curve)}",
                    f"f_min_hz = {_toml_num(m.f_min_hz)}", f"f_max_hz = {_toml_num(m.f_max_hz)}"]
            for key in ("lower", "upper"):
                b = getattr(m, key)
                if isinstance(b, tuple):
                    out.append(f"{key} = [{_toml_num(b[0])}, {_toml_num(b[1])}]")
                elif b is not None:
                    out.append(f"{key} = {_toml_num(b)}")
            if m.curve == "z_mag_ohm":
                out.append(f"z_method = {_toml_str(m.z_method)}")
                out.append(f"port = {int(m.port)}")
        return "\n".join(out) + "\n"

    def save(self, path: str | os.PathLike) -> Path:
        """Write :meth:`to_toml` to ``path`` atomically (temporary file, then rename)."""
        path = Path(path)
        atomic_write_text(path, self.to_toml())
        return path

    def draw(self, ax, curve: str = "z_mag_ohm", f_scale: float = 1.0, quantities: bool = True,
             **style: Any) -> list:
        """Draw the limits on matplotlib axes; see :func:`draw_limits`."""
        return draw_limits(ax, self, curve=curve, f_scale=f_scale, quantities=quantities, **style)


def curve_unit(curve: str) -> str:
    """Unit of a mask curve name ("ohm" or "dB"); raises ValueError for an unknown one."""
    if curve in CURVES:
        return CURVES[curve]
    if _S_DB.match(curve):
        return "dB"
    raise ValueError(f"unknown curve {curve!r}; use z_mag_ohm or sIJ_db (e.g. s11_db, s21_db)")


# --------------------------------------------------------------------------- TOML writing
def _toml_str(s: str) -> str:
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


def _toml_key(k: str) -> str:
    return k if _BARE_KEY.match(k) else _toml_str(k)


def _toml_num(x: float) -> str:
    x = float(x)
    if not math.isfinite(x):
        raise LimitsError(f"a limit must be a finite number, got {x!r}")
    r = repr(x)
    return r if ("." in r or "e" in r or "E" in r) else r + ".0"


from kit.io.atomic import write_text as atomic_write_text  # noqa: E402  (kept for callers)


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
        name = str(m.get("name") or f"mask{i + 1}")
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


# --------------------------------------------------------------------------- checking
@dataclass(frozen=True)
class Check:
    """The outcome of one limit check.

    ``margin`` is the signed distance to the nearest bound in the check's unit (positive
    inside, negative outside); ``margin_rel`` is that distance divided by the magnitude of
    that bound (NaN where the bound is zero). Both are NaN when the check is incomplete.
    """

    name: str
    kind: str  # "quantity" or "mask"
    status: str  # "pass", "fail" or "incomplete"
    reason: str
    value: float = math.nan
    bound: float = math.nan
    margin: float = math.nan
    margin_rel: float = math.nan
    unit: str = ""
    f_hz: float = math.nan  # where a mask is tightest

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class Verdict:
    """Overall "pass", "fail" or "incomplete", with every check and reasons in words.

    Unpacks as ``status, reasons = verdict(...)``.
    """

    status: str
    checks: tuple[Check, ...] = field(default_factory=tuple)

    @property
    def reasons(self) -> list[str]:
        """Words for every check that did not pass (all checks when everything passed)."""
        bad = [c.reason for c in self.checks if c.status != "pass"]
        return bad or [c.reason for c in self.checks]

    @property
    def margins(self) -> dict[str, float]:
        """Check name -> margin (in the check's unit)."""
        return {c.name: c.margin for c in self.checks}

    @property
    def worst(self) -> Check | None:
        """The check with the smallest relative margin (or absolute where none)."""
        done = [c for c in self.checks if c.status != "incomplete"]
        if not done:
            return None
        return min(done, key=lambda c: c.margin_rel if math.isfinite(c.margin_rel) else c.margin)

    def __iter__(self):
        return iter((self.status, self.reasons))

    def to_dict(self) -> dict[str, Any]:
        return {"status": self.status, "reasons": self.reasons,
                "checks": [c.to_dict() for c in self.checks]}

    def table(self):
        """The checks as a DataFrame."""
        import pandas as pd

        return pd.DataFrame([c.to_dict() for c in self.checks],
                            columns=list(Check.__dataclass_fields__))


def _unit_of(name: str) -> str:
    for suffix, unit in (("_hz", "Hz"), ("_ohm", "ohm"), ("_f", "F"), ("_h", "H"),
                         ("_db", "dB"), ("_s", "s"), ("_c", "degC"), ("_v", "V")):
        if name.endswith(suffix):
            return unit
    return ""


def _fmt(x: float, unit: str) -> str:
    return f"{x:.6g} {unit}".strip()


def _rel(margin: float, bound: float) -> float:
    return margin / abs(bound) if bound != 0 else math.nan


def _get(row: Any, name: str) -> Any:
    if isinstance(row, dict):
        return row.get(name)
    try:
        return row[name]
    except (KeyError, IndexError, TypeError):
        return getattr(row, name, None)


def check_quantity(q: QuantityLimit, row: Any) -> Check:
    """Check one quantity bound against a summary row (dict, Series or object)."""
    unit = _unit_of(q.name)
    label = q.label or q.name
    v = _get(row, q.name)
    try:
        x = float(v)
    except (TypeError, ValueError):
        x = math.nan
    if v is None or not math.isfinite(x):
        why = "is missing" if v is None else f"could not be computed ({v!r})"
        status = "incomplete" if q.required else "pass"
        return Check(q.name, "quantity", status, f"{label}: {why}; no check possible", unit=unit)
    cands = []
    if q.min is not None:
        cands.append((x - q.min, q.min, "min"))
    if q.max is not None:
        cands.append((q.max - x, q.max, "max"))
    margin, bound, which = min(cands, key=lambda c: c[0])
    rel = _rel(margin, bound)
    rel_txt = f" ({abs(rel):.3g} of the bound)" if math.isfinite(rel) else ""
    if margin >= 0:
        status = "pass"
        reason = (f"{label} = {_fmt(x, unit)} is within limits; nearest bound {which} "
                  f"{_fmt(bound, unit)}, margin {_fmt(margin, unit)}{rel_txt}")
    else:
        status = "fail"
        word = "below the minimum" if which == "min" else "above the maximum"
        reason = (f"{label} = {_fmt(x, unit)} is {word} {_fmt(bound, unit)} by "
                  f"{_fmt(-margin, unit)}{rel_txt}")
    return Check(q.name, "quantity", status, reason, x, bound, margin, rel, unit)


def curve_values(capture: Any, mask: Mask) -> tuple[np.ndarray, np.ndarray]:
    """The frequencies [Hz] and the values of the mask's curve (|Z| [ohm] or |Sij| [dB])."""
    net = getattr(capture, "network", capture)
    f = np.asarray(net.frequency.f, float)
    m = _S_DB.match(mask.curve)
    if m:
        i, j = int(m.group(1)) - 1, int(m.group(2)) - 1
        if max(i, j) >= net.nports:
            raise ValueError(f"the capture has {net.nports} port(s); {mask.curve} needs more")
        with np.errstate(divide="ignore"):
            return f, 20.0 * np.log10(np.abs(net.s[:, i, j]))
    import warnings

    from kit.network.immittance import impedance

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # singular points become NaN and are reported below
        z = impedance(capture, method=mask.z_method, port=mask.port)
    return f, np.abs(z)


def check_mask(mask: Mask, capture: Any) -> Check:
    """Check one curve mask on a capture (Capture or skrf Network)."""
    unit = mask.unit
    span = f"{mask.f_min_hz / 1e6:.6g}..{mask.f_max_hz / 1e6:.6g} MHz"
    what = f"mask {mask.name!r} ({mask.curve} over {span})"
    if capture is None:
        return Check(mask.name, "mask", "incomplete", f"{what}: no capture given", unit=unit)
    try:
        f, y = curve_values(capture, mask)
    except Exception as exc:  # noqa: BLE001 - a curve that cannot be computed is reported
        return Check(mask.name, "mask", "incomplete", f"{what}: the curve could not be computed "
                     f"({exc})", unit=unit)
    tol = SPAN_TOL * (mask.f_max_hz - mask.f_min_hz)
    if f.size == 0 or f[0] > mask.f_min_hz + tol or f[-1] < mask.f_max_hz - tol:
        have = f"{f[0] / 1e6:.6g}..{f[-1] / 1e6:.6g} MHz" if f.size else "no points"
        return Check(mask.name, "mask", "incomplete",
                     f"{what}: the capture covers {have}, not the whole span", unit=unit)
    sel = (f >= mask.f_min_hz - tol) & (f <= mask.f_max_hz + tol)
    fs, ys = f[sel], y[sel]
    if fs.size == 0:
        return Check(mask.name, "mask", "incomplete", f"{what}: no measured point in the span",
                     unit=unit)
    if not np.all(np.isfinite(ys)):
        bad = fs[~np.isfinite(ys)]
        return Check(mask.name, "mask", "incomplete", f"{what}: {bad.size} point(s) could not be "
                     f"computed (first at {bad[0] / 1e6:.6g} MHz)", unit=unit)
    cands = []
    lo = mask.bound("lower", fs)
    hi = mask.bound("upper", fs)
    if lo is not None:
        d = ys - lo
        k = int(np.argmin(d))
        cands.append((float(d[k]), float(lo[k]), k, "lower"))
    if hi is not None:
        d = hi - ys
        k = int(np.argmin(d))
        cands.append((float(d[k]), float(hi[k]), k, "upper"))
    margin, bound, k, which = min(cands, key=lambda c: c[0])
    rel = _rel(margin, bound)
    at = f"{fs[k] / 1e6:.6g} MHz"
    if margin >= 0:
        status = "pass"
        reason = (f"{what}: inside; tightest at {at}, {_fmt(margin, unit)} from the {which} bound "
                  f"{_fmt(bound, unit)}")
    else:
        status = "fail"
        n_out = int(np.sum(((ys < lo) if lo is not None else False)
                           | ((ys > hi) if hi is not None else False)))
        word = "below the lower" if which == "lower" else "above the upper"
        reason = (f"{what}: {_fmt(float(ys[k]), unit)} at {at} is {word} bound "
                  f"{_fmt(bound, unit)} by {_fmt(-margin, unit)}; {n_out} of {fs.size} points "
                  "outside")
    return Check(mask.name, "mask", status, reason, float(ys[k]), bound, margin, rel, unit,
                 float(fs[k]))


def verdict(summary_row: Any, limits: Limits, capture: Any = None) -> Verdict:
    """Pass, fail or incomplete for one capture, with reasons and margins.

    Parameters
    ----------
    summary_row : dict, pandas Series or object
        Values by summary column name (e.g. a row of :func:`kit.summary`). Missing or NaN
        values make their check incomplete (unless the limit says ``required = false``).
    limits : Limits
        From :func:`load_limits`.
    capture : Capture or skrf.Network, optional
        Needed for the masks; without it every mask check is incomplete.

    Returns
    -------
    Verdict
        ``status``: "fail" if any check fails, else "incomplete" if any could not be made,
        else "pass" (also "incomplete" for limits with no checks). ``reasons`` in words,
        ``checks`` with the margin of each (see :class:`Check`). Unpacks as
        ``status, reasons``.

    References
    ----------
    .. [1] Margin as signed distance to the nearest bound: common practice, no source.
    """
    if not isinstance(limits, Limits):
        raise TypeError(f"limits must be a kit Limits (from load_limits), got "
                        f"{type(limits).__name__}")
    checks = [check_quantity(q, summary_row) for q in limits.quantities]
    checks += [check_mask(m, capture) for m in limits.masks]
    if not checks:
        return Verdict("incomplete", (Check("limits", "quantity", "incomplete",
                                            "the limits define no check"),))
    states = {c.status for c in checks}
    status = "fail" if "fail" in states else ("incomplete" if "incomplete" in states else "pass")
    return Verdict(status, tuple(checks))


# --------------------------------------------------------------------------- drawing
def draw_limits(ax, limits: Limits, curve: str = "z_mag_ohm", f_scale: float = 1.0,
                quantities: bool = True, **style: Any) -> list:
    """Draw the limits of ``curve`` on matplotlib axes whose x axis is frequency.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        x in hertz divided by ``f_scale`` (e.g. ``f_scale=1e6`` for an axis in MHz).
    limits : Limits
    curve : str
        Masks on this curve are drawn as lines (lower and upper bounds).
    quantities : bool
        Also mark bounds of frequency quantities (names ending ``_hz``) as vertical dashed
        lines.

    Returns
    -------
    list of matplotlib artists
    """
    artists = []
    colour = style.pop("color", "tab:red")
    for m in limits.masks:
        if m.curve != curve:
            continue
        f = np.array([m.f_min_hz, m.f_max_hz])
        for which, ls in (("lower", "--"), ("upper", "-")):
            b = m.bound(which, f)
            if b is None:
                continue
            (line,) = ax.plot(f / f_scale, b, ls, color=colour, lw=1.5, alpha=0.8,
                              label=f"{m.name} {which}", **style)
            artists.append(line)
    if quantities:
        for q in limits.quantities:
            if not q.name.endswith("_hz"):
                continue
            bounds = [b for b in (q.min, q.max) if b is not None]
            for k, b in enumerate(bounds):
                label = f"{q.label or q.name} limit" if k == 0 else "_nolegend_"
                artists.append(ax.axvline(b / f_scale, color=colour, ls=":", lw=1.0,
                                          alpha=0.7, label=label))
    return artists
