"""Writing captures back to disk: Touchstone files, never into a folder of input captures.

:func:`write_touchstone` writes a (corrected) capture as a Touchstone file whose comments
name the corrections, with the reference impedance stated. :func:`refuse_input_folder` is
the guard every writer of the kit (this one, the export folder, the lot report) calls
first: raw captures are evidence, and the folder that holds them is never written to.

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009): option
   line, data order of two-port files (11 21 12 22), [Reference] keyword.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable, Mapping
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError
from kit.io.atomic import write_bytes
from kit.results import plain

__all__ = ["ExportError", "input_folder_holding", "input_folders", "refuse_input_folder",
           "write_touchstone"]


class ExportError(CaptureError):
    """A file or folder cannot be written as asked (names the target and what to do)."""


def kit_version() -> str:
    """The version of the kit that writes a file (stated in every file it writes)."""
    from kit._version import __version__

    return __version__


def input_folders(captures: Iterable[Any]) -> set[Path]:
    """Resolved folders holding the captures' files (the folders never written to)."""
    out = set()
    for c in captures:
        p = getattr(c, "path", None)
        if p is not None:
            out.add(Path(p).resolve().parent)
    return out


def input_folder_holding(target: str | os.PathLike, folders: Iterable[Path]) -> Path | None:
    """The input folder that is ``target`` or holds it at any depth (None when none does)."""
    t = Path(target).resolve()
    for f in folders:
        f = Path(f).resolve()
        if t == f or f in t.parents:
            return f
    return None


def refuse_input_folder(target: str | os.PathLike, captures: Iterable[Any], what: str) -> None:
    """Raise ExportError when ``target`` (a file or folder to write) is an input folder or
    lies anywhere inside one."""
    where = input_folder_holding(target, input_folders(captures))
    if where is not None:
        raise ExportError(f"{what} {target} would be written into {where}, which holds input "
                          "captures; raw captures are evidence and their folder is never written "
                          "to (except the review log): choose another folder")


def _describe_step(step: Mapping[str, Any]) -> str:
    name = step.get("name") or step.get("kind") or step.get("correction") or "step"
    rest = {k: v for k, v in step.items() if k not in ("name", "kind", "correction")}
    text = json.dumps(plain(rest), ensure_ascii=True, sort_keys=True, separators=(",", ":"),
                      default=str)
    return f"{name} {text}".replace("\n", " ").replace("\r", " ")


def _fmt(x: float) -> str:
    return repr(float(x))


def _data_lines(capture: Capture) -> list[str]:
    """The network data, one frequency per line (two-ports in the order 11 21 12 22) [1]_."""
    n = capture.ports
    s = np.asarray(capture.s)
    f = capture.f_hz
    lines = []
    for k in range(capture.points):
        if n == 1:
            lines.append(f"{_fmt(f[k])} {_fmt(s[k, 0, 0].real)} {_fmt(s[k, 0, 0].imag)}")
        elif n == 2:
            vals = [s[k, 0, 0], s[k, 1, 0], s[k, 0, 1], s[k, 1, 1]]  # 11 21 12 22
            lines.append(_fmt(f[k]) + " " + " ".join(f"{_fmt(v.real)} {_fmt(v.imag)}"
                                                      for v in vals))
        else:
            for i in range(n):
                row = s[k, i, :]
                chunks = [row[j: j + 4] for j in range(0, n, 4)]
                for c, chunk in enumerate(chunks):
                    head = _fmt(f[k]) if (i == 0 and c == 0) else " " * 4
                    lines.append(head + " " + " ".join(f"{_fmt(v.real)} {_fmt(v.imag)}"
                                                      for v in chunk))
    return lines


def write_touchstone(capture: Capture, path: str | os.PathLike, overwrite: bool = False) -> Path:
    """Write a (corrected) capture as a Touchstone file, atomically.

    The comments name the source file and its SHA-256, every correction step of
    ``capture.provenance`` and the reference impedance; the option line is
    ``# Hz S RI R <z0>``. Per-port references that differ are written as Touchstone 2.0
    with ``[Reference]``. Values are written with 17 significant digits (exact round trip).

    Parameters
    ----------
    capture : Capture
    path : str or Path
        ``.sNp`` with N the port count (or ``.ts``, written as version 2.0).
    overwrite : bool
        Replace an existing file (default: refuse).

    Returns
    -------
    Path
        The file written.

    Raises
    ------
    ExportError
        For a frequency-dependent or complex reference impedance (renormalise first), a
        wrong extension, an existing file, or a target in the input captures' folder.

    References
    ----------
    .. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009).
    """
    path = Path(path)
    n = capture.ports
    suffix = path.suffix.lower()
    if suffix != ".ts" and suffix != f".s{n}p":
        raise ExportError(f"{path}: a {n}-port capture is written as .s{n}p (or .ts)")
    refuse_input_folder(path, [capture], "the Touchstone file")
    if path.exists() and not overwrite:
        raise ExportError(f"{path} exists; pass overwrite=True to replace it")
    z0 = np.asarray(capture.z0)
    if np.any(np.imag(z0) != 0):
        raise ExportError(f"{capture.name}: complex reference impedance cannot be written; "
                          "renormalise to a real reference first")
    z0 = np.real(z0).reshape(capture.points, -1)
    if not np.allclose(z0, z0[:1], rtol=0, atol=0):
        raise ExportError(f"{capture.name}: the reference impedance changes with frequency; "
                          "renormalise to a constant reference first")
    refs = [float(x) for x in z0[0]] if z0.size else [50.0] * n
    v2 = suffix == ".ts" or len(set(refs)) > 1
    lines = [f"! written by sweepbook {kit_version()} on "
             f"{datetime.now(timezone.utc).isoformat(timespec='seconds')}",
             f"! capture: {capture.name}"]
    if capture.path is not None:
        lines.append(f"! source file: {capture.path.name} sha256 {capture.sha256}")
    if capture.provenance:
        lines.append(f"! corrections applied ({len(capture.provenance)}), in order:")
        for k, step in enumerate(capture.provenance, 1):
            lines.append(f"! correction {k}: {_describe_step(step)}")
    else:
        lines.append("! corrections applied: none (as measured)")
    lines.append("! reference impedance: " + ", ".join(f"port {i + 1}: {r:g} ohm"
                                                       for i, r in enumerate(refs)))
    sdef = getattr(capture.network, "s_def", None)
    if sdef:
        lines.append(f"! S-parameter definition: {sdef} waves")
    if v2:
        lines += ["[Version] 2.0", f"# Hz S RI R {_fmt(refs[0])}", f"[Number of Ports] {n}"]
        if n == 2:
            lines.append("[Two-Port Data Order] 21_12")
        lines += [f"[Number of Frequencies] {capture.points}",
                  "[Reference] " + " ".join(_fmt(r) for r in refs), "[Network Data]"]
    else:
        lines.append(f"# Hz S RI R {_fmt(refs[0])}")
    lines += _data_lines(capture)
    if v2:
        lines.append("[End]")
    write_bytes(path, ("\n".join(lines) + "\n").encode("ascii", "replace"))
    return path
