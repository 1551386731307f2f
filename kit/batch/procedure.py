"""Procedure files: the per-capture pipeline as a reviewable TOML file of our own.

A procedure says how to import a capture, which corrections to apply (in order), what
to fit and which limits judge the result. It is what an engineer sets up for one part in
the notebook, saved so that it runs unchanged on every capture of a lot, from the command
line or on a cluster (:mod:`kit.batch.engine`).

The format, key by key with units, defaults and a complete example, is in
docs/procedure.md; :mod:`kit.batch.validate` lists every problem of a procedure at once
(``sweepbook check-procedure``) and holds the one list of accepted keys
(:func:`kit.batch.schema.accepted_keys`). Limits are written inline (``[limits]``), read
from a limits file (``limits_file``, docs/limits.md), or both: the two are merged and a
column or mask named in both is refused.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from types import SimpleNamespace
from typing import Any

from kit.batch.schema import (  # noqa: F401 - the format's names, kept importable from here
    CORRECTION_KINDS,
    FIT_KEYS,
    FORMAT_VERSION,
    IMPORT_METHODS,
    MIN_SPAN_HZ,
    Collector,
    column_problems,
    correction_keys,
    structure_problems,
)
from kit.capture import CaptureError
from kit.io.atomic import write_text
from kit.review.limits import toml_key, toml_str


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
    limits_file : str or None
        A limits file (docs/limits.md), relative to ``base_dir``; merged with ``limits``.
    description : str
        Free text for the reader of the file; not used by the run.
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
    limits_file: str | None = None
    description: str = ""

    # ------------------------------------------------------------------ I/O
    @classmethod
    def from_dict(cls, doc: dict[str, Any], base_dir: str | Path = ".",
                  source: str = "<procedure>", text: str = "") -> "Procedure":
        """Validate a parsed procedure; raises ProcedureError listing every problem of its
        keys, kinds, models, spans and limits (:func:`kit.batch.schema.structure_problems`).

        ``text`` (the TOML source, when known) only serves to name lines. Standards are
        checked by :func:`kit.batch.validate.validate`; a limits file is read here, so that a
        missing one, or a bound in it on a column the run will not fill, is refused now, not on
        the hundredth capture (the validator's words, :func:`kit.batch.schema.column_problems`).
        """
        problems = structure_problems(doc, source, text)
        if problems:
            raise ProcedureError(problems_text(problems), source,
                                 problems[0].line if len(problems) == 1 else None, problems)
        proc = cls.of_checked(doc, base_dir, source)
        lim = proc.limits_object()  # validate now, not on the hundredth capture
        if lim is not None and proc.limits_file:  # the inline bounds were checked above
            inline = set(proc.limits or {})
            col = Collector(source, text)
            column_problems(col, doc, [(q.name, ("limits_file",)) for q in lim.quantities
                                       if q.name not in inline])
            if col.problems:
                raise ProcedureError(problems_text(col.problems), source,
                                     col.problems[0].line, col.problems)
        return proc

    @classmethod
    def of_checked(cls, doc: dict[str, Any], base_dir: str | Path = ".",
                   source: str = "<procedure>") -> "Procedure":
        """The procedure of a document already checked (:func:`kit.batch.validate.check`
        passed it); checks nothing, reads no file. Anything else: :meth:`from_dict`."""
        imp = {"method": "reflection", "port": 1, **dict(doc.get("import", {}))}
        corrections = [dict(c) for c in doc.get("correction", [])]
        fit = doc.get("fit")
        if fit is not None:
            fit = dict(fit)
            if "span_hz" in fit:
                fit["span_hz"] = tuple(float(x) for x in fit["span_hz"])
        res = dict(doc.get("resonance", {}))
        if "span_hz" in res:
            res["span_hz"] = tuple(float(x) for x in res["span_hz"])
        limits = doc.get("limits")
        proc = cls(import_=imp, corrections=corrections, resonance=res, fit=fit,
                   limits=None if limits is None else dict(limits), name=str(doc.get("name", "")),
                   base_dir=Path(base_dir).resolve(), source=source,
                   limits_file=doc.get("limits_file"),
                   description=str(doc.get("description", "")))
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
        return cls.from_dict(doc, base_dir=path.parent, source=str(path), text=text)

    def to_dict(self) -> dict[str, Any]:
        """The procedure as plain data (what :meth:`to_file` writes)."""
        doc: dict[str, Any] = {"format_version": FORMAT_VERSION}
        if self.name:
            doc["name"] = self.name
        if self.description:
            doc["description"] = self.description
        if self.limits_file:
            doc["limits_file"] = str(self.limits_file)
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
        if self.limits_file:
            doc["limits_file"] = _relative(self.resolve(self.limits_file), path.parent)
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
        if self.limits_file:  # a changed limits file is a changed procedure
            p = self.resolve(self.limits_file)
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
        return chain_of([self.build_correction(i, c) for i, c in enumerate(self.corrections)])

    def build_correction(self, i: int, c: dict[str, Any]):
        """Correction ``i`` (0-based) of the chain, its standards read; raises ProcedureError
        (or the standard's CaptureError) naming the correction."""
        import kit.corrections as kc

        fname, path_keys = CORRECTION_KINDS[c["kind"]]
        args = {k: v for k, v in c.items() if k != "kind"}
        what = f"correction {i + 1} ({c['kind']})"
        missing = self.missing_standards(i, c)
        if missing:
            raise ProcedureError(problems_text([SimpleNamespace(line=None, message=m, fix=STANDARD_FIX)
                                                for _, m in missing]), self.source)
        for key in path_keys:
            if isinstance(args.get(key), str):
                args[key] = self.resolve(args[key])
        try:
            return getattr(kc, fname)(**args)
        except CaptureError:
            raise
        except (TypeError, ValueError) as exc:
            raise ProcedureError(f"{what}: {exc}", self.source) from None

    def missing_standards(self, i: int, c: dict[str, Any]) -> list[tuple[str, str]]:
        """(key, message) of every standard of correction ``i`` (0-based) whose file does not
        exist; the one check of :meth:`build_correction` and of the validator."""
        out = []
        for key in CORRECTION_KINDS[c["kind"]][1]:
            if isinstance(c.get(key), str):
                p = self.resolve(c[key])
                if not p.is_file():
                    out.append((key, f"correction {i + 1} ({c['kind']}): {key} standard {p} "
                                "does not exist"))
        return out

    def limits_object(self):
        """The limits as a :class:`kit.review.limits.Limits` (None without limits).

        Inline quantities (``fs_hz = { min = .., max = .. }``) and masks (``[[limits.mask]]``)
        get the checks and messages of a limits file (:func:`kit.review.limits.limits_from_dict`);
        ``limits_file`` is read with :func:`kit.review.limits.load_limits`. With both, the
        file's limits come first, then the inline ones; a column or mask name in both is
        refused (which bound holds would otherwise be a guess). The set's name: ``[limits]
        name``, else the file's name, else the procedure's.
        """
        if not self.limits and not self.limits_file:
            return None
        from kit.review.limits import Limits, LimitsError, limits_from_dict, load_limits

        inline = from_file = None
        if self.limits_file:
            try:
                from_file = load_limits(self.resolve(self.limits_file))
            except LimitsError as exc:
                raise ProcedureError(f"limits_file: {exc}", self.source) from None
        if self.limits:
            doc = {"quantity": {k: v for k, v in self.limits.items() if k not in ("mask", "name")},
                   "mask": list(self.limits.get("mask", []))}
            name = self.limits.get("name") or (from_file.name if from_file else "") or self.name
            if name:
                doc["name"] = name
            try:
                inline = limits_from_dict(doc, source="[limits]")
            except LimitsError as exc:
                raise ProcedureError(str(exc).replace("quantity.", ""), self.source) from None
        if inline is None or from_file is None:
            return inline or from_file
        both = limited_twice(([q.name for q in inline.quantities], [m.name for m in inline.masks]),
                             ([q.name for q in from_file.quantities],
                              [m.name for m in from_file.masks]), self.limits_file)
        if both:
            raise ProcedureError(problems_text([SimpleNamespace(line=None, message=m, fix=TWICE_FIX)
                                                for _, _, m in both]), self.source)
        return Limits(from_file.quantities + inline.quantities, from_file.masks + inline.masks,
                      inline.name, f"{from_file.source} + [limits] of {self.source}")


def chain_of(made: list) -> Any:
    """The correction chain of the corrections built, in order (:func:`kit.chain`); None for
    none, the correction itself for one."""
    if not made:
        return None
    import kit.corrections as kc

    return made[0] if len(made) == 1 else kc.chain(*made)


#: What to do about a standard that does not exist.
STANDARD_FIX = "write the path relative to the procedure file's folder"
#: What to do about a bound or mask both in ``[limits]`` and in the limits file.
TWICE_FIX = "keep one of the two"


def limited_twice(inline: tuple[Any, Any], from_file: tuple[Any, Any],
                  limits_file: Any) -> list[tuple[str, str, str]]:
    """Bounds and masks given both inline and in the limits file, which a merge would have to
    guess between: (kind "quantity" or "mask", name, message) for each, quantities first.

    ``inline`` and ``from_file`` are each (quantity columns, mask names); the one check of
    :meth:`Procedure.limits_object` and of the validator.
    """
    out = []
    for k, kind in enumerate(("quantity", "mask")):
        for name in sorted(set(map(str, inline[k])) & set(map(str, from_file[k]))):
            label = name if kind == "quantity" else f"mask {name!r}"
            out.append((kind, name, f"{label} limited both in [limits] and in {limits_file}"))
    return out


def problems_text(problems) -> str:
    """Problems (:class:`kit.capture.Finding`) as one message: each with its line and fix."""
    parts = [(f"line {p.line}: " if p.line and len(problems) > 1 else "") + p.message
             + (f" ({p.fix})" if p.fix else "") for p in problems]
    return parts[0] if len(parts) == 1 else f"{len(parts)} problems: " + "; ".join(parts)


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
    lines = ["# sweepbook procedure (format_version 1); keys in docs/procedure.md"]
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
