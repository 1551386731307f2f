"""The procedure format's keys, and the checks of a procedure that need no file system.

One list of the keys the format takes (:func:`accepted_keys`; docs/procedure.md documents
exactly these, tests/test_validate.py checks it) and :func:`structure_problems`: every
unknown key (with the nearest valid one), unknown correction kind or fit model (with the
valid ones), reversed span or span in MHz, limit that does not read and limit on a column
the run does not fill (:func:`column_problems`), each a
:class:`kit.capture.Finding` naming the file, the line where the key sits and what to do.
:meth:`kit.batch.procedure.Procedure.from_dict` raises on these; :func:`kit.batch.validate.validate`
adds the checks against files and inputs. :func:`key_lines` finds where keys sit in TOML text.
"""

from __future__ import annotations

import difflib
import math
import re
from typing import Any

from kit.capture import Finding

__all__ = ["Problem", "CORRECTION_KINDS", "FIT_KEYS", "IMPORT_METHODS", "MIN_SPAN_HZ",
           "correction_keys", "accepted_keys", "structure_problems", "key_lines", "TOP_KEYS",
           "QUANTITY_KEYS", "MASK_KEYS", "LIMITS_FILE_KEYS", "produced_columns", "column_problems"]

FORMAT_VERSION = 1
IMPORT_METHODS = ("reflection", "series-through", "shunt-through")
#: correction kind -> (kit function name, keys that are paths to captures)
CORRECTION_KINDS: dict[str, tuple[str, tuple[str, ...]]] = {
    "osl": ("osl", ("open", "short", "load")),
    "open_short": ("open_short", ("open", "short")),
    "cable": ("cable", ()),
    "fixture": ("fixture", ("left", "right")),
    "port_extension": ("port_extension", ()),
    "two_x_thru": ("two_x_thru", ("thru",)),
}
#: Spans ending below this are refused as probably given in MHz [Hz] (no resonator this kit
#: is made for sits below 1 kHz; common practice, no source).
MIN_SPAN_HZ = 1e3


def _signature_keys(func, drop=()) -> tuple[str, ...]:
    import inspect

    return tuple(n for n, p in inspect.signature(func).parameters.items()
                 if p.kind not in (p.VAR_KEYWORD, p.VAR_POSITIONAL) and n not in drop)


#: Settings a [fit] table takes: the keywords of kit.fit, less the capture, the arrays and
#: what [import] sets, plus the plate's options (tests/test_procedure.py keeps them in step).
FIT_KEYS = ("model", "span_hz", "modes", "weighting", "z0_ohm", "start", "max_nfev", "poor_fit",
            "data", "z_front", "z_back")


def correction_keys(kind: str) -> tuple[str, ...]:
    """The keys a correction of this kind takes besides ``kind``: its kit function's arguments."""
    import kit.corrections as kc

    return _signature_keys(getattr(kc, CORRECTION_KINDS[kind][0]))


#: A problem of a procedure: a :class:`kit.capture.Finding` of severity "error" with the
#: file (``path``), the ``line``, what is wrong (``message``) and what to do (``fix``).
Problem = Finding

TOP_KEYS = ("format_version", "name", "description", "limits_file", "import", "correction",
            "resonance", "fit", "limits")
IMPORT_KEYS = ("method", "port", "name_pattern")
RESONANCE_KEYS = ("span_hz",)
#: Keys of a limits file's top level, of a quantity bound and of a mask (kit.review.limits).
LIMITS_FILE_KEYS = ("format", "version", "name", "quantity", "mask")
QUANTITY_KEYS = ("min", "max", "label", "required")
MASK_KEYS = ("name", "curve", "f_min_hz", "f_max_hz", "lower", "upper", "z_method", "port")
#: Values of kit.fit's ``data`` argument.
FIT_DATA = ("auto", "complex", "magnitude")


def accepted_keys() -> dict[str, tuple[str, ...]]:
    """Every key the format takes, by table (docs/procedure.md documents exactly these).

    ``"limits"`` holds ``"<column>"`` for a bound on a summary column; ``"limits.<column>"``
    the keys of such a bound, ``"limits.mask"`` those of a mask; ``"correction.<kind>"`` the
    keys of each correction kind (the arguments of its kit function, and ``kind``).
    """
    keys = {"top": TOP_KEYS, "import": IMPORT_KEYS, "resonance": RESONANCE_KEYS,
            "fit": tuple(FIT_KEYS), "limits": ("<column>", "mask", "name"),
            "limits.<column>": QUANTITY_KEYS, "limits.mask": MASK_KEYS}
    for kind in CORRECTION_KINDS:
        keys[f"correction.{kind}"] = ("kind",) + correction_keys(kind)
    return keys


# ---------------------------------------------------------------------- where keys sit
_KEY = r'(?:[A-Za-z0-9_-]+|"[^"]*"|\'[^\']*\')'
_DOTTED = re.compile(rf"^({_KEY}(?:\s*\.\s*{_KEY})*)\s*=")
_AOT = re.compile(r"^\[\[\s*(.+?)\s*\]\]$")
_TABLE = re.compile(r"^\[\s*(.+?)\s*\]$")


def _split(dotted: str) -> tuple[str, ...]:
    return tuple(p.strip().strip("\"'") for p in re.findall(_KEY, dotted))


def _strip_comment(line: str) -> str:
    quote = None
    for i, ch in enumerate(line):
        if quote:
            if ch == quote:
                quote = None
        elif ch in "\"'":
            quote = ch
        elif ch == "#":
            return line[:i]
    return line


def key_lines(text: str) -> dict[tuple, int]:
    """Line (1-based) of every table header and key of TOML text, by key path.

    A path is a tuple of names, with the index for an array of tables:
    ``("correction", 0, "open")``, ``("limits", "fs_hz")``. Keys inside inline tables take
    the line of their table. Best effort (multi-line strings are skipped); used only to name
    lines in messages.
    """
    out: dict[tuple, int] = {}
    table: tuple = ()
    count: dict[tuple, int] = {}
    in_string = False
    for n, raw in enumerate(text.splitlines(), start=1):
        if raw.count('"""') % 2 or raw.count("'''") % 2:
            in_string = not in_string
            if not in_string:
                continue
        elif in_string:
            continue
        s = _strip_comment(raw).strip()
        if not s:
            continue
        m = _AOT.match(s)
        if m:
            path = _split(m.group(1))
            count[path] = count.get(path, -1) + 1
            table = path + (count[path],)
            out.setdefault(path, n)
            out.setdefault(table, n)
            continue
        m = _TABLE.match(s)
        if m:
            table = _split(m.group(1))
            out.setdefault(table, n)
            continue
        m = _DOTTED.match(s)
        if m:
            out.setdefault(table + _split(m.group(1)), n)
    return out


def _line(lines: dict[tuple, int], path: tuple) -> int | None:
    for k in range(len(path), 0, -1):
        if path[:k] in lines:
            return lines[path[:k]]
    return None


class Collector:
    """Problems of one file, with its key lines."""

    def __init__(self, source: str, text: str = ""):
        self.source = source
        self.lines = key_lines(text) if text else {}
        self.problems: list[Problem] = []

    def add(self, path: tuple, message: str, fix: str, code: str) -> None:
        self.problems.append(Finding("error", message, _line(self.lines, path), fix, code,
                                     self.source))


def _edits(a: str, b: str) -> int:
    """Optimal string alignment distance: insertions, deletions, substitutions and swaps of
    neighbours (Damerau, Comm. ACM 7(3), 1964), so that 'modle' is nearer 'model' than 'modes'."""
    d = [[i + j if i * j == 0 else 0 for j in range(len(b) + 1)] for i in range(len(a) + 1)]
    for i in range(1, len(a) + 1):
        for j in range(1, len(b) + 1):
            d[i][j] = min(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + (a[i - 1] != b[j - 1]))
            if i > 1 and j > 1 and a[i - 1] == b[j - 2] and a[i - 2] == b[j - 1]:
                d[i][j] = min(d[i][j], d[i - 2][j - 2] + 1)
    return d[-1][-1]


def nearest(word: str, choices) -> str | None:
    """The valid name nearest a misspelt one (difflib's close matches, fewest edits first)."""
    hits = difflib.get_close_matches(str(word), [str(c) for c in choices], n=3, cutoff=0.5)
    return min(hits, key=lambda h: _edits(str(word), h)) if hits else None


def unknown_keys(col: Collector, table: dict, allowed, path: tuple, what: str,
                  ignore=()) -> None:
    for key in table:
        if key in allowed or key in ignore:
            continue
        near = nearest(key, allowed)
        fix = (f"did you mean {near!r}?" if near
               else f"{what} takes {', '.join(allowed) or 'no keys'} (docs/procedure.md)")
        col.add(path + (key,), f"{what} has an unknown key {key!r}", fix, "unknown-key")


def _is_table(col: Collector, v: Any, path: tuple, what: str) -> bool:
    if isinstance(v, dict):
        return True
    col.add(path, f"{what} must be a table, got {v!r}", f"write it as [{'.'.join(map(str, path))}]",
            "bad-value")
    return False


def _whole(v: Any, lo: int = 1) -> bool:
    return isinstance(v, int) and not isinstance(v, bool) and v >= lo


def _positive(v: Any) -> bool:
    return (isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)
            and v > 0)


# ---------------------------------------------------------------------- structure
def _span(col: Collector, v: Any, path: tuple, what: str) -> tuple[float, float] | None:
    try:
        lo, hi = (float(x) for x in v)
    except (TypeError, ValueError):
        col.add(path, f"{what} = {v!r} is not a span", "write [low, high] in hertz, e.g. "
                "[1.6e6, 2.4e6]", "bad-value")
        return None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        col.add(path, f"{what} = [{lo:g}, {hi:g}] must be [low, high] with low < high",
                f"swap the ends: [{hi:g}, {lo:g}]" if hi < lo else "give two different "
                "finite frequencies in hertz", "span-reversed")
        return None
    if hi < MIN_SPAN_HZ:
        col.add(path, f"{what} = [{lo:g}, {hi:g}] ends below {MIN_SPAN_HZ:g} Hz: spans are in "
                "hertz", f"write [{lo:g}e6, {hi:g}e6] for MHz", "span-in-mhz")
        return None
    return (lo, hi)


def _import(col: Collector, imp: Any) -> None:
    if not _is_table(col, imp, ("import",), "[import]"):
        return
    unknown_keys(col, imp, IMPORT_KEYS, ("import",), "[import]")
    method = imp.get("method", "reflection")
    if method not in IMPORT_METHODS:
        near = nearest(method, IMPORT_METHODS)
        col.add(("import", "method"), f"[import] method {method!r} is not one of "
                f"{', '.join(IMPORT_METHODS)}", f"did you mean {near!r}?" if near else
                "use one of those", "bad-value")
    if "port" in imp and not _whole(imp["port"]):
        col.add(("import", "port"), f"[import] port {imp['port']!r} is not a port number",
                "write a whole number from 1", "bad-value")
    pattern = imp.get("name_pattern")
    if pattern is not None:
        from kit.io.names import compile_pattern

        try:
            if not isinstance(pattern, str):
                raise ValueError(f"{pattern!r} is not text")
            compile_pattern(pattern)
        except ValueError as exc:
            col.add(("import", "name_pattern"), f"[import] name_pattern: {exc}",
                    'write fields in braces, e.g. "{lot}-{serial}"', "bad-value")


def _corrections(col: Collector, items: Any) -> None:
    if not isinstance(items, list):
        col.add(("correction",), "correction must be an array of tables",
                "write each step as [[correction]] with a kind", "bad-value")
        return
    kinds = ", ".join(CORRECTION_KINDS)
    for i, c in enumerate(items):
        path, what = ("correction", i), f"correction {i + 1}"
        if not _is_table(col, c, path, what):
            continue
        kind = c.get("kind")
        if kind is None:
            col.add(path, f"{what} needs a kind", f"add kind = one of {kinds}", "missing-key")
            continue
        if kind not in CORRECTION_KINDS:
            near = nearest(kind, CORRECTION_KINDS)
            col.add(path + ("kind",), f"{what}: unknown kind {kind!r}",
                    (f"did you mean {near!r}? " if near else "") + f"kinds: {kinds}",
                    "unknown-kind")
            continue
        what = f"{what} ({kind})"
        allowed = correction_keys(kind)
        unknown_keys(col, c, allowed, path, what, ignore=("kind",))
        import inspect

        import kit.corrections as kc

        params = inspect.signature(getattr(kc, CORRECTION_KINDS[kind][0])).parameters
        for name in allowed:
            if params[name].default is inspect.Parameter.empty and name not in c:
                col.add(path, f"{what} needs {name!r}", f"add {name} = ... (docs/procedure.md)",
                        "missing-key")
        for key in CORRECTION_KINDS[kind][1]:
            if key in c and not isinstance(c[key], str):
                col.add(path + (key,), f"{what}: {key} must be a file name, got {c[key]!r}",
                        "write the path in quotes, relative to the procedure file", "bad-value")


def _fit(col: Collector, fit: Any) -> None:
    from kit.resonators.fitting import WEIGHTINGS
    from kit.resonators.registry import MODEL_NAMES, get_model

    if not _is_table(col, fit, ("fit",), "[fit]"):
        return
    unknown_keys(col, fit, FIT_KEYS, ("fit",), "[fit]")
    model = fit.get("model", "bvd")
    modes = fit.get("modes", 1)
    ok_model = model in MODEL_NAMES
    if not ok_model:
        near = nearest(model, MODEL_NAMES)
        col.add(("fit", "model"), f"[fit] model {model!r} does not exist",
                (f"did you mean {near!r}? " if near else "") + f"models: {', '.join(MODEL_NAMES)}",
                "unknown-model")
    if not _whole(modes):
        col.add(("fit", "modes"), f"[fit] modes {modes!r} is not a number of modes",
                "write a whole number from 1", "bad-value")
    elif ok_model:
        options = {k: fit[k] for k in ("z_front", "z_back") if k in fit}
        try:
            mdl = get_model(model, modes, **options)
        except (TypeError, ValueError) as exc:
            col.add(("fit",), f"[fit]: {exc}", "change the model, modes or options", "bad-value")
        else:
            start = fit.get("start")
            if isinstance(start, dict):
                for k, v in start.items():
                    if k not in mdl.params:
                        near = nearest(k, mdl.params)
                        col.add(("fit", "start", k), f"[fit] start value {k!r} is not a "
                                f"parameter of {model!r}", (f"did you mean {near!r}? " if near
                                else "") + f"parameters: {', '.join(mdl.params)}", "unknown-key")
                    elif not _positive(v):
                        col.add(("fit", "start", k), f"[fit] start value {k} = {v!r} is not a "
                                "positive number", "give it in its SI unit", "bad-value")
            elif start is not None:
                col.add(("fit", "start"), "[fit] start must be a table of start values",
                        "write start = { C0 = 1e-9, ... }", "bad-value")
    for key, choices in (("weighting", WEIGHTINGS), ("data", FIT_DATA)):
        if key in fit and fit[key] not in choices:
            col.add(("fit", key), f"[fit] {key} {fit[key]!r} is not one of "
                    f"{', '.join(choices)}", "use one of those", "bad-value")
    if "max_nfev" in fit and not _whole(fit["max_nfev"]):
        col.add(("fit", "max_nfev"), f"[fit] max_nfev {fit['max_nfev']!r} is not a count",
                "write a whole number, e.g. 200", "bad-value")
    for key in ("poor_fit", "z0_ohm"):
        if key in fit and not _positive(fit[key]):
            col.add(("fit", key), f"[fit] {key} {fit[key]!r} is not a positive number",
                    "write a positive number", "bad-value")
    if "span_hz" in fit:
        _span(col, fit["span_hz"], ("fit", "span_hz"), "[fit] span_hz")


def limit_entries(col: Collector, table: dict, path: tuple, what: str,
                   skip=("mask", "name")) -> list[tuple[str, tuple]]:
    """Check quantity bounds (every entry) and return (column, key path) pairs."""
    from kit.review.limits import LimitsError, limits_from_dict

    out = []
    for name, q in table.items():
        if name in skip:
            continue
        qpath = path + (name,)
        out.append((name, qpath))
        if isinstance(q, dict):
            unknown_keys(col, q, QUANTITY_KEYS, qpath, f"limit on {name}")
            q = {k: v for k, v in q.items() if k in QUANTITY_KEYS}
        try:
            limits_from_dict({"quantity": {name: q}}, source="@")
        except LimitsError as exc:
            col.add(qpath, f"{what}: " + limit_text(exc), "write { min = ..., max = ... } in "
                    "the column's unit (docs/limits.md)", "bad-limit")
    return out


def limit_text(exc: Exception) -> str:
    return re.sub(r"^@(:\d+)?: ", "", str(exc)).replace("quantity.", "")


def check_masks(col: Collector, masks: Any, path: tuple, what: str) -> list[str]:
    from kit.review.limits import LimitsError, limits_from_dict, mask_name

    if not isinstance(masks, list):
        col.add(path, f"{what}: masks are written [[{'.'.join(path)}]]", "make each mask an "
                "entry of that array of tables", "bad-limit")
        return []
    names = []
    for i, m in enumerate(masks):
        mpath = path + (i,)
        if not _is_table(col, m, mpath, f"mask {i + 1}"):
            continue
        unknown_keys(col, m, MASK_KEYS, mpath, f"mask {i + 1}")
        m = {k: v for k, v in m.items() if k in MASK_KEYS}
        names.append(mask_name(m, i))
        try:
            limits_from_dict({"mask": [m]}, source="@")
        except LimitsError as exc:
            col.add(mpath, f"{what}: " + limit_text(exc).replace("mask 1", f"mask {i + 1}"),
                    "see the mask keys in docs/limits.md", "bad-limit")
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        col.add(path, f"{what}: two masks are named {dup[0]!r}", "give every mask its own "
                "name", "duplicate-limit")
    return names


# ---------------------------------------------------------------------- columns
def produced_columns(doc: dict[str, Any]) -> tuple[set[str], set[str]]:
    """(numeric summary columns a run of this procedure fills, those only a fit fills).

    Names and units: docs/nomenclature.md; columns of :mod:`kit.outputs.summary`.
    """
    from kit.outputs.entries import unit_column
    from kit.outputs.summary import PARAM_COLUMNS, RESONANCE_COLUMNS, RESONANCE_EXTRA

    cols = {"ports", "points", "f_start_hz", "f_stop_hz", "z0_ohm"}
    cols |= set(RESONANCE_COLUMNS) | set(RESONANCE_EXTRA)
    pattern = (doc.get("import") or {}).get("name_pattern")
    if isinstance(pattern, str):
        from kit.io.names import compile_pattern, number_fields

        try:
            compile_pattern(pattern)
        except ValueError:
            pass  # the pattern is reported elsewhere
        else:  # text fields ({serial}) are columns too, but not numbers a limit can bound
            for f in number_fields(pattern):
                cols.add(f"field_{f}" if f in cols or f in ("capture", "path") else f)
    fit_all = set()
    for col in dict.fromkeys(PARAM_COLUMNS.values()):
        fit_all |= {col, unit_column(col, "stderr")}
    for k in RESONANCE_COLUMNS:
        fit_all |= {f"fit_{k}", unit_column(f"fit_{k}", "stderr")}
    fit_all.add("fit_residual_rel")
    fit = doc.get("fit")
    if isinstance(fit, dict):
        from kit.resonators.registry import get_model

        try:
            opts = {k: fit[k] for k in ("z_front", "z_back") if k in fit}
            params = get_model(fit.get("model", "bvd"), fit.get("modes", 1), **opts).params
        except (TypeError, ValueError):
            params = tuple(PARAM_COLUMNS)  # the model is reported elsewhere
        for p in params:
            if p in PARAM_COLUMNS:
                cols |= {PARAM_COLUMNS[p], unit_column(PARAM_COLUMNS[p], "stderr")}
        cols |= {c for c in fit_all if c.startswith("fit_")}
    return cols, fit_all


def column_problems(col: Collector, doc: dict, entries: list[tuple[str, tuple]]) -> None:
    """A problem for each bound (column, key path) on a column a run of ``doc`` does not
    fill (:func:`produced_columns`): the one check of the validator and of
    :meth:`kit.batch.procedure.Procedure.from_dict`."""
    cols, fit_only = produced_columns(doc)
    fit = doc.get("fit")
    for name, path in entries:
        if name in cols:
            continue
        if name in fit_only and not isinstance(fit, dict):
            col.add(path, f"a limit on {name!r}, which only a fit gives, in a procedure "
                    "without [fit]", "add a [fit] table (model 'bvd' gives c0_f, r1_ohm, "
                    "l1_h, c1_f) or remove the limit", "limit-column")
        elif name in fit_only:
            col.add(path, f"a limit on {name!r}, which fit model "
                    f"{fit.get('model', 'bvd')!r} does not give", "choose a model that has "
                    "it (docs/nomenclature.md) or remove the limit", "limit-column")
        else:
            near = nearest(name, cols)
            col.add(path, f"a limit on {name!r}, which is not a number column of this run's "
                    "summary", (f"did you mean {near!r}? " if near else "") + "columns: "
                    "docs/nomenclature.md", "limit-column")


def structure_problems(doc: dict[str, Any], source: str = "<procedure>",
                       text: str = "") -> list[Problem]:
    """Problems of a parsed procedure that need no file system: keys, kinds, models, spans,
    limit syntax. ``text`` (the TOML source, when known) only names lines."""
    col = Collector(source, text)
    unknown_keys(col, doc, TOP_KEYS, (), "the procedure")
    ver = doc.get("format_version", FORMAT_VERSION)
    if ver != FORMAT_VERSION:
        col.add(("format_version",), f"format_version {ver!r} is not supported",
                f"this kit reads format_version = {FORMAT_VERSION}", "bad-value")
    for key in ("name", "description", "limits_file"):
        if key in doc and not isinstance(doc[key], str):
            col.add((key,), f"{key} must be text, got {doc[key]!r}", "write it in quotes",
                    "bad-value")
    if "import" in doc:
        _import(col, doc["import"])
    if "correction" in doc:
        _corrections(col, doc["correction"])
    if "resonance" in doc and _is_table(col, doc["resonance"], ("resonance",), "[resonance]"):
        unknown_keys(col, doc["resonance"], RESONANCE_KEYS, ("resonance",), "[resonance]")
        if "span_hz" in doc["resonance"]:
            _span(col, doc["resonance"]["span_hz"], ("resonance", "span_hz"),
                  "[resonance] span_hz")
    if doc.get("fit") is not None:
        _fit(col, doc["fit"])
    lim = doc.get("limits")
    if lim is not None and _is_table(col, lim, ("limits",), "[limits]"):
        column_problems(col, doc, limit_entries(col, lim, ("limits",), "[limits]"))
        if "mask" in lim:
            check_masks(col, lim["mask"], ("limits", "mask"), "[limits]")
        if "name" in lim and not isinstance(lim["name"], str):
            col.add(("limits", "name"), "[limits] name must be text", "write it in quotes",
                    "bad-value")
    return col.problems


def syntax_problem(exc: Exception, source: str) -> Problem:
    m = re.search(r"at line (\d+)", str(exc))
    return Finding("error", f"not valid TOML: {exc}", int(m.group(1)) if m else None,
                   "correct the syntax (toml.io)", "toml-syntax", source)


