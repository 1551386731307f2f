"""Verdicts: does a capture meet its acceptance limits, and by how much.

:func:`verdict` checks a summary row (and, for masks, the capture's curve) against a
:class:`kit.review.limits.Limits` and says "pass", "fail" or "incomplete", with the reasons
in words and the margin of every check: how far the value is inside (positive) or outside
(negative) its nearest bound, in the quantity's unit and relative to the bound. Both
:class:`Check` and :class:`Verdict` follow the result protocol of :mod:`kit.results`.

References
----------
.. [1] |S| in dB = 20 log10 |S|; methods sheet section 8.3 (return loss, ECSS glossary).
.. [2] Margin as signed distance to the nearest bound: common practice, no source.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from kit.results import Result
from kit.review.limits import SPAN_TOL, Limits, Mask, QuantityLimit, s_ports
from kit.units import eng, percent, quantity, scale_for, unit_of

__all__ = ["Check", "Verdict", "check_quantity", "check_mask", "curve_values", "verdict",
           "split_reasons", "reason_kinds"]


@dataclass(frozen=True)
class Check(Result):
    """The outcome of one limit check.

    ``value``, ``bound`` and ``margin`` are in ``unit`` (the unit of the checked column or
    curve, :func:`kit.units.unit_of`). ``margin`` is the signed distance to the nearest
    bound (positive inside, negative outside); ``margin_rel`` is that distance divided by
    the magnitude of that bound (NaN where the bound is zero). Missing values are NaN
    (``value``, ``bound``, the margins when the check is incomplete; ``f_hz`` except for
    masks).
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

    @property
    def heading(self) -> str:
        return f"{self.kind} check {self.name}: {self.status}"

    def view_rows(self) -> list[tuple[str, str]]:
        """(label, value with unit) rows: the check's own unit, not a fixed one."""
        u = self.unit
        out = [(label, quantity(v, unit)) for label, v, unit in (
            ("value", self.value, u), ("bound", self.bound, u), ("margin", self.margin, u),
            ("tightest at", self.f_hz, "Hz"))]
        out.insert(3, ("relative margin", percent(self.margin_rel, signed=True)))
        return out + [("reason", self.reason)]


@dataclass(frozen=True)
class Verdict(Result):
    """Overall "pass", "fail" or "incomplete", with every check and reasons in words.

    Unpacks as ``status, reasons = verdict(...)``. ``to_dict()`` also carries the
    ``reasons`` (for readers of exported JSON); ``from_dict`` rebuilds the checks.
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

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Verdict":
        """The verdict back from :meth:`to_dict` (``reasons`` is derived, so not read)."""
        return cls(str(d["status"]), tuple(Check.from_dict(c) for c in d.get("checks", ())))

    def view_rows(self) -> list[tuple[str, str]]:
        """One row per check: its status and margin in its unit."""
        return [(c.name, c.status + (f", margin {quantity(c.margin, c.unit)}"
                                     if math.isfinite(c.margin) else ""))
                for c in self.checks]

    @property
    def heading(self) -> str:
        return f"Verdict: {self.status}"

    def table(self):
        """The checks as a DataFrame."""
        import pandas as pd

        return pd.DataFrame([c.to_dict() for c in self.checks],
                            columns=list(Check.__dataclass_fields__))


def _span(f0_hz: float, f1_hz: float) -> str:
    """"1.8..2.4 MHz": a frequency span in one prefixed unit (:func:`kit.units.scale_for`),
    the numbers by :func:`kit.units.eng` to 6 significant digits."""
    k, unit = scale_for([f0_hz, f1_hz], "Hz")
    return f"{eng(f0_hz * k, '', 6)}..{eng(f1_hz * k, '', 6)} {unit}"


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
    unit = unit_of(q.name)
    label = q.shown
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
    rel_txt = f" ({percent(rel)} of the bound)" if math.isfinite(rel) else ""
    if margin >= 0:
        status = "pass"
        reason = (f"{label} = {quantity(x, unit)} is within limits; nearest bound {which} "
                  f"{quantity(bound, unit)}, margin {quantity(margin, unit)}{rel_txt}")
    else:
        status = "fail"
        word = "below the minimum" if which == "min" else "above the maximum"
        reason = (f"{label} = {quantity(x, unit)} is {word} {quantity(bound, unit)} by "
                  f"{quantity(-margin, unit, digits=3)}{rel_txt}")
    return Check(q.name, "quantity", status, reason, x, bound, margin, rel, unit)


def curve_values(capture: Any, mask: Mask) -> tuple[np.ndarray, np.ndarray]:
    """The frequencies [Hz] and the values of the mask's curve (|Z| [ohm] or |Sij| [dB])."""
    from kit.network.coerce import network_of

    net = network_of(capture, "a limit mask")
    f = np.asarray(net.frequency.f, float)
    ij = s_ports(mask.curve)
    if ij is not None:
        i, j = ij
        if max(i, j) >= net.nports:
            raise ValueError(f"the capture has {net.nports} port(s); {mask.curve} needs more")
        from kit.network.reflection import db20

        with np.errstate(divide="ignore"):
            return f, db20(net.s[:, i, j])
    import warnings

    from kit.network.immittance import impedance

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # singular points become NaN and are reported below
        z = impedance(capture, method=mask.z_method, port=mask.port)
    return f, np.abs(z)


def check_mask(mask: Mask, capture: Any) -> Check:
    """Check one curve mask on a capture (Capture or skrf Network)."""
    unit = mask.unit
    span = _span(mask.f_min_hz, mask.f_max_hz)
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
        have = _span(f[0], f[-1]) if f.size else "no points"
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
                     f"computed (first at {quantity(bad[0], 'Hz')})", unit=unit)
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
    at = quantity(fs[k], "Hz")
    if margin >= 0:
        status = "pass"
        reason = (f"{what}: inside; tightest at {at}, {quantity(margin, unit)} from the {which} bound "
                  f"{quantity(bound, unit)}")
    else:
        status = "fail"
        n_out = int(np.sum(((ys < lo) if lo is not None else False)
                           | ((ys > hi) if hi is not None else False)))
        word = "below the lower" if which == "lower" else "above the upper"
        reason = (f"{what}: {quantity(float(ys[k]), unit)} at {at} is {word} bound "
                  f"{quantity(bound, unit)} by {quantity(-margin, unit)}; {n_out} of {fs.size} points "
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

    Raises
    ------
    kit.CaptureError
        If ``limits`` is not a :class:`kit.Limits`.

    References
    ----------
    .. [1] Margin as signed distance to the nearest bound: common practice, no source.
    """
    if not isinstance(limits, Limits):
        from kit.capture import CaptureError

        raise CaptureError(f"limits must be a kit Limits (from load_limits), got "
                        f"{type(limits).__name__}")
    checks = [check_quantity(q, summary_row) for q in limits.quantities]
    checks += [check_mask(m, capture) for m in limits.masks]
    if not checks:
        return Verdict("incomplete", (Check("limits", "quantity", "incomplete",
                                            "the limits define no check"),))
    states = {c.status for c in checks}
    status = "fail" if "fail" in states else ("incomplete" if "incomplete" in states else "pass")
    return Verdict(status, tuple(checks))


# ---------------------------------------------------------------------- reading reasons back
# The words above are the one home of the reasons; these read a summary's joined
# ``verdict_reasons`` ("; " between reasons) back into reasons and kinds of reason.
_CONTINUATION = re.compile(r"^(no check possible|nearest bound |tightest at |\d+ of \d+ points "
                           r"outside)")
_Q_OUT = re.compile(r"^(?P<label>.+?) = .* is (?P<word>below the minimum|above the maximum) ")
_Q_MISSING = re.compile(r"^(?P<label>.+?): (is missing|could not be computed \(.*\))$")
_MASK = re.compile(r"^mask (?P<name>'(?:[^'\\]|\\.)*'|\"(?:[^\"\\]|\\.)*\") \([^)]*\): "
                   r"(?P<rest>.*)$")
_MASK_KINDS = (("is below the lower bound", "below the lower bound"),
               ("is above the upper bound", "above the upper bound"),
               ("no capture given", "no capture"),
               ("the curve could not be computed", "curve not computable"),
               ("could not be computed", "points not computable"),
               ("the capture covers", "span not covered"),
               ("no measured point in the span", "span not covered"))


def split_reasons(text: Any) -> list[str]:
    """The reasons of a joined ``verdict_reasons`` text, one per check, in order.

    Reasons are joined with "; ", which also occurs inside a reason ("...; no check
    possible", "...; 3 of 40 points outside"): such pieces are put back on their reason.
    A label that itself holds "; " is split there (the joined text cannot tell).
    """
    if text is None or (isinstance(text, float) and math.isnan(text)) or not str(text):
        return []
    out: list[str] = []
    for piece in str(text).split("; "):
        if out and _CONTINUATION.match(piece):
            out[-1] += "; " + piece
        else:
            out.append(piece)
    return out


def reason_kinds(text: Any) -> list[str]:
    """Kinds of the failed or incomplete checks in a ``verdict_reasons`` text.

    E.g. "fs: below the minimum", "k_eff: missing", "mask 'z': above the upper bound",
    "mask 'z': span not covered", "no checks defined"; reasons of checks that passed
    give none. A reason in other words is "other: <reason>". Each kind once, in order.
    """
    kinds: list[str] = []
    for r in split_reasons(text):
        kind = None
        m = _MASK.match(r)
        if m:
            rest = m.group("rest")
            if rest.startswith("inside"):
                continue
            what = next((k for w, k in _MASK_KINDS if w in rest), "not checked")
            kind = f"mask {m.group('name')}: {what}"
        elif " is within limits; " in r:
            continue
        elif (m := _Q_OUT.match(r)) is not None:
            kind = f"{m.group('label')}: {m.group('word')}"
        elif (m := _Q_MISSING.match(r.removesuffix("; no check possible"))) is not None:
            kind = f"{m.group('label')}: missing"
        elif r == "the limits define no check":
            kind = "no checks defined"
        else:
            kind = f"other: {r}"
        if kind not in kinds:
            kinds.append(kind)
    return kinds
