"""A cache of parsed captures keyed by the content hash of the file.

Re-running a procedure over an unchanged folder reads each file's bytes once (to hash them)
but does not parse them again. Entries are numpy ``.npz`` files (zip archives) read with
``allow_pickle=False``; the zip format's CRC-32 of every member is checked as it is read, so
a corrupted or truncated entry is detected, rebuilt and reported, never trusted. Entries are
written atomically but not flushed to disk one by one (``fsync``): a crash can lose an entry,
which is then a miss, never a half entry. The name-pattern fields come from the file
name, not its content, and are computed afresh on every read.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
from pathlib import Path
from typing import Any

import numpy as np

from kit._version import __version__
from kit.capture import Capture, Finding
from kit.io.atomic import write_bytes, write_text
from kit.io.names import parse_name, stem_of

#: Bumped whenever the parser's output could change; old entries are then ignored.
CACHE_FORMAT = f"3-{__version__}"


def default_cache_dir() -> Path:
    """The user's cache folder for sweepbook (``$XDG_CACHE_HOME/sweepbook`` or ``~/.cache/sweepbook``)."""
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "sweepbook"


class CaptureCache:
    """Parsed captures on disk, keyed by SHA-256 of the file bytes.

    Parameters
    ----------
    folder : str or Path, optional
        Where entries live; default :func:`default_cache_dir`.

    Attributes
    ----------
    stats : dict
        Counts of "hit", "miss" and "rebuilt" reads by this object.
    """

    def __init__(self, folder: str | Path | None = None) -> None:
        self.folder = Path(folder) if folder is not None else default_cache_dir()
        self.root = self.folder / f"v{CACHE_FORMAT}"
        self.stats = {"hit": 0, "miss": 0, "rebuilt": 0}

    def entry(self, sha256: str) -> Path:
        """Path of the entry for a content hash."""
        return self.root / sha256[:2] / f"{sha256}.npz"

    def load(self, path: str | Path, name_pattern: str | None = None) -> tuple[Capture, str]:
        """The capture of ``path`` and how it was obtained ("hit", "miss" or "rebuilt").

        The file is read once and hashed once: on a miss the parser works on the bytes
        already read.

        Raises
        ------
        CaptureError
            As :func:`kit.load` for a file it refuses (refusals are not cached).
        """
        from kit.io.preflight import read_bytes
        from kit.io.touchstone import load

        path = Path(path)
        data = read_bytes(path)  # an unreadable file raises the CaptureError kit.load gives
        sha = hashlib.sha256(data).hexdigest()
        entry = self.entry(sha)
        status = "miss"
        problem = None
        try:
            cap = self._read(entry, sha, path, name_pattern)
            self.stats["hit"] += 1
            return cap, "hit"
        except FileNotFoundError:
            pass
        except Exception as exc:  # noqa: BLE001 - any damage means: rebuild, never trust
            status, problem = "rebuilt", f"{type(exc).__name__}: {exc}"
        cap = load(path, name_pattern, data=data, sha256=sha)
        self._write(entry, cap)
        self.stats[status] += 1
        if problem:
            cap = cap.derive(cap.network, findings=(Finding(
                "warning", f"the cache entry {entry.name} was damaged ({problem}); it was "
                "rebuilt from the file", None, None, "cache-rebuilt", str(path)),))
        return cap, status

    # ------------------------------------------------------------------ entries
    def _write(self, entry: Path, cap: Capture) -> None:
        # Three arrays only: reading an .npz costs a header parse per array.
        z0 = np.asarray(cap.z0, complex)
        uniform = bool(np.all(z0 == z0.ravel()[0]))
        doc = {
            "meta": {k: v for k, v in cap.meta.items() if k not in ("fields", "name_pattern")},
            "findings": [f.to_dict() for f in cap.findings if f.code != "name-pattern"],
            "s_def": str(cap.network.s_def or "power"),
            "sha256": cap.sha256,
            "z0": [z0.ravel()[0].real, z0.ravel()[0].imag] if uniform else None,
        }
        arrays = {"f_hz": np.asarray(cap.f_hz, float), "s": np.asarray(cap.s, complex)}
        if not uniform:
            arrays["z0"] = z0
        arrays["doc"] = np.frombuffer(json.dumps(doc, default=str).encode(), dtype=np.uint8)
        buf = io.BytesIO()
        np.savez(buf, **arrays)
        write_bytes(entry, buf.getvalue(), durable=False)  # a lost entry is only a miss

    def _read(self, entry: Path, sha: str, path: Path, name_pattern: str | None) -> Capture:
        import skrf

        with np.load(entry, allow_pickle=False) as z:
            arrays = {k: z[k] for k in z.files}
        doc = json.loads(arrays.pop("doc").tobytes().decode())
        if doc["sha256"] != sha:
            raise ValueError("entry belongs to other content")
        meta = doc["meta"]
        findings = [Finding(**{**d, "path": str(path)}) for d in doc["findings"]]
        meta["name_pattern"] = name_pattern
        meta["fields"] = {}
        if name_pattern:
            fields, finding = parse_name(stem_of(path), name_pattern, str(path))
            meta["fields"] = fields
            if finding is not None:
                findings.append(finding)
        z0 = arrays["z0"] if doc["z0"] is None else complex(*doc["z0"])
        net = skrf.Network(frequency=skrf.Frequency.from_f(arrays["f_hz"], unit="hz"),
                           s=arrays["s"], z0=z0, s_def=doc["s_def"], name=stem_of(path))
        return Capture(network=net, path=path, sha256=sha, meta=meta, findings=tuple(findings))

    # ------------------------------------------------------------------ analysis results
    def result_entry(self, sha256: str, digest: str) -> Path:
        """Path of the stored analysis result of one capture under one procedure digest."""
        return self.root / "results" / digest[:16] / f"{sha256}.json"

    def get_result(self, sha256: str, digest: str) -> dict[str, Any] | None:
        """A stored result, or None when absent or damaged (a damaged one is removed)."""
        p = self.result_entry(sha256, digest)
        if not p.exists():
            return None
        try:
            doc = json.loads(p.read_text(encoding="utf-8"))
            body = json.dumps(doc["result"], sort_keys=True)
            if doc.get("checksum") != hashlib.sha256(body.encode()).hexdigest():
                raise ValueError("checksum mismatch")
            return doc["result"]
        except Exception:  # noqa: BLE001 - never trust a damaged entry
            p.unlink(missing_ok=True)
            return None

    def put_result(self, sha256: str, digest: str, result: dict[str, Any]) -> None:
        """Store a result (plain JSON data) atomically."""
        body = json.dumps(result, sort_keys=True, default=str)
        doc = {"result": json.loads(body),
               "checksum": hashlib.sha256(json.dumps(json.loads(body), sort_keys=True).encode()).hexdigest()}
        write_text(self.result_entry(sha256, digest), json.dumps(doc), durable=False)
