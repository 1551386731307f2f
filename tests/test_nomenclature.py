"""docs/nomenclature.md names every summary column and public keyword with its unit, and
that unit is the one kit.units.unit_of reads off the name (the suffix rule; unit symbols
of the BIPM SI brochure, 9th ed., Table 4)."""

from __future__ import annotations

import importlib
import inspect
import pkgutil
import re
import shutil
from pathlib import Path

import pytest

import kit
from kit.review.limits import parse_limits
from kit.units import unit_of

DOC = Path(__file__).resolve().parents[1] / "docs" / "nomenclature.md"
#: Names outside the review, output and batch stages that break the suffix rule; listed
#: under "Known exceptions" in the docs and reported, not renamed here.
EXCEPTIONS = {"capture_or_f", "load_ohms", "z"}
_NO_UNIT = {"–", "1", ""}


def _glossary() -> tuple[dict[str, str], list[tuple[re.Pattern, str]]]:
    """name -> unit from every table row ``| `name` | unit | ...``; placeholders as patterns."""
    exact, patterns = {}, []
    for line in DOC.read_text(encoding="utf-8").splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) < 2 or not cells[0].startswith("`"):
            continue
        unit = "" if cells[1] in _NO_UNIT else cells[1]
        for name in re.findall(r"`([^`]+)`", cells[0]):
            if name.startswith("_"):  # the table of the suffix rule itself
                continue
            if "<" in name:
                rx = re.escape(name)
                rx = re.sub(r"\\<[^>]*\\>|<[^>]*>", "[a-z0-9_]+?", rx)
                patterns.append((re.compile(f"^{rx}$"), unit))
            else:
                exact[name] = unit
    return exact, patterns


def _public_parameters() -> dict[str, set[str]]:
    """Parameter -> where, for the kit.X callables and every public function, class and
    method of the review, output and batch stages."""
    out: dict[str, set[str]] = {}

    def add(obj, where):
        try:
            sig = inspect.signature(obj)
        except (TypeError, ValueError):
            return
        for p in sig.parameters.values():
            if p.kind not in (p.VAR_POSITIONAL, p.VAR_KEYWORD) and p.name not in ("self", "cls"):
                out.setdefault(p.name, set()).add(where)

    for name in kit._EXPORTS:
        if name not in kit._MODULES:
            add(getattr(kit, name), f"kit.{name}")
    for pkg in ("kit.review", "kit.outputs", "kit.batch"):
        for info in pkgutil.iter_modules(importlib.import_module(pkg).__path__):
            mod = importlib.import_module(f"{pkg}.{info.name}")
            for attr, obj in vars(mod).items():
                if attr.startswith("_") or getattr(obj, "__module__", None) != mod.__name__:
                    continue
                if inspect.isfunction(obj) or inspect.isclass(obj):
                    add(obj, f"{mod.__name__}.{attr}")
                if inspect.isclass(obj):
                    for m, f in vars(obj).items():
                        if inspect.isfunction(f) and not m.startswith("_"):
                            add(f, f"{mod.__name__}.{attr}.{m}")
    return out


def _full_summary(tmp_path, demo_dir):
    """A summary with every kind of column: resonance, fit, quantity and mask limits,
    review state and an error row (demo lot, invented data)."""
    shutil.copy(demo_dir / "lot" / "pzd7-01.s1p", tmp_path)
    cap = kit.load(tmp_path / "pzd7-01.s1p", name_pattern="{lot}-{serial}")
    span = (1.6e6, 2.4e6)
    lim = parse_limits('[quantity.fs_hz]\nmin = 1e6\n[quantity.k_eff]\nmin = 0.1\n'
                       '[quantity.c0_f]\nmax = 1\n[quantity.g_max_siemens]\nmin = 0\n'
                       '[[mask]]\nname = "Z low"\ncurve = "z_mag_ohm"\nf_min_hz = 1.7e6\n'
                       'f_max_hz = 1.8e6\nlower = 1\n[[mask]]\ncurve = "s11_db"\n'
                       'f_min_hz = 1.7e6\nf_max_hz = 1.8e6\nupper = 1\n')
    log = kit.ReviewLog(tmp_path / "review.sqlite")
    log.add(cap, "verdict", value="accept", author="a.tester")
    res = kit.resonance(cap, span_hz=span)
    fit = kit.fit(cap, span_hz=span)
    df = kit.summary([cap, kit.CaptureError("truncated", "lot/bad.s1p")], fits=[fit],
                     resonances=[res], limits=lim, review_log=log)
    return df, cap, lim


def test_every_summary_column_is_in_the_glossary_with_its_unit(tmp_path, demo_dir):
    """Each column of a full summary is a glossary row (or a documented pattern) whose unit
    equals unit_of(column); metadata fields of the file name are the user's own."""
    exact, patterns = _glossary()
    df, cap, lim = _full_summary(tmp_path, demo_dir)
    missing, wrong = [], []
    for col in df.columns:
        if col in cap.fields:
            continue
        if col in exact:
            if exact[col] != unit_of(col):
                wrong.append((col, exact[col], unit_of(col)))
            continue
        hits = [u for rx, u in patterns if rx.match(col)]
        if not hits:
            missing.append(col)
        else:  # a pattern row; "unit of the limited column": the margin's unit is its column's
            units = {unit_of(col.replace("_margin", "", 1)) if u == "unit of the limited column"
                     else u for u in hits}
            if unit_of(col) not in units:
                wrong.append((col, hits, unit_of(col)))
    assert not missing, f"summary columns not in docs/nomenclature.md: {missing}"
    assert not wrong, f"unit in docs differs from kit.units.unit_of: {wrong}"


def test_margin_columns_carry_the_unit_of_their_check(tmp_path, demo_dir):
    """The margin of every check is in the check's unit (Check.unit), and its column's suffix
    says that unit: fs_margin_hz in Hz, mask_z_low_margin_ohm in ohm, ..._db in dB."""
    from kit.outputs.entries import safe_name, split_unit

    df, cap, lim = _full_summary(tmp_path, demo_dir)
    v = kit.verdict(df.iloc[0], lim, capture=cap)
    for c in v.checks:
        stem = split_unit(c.name)[0] if c.kind == "quantity" else f"mask_{safe_name(c.name)}"
        cols = [k for k in df.columns if k.startswith(f"{stem}_margin") and k != f"{stem}_margin_rel"]
        assert len(cols) == 1, (c.name, cols)
        assert unit_of(cols[0]) == c.unit, (cols[0], c.unit)
        assert df.iloc[0][cols[0]] == pytest.approx(c.margin)
        assert f"{stem}_margin_rel" in df.columns


def test_every_public_keyword_with_a_unit_is_in_the_glossary():
    """Every parameter of the kit.X functions is a glossary row; every public keyword of the
    review, output and batch stages whose name has a unit suffix is one, with that unit."""
    exact, _ = _glossary()
    params = _public_parameters()
    kit_params = {n for n, where in params.items() if any(w.count(".") == 1 for w in where)}
    assert not sorted(kit_params - set(exact)), "kit.X parameters missing from the glossary"
    wrong, missing = [], []
    for name, where in sorted(params.items()):
        unit = unit_of(name)
        if name in EXCEPTIONS or not unit:
            continue
        if name not in exact:
            missing.append((name, sorted(where)))
        elif exact[name] != unit:
            wrong.append((name, exact[name], unit))
    assert not missing, f"keywords with a unit missing from docs/nomenclature.md: {missing}"
    assert not wrong, f"unit in docs differs from kit.units.unit_of: {wrong}"


def test_known_exceptions_are_documented_and_still_exceptions():
    """The names that break the suffix rule are listed under "Known exceptions", and each
    still breaks it (once renamed, it leaves the list)."""
    text = DOC.read_text(encoding="utf-8")
    section = text.split("## Known exceptions", 1)[1]
    params = _public_parameters()
    for name in EXCEPTIONS:
        assert f"`{name}`" in section, name
        assert name in params, f"{name} is no longer a public parameter: drop it from the list"
    # what makes each an exception (suffix rule of kit.units)
    assert unit_of("load_ohms") == ""
    assert unit_of("capture_or_f") == "F" and unit_of("z") == ""


def test_glossary_units_are_those_of_unit_of():
    """Every glossary row without placeholders gives the unit kit.units.unit_of reads off
    its name, except the documented exceptions (the docs and the code agree)."""
    exact, _ = _glossary()
    wrong = [(n, u, unit_of(n)) for n, u in exact.items()
             if n not in EXCEPTIONS and u != unit_of(n)]
    assert not wrong, wrong
