"""Tidy sweeps: the sweeps of a lot as one long table, and a Network back from it.

One row per capture, stage ("raw"/"corrected") and frequency; every column name carries
its unit and frequency is in hertz.

References
----------
.. [1] H. Wickham, "Tidy Data", Journal of Statistical Software 59(10), 2014 (long tables).
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping
from typing import Any

import numpy as np

from kit.capture import Capture
from kit.outputs.entries import as_list, key_candidates, lookup

__all__ = ["tidy", "to_network"]


def _z_method(cap: Capture, z_method: Any) -> str | None:
    if isinstance(z_method, Mapping):
        for k in key_candidates(cap, -1):
            if k in z_method:
                return z_method[k]
        z_method = None
    if z_method:
        return str(z_method)
    if cap.ports == 1:
        return "reflection"
    hint = cap.meta.get("z_method")
    return str(hint) if hint else None


def _sweep_frame(cap: Capture, stage: str, z_method: str | None):
    import pandas as pd

    from kit.network.immittance import impedance

    n = cap.points
    cols: dict[str, Any] = {
        "capture": [cap.name] * n, "sha256": [cap.sha256] * n,
        "path": [None if cap.path is None else str(cap.path)] * n,
        "stage": [stage] * n, "f_hz": np.asarray(cap.f_hz, float),
    }
    s = np.asarray(cap.s)
    for i in range(cap.ports):
        for j in range(cap.ports):
            cols[f"s{i + 1}{j + 1}_re"] = s[:, i, j].real
            cols[f"s{i + 1}{j + 1}_im"] = s[:, i, j].imag
    z0 = np.asarray(cap.z0)
    for i in range(cap.ports):
        z0i = z0[:, i] if z0.ndim == 2 else np.broadcast_to(z0, (n,))
        cols[f"z0_p{i + 1}_re_ohm"] = np.real(z0i).astype(float)
        if np.any(np.imag(z0i)):
            cols[f"z0_p{i + 1}_im_ohm"] = np.imag(z0i).astype(float)
    if z_method:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # singular points are NaN in the table
            z = impedance(cap, method=z_method)
        cols["z_re_ohm"], cols["z_im_ohm"] = z.real, z.imag
    else:
        cols["z_re_ohm"] = cols["z_im_ohm"] = np.full(n, np.nan)
    cols["z_method"] = [z_method or ""] * n
    cols["s_def"] = [str(getattr(cap.network, "s_def", "power") or "power")] * n
    for k, v in cap.fields.items():
        cols[str(k)] = [v] * n
    return pd.DataFrame(cols)


def tidy(captures: Any, corrected: Any = None, z_method: Any = None):
    """The sweeps of a lot as one long table.

    Parameters
    ----------
    captures : Capture, iterable of Capture, or a :func:`kit.load_folder` table
        Raw captures (rows with ``stage = "raw"``). Refused files are skipped.
    corrected : list or dict, optional
        Corrected captures, in capture order or keyed by capture name/sha256/path (rows
        with ``stage = "corrected"``; their frequency grid may differ).
    z_method : str or dict, optional
        How the impedance columns are obtained (see :func:`kit.impedance`). Default:
        "reflection" for one-ports; for multi-ports ``meta["z_method"]`` if set, else the
        impedance columns are NaN and ``z_method`` is empty.

    Returns
    -------
    pandas.DataFrame
        Columns ``capture``, ``sha256``, ``path``, ``stage``, ``f_hz``, ``sIJ_re``,
        ``sIJ_im`` for every port pair, ``z0_pN_re_ohm`` (port reference impedance),
        ``z_re_ohm``, ``z_im_ohm``, ``z_method``, ``s_def`` and the metadata fields of the
        file name.

    Raises
    ------
    kit.CaptureError
        If a corrected entry is not a Capture.
    """
    import pandas as pd

    from kit.capture import CaptureError

    caps = [c for c in as_list(captures) if isinstance(c, Capture)]
    frames = []
    for i, cap in enumerate(caps):
        frames.append(_sweep_frame(cap, "raw", _z_method(cap, z_method)))
        cor = lookup(corrected, cap, i)
        if cor is not None:
            if not isinstance(cor, Capture):
                raise CaptureError(f"corrected entry for {cap.name!r} is not a Capture but a "
                                   f"{type(cor).__name__}")
            frames.append(_sweep_frame(cor, "corrected", _z_method(cor, z_method)))
    if not frames:
        return pd.DataFrame(columns=["capture", "sha256", "path", "stage", "f_hz"])
    return pd.concat(frames, ignore_index=True, sort=False)


def to_network(sweeps: Any, capture: str | None = None, stage: str = "raw"):
    """A scikit-rf Network back from a tidy sweeps table (one capture and stage).

    Raises
    ------
    kit.CaptureError
        If the table holds several captures and none is named, or the rows are not found.
    """
    import skrf

    from kit.capture import CaptureError

    df = sweeps[sweeps["stage"] == stage] if "stage" in sweeps else sweeps
    names = list(dict.fromkeys(df["capture"]))
    if capture is None:
        if len(names) != 1:
            raise CaptureError(f"the table holds {len(names)} captures; name one of them")
        capture = names[0]
    df = df[df["capture"] == capture]
    if df.empty:
        raise CaptureError(f"no {stage} rows for capture {capture!r}")
    ports = 0
    while f"s{ports + 1}{ports + 1}_re" in df and df[f"s{ports + 1}{ports + 1}_re"].notna().any():
        ports += 1
    f = df["f_hz"].to_numpy(float)
    s = np.empty((len(df), ports, ports), complex)
    z0 = np.empty((len(df), ports), complex)
    for i in range(ports):
        for j in range(ports):
            s[:, i, j] = (df[f"s{i + 1}{j + 1}_re"].to_numpy(float)
                          + 1j * df[f"s{i + 1}{j + 1}_im"].to_numpy(float))
        im = df.get(f"z0_p{i + 1}_im_ohm")
        z0[:, i] = df[f"z0_p{i + 1}_re_ohm"].to_numpy(float) + (
            0 if im is None else 1j * im.fillna(0).to_numpy(float))
    s_def = str(df["s_def"].iloc[0]) if "s_def" in df else None
    return skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s, z0=z0,
                        s_def=s_def or None, name=str(capture))
