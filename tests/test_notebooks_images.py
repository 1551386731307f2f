"""Figures of the notebooks, re-executed, look like the stored ones (RMS tolerance).

nbval leaves images out of its comparison; this test executes each notebook (in memory,
from notebooks/, so relative data paths hold), takes every ``image/png`` output and compares
it with the stored image of the same cell using matplotlib's RMS image comparison.
"""

from __future__ import annotations

import base64
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
NOTEBOOKS = sorted((ROOT / "notebooks").glob("[0-9][0-9]_*.ipynb"))
#: RMS difference allowed, on the 0-255 scale (font and library versions shift antialiasing).
TOLERANCE = 12.0

pytestmark = pytest.mark.slow


def _pngs(nb) -> dict[int, list[bytes]]:
    out: dict[int, list[bytes]] = {}
    for i, cell in enumerate(nb.cells):
        for o in cell.get("outputs", []):
            data = o.get("data", {})
            if "image/png" in data:
                out.setdefault(i, []).append(base64.b64decode(data["image/png"]))
    return out


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.stem for p in NOTEBOOKS])
def test_notebook_figures_match_stored(path, tmp_path):
    """Every stored figure is drawn again, the same size, within the RMS tolerance."""
    nbformat = pytest.importorskip("nbformat")
    nbclient = pytest.importorskip("nbclient")
    from matplotlib.testing.compare import compare_images

    if not (ROOT / "demo_data" / "truth.json").exists():
        pytest.skip("demo_data/ has not been generated")
    stored_nb = nbformat.read(path, as_version=4)
    stored = _pngs(stored_nb)
    if not stored:
        pytest.skip(f"{path.name} stores no image")
    fresh_nb = nbformat.read(path, as_version=4)
    try:
        nbclient.NotebookClient(fresh_nb, timeout=300, kernel_name="python3",
                                resources={"metadata": {"path": str(path.parent)}}).execute()
    except nbclient.exceptions.CellExecutionError as exc:
        if "Stopped:" in str(exc):
            pytest.skip(f"{path.name} stopped itself (its data folder is absent)")
        raise
    fresh = _pngs(fresh_nb)
    assert set(fresh) == set(stored), "figure cells differ"
    for cell, images in stored.items():
        assert len(fresh[cell]) == len(images)
        for k, (a, b) in enumerate(zip(images, fresh[cell])):
            ea, eb = tmp_path / f"c{cell}_{k}_stored.png", tmp_path / f"c{cell}_{k}_fresh.png"
            ea.write_bytes(a)
            eb.write_bytes(b)
            diff = compare_images(str(ea), str(eb), tol=TOLERANCE)
            assert diff is None, f"{path.name} cell {cell}: {diff}"
