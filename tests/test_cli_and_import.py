"""The sweepbook command and the weight of `import kit`."""

from __future__ import annotations

import subprocess
import sys

from kit.batch.cli import main

GOOD = "# Hz S RI R 50\n1e6 0.1 0\n2e6 0.2 0\n"


def test_check_exit_codes(tmp_path, capsys):
    """`sweepbook check` prints one line per finding and exits 1 when any file has an error."""
    (tmp_path / "a.s1p").write_text(GOOD)
    assert main(["check", str(tmp_path / "a.s1p")]) == 0
    (tmp_path / "b.s1p").write_text("# Hz S RI R 50\n1e6 0.1\n")
    assert main(["check", str(tmp_path)]) == 1
    out = capsys.readouterr().out
    assert "b.s1p:2: error:" in out and "a.s1p: ok" in out


def test_python_m_kit_is_the_same_entry_point():
    """`python -m kit --version` answers like the console script."""
    out = subprocess.run([sys.executable, "-m", "kit", "--version"], capture_output=True, text=True,
                         check=True).stdout
    assert out.startswith("sweepbook ")


def test_import_kit_is_light():
    """`import kit` does not import scipy.optimize, matplotlib, ipywidgets or scikit-rf."""
    code = ("import sys, kit; heavy = [m for m in ('scipy.optimize', 'matplotlib', 'ipywidgets', "
            "'skrf', 'pandas') if m in sys.modules]; print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_public_names_stay_functions_after_every_module_is_imported():
    """No public name is shadowed by a submodule of the same name (import binds submodules on kit)."""
    code = ("import importlib, pkgutil, types, kit\n"
            "for m in pkgutil.walk_packages(kit.__path__, 'kit.'):\n"
            "    if not m.name.startswith(('kit.ui', 'kit.__main__', 'kit.batch.demo')):\n"
            "        importlib.import_module(m.name)\n"
            "bad = [n for n in kit._EXPORTS if n not in kit._MODULES\n"
            "       and isinstance(getattr(kit, n), types.ModuleType)]\n"
            "print(','.join(bad))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
