"""What the network stage accepts as a measurement: a Capture or a scikit-rf Network.

The one test (:func:`is_network`) and the one unwrapping (:func:`network_of`) of "a
Capture or a Network", and the display name (:func:`name_of`). They live here, below
both :mod:`kit.network.immittance` and :mod:`kit.network.coerce`, so that the coercion can
use the impedance methods and the impedance methods can use the coercion's rules without
an import cycle. Import them from :mod:`kit.network.coerce` (which re-exports them) or here.
"""

from __future__ import annotations

from typing import Any

from kit.capture import Capture, CaptureError

__all__ = ["is_network", "name_of", "network_of", "s_term"]


def is_network(obj: Any) -> bool:
    """True for a scikit-rf Network or anything shaped like one (``s`` and ``frequency``)."""
    return hasattr(obj, "s") and hasattr(obj, "frequency") and not isinstance(obj, Capture)


def network_of(obj: Any, what: str = "this function"):
    """The scikit-rf Network of a Capture or Network.

    Raises
    ------
    TypeError
        For anything else, naming ``what`` needed it.
    """
    if isinstance(obj, Capture):
        return obj.network
    if is_network(obj):
        return obj
    raise TypeError(f"{what} needs a Capture or a scikit-rf Network, got {type(obj).__name__}")


def name_of(obj: Any, default: str = "network") -> str:
    """Display name of a Capture or Network."""
    if isinstance(obj, Capture):
        return obj.name
    return str(getattr(obj, "name", None) or default)


def s_term(obj: Any, trace: str, what: str = "this function") -> tuple[int, int, str]:
    """0-based indexes (i, j) of the S-parameter named ``trace`` ("S21") of a Capture or Network.

    Returns ``(i, j, name)`` with the name in upper case.

    Raises
    ------
    kit.CaptureError
        When the name is not of the form "Sij" or the term does not exist (names the file).
    """
    n = network_of(obj, what).nports
    path = getattr(obj, "path", None)
    t = str(trace).upper()
    if not (len(t) == 3 and t[0] == "S" and t[1:].isdigit()):
        raise CaptureError(f"trace must look like 'S21', got {trace!r}", path)
    i, j = int(t[1]) - 1, int(t[2]) - 1
    if not (0 <= i < n and 0 <= j < n):
        raise CaptureError(f"trace {t} does not exist: the capture has {n} port(s)", path)
    return i, j, t
