"""The one coercion of "a Capture, a scikit-rf Network, or arrays" into arrays.

Every analysis, view and widget that accepts a measurement calls :func:`sweep` (or
:func:`network_of` when it needs the network itself), so that they all agree on the
frequency grid, the impedance method and the reference impedance: the reference is the
capture's own, never an assumed 50 ohm.

Accepted inputs
---------------
* a :class:`kit.Capture` (its network, name and path are kept);
* a scikit-rf ``Network`` (anything with ``s`` and ``frequency``);
* a pair ``(f_hz, z_ohm)`` as a tuple, or ``f_hz`` with ``z=`` given separately.

:func:`is_network`, :func:`network_of` and :func:`name_of` are defined in
:mod:`kit.network.accept` (below the impedance methods, which use them too) and are part
of this module's interface.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from kit.capture import CaptureError
from kit.network.accept import is_network, name_of, network_of
from kit.network.immittance import impedance

__all__ = ["Sweep", "is_network", "name_of", "network_of", "reference_ohm", "sweep"]

#: Reference impedance assumed for bare arrays when none is given [ohm] (common practice).
DEFAULT_Z0_OHM = 50.0


@dataclass(frozen=True)
class Sweep:
    """One-port view of a measurement: frequencies, impedance and where they came from.

    Attributes
    ----------
    f_hz : numpy.ndarray
        Frequencies [Hz], as measured (not sorted or de-duplicated here).
    z_ohm : numpy.ndarray
        Device impedance [ohm] by ``method``.
    z0_ohm : float
        Real reference impedance [ohm] of the port used (the capture's, port ``port``).
    name, method, path
        Label for tables and messages; the impedance method ("arrays" for bare arrays);
        the source file or None.
    network : skrf.Network or None
        The network the arrays came from (None for arrays).
    port : int
        1-based port used by "reflection".
    """

    f_hz: np.ndarray
    z_ohm: np.ndarray
    z0_ohm: float
    name: str
    method: str
    path: str | None
    network: Any = None
    port: int = 1

    @property
    def from_arrays(self) -> bool:
        """True when the sweep was made from bare arrays (no network behind it)."""
        return self.network is None


def reference_ohm(obj: Any, port: int = 1) -> float:
    """Real part of the reference impedance [ohm] of ``port`` (1-based) of a Capture or Network.

    The first frequency's value is taken: per-frequency references are rare in captures of
    resonators and the kit's impedance methods use the full array where it matters.
    """
    z0 = np.asarray(network_of(obj, "reference_ohm").z0)
    if z0.ndim == 2:
        return float(np.real(z0[0, min(port - 1, z0.shape[1] - 1)]))
    return float(np.real(np.ravel(z0)[0]))


def sweep(obj: Any, z: Any = None, *, method: str = "reflection", port: int = 1,
          z0_ohm: float | None = None, what: str = "this function") -> Sweep:
    """Frequencies, impedance and reference of a measurement, by one rule for the whole kit.

    Parameters
    ----------
    obj : Capture, skrf.Network, tuple (f_hz, z_ohm) or array_like f_hz
        The measurement. With arrays, ``z`` (or the second element of the tuple) is the
        impedance [ohm] at ``f_hz`` [Hz].
    z : array_like of complex, optional
        Impedance [ohm] when ``obj`` is the frequency array.
    method : {"reflection", "series-through", "shunt-through"}
        How a network's S-parameters become an impedance (:func:`kit.impedance`).
    port : int
        1-based port for "reflection".
    z0_ohm : float, optional
        Reference impedance [ohm] for bare arrays (default 50 ohm). For a capture or
        network the capture's own reference is used and this must be None or equal to it.
    what : str
        The caller's name, used in error messages.

    Returns
    -------
    Sweep

    Raises
    ------
    TypeError
        For an object that is none of the accepted kinds.
    ValueError
        For arrays of different shapes or not one-dimensional.
    CaptureError
        When the network has too few ports for the method (from :func:`kit.impedance`).
    """
    if z is None and isinstance(obj, tuple) and len(obj) == 2:
        obj, z = obj
    if z is None:
        ntwk = network_of(obj, what)
        zz = impedance(obj, method=method, port=port)
        ref_port = port if method == "reflection" else 1
        z0 = reference_ohm(obj, ref_port)
        if z0_ohm is not None and not np.isclose(float(z0_ohm), z0):
            path = getattr(obj, "path", None)
            raise CaptureError(f"{what}: the capture's reference is {z0:g} Ω, not {z0_ohm:g} "
                               "Ω; leave z0_ohm unset for a capture", path)
        path = getattr(obj, "path", None)
        return Sweep(np.asarray(ntwk.frequency.f, dtype=float), np.asarray(zz, dtype=complex),
                     z0, name_of(obj), method, None if path is None else str(path), ntwk, port)
    f = np.asarray(obj, dtype=float)
    zz = np.asarray(z, dtype=complex)
    if f.ndim != 1 or zz.shape != f.shape:
        raise ValueError(f"{what}: f_hz and z must be 1-D arrays of the same length, got "
                         f"shapes {f.shape} and {zz.shape}")
    z0 = DEFAULT_Z0_OHM if z0_ohm is None else float(z0_ohm)
    return Sweep(f, zz, z0, "arrays", "arrays", None, None, port)
