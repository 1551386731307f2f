"""Procedure validation: every problem of a procedure, listed at once, before a run starts.

:func:`validate` reads a procedure file (or takes a :class:`~kit.batch.procedure.Procedure`)
and returns one :class:`Problem` per thing that is wrong, never stopping at the first: TOML
syntax, unknown keys (with the nearest valid key), unknown correction kinds and fit models
(with the valid ones), spans that are reversed, in MHz where hertz are meant, or outside the
frequencies of the inputs, standards and limits files that do not exist, limits that do not
read, and limits on summary columns the run will not produce. Each problem names the file,
the line where the key sits (where it can be found) and what to do.

:func:`kit.batch.schema.structure_problems` is the part that needs no file system (keys, kinds,
models, spans, limit syntax); :meth:`Procedure.from_dict` raises on those, so a procedure made in
Python gets the same checks and the same words. The format itself: docs/procedure.md.
:func:`accepted_keys` is the one list of keys the format takes (the documentation is
checked against it).
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from kit.batch.procedure import (
    CORRECTION_KINDS,
    MIN_SPAN_HZ,
    STANDARD_FIX,
    TWICE_FIX,
    Procedure,
    chain_of,
    limited_twice,
)
from kit.batch.schema import (
    LIMITS_FILE_KEYS,
    Collector,
    Problem,
    accepted_keys,
    check_masks,
    column_problems,
    key_lines,
    limit_entries,
    limit_text,
    produced_columns,
    structure_problems,
    syntax_problem,
    unknown_keys,
)
from kit.capture import CaptureError, Finding

__all__ = ["Problem", "Checked", "check", "validate", "structure_problems", "accepted_keys",
           "produced_columns", "key_lines", "SAMPLE"]

#: Input files whose frequency range is read (pre-flight scan) to check the spans: the first,
#: the last and evenly spaced ones between; a lot is taken to share one sweep plan.
SAMPLE = 5


# ---------------------------------------------------------------------- files and inputs
def _limits_file(doc: dict, base: Path, pcol: Collector) -> tuple[Collector | None, dict]:
    """Problems of the limits file named by ``limits_file``; returns its collector and doc."""
    name = doc.get("limits_file")
    if not isinstance(name, str):
        return None, {}
    path = Path(name) if Path(name).is_absolute() else base / name
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        pcol.add(("limits_file",), f"limits_file {path} cannot be read "
                 f"({getattr(exc, 'strerror', None) or exc})", "write the path relative to the "
                 "procedure file, or create that limits file", "missing-file")
        return None, {}
    col = Collector(str(path), text)
    try:
        ldoc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        col.problems.append(syntax_problem(exc, str(path)))
        return col, {}
    unknown_keys(col, ldoc, LIMITS_FILE_KEYS, (), "a limits file")
    try:
        from kit.review.limits import limits_from_dict

        limits_from_dict({k: v for k, v in ldoc.items() if k in ("format", "version")}, "@")
    except CaptureError as exc:
        col.add(("format",), limit_text(exc), "see docs/limits.md", "bad-limit")
    q = ldoc.get("quantity", {})
    if isinstance(q, dict):
        entries = limit_entries(col, q, ("quantity",), str(path.name), skip=())
        column_problems(col, doc, entries)
    else:
        col.add(("quantity",), "quantity must be tables such as [quantity.fs_hz]",
                "see docs/limits.md", "bad-limit")
    check_masks(col, ldoc.get("mask", []), ("mask",), path.name)
    return col, ldoc


def _standards(doc: dict, base: Path, col: Collector) -> bool:
    """Missing standards (:meth:`Procedure.missing_standards`); True when there are none."""
    ok = True
    proc = Procedure(base_dir=base, source=col.source)
    for i, c in enumerate(doc.get("correction") or []):
        if not isinstance(c, dict) or c.get("kind") not in CORRECTION_KINDS:
            continue
        for key, message in proc.missing_standards(i, c):
            ok = False
            col.add(("correction", i, key), message, STANDARD_FIX, "missing-file")
    return ok


def _input_range(inputs: Any, col: Collector) -> tuple[tuple[float, float, int, int] | None,
                                                        list[Any]]:
    """(lowest, highest frequency [Hz], files sampled, files) of the inputs, by the pre-flight
    scan of up to :data:`SAMPLE` files (None when none could be read), and the inputs with
    their folders listed; missing inputs become problems."""
    import numpy as np

    from kit.capture import Capture
    from kit.io.folder import touchstone_files
    from kit.io.preflight import read_bytes, scan_bytes

    files: list[Any] = []
    for item in [inputs] if isinstance(inputs, (str, Path, Capture)) else list(inputs):
        if isinstance(item, Capture):
            files.append(item)
            continue
        p = Path(item)
        if not p.exists():
            col.problems.append(Finding("error", f"input {p} does not exist", None,
                                        "give Touchstone files or folders that exist (paths "
                                        "are relative to the current folder)", "no-inputs",
                                        str(p)))
        elif p.is_dir():
            found = touchstone_files(p)
            if not found:
                col.problems.append(Finding("error", f"input folder {p} holds no Touchstone "
                                            "files", None, "give the folder of the captures "
                                            "(.sNp, .ts)", "no-inputs", str(p)))
            files.extend(found)
        else:
            files.append(p)
    if not files:
        return None, files
    idx = sorted(set(np.linspace(0, len(files) - 1, min(SAMPLE, len(files))).round().astype(int)))
    lo, hi, n = math.inf, -math.inf, 0
    for k in idx:
        item = files[k]
        if isinstance(item, Capture):
            f = np.asarray(item.f_hz)
        else:
            try:
                f = np.asarray(scan_bytes(read_bytes(Path(item)), Path(item)).freqs, float)
            except CaptureError:
                continue
        if f.size:
            lo, hi, n = min(lo, float(f.min())), max(hi, float(f.max())), n + 1
    return ((lo, hi, n, len(files)) if n else None), files


def _span_vs_inputs(col: Collector, span: Any, path: tuple, what: str,
                    rng: tuple[float, float, int, int]) -> None:
    try:
        lo, hi = (float(x) for x in span)
    except (TypeError, ValueError):
        return
    f0, f1, n, total = rng
    if not (lo < hi) or hi < MIN_SPAN_HZ or (lo < f1 and hi > f0):
        return
    fix = "give the span in hertz, inside the captures' range"
    for factor, unit in ((1e6, "MHz"), (1e3, "kHz"), (1e9, "GHz")):
        if lo * factor < f1 and hi * factor > f0:
            fix = (f"the span looks like {unit} written for Hz: write [{lo * factor:g}, "
                   f"{hi * factor:g}]")
            break
    from kit.units import eng

    col.add(path, f"{what} = [{lo:g}, {hi:g}] Hz does not overlap the inputs' frequencies, "
            f"{eng(f0, 'Hz')} to {eng(f1, 'Hz')} (pre-flight scan of {n} of {total} file(s))", fix,
            "span-outside-inputs")


# ---------------------------------------------------------------------- the entry point
def _load(procedure_or_path: Any) -> tuple[dict | None, str, str, Path, list[Problem]]:
    if isinstance(procedure_or_path, Procedure):
        p = procedure_or_path
        text = ""
        if p.source and Path(p.source).is_file():
            text = Path(p.source).read_text(encoding="utf-8", errors="replace")
        return p.to_dict(), text, p.source or "<procedure>", Path(p.base_dir), []
    if isinstance(procedure_or_path, dict):
        return procedure_or_path, "", "<procedure>", Path.cwd(), []
    path = Path(procedure_or_path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        return None, "", str(path), path.parent, [Finding(
            "error", f"cannot read the procedure ({getattr(exc, 'strerror', None) or exc})",
            None, "give the path of a procedure file (TOML, UTF-8)", "missing-file", str(path))]
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        return None, text, str(path), path.parent, [syntax_problem(exc, str(path))]
    return doc, text, str(path), path.parent.resolve(), []


@dataclass
class Checked:
    """What :func:`check` found, and what it read and built on the way, for the run.

    Attributes
    ----------
    problems : list of Problem
        As :func:`validate` returns them.
    procedure : Procedure or None
        The procedure read (None when there are problems).
    corrections : object or None
        Its correction chain, built from the standards (None: no correction, or problems);
        :func:`kit.batch.engine.run` uses it in this process instead of building it again.
    inputs : list or None
        The inputs with their folders listed (None when no inputs were given).
    """

    problems: list[Problem]
    procedure: Procedure | None = None
    corrections: Any = None
    inputs: list[Any] | None = None


def validate(procedure_or_path: Any, inputs: Any = None) -> list[Problem]:
    """Every problem of a procedure, in file order by step; an empty list when it is sound.

    Parameters
    ----------
    procedure_or_path : path, Procedure or dict
        A procedure file (TOML; paths in it are taken from its folder), a
        :class:`~kit.batch.procedure.Procedure`, or a parsed document (paths from the current
        folder).
    inputs : path, folder, Capture or an iterable of them, optional
        The captures the procedure will run on: inputs that do not exist are problems, and the
        spans (``[resonance]``, ``[fit]``, masks) must overlap the frequencies of a sample of
        them (the first, last and evenly spaced files, up to :data:`SAMPLE`, read by the
        pre-flight scan of :mod:`kit.io.preflight`, not loaded).

    Returns
    -------
    list of Problem
        :class:`kit.capture.Finding` records: ``path`` (the procedure, a limits file or an
        input), ``line`` (where the key sits, when it can be found), ``message``, ``fix`` and
        ``code`` (e.g. "unknown-key", "span-in-mhz", "missing-file", "limit-column").
    """
    return check(procedure_or_path, inputs).problems


def check(procedure_or_path: Any, inputs: Any = None) -> Checked:
    """:func:`validate`, keeping what it read and built: the procedure (parsed once), its
    correction chain (standards read once) and the listed inputs, which
    :func:`kit.batch.engine.run` takes as they are (``run(checked, checked.inputs)``)."""
    doc, text, source, base, problems = _load(procedure_or_path)
    if doc is None:
        return Checked(problems)
    col = Collector(source, text)
    col.problems = structure_problems(doc, source, text)
    lcol, ldoc = _limits_file(doc, base, col)
    lim = doc.get("limits") if isinstance(doc.get("limits"), dict) else {}
    entries = [(k, ("limits", k)) for k in lim if k not in ("mask", "name")]
    if ldoc:
        fq = ldoc.get("quantity") if isinstance(ldoc.get("quantity"), dict) else {}
        for kind, k, message in limited_twice(
                ([k for k, _ in entries], _mask_names(lim.get("mask"))),
                (list(fq), _mask_names(ldoc.get("mask"))), doc["limits_file"]):
            col.add(("limits", k) if kind == "quantity" else ("limits", "mask"), message,
                    TWICE_FIX, "duplicate-limit")
    made = None
    if _standards(doc, base, col) and not structure_problems(
            {"correction": doc.get("correction") or []}):
        made = _setup_corrections(doc, base, source, col)
    files = None
    if inputs is not None:
        rng, files = _input_range(inputs, col)
        if rng is not None:
            spans = [(("resonance", "span_hz"), "[resonance] span_hz",
                      (doc.get("resonance") or {}).get("span_hz")),
                     (("fit", "span_hz"), "[fit] span_hz", (doc.get("fit") or {}).get("span_hz"))]
            for i, m in enumerate(lim.get("mask") or []):
                if isinstance(m, dict) and "f_min_hz" in m and "f_max_hz" in m:
                    spans.append((("limits", "mask", i), f"mask {i + 1} span",
                                  (m["f_min_hz"], m["f_max_hz"])))
            for path, what, span in spans:
                if span is not None:
                    _span_vs_inputs(col, span, path, what, rng)
            if lcol is not None:
                for i, m in enumerate(ldoc.get("mask") or []):
                    if isinstance(m, dict) and "f_min_hz" in m and "f_max_hz" in m:
                        _span_vs_inputs(lcol, (m["f_min_hz"], m["f_max_hz"]), ("mask", i),
                                        f"mask {i + 1} span", rng)
    found = col.problems + (lcol.problems if lcol is not None else [])
    order = {source: 0, getattr(lcol, "source", None): 1}
    found = sorted(found, key=lambda p: (order.get(p.path, 2), p.line or math.inf))
    if found or made is None:
        return Checked(found, inputs=files)
    proc = (procedure_or_path if isinstance(procedure_or_path, Procedure)
            else Procedure.of_checked(doc, base, source))
    return Checked([], proc, chain_of(made), files)


def _mask_names(masks: Any) -> list[str]:
    from kit.review.limits import mask_name

    if not isinstance(masks, list):
        return []
    return [mask_name(m, i) for i, m in enumerate(masks) if isinstance(m, dict)]


def _setup_corrections(doc: dict, base: Path, source: str, col: Collector) -> list | None:
    """Build each correction as the run will (standards read once here); collect failures.
    Returns the corrections built, None when one failed."""
    items = [c for c in doc.get("correction") or [] if isinstance(c, dict)]
    proc = Procedure(corrections=items, base_dir=base, source=source)
    made: list | None = []
    for i, c in enumerate(items):
        try:
            built = proc.build_correction(i, c)
        except CaptureError as exc:
            col.add(("correction", i), getattr(exc, "reason", str(exc)),
                    "check the standards and the step's values (docs/procedure.md)",
                    "correction-setup")
            made = None
        else:
            if made is not None:
                made.append(built)
    return made
