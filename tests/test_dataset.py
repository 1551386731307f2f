"""Tidy sweeps, summary, export folder and Touchstone write-back.

Independent references: scikit-rf 2.2.0 (its own Touchstone reader ``skrf.Network(file)``
and ``Network.z``), pyarrow/pandas readers, hashlib, and published Touchstone example files
(Touchstone 2.0 specification examples and measured microstrip standards in
../shared/realdata, BSD-3-Clause, scikit-rf developers).
"""

from __future__ import annotations

import hashlib
import importlib
import json
import shutil

import numpy as np
import pandas as pd
import pytest
import skrf

import kit
from kit.capture import from_network
from kit.io.writer import ExportError, write_touchstone
from kit.outputs.handover import export
from kit.outputs.summary import summary
from kit.outputs.tidy import tidy, to_network
from kit.review.limits import parse_limits
from kit.review.log import ReviewLog

ex = importlib.import_module("kit.outputs.handover")
sm = importlib.import_module("kit.outputs.summary")


def _net(ports=1, n=7, z0=50.0, seed=0, name="dut"):
    rng = np.random.default_rng(seed)
    f = skrf.Frequency(1, 3, n, unit="MHz")
    s = 0.3 * (rng.normal(size=(n, ports, ports)) + 1j * rng.normal(size=(n, ports, ports)))
    return skrf.Network(frequency=f, s=s, z0=z0, name=name)


def _lot(tmp_path, k=3):
    """A lot folder of one-port files written by scikit-rf's own Touchstone writer."""
    lot = tmp_path / "lot"
    lot.mkdir()
    for i in range(k):
        _net(seed=i, name=f"pz-{i + 1:02d}").write_touchstone(str(lot / f"pz-{i + 1:02d}"))
    return lot, [kit.load(p, name_pattern="{lot}-{serial}") for p in sorted(lot.glob("*.s1p"))]


def test_callable_module():
    """kit.export is the export function, also after its module was imported."""
    assert kit.export is export and kit.tidy is tidy and kit.summary is summary
    assert kit.write_touchstone is write_touchstone


def test_tidy_columns_and_units():
    """Long table: one row per frequency, S terms, z0, impedance from skrf Network.z."""
    net = _net(ports=1)
    cap = from_network(net, {"fields": {"lot": "pz", "serial": 7}})
    df = tidy(cap)
    assert len(df) == 7 and set(df["stage"]) == {"raw"}
    for col in ("capture", "sha256", "f_hz", "s11_re", "s11_im", "z0_p1_re_ohm", "z_re_ohm",
                "z_im_ohm", "z_method", "lot", "serial"):
        assert col in df
    np.testing.assert_array_equal(df["f_hz"], net.f)
    z = net.z[:, 0, 0]  # scikit-rf 2.2.0 Network.z, independent of kit
    np.testing.assert_allclose(df["z_re_ohm"] + 1j * df["z_im_ohm"], z, rtol=1e-12)
    assert (df["serial"] == 7).all()


def test_tidy_two_port_all_terms_and_corrected_stage():
    """Two-ports give all four S terms; a corrected capture adds rows with stage 'corrected'."""
    net = _net(ports=2)
    raw = from_network(net)
    cor = raw.derive(_net(ports=2, seed=9, n=5), step={"name": "port-extension", "delay_s": 1e-9})
    df = tidy([raw], corrected=[cor])
    assert {"s11_re", "s21_re", "s12_im", "s22_im"} <= set(df.columns)
    assert (df["stage"] == "raw").sum() == 7 and (df["stage"] == "corrected").sum() == 5
    assert df["z_re_ohm"].isna().all() and (df["z_method"] == "").all()  # no method given
    df = tidy(raw, z_method="series-through")
    z = 2 * 50 * (1 - net.s[:, 1, 0]) / net.s[:, 1, 0]  # series-through, methods sheet section 5
    np.testing.assert_allclose(df["z_re_ohm"] + 1j * df["z_im_ohm"], z, rtol=1e-10)


@pytest.mark.parametrize("name", ["ex_4.ts", "ex_5.ts", "ex_18.s2p", "ex_8.s1p",
                                  "ntwk_arbitrary_frequency.s2p"])
def test_roundtrip_touchstone_tidy_network(realdata, name):
    """Touchstone -> tidy sweeps -> Network equals scikit-rf's own reading of the file
    (Touchstone 2.0 specification example files, via the scikit-rf test corpus)."""
    path = realdata("touchstone-cases", name)
    cap = kit.load(path)
    back = to_network(tidy(cap))
    ref = skrf.Network(str(path))  # independent reader
    np.testing.assert_array_equal(back.f, ref.f)
    np.testing.assert_allclose(back.s, ref.s, rtol=1e-13, atol=1e-15)
    np.testing.assert_allclose(back.z0, ref.z0, rtol=1e-13)


def test_roundtrip_measured_standard_parquet_csv(realdata, tmp_path):
    """Measured microstrip open standard (10,000 points): the exported Parquet and CSV tables
    give back exactly the numbers scikit-rf reads from the file."""
    path = realdata("microstrip-standards", "P1-MSL_Open_50.s1p")
    cap = kit.load(path)
    out = export(tmp_path / "out", [cap])
    ref = skrf.Network(str(path))
    for reader in (pd.read_parquet, pd.read_csv):
        df = reader(out / ("sweeps.parquet" if reader is pd.read_parquet else "sweeps.csv"))
        back = to_network(df)
        np.testing.assert_array_equal(back.f, ref.f)
        np.testing.assert_array_equal(back.s, ref.s)


def test_write_touchstone_roundtrip_and_comments(tmp_path):
    """A corrected capture written as Touchstone reads back identically with scikit-rf's
    reader and kit.load; comments name each correction and the reference impedance."""
    lot, caps = _lot(tmp_path, 1)
    cor = caps[0].derive(_net(seed=5), step={"name": "port-extension", "delay_s": 2.5e-9,
                                             "note": "line\nbreak"})
    p = write_touchstone(cor, tmp_path / "out" / "pz-01_corrected.s1p")
    text = p.read_text()
    assert "! correction 1: port-extension" in text and '"delay_s":2.5e-09' in text
    assert "! reference impedance: port 1: 50 ohm" in text and "# Hz S RI R 50.0" in text
    assert caps[0].sha256 in text
    assert all(ln.startswith(("!", "#")) or ln[0].isdigit() for ln in text.splitlines())
    ref = skrf.Network(str(p))
    np.testing.assert_array_equal(ref.s, cor.s)
    np.testing.assert_array_equal(ref.f, cor.f_hz)
    again = kit.load(p)
    np.testing.assert_array_equal(again.s, cor.s)
    with pytest.raises(ExportError, match="exists"):
        write_touchstone(cor, p)


def test_write_touchstone_two_port_and_per_port_reference(tmp_path):
    """Two-port data order (11 21 12 22) and differing port references ([Reference], version
    2.0) survive scikit-rf's reader (Touchstone 2.0 specification)."""
    net = _net(ports=2, seed=3)
    p = write_touchstone(from_network(net), tmp_path / "a.s2p")
    np.testing.assert_array_equal(skrf.Network(str(p)).s, net.s)
    net2 = _net(ports=2, seed=4, z0=[50.0, 75.0])
    p = write_touchstone(from_network(net2), tmp_path / "b.s2p")
    assert "[Reference] 50.0 75.0" in p.read_text()
    ref = skrf.Network(str(p))
    np.testing.assert_array_equal(ref.s, net2.s)
    np.testing.assert_array_equal(ref.z0[0], [50.0, 75.0])
    net4 = _net(ports=4, seed=6)
    p = write_touchstone(from_network(net4), tmp_path / "c.s4p")
    np.testing.assert_array_equal(skrf.Network(str(p)).s, net4.s)


def test_touchstone_refuses_input_folder_and_bad_extension(tmp_path):
    """No file is written beside the raw captures, nor with a wrong extension."""
    lot, caps = _lot(tmp_path, 1)
    with pytest.raises(ExportError, match="never written"):
        write_touchstone(caps[0], lot / "x.s1p")
    with pytest.raises(ExportError, match=r"\.s1p"):
        write_touchstone(caps[0], tmp_path / "x.s2p")
    assert sorted(x.name for x in lot.iterdir()) == ["pz-01.s1p"]


class _Fit:
    """Stand-in with the public face of kit.resonators.fitting.FitResult (params/stderr/to_dict)."""

    def to_dict(self):
        return {"model": "bvd", "params": {"C0": 1e-9, "R1": 10.0, "L1": 1e-3, "C1": 2e-12},
                "stderr": {"C0": 1e-12, "R1": 0.1, "L1": 1e-6, "C1": 1e-15}, "ok": True,
                "flags": ["edge-of-span"], "derived": {"fs_hz": 3.56e6, "qm": 2200.0},
                "derived_stderr": {"fs_hz": 10.0}, "residual_rel": 0.01}


def test_summary_columns_fits_resonances_limits_review(tmp_path):
    """summary takes results as objects or dicts, keyed or in order; gives the documented
    columns, verdict with reasons and margins, and the review state."""
    lot, caps = _lot(tmp_path, 3)
    log = ReviewLog.for_folder(lot)
    log.add(caps[1], "verdict", value="reject", author="q.reviewer")
    log.add(caps[1], "note", text="<b>chip</b>")
    lim = parse_limits("[quantity.fs_hz]\nmin = 3.5e6\nmax = 3.6e6\n"
                       "[quantity.k_eff]\nmin = 0.3\n")
    res = {caps[0].name: {"fs_hz": 3.55e6, "fp_hz": 3.8e6, "k_eff": 0.35, "qm": 900.0,
                          "flags": []},
           caps[1].sha256: {"fs_hz": 3.7e6, "k_eff": 0.35}}
    fits = [_Fit(), RuntimeError("did not converge"), None]
    df = summary(caps, fits=fits, resonances=res, limits=lim, review_log=log)
    for col in sm.SUMMARY_BASE + ["lot", "serial", "review_verdict", "fs_margin_hz",
                                  "fs_margin_rel", "k_eff_margin", "k_eff_margin_rel"]:
        assert col in df, col
    r0, r1, r2 = (df.iloc[i] for i in range(3))
    assert r0["c0_f"] == 1e-9 and r0["r1_stderr_ohm"] == 0.1 and r0["fit_ok"]
    assert r0["fs_hz"] == 3.55e6 and r0["fit_flags"] == "edge-of-span"
    assert r0["verdict"] == "pass" and r0["fs_margin_hz"] == pytest.approx(0.05e6)
    assert r1["verdict"] == "fail" and "above the maximum" in r1["verdict_reasons"]
    assert "did not converge" in r1["fit_flags"] and not r1["fit_ok"]
    assert r1["review_verdict"] == "reject" and r1["review_notes"] == 1
    assert r2["verdict"] == "incomplete" and np.isnan(r2["fs_hz"])
    assert r0["serial"] == "01" and r0["lot"] == "pz"  # file-name fields stay text


def test_summary_error_rows_and_fit_fallback():
    """A refused file gives a row with status 'error'; fit figures fill missing resonance ones."""
    cap = from_network(_net())
    err = kit.CaptureError("the file is truncated", "lot/bad.s1p", 12)
    df = summary([cap, err], fits=[_Fit(), None])
    assert list(df["status"]) == ["ok", "error"]
    assert "truncated" in df.loc[1, "error"] and df.loc[1, "capture"] == "bad"
    assert df.loc[0, "fs_hz"] == 3.56e6 and df.loc[0, "fit_fs_stderr_hz"] == 10.0


def test_export_files_and_provenance(tmp_path):
    """Export writes Parquet and CSV tables and a provenance naming versions, input hashes,
    corrections and settings; file hashes match what is on disk (hashlib)."""
    lot, caps = _lot(tmp_path, 3)
    log = ReviewLog.for_folder(lot)
    log.add(caps[0], "note", text="ok, 'quoted', \"double\"")
    cor = {caps[0].name: caps[0].derive(_net(seed=7), step={"name": "osl", "standards": "x"})}
    out = export(tmp_path / "export", caps, review_log=log, corrected=cor,
                 settings={"fit": {"model": "bvd", "weighting": "relative"}})
    names = sorted(p.name for p in out.iterdir())
    assert names == ["events.csv", "events.parquet", "provenance.json", "summary.csv",
                     "summary.parquet", "sweeps.csv", "sweeps.parquet"]
    prov = json.loads((out / "provenance.json").read_text())
    assert prov["format"] == "sweepbook-export" and prov["kit_version"] == kit.__version__
    assert prov["versions"]["skrf"] == skrf.__version__
    for inp, cap in zip(prov["inputs"], caps):
        assert inp["sha256"] == hashlib.sha256(cap.path.read_bytes()).hexdigest()
    assert prov["corrected"][0]["corrections"][0]["name"] == "osl"
    assert prov["settings"]["fit"]["model"] == "bvd"
    for table in prov["tables"].values():
        for fname, digest in table["files"].items():
            assert hashlib.sha256((out / fname).read_bytes()).hexdigest() == digest
    ev = pd.read_csv(out / "events.csv")
    assert ev.loc[0, "text"] == "ok, 'quoted', \"double\""
    sw = pd.read_parquet(out / "sweeps.parquet")
    assert set(sw["stage"]) == {"raw", "corrected"}
    # nothing but the review log was added to the input folder
    assert sorted(p.name for p in lot.iterdir() if not p.name.startswith("review.sqlite")) == \
        ["pz-01.s1p", "pz-02.s1p", "pz-03.s1p"]


def test_interrupted_export_keeps_previous(tmp_path, monkeypatch):
    """An export that fails half-way leaves the previous complete export as it was and no
    temporary folder behind."""
    lot, caps = _lot(tmp_path, 2)
    out = export(tmp_path / "export", caps)
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    real = ex.write_table

    def failing(df, folder, stem):
        if stem == "summary":
            raise OSError("disk full (simulated)")
        return real(df, folder, stem)

    monkeypatch.setattr(ex, "write_table", failing)
    with pytest.raises(OSError, match="simulated"):
        export(tmp_path / "export", caps[:1])
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["export", "lot"]
    monkeypatch.setattr(ex, "write_table", real)
    export(tmp_path / "export", caps[:1])  # a later export replaces it completely
    assert len(pd.read_csv(out / "summary.csv")) == 1


def test_export_refuses_input_and_foreign_folders(tmp_path):
    """The input folder and a folder of someone else's files are never written to."""
    lot, caps = _lot(tmp_path, 1)
    with pytest.raises(ExportError, match="never written"):
        export(lot, caps)
    other = tmp_path / "thesis"
    other.mkdir()
    (other / "chapter1.txt").write_text("precious")
    with pytest.raises(ExportError, match="not a sweepbook export"):
        export(other, caps)
    assert (other / "chapter1.txt").read_text() == "precious"


def test_export_from_load_folder_table(demo_dir, tmp_path):
    """A load_folder table is accepted as the captures (demo lot; integration only)."""
    lot = tmp_path / "lot"
    shutil.copytree(demo_dir / "lot", lot)
    table = kit.load_folder(lot, pattern="{lot}-{serial}")
    df = summary(table)
    assert len(df) == len(table) and (df["status"] == "ok").all()
    assert len(tidy(table)) == sum(c.points for c in kit.io.folder.captures_of(table))


def test_export_and_writes_follow_the_umask(tmp_path):
    """Exported folder and files, and atomic writes, get the modes a plain mkdir/open would
    (POSIX: mode = 0777 or 0666 with the umask bits cleared; common practice, no source)."""
    import os
    import stat

    from kit.io.atomic import write_text

    lot, caps = _lot(tmp_path, 2)
    old = os.umask(0o022)
    try:
        out = export(tmp_path / "export", caps)
        report = write_text(tmp_path / "report.html", "<p>x</p>")
    finally:
        os.umask(old)
    assert stat.S_IMODE(out.stat().st_mode) == 0o755
    assert {stat.S_IMODE(p.stat().st_mode) for p in out.iterdir()} == {0o644}
    assert stat.S_IMODE(report.stat().st_mode) == 0o644


def test_interrupted_export_is_recovered(tmp_path):
    """An export interrupted between its two renames (previous export moved aside, new one
    not yet in place) is put back by the next export, and leftovers are removed."""
    lot, caps = _lot(tmp_path, 2)
    out = export(tmp_path / "export", caps)
    first = (out / "provenance.json").read_text()
    aside = tmp_path / ".export.old-abc"
    out.rename(aside)                                  # the first rename happened ...
    (tmp_path / ".export.new-def").mkdir()             # ... the new folder was never swapped
    from kit.outputs.handover import recover_interrupted

    done = recover_interrupted(out)
    assert (out / "provenance.json").read_text() == first and len(done) == 2
    assert not aside.exists() and not (tmp_path / ".export.new-def").exists()
    export(out, caps)                                  # and the next export replaces it
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".export")) == []
