"""Composable lumped circuits: impedance as a function of frequency and named parameters.

Build a circuit from the elements :class:`R`, :class:`L`, :class:`C` (and :class:`Block`
for any closed-form impedance) with :func:`series` and :func:`parallel`::

    from kit.network.circuits import R, L, C, series, parallel
    bvd = parallel(C("C0"), series(R("R1"), L("L1"), C("C1")))
    z = bvd.z(f_hz, {"C0": 1e-9, "R1": 7.96, "L1": 1.27e-4, "C1": 2e-10})
    z, dz = bvd.z_and_jac(f_hz, values)      # dz["L1"] = dZ/dL1, analytic

Every element names its parameters; a name used by several elements is one parameter (its
derivative is the sum). Derivatives are analytic for R, L, C and their series/parallel
combinations (the chain rule through Y = sum 1/Z_i); a :class:`Block` without a derivative
function falls back to central differences.

Conventions: time dependence e^{+j omega t}, so an inductor is +j omega L (methods sheet
section 0); SI units (ohm, henry, farad, hertz).

References
----------
.. [1] Impedances of ideal R, L, C and the series (sum of impedances) and parallel (sum of
   admittances) rules: common practice, no source.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping

import numpy as np

__all__ = ["Circuit", "R", "L", "C", "Block", "Series", "Parallel", "series", "parallel"]


def _omega(f_hz) -> np.ndarray:
    return 2.0 * np.pi * np.asarray(f_hz, dtype=float)


class Circuit:
    """Base class: a two-terminal network with named parameters.

    Subclasses implement :meth:`z_and_jac`. ``params`` lists the parameter names in order of
    first appearance.
    """

    params: tuple[str, ...] = ()

    def z_and_jac(self, f_hz, values: Mapping[str, float]):  # pragma: no cover - abstract
        """Impedance [ohm] and a dict of dZ/dp [ohm per unit of p] for every parameter."""
        raise NotImplementedError

    def z(self, f_hz, values: Mapping[str, float]) -> np.ndarray:
        """Impedance [ohm] at ``f_hz`` [Hz] for the parameter ``values`` (SI)."""
        return self.z_and_jac(f_hz, values)[0]

    def y(self, f_hz, values: Mapping[str, float]) -> np.ndarray:
        """Admittance [S] = 1/Z."""
        return 1.0 / self.z(f_hz, values)

    def __call__(self, f_hz, **values: float) -> np.ndarray:
        missing = [p for p in self.params if p not in values]
        if missing:
            raise ValueError(f"missing parameter(s) {', '.join(missing)} for {self!r}")
        return self.z(f_hz, values)

    def __add__(self, other: "Circuit") -> "Series":
        return series(self, other)

    def __or__(self, other: "Circuit") -> "Parallel":
        return parallel(self, other)


class _Leaf(Circuit):
    symbol = "?"

    def __init__(self, name: str):
        if not isinstance(name, str) or not name:
            raise ValueError(f"{type(self).__name__} needs a parameter name, got {name!r}")
        self.name = name
        self.params = (name,)

    def __repr__(self) -> str:
        return f"{self.symbol}({self.name!r})"


class R(_Leaf):
    """Resistor: Z = R [ohm]."""

    symbol = "R"

    def z_and_jac(self, f_hz, values):
        w = _omega(f_hz)
        r = float(values[self.name])
        return np.full(w.shape, r, dtype=complex), {self.name: np.ones(w.shape, dtype=complex)}


class L(_Leaf):
    """Inductor: Z = j omega L [ohm]."""

    symbol = "L"

    def z_and_jac(self, f_hz, values):
        jw = 1j * _omega(f_hz)
        return jw * float(values[self.name]), {self.name: jw}


class C(_Leaf):
    """Capacitor: Z = 1/(j omega C) [ohm]."""

    symbol = "C"

    def z_and_jac(self, f_hz, values):
        jw = 1j * _omega(f_hz)
        c = float(values[self.name])
        with np.errstate(divide="ignore", invalid="ignore"):
            z = 1.0 / (jw * c)
        return z, {self.name: -z / c}


class Block(Circuit):
    """Any closed-form impedance ``zfun(f_hz, **params)`` as a circuit element.

    Parameters
    ----------
    zfun : callable
        ``zfun(f_hz, **{name: value})`` returning the complex impedance [ohm].
    params : iterable of str
        Parameter names passed to ``zfun``.
    jacfun : callable, optional
        ``jacfun(f_hz, **values)`` returning ``{name: dZ/dp}``; when omitted, central
        differences with a relative step of 1e-6 are used.
    label : str
        Name shown in the repr.
    """

    def __init__(self, zfun: Callable, params: Iterable[str], jacfun: Callable | None = None,
                 label: str = "block"):
        self.zfun = zfun
        self.params = tuple(params)
        self.jacfun = jacfun
        self.label = label

    def __repr__(self) -> str:
        return f"Block({self.label}: {', '.join(self.params)})"

    def z_and_jac(self, f_hz, values):
        kw = {p: values[p] for p in self.params}
        z = np.asarray(self.zfun(f_hz, **kw), dtype=complex)
        if self.jacfun is not None:
            return z, dict(self.jacfun(f_hz, **kw))
        jac = {}
        for p in self.params:
            v = float(kw[p])
            h = 1e-6 * abs(v) if v != 0 else 1e-9
            up = dict(kw, **{p: v + h})
            dn = dict(kw, **{p: v - h})
            jac[p] = (np.asarray(self.zfun(f_hz, **up)) - np.asarray(self.zfun(f_hz, **dn))) / (2 * h)
        return z, jac


def _merge_params(items: Iterable[Circuit]) -> tuple[str, ...]:
    seen: dict[str, None] = {}
    for it in items:
        for p in it.params:
            seen.setdefault(p, None)
    return tuple(seen)


class _Combination(Circuit):
    """Circuits joined by one rule (series or parallel); ``word`` names the rule."""

    word = "?"

    def __init__(self, *items: Circuit):
        if not items or not all(isinstance(i, Circuit) for i in items):
            raise ValueError(f"{self.word}(...) needs one or more circuits (R, L, C, Block, ...)")
        self.items = items
        self.params = _merge_params(items)

    def __repr__(self) -> str:
        return f"{self.word}(" + ", ".join(map(repr, self.items)) + ")"


class Series(_Combination):
    """Elements in series: Z = sum Z_i."""

    word = "series"

    def z_and_jac(self, f_hz, values):
        total = 0.0
        jac: dict[str, np.ndarray] = {}
        for it in self.items:
            z, dz = it.z_and_jac(f_hz, values)
            total = total + z
            for p, d in dz.items():
                jac[p] = jac[p] + d if p in jac else d
        return np.asarray(total, dtype=complex), jac


class Parallel(_Combination):
    """Elements in parallel: Y = sum 1/Z_i, Z = 1/Y, dZ/dp = Z^2 sum (dZ_i/dp)/Z_i^2."""

    word = "parallel"

    def z_and_jac(self, f_hz, values):
        ytot = 0.0
        parts = []
        with np.errstate(divide="ignore", invalid="ignore"):
            for it in self.items:
                z, dz = it.z_and_jac(f_hz, values)
                yi = 1.0 / z
                ytot = ytot + yi
                parts.append((yi, dz))
            ztot = 1.0 / np.asarray(ytot, dtype=complex)
            jac: dict[str, np.ndarray] = {}
            for yi, dz in parts:
                for p, d in dz.items():
                    term = ztot**2 * yi**2 * d
                    jac[p] = jac[p] + term if p in jac else term
        return ztot, jac


def series(*items: Circuit) -> Series:
    """Connect circuits in series (impedances add)."""
    return Series(*items)


def parallel(*items: Circuit) -> Parallel:
    """Connect circuits in parallel (admittances add)."""
    return Parallel(*items)
