"""Procedure files: the per-capture pipeline as a reviewable TOML file of our own.

A procedure says how to import a capture, which corrections to apply (in order), what
to fit and which limits judge the result. It is what an engineer sets up for one part in
the notebook, saved so that it runs unchanged on every capture of a lot, from the command
line or on a cluster (:mod:`kit.batch.engine`).

Format (all tables optional except that a procedure with nothing in it does nothing)::

    [import]
    method = "reflection"            # or "series-through", "shunt-through"
    port = 1
    name_pattern = "{lot}-{serial}"  # fields go into the metadata

    [[correction]]                   # applied in order; paths relative to this file
    kind = "osl"                     # "osl", "open_short", "cable", "fixture", "port_extension"
    open = "standards/open.s1p"
    short = "standards/short.s1p"
    load = "standards/load.s1p"
    load_ohms = 50.0

    [resonance]
    span_hz = [1.6e6, 2.4e6]         # characteristic frequencies in this span (default: fit span)

    [fit]
    model = "bvd"                    # any model of kit.fit
    span_hz = [1.8e6, 2.4e6]
    modes = 1

    [limits]                         # quantity = { min = ..., max = ... } on summary columns
    fs_hz = { min = 1.9e6, max = 2.1e6 }
    k_eff = { min = 0.3 }
    # [[limits.mask]] entries as in the limits file format (docs/limits.md)
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from kit.capture import CaptureError
from kit.io.atomic import write_text
from kit.review.limits import toml_key, toml_str

FORMAT_VERSION = 1
IMPORT_METHODS = ("reflection", "series-through", "shunt-through")
#: correction kind -> (kit function name, keys that are paths to captures)
CORRECTION_KINDS: dict[str, tuple[str, tuple[str, ...]]] = {
    "osl": ("osl", ("open", "short", "load")),
    "open_short": ("open_short", ("open", "short")),
    "cable": ("cable", ()),
    "fixture": ("fixture", ("left", "right", "two_port")),
    "port_extension": ("port_extension", ()),
    "two_x_thru": ("two_x_thru", ("thru",)),
}
#: Spans ending below this are refused as probably given in MHz [Hz] (no resonator this kit
#: is made for sits below 1 kHz; common practice, no source).
MIN_SPAN_HZ = 1e3
_TOP_KEYS = {"format_version", "name", "description", "import", "correction", "resonance", "fit",
             "limits"}


class ProcedureError(CaptureError):
    """A procedure file cannot be used; names the file and the entry and what to do."""


@dataclass
class Procedure:
    """The per-capture pipeline: import, corrections, characteristic frequencies, fit, limits.

    Attributes
    ----------
    import_ : dict
        ``method``, ``port``, ``name_pattern``.
    corrections : list of dict
        Each with ``kind`` and the arguments of the kit function of that kind; capture
        paths are relative to ``base_dir``.
    resonance : dict
        Options of :func:`kit.resonance` (``span_hz``).
    fit : dict or None
        Options of :func:`kit.fit` (``model``, ``span_hz``, ``modes``, ...); None: no fit.
    limits : dict or None
        Quantity bounds ``{column: {"min": .., "max": ..}}`` and optional ``mask`` list.
    base_dir : Path
        Folder that relative paths are taken from (the procedure file's folder).
    """

    import_: dict[str, Any] = field(default_factory=lambda: {"method": "reflection", "port": 1})
    corrections: list[dict[str, Any]] = field(default_factory=list)
    resonance: dict[str, Any] = field(default_factory=dict)
    fit: dict[str, Any] | None = None
    limits: dict[str, Any] | None = None
    name: str = ""
    base_dir: Path = field(default_factory=Path.cwd)
    source: str | None = None

    # ------------------------------------------------------------------ I/O
    @classmethod
    def from_dict(cls, doc: dict[str, Any], base_dir: str | Path = ".",
                  source: str = "<procedure>") -> "Procedure":
        """Validate a parsed procedure; raises ProcedureError with the entry and the fix."""
        unknown = set(doc) - _TOP_KEYS
        if unknown:
            raise ProcedureError(f"unknown entry {sorted(unknown)[0]!r}; a procedure has "
                                 "[import], [[correction]], [resonance], [fit] and [limits]", source)
        ver = doc.get("format_version", FORMAT_VERSION)
        if ver != FORMAT_VERSION:
            raise ProcedureError(f"format_version {ver!r} is not supported (this kit reads "
                                 f"{FORMAT_VERSION})", source)
        imp = {"method": "reflection", "port": 1, **dict(doc.get("import", {}))}
        if imp["method"] not in IMPORT_METHODS:
            raise ProcedureError(f"[import] method {imp['method']!r} is not one of "
                                 f"{', '.join(IMPORT_METHODS)}", source)
        bad = set(imp) - {"method", "port", "name_pattern"}
        if bad:
            raise ProcedureError(f"[import] has unknown key(s) {', '.join(sorted(bad))}", source)
        corrections = []
        for i, c in enumerate(doc.get("correction", []), start=1):
            if not isinstance(c, dict) or "kind" not in c:
                raise ProcedureError(f"correction {i} needs a kind "
                                     f"({', '.join(CORRECTION_KINDS)})", source)
            if c["kind"] not in CORRECTION_KINDS:
                raise ProcedureError(f"correction {i}: unknown kind {c['kind']!r}; use one of "
                                     f"{', '.join(CORRECTION_KINDS)}", source)
            _known_keys(c, _correction_keys(c["kind"]), f"correction {i} ({c['kind']})", source)
            corrections.append(dict(c))
        fit = doc.get("fit")
        if fit is not None:
            fit = dict(fit)
            _known_keys(fit, FIT_KEYS, "[fit]", source)
            if "span_hz" in fit:
                fit["span_hz"] = _span(fit["span_hz"], "[fit] span_hz", source)
        res = dict(doc.get("resonance", {}))
        _known_keys(res, ("span_hz",), "[resonance]", source)
        if "span_hz" in res:
            res["span_hz"] = _span(res["span_hz"], "[resonance] span_hz", source)
        limits = doc.get("limits")
        proc = cls(import_=imp, corrections=corrections, resonance=res, fit=fit,
                   limits=None if limits is None else dict(limits), name=str(doc.get("name", "")),
                   base_dir=Path(base_dir).resolve(), source=source)
        proc.limits_object()  # validate now, not on the hundredth capture
        return proc

    @classmethod
    def from_file(cls, path: str | Path) -> "Procedure":
        """Read a procedure file (TOML); relative paths are taken from its folder."""
        path = Path(path)
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as exc:
            raise ProcedureError(f"cannot read the procedure: {exc.strerror or exc}", path) from None
        try:
            doc = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise ProcedureError(f"not valid TOML: {exc}", path) from None
        return cls.from_dict(doc, base_dir=path.parent, source=str(path))

    def to_dict(self) -> dict[str, Any]:
        """The procedure as plain data (what :meth:`to_file` writes)."""
        doc: dict[str, Any] = {"format_version": FORMAT_VERSION}
        if self.name:
            doc["name"] = self.name
        doc["import"] = {k: v for k, v in self.import_.items() if v is not None}
        if self.corrections:
            doc["correction"] = [dict(c) for c in self.corrections]
        if self.resonance:
            doc["resonance"] = dict(self.resonance)
        if self.fit:
            doc["fit"] = dict(self.fit)
        if self.limits:
            doc["limits"] = dict(self.limits)
        return doc

    def to_file(self, path: str | Path) -> Path:
        """Write the procedure as TOML, atomically. Capture paths are written relative to the
        new file's folder where possible, so the procedure can move with its standards."""
        path = Path(path).resolve()
        doc = self.to_dict()
        for c in doc.get("correction", []):
            for key in CORRECTION_KINDS[c["kind"]][1]:
                if isinstance(c.get(key), str):
                    c[key] = _relative(self.resolve(c[key]), path.parent)
        write_text(path, dumps_toml(doc))
        return path

    def digest(self) -> str:
        """SHA-256 of the procedure's content and its standards' bytes (for caches, provenance)."""
        h = hashlib.sha256(json.dumps(self.to_dict(), sort_keys=True, default=str).encode())
        for c in self.corrections:
            for key in CORRECTION_KINDS[c["kind"]][1]:
                if isinstance(c.get(key), str):
                    p = self.resolve(c[key])
                    h.update(p.read_bytes() if p.is_file() else str(p).encode())
        return h.hexdigest()

    # ------------------------------------------------------------------ building blocks
    def resolve(self, p: str | Path) -> Path:
        """A path of the procedure, relative to its folder."""
        p = Path(p)
        return p if p.is_absolute() else (self.base_dir / p)

    def build_corrections(self):
        """The correction chain (kit.chain) or None; standards are read once here.

        Raises
        ------
        ProcedureError
            A missing standard or a bad argument, naming the correction.
        """
        if not self.corrections:
            return None
        import kit.corrections as kc

        made = []
        for i, c in enumerate(self.corrections, start=1):
            fname, path_keys = CORRECTION_KINDS[c["kind"]]
            args = {k: v for k, v in c.items() if k != "kind"}
            for key in path_keys:
                if isinstance(args.get(key), str):
                    p = self.resolve(args[key])
                    if not p.is_file():
                        raise ProcedureError(f"correction {i} ({c['kind']}): {key} standard "
                                             f"{p} does not exist", self.source)
                    args[key] = p
            try:
                made.append(getattr(kc, fname)(**args))
            except CaptureError:
                raise
            except (TypeError, ValueError) as exc:
                raise ProcedureError(f"correction {i} ({c['kind']}): {exc}", self.source) from None
        return made[0] if len(made) == 1 else kc.chain(*made)

    def limits_object(self):
        """The [limits] table as a :class:`kit.review.limits.Limits` (None without limits).

        Quantities are written inline (``fs_hz = { min = .., max = .. }``) and masks as
        ``[[limits.mask]]``; both get the checks and messages of a limits file
        (:func:`kit.review.limits.limits_from_dict`).
        """
        if not self.limits:
            return None
        from kit.review.limits import LimitsError, limits_from_dict

        doc = {"quantity": {k: v for k, v in self.limits.items() if k not in ("mask", "name")},
               "mask": list(self.limits.get("mask", []))}
        if self.name:
            doc["name"] = self.name
        try:
            return limits_from_dict(doc, source="[limits]")
        except LimitsError as exc:
            raise ProcedureError(str(exc).replace("quantity.", ""), self.source) from None


def _span(v: Any, what: str, source: str) -> tuple[float, float]:
    try:
        lo, hi = (float(x) for x in v)
    except (TypeError, ValueError):
        raise ProcedureError(f"{what} must be [low, high] in hertz", source) from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise ProcedureError(f"{what} must be [low, high] with low < high", source)
    if hi < MIN_SPAN_HZ:
        raise ProcedureError(f"{what} = [{lo:g}, {hi:g}] ends below {MIN_SPAN_HZ:g} Hz: spans are "
                             f"in hertz (write [{lo:g}e6, {hi:g}e6] for MHz)", source)
    return (lo, hi)


def _known_keys(table: dict, allowed, what: str, source: str) -> None:
    """Refuse a key the step does not take, naming the nearest known one (a likely typo)."""
    import difflib

    bad = sorted(set(table) - set(allowed) - {"kind"})
    if bad:
        near = difflib.get_close_matches(bad[0], list(allowed), n=1)
        hint = (f"; did you mean {near[0]!r}?" if near
                else f"; it takes {', '.join(sorted(allowed)) or 'no keys'}")
        raise ProcedureError(f"{what} has an unknown key {bad[0]!r}{hint}", source)


def _signature_keys(func, drop=()) -> tuple[str, ...]:
    import inspect

    return tuple(n for n, p in inspect.signature(func).parameters.items()
                 if p.kind not in (p.VAR_KEYWORD, p.VAR_POSITIONAL) and n not in drop)


#: Settings a [fit] table takes: the keywords of kit.fit, less the capture, the arrays and
#: what [import] sets, plus the plate's options (tests/test_procedure.py keeps them in step).
FIT_KEYS = ("model", "span_hz", "modes", "weighting", "z0_ohm", "start", "max_nfev", "poor_fit",
            "data", "z_front", "z_back")


def _correction_keys(kind: str) -> tuple[str, ...]:
    import kit.corrections as kc

    return _signature_keys(getattr(kc, CORRECTION_KINDS[kind][0]))


def _relative(p: Path, folder: Path) -> str:
    try:
        return os.path.relpath(p.resolve(), folder)
    except ValueError:  # another drive
        return str(p.resolve())


# ---------------------------------------------------------------------- a small TOML writer
# The standard library reads TOML (tomllib) but does not write it; procedures hold only
# strings, numbers, booleans, lists and tables, which this writer covers.
def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, (str, Path)):
        return toml_str(str(v))
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{toml_key(k)} = {_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


def dumps_toml(doc: dict[str, Any]) -> str:
    """TOML text for a procedure-shaped document (tables one level deep, arrays of tables)."""
    lines = ["# sweepbook procedure (format_version 1); see kit/procedure.py for the keys"]
    for k, v in doc.items():
        if not isinstance(v, dict) and not (isinstance(v, list) and v and isinstance(v[0], dict)):
            lines.append(f"{toml_key(k)} = {_value(v)}")
    for k, v in doc.items():
        if isinstance(v, dict):
            lines += ["", f"[{toml_key(k)}]"]
            sub_arrays = []
            for kk, vv in v.items():
                if isinstance(vv, list) and vv and isinstance(vv[0], dict):
                    sub_arrays.append((kk, vv))
                else:
                    lines.append(f"{toml_key(kk)} = {_value(vv)}")
            for kk, arr in sub_arrays:
                for item in arr:
                    lines += ["", f"[[{toml_key(k)}.{toml_key(kk)}]]"]
                    lines += [f"{toml_key(a)} = {_value(b)}" for a, b in item.items()]
        elif isinstance(v, list) and v and isinstance(v[0], dict):
            for item in v:
                lines += ["", f"[[{toml_key(k)}]]"]
                lines += [f"{toml_key(a)} = {_value(b)}" for a, b in item.items()]
    return "\n".join(lines) + "\n"
