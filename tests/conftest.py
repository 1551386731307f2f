"""Shared fixtures: where the outside reference data live, and the demo data."""

from __future__ import annotations

import os
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
