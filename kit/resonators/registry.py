"""The fit models by name: one registry over the circuit models and the physical models.

See :mod:`kit.resonators.models` for the table of models and their sources.
"""

from __future__ import annotations

import numpy as np

from kit.resonators import physical as mp
from kit.resonators.models import (
    Model,
    bvd_loss_model,
    bvd_model,
    capacitor_model,
    inductor_model,
    multi_model,
)

__all__ = ["MODEL_NAMES", "get_model"]

MODEL_NAMES: tuple[str, ...] = ("bvd", "bvd-loss", "multi", "plate", "bar", "inductor",
                                "capacitor")


def get_model(name: str, modes: int = 1, **options) -> Model:
    """A model by registry name (see the module docstring for the table).

    Parameters
    ----------
    name : str
        One of :data:`MODEL_NAMES`. "bvd" with ``modes > 1`` is the same as "multi".
    modes : int
        Number of motional branches ("multi"/"bvd" only).
    **options
        Model options: "plate" takes ``z_front`` and ``z_back`` (acoustic loads normalised
        to the plate's rho v A, default 0 = free faces).

    Raises
    ------
    ValueError
        For an unknown name, modes < 1, or options the model does not take.
    """
    if not isinstance(modes, (int, np.integer)) or modes < 1:
        raise ValueError(f"modes must be a positive integer, got {modes!r}")
    if name not in MODEL_NAMES:
        raise ValueError(f"unknown model {name!r}; choose one of {', '.join(MODEL_NAMES)}")
    if name in ("plate", "bar"):
        if name == "bar" and modes != 1:
            raise ValueError("model 'bar' has a single mode; use modes=1")
        bad = set(options) - ({"z_front", "z_back"} if name == "plate" else set())
        if bad:
            raise ValueError(f"model {name!r} does not take option(s) {', '.join(sorted(bad))}")
        return mp.plate_model(modes=int(modes), **options) if name == "plate" else mp.bar_model()
    if options:
        raise ValueError(f"model {name!r} takes no options, got {', '.join(options)}")
    if name == "multi" or (name == "bvd" and modes > 1):
        return multi_model(int(modes))
    if modes != 1:
        raise ValueError(f"model {name!r} has a single mode; use model='multi' for several")
    return {"bvd": bvd_model, "bvd-loss": bvd_loss_model, "inductor": inductor_model,
            "capacitor": capacitor_model}[name]()
