"""What the network stage accepts as a measurement: a Capture or a scikit-rf Network.

The one test (:func:`is_network`) and the one unwrapping (:func:`network_of`) of "a
Capture or a Network", and the display name (:func:`name_of`). They live here, below
both :mod:`kit.network.immittance` and :mod:`kit.network.coerce`, so that the coercion can
use the impedance methods and the impedance methods can use the coercion's rules without
an import cycle. Import them from :mod:`kit.network.coerce` (which re-exports them) or here.
"""

from __future__ import annotations

from typing import Any

from kit.capture import Capture

__all__ = ["is_network", "name_of", "network_of"]


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
