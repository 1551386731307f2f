"""Shared fixtures: where the outside reference data live, and the demo data."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data"
#: Real captures made by others (see ../shared/realdata/README.md); never copied here.
REALDATA = Path(os.environ.get("SWEEPBOOK_REALDATA", ROOT.parent / "shared" / "realdata"))


def realdata_path(*parts: str) -> Path:
    """Path under ../shared/realdata, or skip the test with a reason when it is absent."""
    p = REALDATA.joinpath(*parts)
    if not p.exists():
        pytest.skip(f"outside reference data not available: {p} (a fresh clone without ../shared)")
    return p


@pytest.fixture
def realdata():
    """Callable giving paths under ../shared/realdata (skips when absent)."""
    return realdata_path


@pytest.fixture(scope="session")
def demo_dir() -> Path:
    """The committed demo data folder (written by ``python -m kit.batch.demo``)."""
    if not (DEMO / "truth.json").exists():
        pytest.skip("demo_data/ has not been generated")
    return DEMO


# --------------------------------------------------------------------------- PostgreSQL
@pytest.fixture(scope="session")
def pg_server():
    """A throw-away PostgreSQL on 127.0.0.1 for the whole session (tests/pg_server.py).

    The application role's password reaches the kit through a password file named by
    ``PGPASSFILE`` (never through a URL). Skips only when no PostgreSQL programs exist.
    """
    from pg_server import TempPostgres, find_bindir

    bindir = find_bindir()
    if bindir is None:
        pytest.skip("no PostgreSQL server programs (initdb, pg_ctl) on this machine: install "
                    "Debian's `postgresql` package to run the server back-end tests")
    pytest.importorskip("psycopg", reason="the server back end needs psycopg: "
                        "pip install 'sweepbook[team]'")
    server = TempPostgres(bindir).start()
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("PGPASSFILE", str(server.passfile))
        mp.delenv("PGPASSWORD", raising=False)
        try:
            yield server
        finally:
            server.stop()


@pytest.fixture
def lot_capture(tmp_path):
    """A folder ``lot`` with one one-port capture file ``pz-01.s1p``, loaded: (folder, capture)."""
    import numpy as np
    import skrf

    import kit

    lot = tmp_path / "lot"
    lot.mkdir()
    f = skrf.Frequency(1, 3, 21, unit="MHz")
    skrf.Network(frequency=f, z=(10 + 1j * np.linspace(-50, 50, 21)).reshape(-1, 1, 1),
                 z0=50).write_touchstone(str(lot / "pz-01"))
    return lot, kit.load(lot / "pz-01.s1p")


@pytest.fixture(params=["sqlite", "postgresql"])
def new_target(request, tmp_path):
    """A factory of empty review-log targets of one back end: a path, or a server URL."""
    made = []

    def make() -> str:
        if request.param == "sqlite":
            made.append(tmp_path / f"review{len(made)}.sqlite")
            return str(made[-1])
        pg = request.getfixturevalue("pg_server")
        return pg.url(pg.new_database())

    make.backend = request.param
    return make


@pytest.fixture
def batch_lot(tmp_path, demo_dir):
    """Part of the demo lot (two good parts, the cracked 04 and the de-poled 07 of the demo's
    truth.json), a truncated file, the standards and an OSL + BVD fit + limits procedure:
    (folder, lot folder, procedure file)."""
    d = tmp_path / "lot"
    d.mkdir()
    for n in ("01", "02", "04", "07"):
        shutil.copy(demo_dir / "lot" / f"pzd7-{n}.s1p", d)
    (d / "pzd7-99.s1p").write_text("# Hz S RI R 50\n1e6 0.1\n")  # truncated
    shutil.copytree(demo_dir / "standards", tmp_path / "standards")
    proc = tmp_path / "proc.toml"
    proc.write_text("""
[import]
name_pattern = "{lot}-{serial}"
[[correction]]
kind = "osl"
open = "standards/open.s1p"
short = "standards/short.s1p"
load = "standards/load.s1p"
[fit]
model = "bvd"
span_hz = [1.6e6, 2.4e6]
[limits]
fs_hz = { min = 1.8e6, max = 1.9e6 }
k_eff = { min = 0.3 }
""")
    return tmp_path, d, proc
