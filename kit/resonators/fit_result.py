"""The result of a fit: :class:`FitResult` (parameters, uncertainties, noise, flags).

Made by :func:`kit.fit` (:mod:`kit.resonators.fitting`), which re-exports it.
"""

from __future__ import annotations

import html
import json
import math
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

from kit.resonators.registry import get_model
from kit.results import Result
from kit.units import column_label, eng, percent, quantity, scale_for, unit_of

__all__ = ["FitResult", "param_unit"]


def _jsonable(v):
    if isinstance(v, dict):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_jsonable(x) for x in v]
    if isinstance(v, (complex, np.complexfloating)):
        return {"__complex__": [_jsonable(v.real), _jsonable(v.imag)]}
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return float(v) if math.isfinite(v) else None
    if isinstance(v, np.ndarray):
        return _jsonable(v.tolist())
    return v


def _unjson(v, nan=True):
    if isinstance(v, dict):
        if set(v) == {"__complex__"}:
            re, im = v["__complex__"]
            return complex(np.nan if re is None else re, np.nan if im is None else im)
        return {k: _unjson(x, nan) for k, x in v.items()}
    if isinstance(v, list):
        return [_unjson(x, nan) for x in v]
    if v is None and nan:
        return float("nan")
    return v


def param_unit(name: str) -> str:
    """Unit of a fit parameter or derived figure: the kit's one look-up, :func:`kit.units.unit_of`."""
    return unit_of(name)



def _derived(key: str, doc: str) -> property:
    """A read-only figure of ``FitResult.derived`` (NaN when the model has none)."""
    return property(lambda self: float(self.derived.get(key, np.nan)), doc=doc)

@dataclass(frozen=True)
class FitResult(Result):
    """Outcome of one fit: parameters with uncertainties, derived figures and flags.

    Attributes
    ----------
    model : str
        Model name (see :mod:`kit.resonators.models`).
    params, stderr : dict
        Fitted values and standard errors, SI units (F, ohm, H, Hz, 1); NaN when the fit
        failed or an uncertainty could not be computed.
    correlation : dict of dict
        Correlation coefficients between parameters.
    derived, derived_stderr : dict
        Figures of the fitted model ("fs_hz", "fp_hz", "k_eff", "qm", ...), with errors.
    residual_rel : float
        Normalised RMS residual sqrt(mean(|Y_model - Y_meas|^2 / |Y_meas|^2)) [1].
    noise_rms : float
        The measurement noise in the same measure, estimated from the data alone (finite
        differences of neighbouring points, :mod:`kit.resonators.noise`): the
        ``residual_rel`` a perfect model would leave [1].
    residual_to_noise : float
        RMS of the weighted residual over the noise estimated in the same weighting [1]:
        about 1 when the fit reached the noise floor; above
        :data:`kit.resonators.solve.NOISE_FACTOR` the errors are inflated
        ("errors-inflated") and, with ``residual_rel`` above the ``poor_fit`` limit of
        :func:`kit.fit`, the fit is "poor-fit".
    ok : bool
        True when no severe flag is raised (see :data:`SEVERE_FLAGS`).
    flags : tuple of str
        e.g. "at-bound:R2", "not-converged", "poor-fit", "span-too-narrow".
    reason : str
        Why ``ok`` is False (empty when ok).
    start : dict
        The first start value tried (from the data, or the caller's); restarts from further
        start values are counted in ``nfev`` and ``njev``.

    A :class:`kit.results.Result` whose ``to_dict()`` is strict JSON (NaN and inf become None,
    read back as NaN by ``from_dict``), as fits are written with ``allow_nan=False``.
    """

    model: str
    params: dict
    stderr: dict
    correlation: dict = field(default_factory=dict)
    derived: dict = field(default_factory=dict)
    derived_stderr: dict = field(default_factory=dict)
    residual_rel: float = float("nan")
    noise_rms: float = float("nan")
    residual_to_noise: float = float("nan")
    ok: bool = False
    flags: tuple = ()
    reason: str = ""
    name: str = ""
    modes: int = 1
    model_options: dict = field(default_factory=dict)
    method: str = "reflection"
    weighting: str = "relative"
    span_hz: tuple | None = None
    n_points: int = 0
    nfev: int = 0
    njev: int = 0
    start: dict = field(default_factory=dict)
    f_hz: Any = field(default=None, repr=False, compare=False)
    z: Any = field(default=None, repr=False, compare=False)

    _ROWS = (("fs_hz", "fs", "Hz"), ("fp_hz", "fp", "Hz"), ("k_eff", "k_eff", ""),
             ("qm", "qm", ""), ("residual_rel", "residual (normalised RMS)", ""),
             ("noise_rms", "noise (normalised RMS, from the data)", ""),
             ("residual_to_noise", "residual / noise", ""))

    @property
    def heading(self) -> str:
        return f"fit of {self.name or '<arrays>'} with model {self.model}" + (
            f" ({self.modes} modes)" if self.modes > 1 else "")

    # -- derived figures of the fitted circuit
    fs_hz = _derived("fs_hz", "Series (motional) resonance of the fitted model [Hz].")
    fp_hz = _derived("fp_hz", "Parallel resonance of the fitted model [Hz].")
    k_eff = _derived("k_eff", "Effective coupling sqrt((fp^2 - fs^2)/fp^2) of the fitted model [1].")
    qm = _derived("qm", "Mechanical Q of the fitted model [1].")

    def model_z(self, f_hz) -> np.ndarray:
        """Impedance [ohm] of the fitted model at ``f_hz`` [Hz].

        Raises
        ------
        ValueError
            When the fit produced no parameters (see ``reason``).
        """
        if not all(np.isfinite(v) for v in self.params.values()) or not self.params:
            raise ValueError(f"fit {self.name!r} has no parameters to evaluate: {self.reason}")
        m = get_model(self.model, self.modes, **self.model_options)
        return m.z(np.asarray(f_hz, dtype=float), self.params)

    # -- text and HTML
    def _rows(self):
        for p, v in self.params.items():
            e = self.stderr.get(p, np.nan)
            rel = abs(e / v) * 100 if v else np.nan
            yield p, v, e, rel
        for p in ("fs_hz", "fp_hz", "k_eff", "qm"):
            v = self.derived.get(p, np.nan)
            if np.isfinite(v) and p not in self.params:
                e = self.derived_stderr.get(p, np.nan)
                yield p, v, e, abs(e / v) * 100 if v else np.nan

    def _value(self, p, v, e) -> str:
        """"C0 = 2.032 nF ± 1.5 pF": :func:`kit.units.quantity` (GUM 7.2.2 "±" form of a
        standard uncertainty); frequencies to six significant digits without an error."""
        u = param_unit(p)
        return quantity(v, u, stderr=e, digits=6 if u == "Hz" else 4)

    def report(self) -> str:
        """Plain-text summary: values with standard errors, derived figures, flags."""
        lines = [self.heading, f"ok: {self.ok}" + (f" ({self.reason})" if self.reason else ""),
                 f"flags: {', '.join(self.flags) or 'none'}",
                 f"residual (normalised RMS): {eng(self.residual_rel, '', 3)}; noise "
                 f"(normalised RMS, from the data): {eng(self.noise_rms, '', 3)}; residual / "
                 f"noise: {eng(self.residual_to_noise, '', 3)}",
                 f"points: {self.n_points}; "
                 f"evaluations: {self.nfev} + {self.njev} Jacobian; weighting: {self.weighting}"]
        lines.append("values ± standard uncertainty (not a confidence interval)")
        for p, v, e, rel in self._rows():
            lines.append(f"  {column_label(p)[0]:>10s} = {self._value(p, v, e)}  "
                         f"({percent(rel / 100)})")
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.report()

    def _repr_html_(self) -> str:
        esc = html.escape
        rows = "".join(
            f"<tr><td>{esc(column_label(p)[0])}</td>"
            f"<td style='text-align:right'>{esc(self._value(p, v, e))}</td>"
            f"<td style='text-align:right'>{esc(percent(rel / 100))}</td></tr>"
            for p, v, e, rel in self._rows())
        flags = esc(", ".join(self.flags) or "none")
        status = "ok" if self.ok else "NOT ok: " + esc(self.reason)
        return (f"<div><b>{esc(self.model)}</b> fit of {esc(self.name or '<arrays>')} &mdash; "
                f"{status}<br>flags: {flags}; residual {eng(self.residual_rel, '', 3)}; noise "
                f"{eng(self.noise_rms, '', 3)} (ratio {eng(self.residual_to_noise, '', 3)})"
                "<table><tr><th>parameter</th><th>value ± standard uncertainty</th>"
                f"<th>relative uncertainty</th></tr>{rows}</table></div>")

    # -- round trip
    def to_dict(self, include_data: bool = False) -> dict:
        """JSON-safe dict (NaN and inf become None; complex as {"__complex__": [re, im]})."""
        out = {}
        for fl in fields(self):
            if fl.name in ("f_hz", "z"):
                continue
            out[fl.name] = _jsonable(getattr(self, fl.name))
        if include_data and self.f_hz is not None:
            out["data"] = {"f_hz": _jsonable(np.asarray(self.f_hz)),
                           "z_re": _jsonable(np.real(self.z)), "z_im": _jsonable(np.imag(self.z))}
        return out

    @classmethod
    def from_dict(cls, d: dict) -> "FitResult":
        """Inverse of :meth:`to_dict`."""
        kw = {}
        names = {fl.name for fl in fields(cls)}
        for k, v in d.items():
            if k not in names:
                continue
            if k in ("name", "reason", "model", "method", "weighting"):
                kw[k] = v
            elif k in ("ok",):
                kw[k] = bool(v)
            elif k in ("modes", "n_points", "nfev", "njev"):
                kw[k] = int(v)
            elif k in ("flags",):
                kw[k] = tuple(v)
            elif k == "span_hz":
                kw[k] = None if v is None else tuple(_unjson(v))
            else:
                kw[k] = _unjson(v)
        data = d.get("data")
        if data:
            kw["f_hz"] = np.asarray(_unjson(data["f_hz"]), dtype=float)
            kw["z"] = (np.asarray(_unjson(data["z_re"]), dtype=float)
                       + 1j * np.asarray(_unjson(data["z_im"]), dtype=float))
        return cls(**kw)

    def to_json(self, include_data: bool = False) -> str:
        """:meth:`to_dict` as a JSON string."""
        return json.dumps(self.to_dict(include_data), allow_nan=False)

    def plot(self, ax=None):
        """Measured (if kept) and model |Z| and phase; returns the axes.

        ``ax``: None (new figure with |Z| and phase), one Axes (|Z| only) or two Axes.
        """
        import matplotlib.pyplot as plt

        if ax is None:
            _, axes = plt.subplots(2, 1, sharex=True, figsize=(7, 5))
        else:
            axes = list(ax) if isinstance(ax, (list, tuple, np.ndarray)) else [ax]
        f = self.f_hz
        if f is None:
            lo, hi = self.span_hz or (0.5 * self.fs_hz, 1.5 * self.fp_hz)
            f = np.linspace(lo, hi, 801)
        k, f_unit = scale_for(f, "Hz")
        f = np.asarray(f, float) * k  # drawn in the prefixed unit the axis label names
        if self.z is not None:
            axes[0].semilogy(f, np.abs(self.z), ".", ms=2, label="measured")
            if len(axes) > 1:
                axes[1].plot(f, np.degrees(np.angle(self.z)), ".", ms=2, label="measured")
        try:
            ff = np.linspace(np.min(f), np.max(f), max(801, len(f)))
            zm = self.model_z(ff / k)
            axes[0].semilogy(ff, np.abs(zm), "-", label=f"model {self.model}")
            if len(axes) > 1:
                axes[1].plot(ff, np.degrees(np.angle(zm)), "-", label=f"model {self.model}")
        except ValueError:
            axes[0].set_title(f"no model: {self.reason}")
        axes[0].set_ylabel("|Z| [Ω]")
        if len(axes) > 1:
            axes[1].set_ylabel("phase [°]")
        axes[-1].set_xlabel(f"frequency [{f_unit}]")
        axes[0].legend(loc="best", fontsize="small")
        return axes
