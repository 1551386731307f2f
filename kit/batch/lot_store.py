"""The whole-lot result store: one record per (input files, procedure, kit, figures setting).

A re-run of the same procedure over an unchanged folder hashes the files (SHA-256 of their
bytes, each read once), finds one record and gives the lot's results without analysing
anything: the summary table, the per-input fit and resonance results, the import and
correction failures, the part pictures and traces, and, once the lot has been exported, the
finished sweeps tables and the description of the inputs that the export folder holds. The
outputs are then written from the record (:meth:`LotRecord.export_part`, used by
:func:`kit.outputs.handover.export`) instead of from the captures.

**Key.** SHA-256 over the ordered list of input paths (as given) with the SHA-256 of each
file's content, the procedure digest (its content and its standards' bytes), the kit version,
the figures setting and the engine's results schema. Changing one byte of one file, the
procedure, a standard, the figures setting or the kit gives another key: a miss. The files
are read by :func:`kit.io.preflight.read_bytes`. On a miss each capture is read and hashed
again where it is imported (:meth:`kit.io.cache.CaptureCache.load`): that second hash is the
check that the bytes parsed and cached are the bytes their cache entry is named by (a file
changed since the lookup gets an entry of its own), and costs about a sixtieth of the parse.

**Records** are folders ``<cache>/lots/<key>/`` built in a temporary folder beside them and
renamed into place, so a reader sees a whole record or none. Nothing is pickled: the summary
is Parquet, the pictures and traces one ``.npz`` read with ``allow_pickle=False``, the rest
JSON. ``record.json`` carries the SHA-256 of every other file of the record and of its own
body; a record that fails any check (damaged, truncated, foreign) is reported with a
:class:`LotStoreWarning`, removed, and the lot is analysed again (and stored again).

**Old records go** when a new one is stored: the records beyond :data:`MAX_RECORDS`, or
beyond :data:`MAX_BYTES` in total, are removed, least recently used first (a hit refreshes
a record's time).

**Captures on a hit.** The record holds no capture. A :class:`kit.batch.engine.BatchResult`
from a hit carries :class:`Deferred` sequences in ``captures`` and ``corrected``: the first
access loads every capture (from the parsed-capture cache) and corrects it, in this process.
Writing the outputs never accesses them when the record holds the export part, so a re-run
that only writes outputs loads no capture at all.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import shutil
import tempfile
import time
import warnings
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from kit._version import __version__
from kit.io.atomic import as_created

#: Version of the record layout; part of the key.
LOT_FORMAT = 1
#: Records kept at most (least recently used go first).
MAX_RECORDS = 32
#: Total size of the records kept at most [bytes] (the sweeps tables dominate).
MAX_BYTES = 8 * 1024**3
#: Files copied out of a record are read and hashed in pieces of this size [bytes].


class LotStoreWarning(UserWarning):
    """A lot record was damaged or unreadable; it was ignored and the lot analysed again."""


def file_sha256(path: str | os.PathLike) -> str:
    """SHA-256 of an input's bytes, read in one go (input captures are small) by
    :func:`kit.io.preflight.read_bytes`, the one reader of an input's bytes; an unreadable
    file is its :class:`~kit.capture.CaptureError`."""
    from kit.io.preflight import read_bytes

    return hashlib.sha256(read_bytes(Path(path))).hexdigest()


def lot_key(paths: Sequence[str], shas: Sequence[str], digest: str, figures: str,
            schema: int) -> str:
    """The record key of a lot (see the module text)."""
    doc = {"format": LOT_FORMAT, "inputs": [[str(p), s] for p, s in zip(paths, shas)],
           "procedure": digest, "kit": __version__, "figures": figures, "schema": schema}
    return hashlib.sha256(json.dumps(doc, sort_keys=True).encode()).hexdigest()


def _body_sum(doc: dict[str, Any]) -> str:
    return hashlib.sha256(json.dumps(doc, sort_keys=True).encode()).hexdigest()


def _pack(blobs: dict[str, Any], kind: str) -> tuple[list[str], dict[str, np.ndarray]]:
    keys = sorted(blobs)
    if kind == "pic":
        parts = [np.frombuffer(blobs[k], np.uint8) for k in keys]
        arrays = {"pic": np.concatenate(parts) if parts else np.zeros(0, np.uint8)}
    else:
        parts = [np.asarray(blobs[k][0], float) for k in keys]
        arrays = {"trace_f": np.concatenate(parts) if parts else np.zeros(0),
                  "trace_y": (np.concatenate([np.asarray(blobs[k][1], float) for k in keys])
                              if parts else np.zeros(0))}
    arrays[f"{kind}_off"] = np.cumsum([0] + [len(p) for p in parts]).astype(np.int64)
    return keys, arrays


class Deferred(Sequence):
    """A sequence whose items are made on first access by ``load()`` (shared by several).

    ``load`` returns a dict of lists; this sequence is the list under ``part``. Its length is
    known without loading.
    """

    def __init__(self, load: Callable[[], dict[str, list]], part: str, n: int,
                 memo: dict | None = None) -> None:
        self._load, self._part, self._n = load, part, n
        self._memo = memo if memo is not None else {}

    def _items(self) -> list:
        if "items" not in self._memo:
            self._memo["items"] = self._load()
        return self._memo["items"][self._part]

    @property
    def loaded(self) -> bool:
        """Whether the items have been made."""
        return "items" in self._memo

    def __len__(self) -> int:
        return self._n

    def __getitem__(self, i):
        return self._items()[i]

    def __iter__(self):
        return iter(self._items())

    def __eq__(self, other: object) -> bool:
        return list(self) == list(other) if isinstance(other, Sequence) else NotImplemented

    def __repr__(self) -> str:
        return f"<{self._n} {self._part}, {'loaded' if self.loaded else 'not loaded yet'}>"


class LotRecord:
    """One stored lot: its analysis results, and the export part once written."""

    def __init__(self, path: Path, doc: dict[str, Any]) -> None:
        self.path, self.doc = path, doc

    # ------------------------------------------------------------------ reading
    @classmethod
    def read(cls, path: Path) -> LotRecord:
        """Read and check a record; raises ValueError or OSError for any damage."""
        doc = json.loads((path / "record.json").read_text(encoding="utf-8"))
        body = doc.get("body")
        if not isinstance(body, dict) or doc.get("sum") != _body_sum(body):
            raise ValueError("record.json does not match its checksum")
        rec = cls(path, body)
        rec._blobs = {}
        for name, want in body["files"].items():
            data = (path / name).read_bytes()
            if hashlib.sha256(data).hexdigest() != want:
                raise ValueError(f"{name} does not match its checksum")
            rec._blobs[name] = data
        return rec

    def summary(self):
        """The summary table as the run made it."""
        import pandas as pd

        return pd.read_parquet(io.BytesIO(self._blobs["summary.parquet"]))

    def figures(self) -> tuple[dict[str, bytes], dict[str, tuple[np.ndarray, np.ndarray]]]:
        """Pictures (sha256 -> PNG bytes) and traces (sha256 -> (f_hz, y))."""
        with np.load(io.BytesIO(self._blobs["figures.npz"]), allow_pickle=False) as z:
            a = {k: z[k] for k in z.files}
        po, to = a["pic_off"], a["trace_off"]
        pics = {k: a["pic"][po[i]: po[i + 1]].tobytes()
                for i, k in enumerate(self.doc["picture_keys"])}
        traces = {k: (a["trace_f"][to[i]: to[i + 1]], a["trace_y"][to[i]: to[i + 1]])
                  for i, k in enumerate(self.doc["trace_keys"])}
        return pics, traces

    def touch(self) -> None:
        """Mark the record as just used (the least recently used records go first)."""
        now = time.time()
        os.utime(self.path, (now, now))

    # ------------------------------------------------------------------ the export part
    def export_part(self) -> dict[str, Any] | None:
        """The stored sweeps files and input descriptions, or None when absent or damaged.

        Returns a dict with ``files`` (name -> {path, size, sha256}; every byte is checked
        again while it is copied out), ``tables`` (the sweeps table's description) and
        ``inputs``, ``refused``, ``corrected`` (the provenance of the captures).
        """
        part = self.path / "export"
        try:
            doc = json.loads((part / "export.json").read_text(encoding="utf-8"))
            body = doc["body"]
            if doc.get("sum") != _body_sum(body):
                raise ValueError("export.json does not match its checksum")
            for name, f in body["files"].items():
                f["path"] = str(part / name)
                if os.path.getsize(f["path"]) != f["size"]:
                    raise ValueError(f"{name} has the wrong size (truncated?)")
            return body
        except FileNotFoundError:
            return None
        except (OSError, ValueError, KeyError, TypeError) as exc:
            self.drop_export_part(f"{type(exc).__name__}: {exc}")
            return None

    def drop_export_part(self, problem: str) -> None:
        """Report and remove a damaged export part (the next write stores it again)."""
        warnings.warn(f"the stored outputs of lot record {self.path.name[:12]} were damaged "
                      f"({problem}); they are made again from the captures", LotStoreWarning,
                      stacklevel=3)
        shutil.rmtree(self.path / "export", ignore_errors=True)

    def save_export(self, out_dir: Path) -> None:
        """Keep the sweeps files and input descriptions of a finished export folder."""
        if (self.path / "export").is_dir():
            return
        prov = json.loads((out_dir / "provenance.json").read_text(encoding="utf-8"))
        sweeps = prov["tables"]["sweeps"]
        tmp = Path(tempfile.mkdtemp(prefix=".export-", dir=self.path))
        try:
            files = {}
            for name, sha in sweeps["files"].items():
                try:  # a hard link costs nothing; every byte is checked when copied out
                    os.link(out_dir / name, tmp / name)
                except OSError:
                    shutil.copyfile(out_dir / name, tmp / name)
                files[name] = {"size": (tmp / name).stat().st_size, "sha256": sha}
            body = {"files": files, "tables": {"sweeps": sweeps}, "inputs": prov["inputs"],
                    "refused": prov["refused"], "corrected": prov["corrected"]}
            (tmp / "export.json").write_text(json.dumps({"body": body, "sum": _body_sum(body)}),
                                             encoding="utf-8")
            os.rename(tmp, self.path / "export")
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise


class LotStore:
    """The lot records under a cache folder (``<folder>/lots``)."""

    def __init__(self, folder: str | os.PathLike) -> None:
        self.root = Path(folder) / "lots"

    def get(self, key: str) -> tuple[LotRecord | None, str]:
        """The record of ``key`` and how it went: "hit", "miss" or "rebuilt" (damaged, removed)."""
        path = self.root / key
        if not path.is_dir():
            return None, "miss"
        try:
            rec = LotRecord.read(path)
            if rec.doc.get("key") != key:
                raise ValueError("the record belongs to another lot")
            rec.touch()
            return rec, "hit"
        except Exception as exc:  # noqa: BLE001 - any damage: ignore, report, analyse again
            warnings.warn(f"lot record {key[:12]} in {self.root} is damaged ({type(exc).__name__}: "
                          f"{exc}); it is ignored and the lot analysed again", LotStoreWarning,
                          stacklevel=3)
            shutil.rmtree(path, ignore_errors=True)
            return None, "rebuilt"

    def put(self, key: str, *, summary: Any, fits: list, resonances: list, failures: list,
            pictures: dict[str, bytes], traces: dict[str, Any], stats: dict[str, Any]) -> LotRecord:
        """Store a lot's results atomically (the folder appears whole or not at all)."""
        self.root.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{key[:12]}-", dir=self.root))
        try:
            buf = io.BytesIO()
            summary.to_parquet(buf, engine="pyarrow", index=False)
            pic_keys, arrays = _pack(pictures, "pic")
            trace_keys, more = _pack(traces, "trace")
            fig = io.BytesIO()
            np.savez(fig, **arrays, **more)
            blobs = {"summary.parquet": buf.getvalue(), "figures.npz": fig.getvalue()}
            for name, data in blobs.items():
                (tmp / name).write_bytes(data)
            body = {"key": key, "kit": __version__, "created_utc": time.time(),
                    "files": {n: hashlib.sha256(d).hexdigest() for n, d in blobs.items()},
                    "fits": fits, "resonances": resonances, "failures": failures,
                    "stats": stats, "picture_keys": pic_keys, "trace_keys": trace_keys}
            (tmp / "record.json").write_text(json.dumps({"body": body, "sum": _body_sum(body)}),
                                             encoding="utf-8")
            as_created(tmp, folder=True)
            dest = self.root / key
            if dest.exists():
                shutil.rmtree(dest, ignore_errors=True)
            os.rename(tmp, dest)
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise
        self.prune(keep=key)
        rec = LotRecord(dest, body)
        rec._blobs = blobs
        return rec

    def prune(self, keep: str | None = None) -> list[str]:
        """Remove the least recently used records beyond :data:`MAX_RECORDS` or :data:`MAX_BYTES`,
        and temporary folders more than an hour old (left by an interrupted write)."""
        recs = []
        for p in self.root.iterdir():
            if p.name.startswith(".") and time.time() - p.stat().st_mtime > 3600:
                shutil.rmtree(p, ignore_errors=True)  # left by an interrupted write
            elif p.is_dir() and not p.name.startswith("."):
                size = sum(f.stat().st_size for f in p.rglob("*") if f.is_file())
                recs.append((p.stat().st_mtime, p, size))
        recs.sort(reverse=True)  # newest first
        gone, total = [], 0
        for k, (_, p, size) in enumerate(recs):
            total += size
            if p.name != keep and (k >= MAX_RECORDS or total > MAX_BYTES):
                shutil.rmtree(p, ignore_errors=True)
                gone.append(p.name)
        return gone
