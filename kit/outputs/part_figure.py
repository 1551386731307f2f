"""One part's picture, fast: a figure made once per process and redrawn for every part.

A lot of 10,000 parts cannot afford a new matplotlib figure, a layout engine and a legend
per part. :class:`PartPainter` makes one :class:`~matplotlib.figure.Figure` on the Agg
canvas with its axes at a fixed position; for each part it only replaces the data of its
line artists (``set_data``), resets the axis limits and the texts, and renders. The limit
lines are drawn once per limits object, the legend only when the set of curves changes.

What is drawn: the measured main curve (|Z| [Ω] on a log axis for a one-port, |S21| and
|S11| [dB] for a two-port), the fitted model when a fit is given (evaluated by
:meth:`kit.resonators.fit_result.FitResult.model_z`, the one home of the models), fs and
fp from a resonance, and the limit masks (:func:`kit.review.drawing.draw_limits`).
Frequency is in the SI-prefixed unit that suits the sweep (:func:`kit.units.scale_for`).
Curves longer than the axes are decimated for display by the min/max rule of
:mod:`kit.outputs.decimate` (the envelope, so peaks and notches stay).

:func:`needs_figure` is the one rule for which parts of a lot get a picture.

Colours are the Okabe-Ito palette, chosen to stay distinct for the common forms of colour
vision deficiency [1]_; every verdict is also told by marker shape and by its word.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people", J*Fly, 2002/2008
   (https://jfly.uni-koeln.de/color/): black, orange #E69F00, sky blue #56B4E9, bluish green
   #009E73, yellow #F0E442, blue #0072B2, vermilion #D55E00, reddish purple #CC79A7.
"""

from __future__ import annotations

import io
import math
import warnings
from collections.abc import Mapping
from typing import Any

import numpy as np

from kit.outputs.decimate import minmax, minmax_indices
from kit.units import eng, scale_for

__all__ = ["PALETTE", "VERDICT_STYLE", "FIGURE_CHOICES", "PartPainter", "main_curve",
           "needs_figure", "encode_png", "figure_png", "lot_figure"]

#: The Okabe-Ito colours by name (Okabe and Ito, "Color Universal Design").
PALETTE = {"black": "#000000", "orange": "#E69F00", "sky blue": "#56B4E9",
           "bluish green": "#009E73", "yellow": "#F0E442", "blue": "#0072B2",
           "vermilion": "#D55E00", "reddish purple": "#CC79A7", "grey": "#999999"}
#: verdict -> (colour, matplotlib marker, HTML symbol): colour, shape and word all differ.
VERDICT_STYLE = {"pass": (PALETTE["bluish green"], "o", "✓"),
                 "fail": (PALETTE["vermilion"], "X", "✗"),
                 "incomplete": (PALETTE["orange"], "^", "?"),
                 "none": (PALETTE["grey"], "s", "–")}
#: Values of the ``figures`` option of the report and the batch run.
FIGURE_CHOICES = ("flagged", "all", "none")
#: Axes position in figure fractions (left, bottom, width, height): fixed, no layout engine.
AXES_RECT = (0.105, 0.16, 0.865, 0.72)


def _text(v: Any) -> str:
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    return str(v).strip()


def _severe(flags: str) -> bool:
    """Whether a summary's ``fit_flags`` text holds a severe flag or a failed fit."""
    from kit.resonators.solve import SEVERE_FLAGS

    for flag in flags.split("; ") if flags else ():
        if flag.split(":", 1)[0] in SEVERE_FLAGS or flag.startswith("fit failed"):
            return True
    return False


#: The summary columns :func:`needs_figure` reads (kept beside the rule that reads them).
RULE_COLUMNS = ("status", "verdict", "fit_ok", "fit_flags", "resonance_flags",
                "review_verdict", "retest_requested", "review_tags", "review_notes")


def needs_figure(row: Mapping, figures: str) -> bool:
    """Whether a part of a lot gets a picture: the one rule for the report and batch runs.

    Parameters
    ----------
    row : mapping
        The part's summary row (:func:`kit.summary` columns; missing columns count as empty).
    figures : {"flagged", "all", "none"}
        "all": every part; "none": no part; "flagged": a part that did not pass or
        carries a flag, that is one whose ``status`` is not "ok", whose limits
        ``verdict`` is "fail" or "incomplete", whose fit did not succeed (``fit_ok`` False),
        with a severe fit flag (:data:`kit.resonators.solve.SEVERE_FLAGS`, e.g.
        "at-bound:R1", "poor-fit"; the notes on the error estimate that nearly every fit
        of real data carries, "errors-inflated" and "systematic-residual", do not count)
        or any ``resonance_flags``, a reviewer verdict "reject" or
        "retest", a re-test request, or a reviewer's note or tag (``review_notes``,
        ``review_tags``: what a person said about the part is never left out). Without
        limits (no verdict) only the other conditions count.

    Raises
    ------
    ValueError
        For any other value of ``figures``.
    """
    if figures == "all":
        return True
    if figures == "none":
        return False
    if figures != "flagged":
        raise ValueError(f"figures must be one of {', '.join(FIGURE_CHOICES)}, got {figures!r}")
    get = row.get
    if _text(get("status")) not in ("", "ok"):
        return True
    if _text(get("verdict")) in ("fail", "incomplete"):
        return True
    fit_ok = get("fit_ok")
    if fit_ok is not None and not (isinstance(fit_ok, float) and math.isnan(fit_ok)) \
            and not bool(fit_ok):
        return True
    if _text(get("resonance_flags")) or _severe(_text(get("fit_flags"))):
        return True
    if _text(get("review_verdict")) in ("reject", "retest") or _text(get("review_tags")):
        return True
    notes = get("review_notes")
    if isinstance(notes, (int, float)) and math.isfinite(notes) and notes > 0:
        return True
    retest = get("retest_requested")
    return bool(retest) and not (isinstance(retest, float) and math.isnan(retest))


def main_curve(capture: Any) -> tuple[np.ndarray, np.ndarray, str]:
    """The main curve of a capture: (f [Hz], y, curve name).

    |Z| [Ω] by :func:`kit.network.coerce.sweep` (reflection at port 1) for a one-port,
    "z_mag_ohm"; |S21| [dB] by :func:`kit.network.reflection.db20` for more ports,
    "s21_db". Points that cannot be computed are NaN.
    """
    from kit.network.coerce import sweep
    from kit.network.reflection import db20

    f = np.asarray(capture.f_hz, dtype=float)
    if capture.ports == 1:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # singular points are NaN and simply not drawn
            return f, np.abs(sweep(capture, what="a part figure").z_ohm), "z_mag_ohm"
    with np.errstate(divide="ignore"):
        return f, db20(capture.s[:, 1, 0]), "s21_db"


def _as_dict(x: Any) -> dict | None:
    if x is None:
        return None
    if isinstance(x, Mapping):
        return dict(x)
    return x.to_dict() if hasattr(x, "to_dict") else None


def _model_curve(fit: Any, f: np.ndarray, curve: str, capture: Any):
    """(y of the fitted model on ``f``, note) for the plotted curve, or (None, why)."""
    from kit.resonators.fit_result import FitResult

    res = fit if isinstance(fit, FitResult) else FitResult.from_dict(_as_dict(fit) or {})
    try:
        z = res.model_z(f)
    except (ValueError, KeyError, TypeError) as exc:
        return None, f"no model drawn: {exc}"
    if curve == "z_mag_ohm":
        return np.abs(z), ""
    if res.method == "series-through":
        from kit.network.coerce import reference_ohm
        from kit.network.reflection import db20
        from kit.resonators.crystal import s21_series

        with np.errstate(divide="ignore"):
            return db20(s21_series(z, reference_ohm(capture, 1))), ""
    return None, f"no model drawn: a {res.method} fit is not shown on |S21|"


def _finite(*arrays) -> np.ndarray:
    parts = [np.asarray(a, float).ravel() for a in arrays if a is not None]
    v = np.concatenate(parts) if parts else np.empty(0)
    return v[np.isfinite(v)]


def encode_png(figure) -> bytes:
    """Render a figure on its Agg canvas and encode it as an RGB PNG (no alpha channel:
    smaller, and faster to write than matplotlib's RGBA ``savefig``)."""
    from PIL import Image

    canvas = figure.canvas
    canvas.draw()
    rgb = np.ascontiguousarray(np.asarray(canvas.buffer_rgba())[..., :3])
    buf = io.BytesIO()
    Image.fromarray(rgb).save(buf, format="png")
    return buf.getvalue()


class PartPainter:
    """One reusable figure per process that draws a part's picture in a few milliseconds.

    Parameters
    ----------
    dpi : int
        Resolution [dots per inch]; the figure is ``size_in`` inches.
    size_in : (float, float)
        Width and height [inch].

    Notes
    -----
    Not thread-safe (matplotlib figures are not): make one painter per process or thread.
    ``figure`` and ``ax`` are the matplotlib objects; :meth:`draw` leaves the figure
    showing the last part.
    """

    def __init__(self, dpi: int = 80, size_in: tuple[float, float] = (6.4, 2.8)):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        self.figure = Figure(figsize=size_in, dpi=dpi)  # no layout engine: fixed axes
        FigureCanvasAgg(self.figure)
        ax = self.ax = self.figure.add_axes(AXES_RECT)
        ax.set_autoscale_on(False)
        ax.grid(True, alpha=0.3)
        ax.tick_params(labelsize=8)
        (self._main,) = ax.plot([], [], lw=1.2, color=PALETTE["blue"])
        (self._second,) = ax.plot([], [], lw=1.0, color=PALETTE["sky blue"], label="|S11|")
        (self._model,) = ax.plot([], [], "--", lw=1.0, color=PALETTE["black"], label="model")
        self._fs = ax.axvline(0.0, color=PALETTE["reddish purple"], lw=0.9, ls="-.", label="fs")
        self._fp = ax.axvline(0.0, color=PALETTE["bluish green"], lw=0.9, ls="-.", label="fp")
        # fixed title and label positions: no measuring of tick labels on every draw
        self._title = ax.set_title("", fontsize=9, loc="left", y=1.0, pad=3)
        ax.set_xlabel(" ", fontsize=8)
        ax.set_ylabel(" ", fontsize=8)
        ax.xaxis.set_label_coords(0.5, -0.135)
        ax.yaxis.set_label_coords(-0.08, 0.5)
        self._note = self.figure.text(AXES_RECT[0] + AXES_RECT[2], 0.9, "", ha="right",
                                      va="bottom", fontsize=7)
        self._limits: tuple | None = None
        self._limit_artists: list = []
        self._legend_key: tuple | None = None
        self._legend_image = None
        self._scale = "linear"
        self._columns = max(int(self.figure.get_figwidth() * dpi * AXES_RECT[2]), 1)

    # ------------------------------------------------------------------ drawing
    def _set_yscale(self, scale: str) -> None:
        """Log or linear y; log ticks as plain engineering text ("100", "1k"), no mathtext,
        and minor ticks at 2 and 5 of each decade without labels (cheap to draw)."""
        from matplotlib.ticker import EngFormatter, LogLocator, NullFormatter

        ax = self.ax
        ax.set_yscale(scale)
        if scale == "log":
            ax.yaxis.set_major_locator(LogLocator(base=10.0, numticks=8))
            ax.yaxis.set_minor_locator(LogLocator(base=10.0, subs=(2.0, 5.0), numticks=8))
            ax.yaxis.set_major_formatter(EngFormatter(sep=""))
            ax.yaxis.set_minor_formatter(NullFormatter())
        self._scale = scale

    def _set_limits_lines(self, limits: Any, curve: str, f_scale: float) -> None:
        key = (limits, curve, f_scale)
        if self._limits is not None and self._limits[0] is limits \
                and self._limits[1:] == key[1:]:
            return
        for a in self._limit_artists:
            a.remove()
        self._limit_artists = []
        if limits is not None:
            from kit.review.drawing import draw_limits

            self._limit_artists = draw_limits(self.ax, limits, curve=curve, f_scale=f_scale,
                                              color=PALETTE["vermilion"])
        self._limits = key

    def _set_legend(self) -> None:
        """The legend as a picture, remade only when the set of curves changes.

        A matplotlib legend lays out its boxes on every draw (a quarter of the time of a
        part's picture); drawn once into a small figure and pasted as an image it costs
        a copy of pixels.
        """
        shown = [a for a in [self._main, self._second, self._model, self._fs, self._fp,
                             *self._limit_artists]
                 if a.get_visible() and not a.get_label().startswith("_")]
        key = tuple((id(a), a.get_label()) for a in shown)
        if key == self._legend_key:
            return
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        if self._legend_image is not None:
            self._legend_image.remove()
            self._legend_image = None
        self._legend_key = key
        if not shown:
            return
        dpi = self.figure.dpi
        scratch = Figure(figsize=(6, 2), dpi=dpi)
        FigureCanvasAgg(scratch)
        leg = scratch.legend(handles=shown, fontsize=7, loc="lower left", ncols=2,
                             framealpha=1.0)
        scratch.canvas.draw()
        box = leg.get_window_extent()
        rgba = np.asarray(scratch.canvas.buffer_rgba())
        h = rgba.shape[0]
        crop = rgba[max(int(h - box.y1) - 1, 0):int(math.ceil(h - box.y0)) + 1,
                    max(int(box.x0) - 1, 0):int(math.ceil(box.x1)) + 1].copy()
        x0 = int(self.figure.bbox.width * AXES_RECT[0]) + 4
        y0 = int(self.figure.bbox.height * AXES_RECT[1]) + 4
        self._legend_image = self.figure.figimage(crop, xo=x0, yo=y0, origin="upper",
                                                  zorder=5)

    def draw(self, capture: Any, limits: Any = None, fit: Any = None,
             resonance: Any = None) -> None:
        """Show one part on the figure (see :meth:`png`)."""
        f, y, curve = main_curve(capture)
        k, f_unit = scale_for(f, "Hz")
        x = f * k
        ax = self.ax
        idx = minmax_indices(self._columns, y)
        self._main.set_data(x[idx], y[idx])
        two = curve != "z_mag_ohm"
        self._main.set_label("|S21|" if two else "|Z|")
        extra = []
        if two:
            from kit.network.reflection import db20

            with np.errstate(divide="ignore"):
                s11 = db20(capture.s[:, 0, 0])
            i2 = minmax_indices(self._columns, s11)
            self._second.set_data(x[i2], s11[i2])
            extra.append(s11)
        self._second.set_visible(two)
        note = []
        model = None
        if fit is not None:
            model, why = _model_curve(fit, f, curve, capture)
            if why:
                note.append(why)
        if model is not None:
            im = minmax_indices(self._columns, model)
            self._model.set_data(x[im], model[im])
            extra.append(model)
        self._model.set_visible(model is not None)
        res = _as_dict(resonance) or {}
        for line, key in ((self._fs, "fs_hz"), (self._fp, "fp_hz")):
            v = res.get(key)
            ok = v is not None and np.isfinite(float(v))
            line.set_visible(bool(ok))
            if ok:
                line.set_xdata([float(v) * k, float(v) * k])
                note.append(f"{key[:2]} {eng(float(v), 'Hz', 7)}")
        self._set_limits_lines(limits, curve, 1.0 / k)
        scale = "linear" if two else "log"
        if scale != self._scale:
            self._set_yscale(scale)
        # y range: the curves and the mask bounds inside the sweep
        masks = [np.asarray(a.get_ydata(), float) for a in self._limit_artists
                 if len(a.get_xdata()) == 2 and a.get_transform() is ax.transData]
        vals = _finite(y, *extra, *masks)
        if two:
            vals = vals[vals > -300]
        else:
            vals = vals[vals > 0]
        if vals.size:
            lo, hi = float(vals.min()), float(vals.max())
            if two:
                pad = 0.05 * (hi - lo) or 1.0
                ax.set_ylim(lo - pad, hi + pad)
            else:
                lo_l, hi_l = math.log10(lo), math.log10(hi)
                pad = 0.05 * (hi_l - lo_l) or 0.5
                ax.set_ylim(10 ** (lo_l - pad), 10 ** (hi_l + pad))
        if x.size > 1 and x[-1] > x[0]:
            ax.set_xlim(x[0], x[-1])
        elif x.size:
            ax.set_xlim(x[0] - 0.5, x[0] + 0.5)
        ax.xaxis.label.set_text(f"frequency [{f_unit}]")
        ax.yaxis.label.set_text("[dB]" if two else "|Z| [Ω]")
        self._title.set_text(str(getattr(capture, "name", "") or ""))
        self._note.set_text("; ".join(note))
        self._set_legend()

    def png(self, capture: Any, limits: Any = None, fit: Any = None,
            resonance: Any = None) -> bytes:
        """PNG bytes of one part's picture.

        Parameters
        ----------
        capture : Capture
            The part as analysed (corrected where the procedure corrects).
        limits : kit.Limits, optional
            Masks on the plotted curve are drawn, and bounds of frequency quantities as
            vertical lines.
        fit : dict or FitResult, optional
            ``FitResult.to_dict()``: the fitted model is drawn over the sweep.
        resonance : dict or result with ``to_dict()``, optional
            Its ``fs_hz`` and ``fp_hz`` are marked (and written with their values).
        """
        self.draw(capture, limits, fit, resonance)
        return encode_png(self.figure)

    @staticmethod
    def trace(capture: Any, n: int = 256) -> tuple[np.ndarray, np.ndarray]:
        """The main curve decimated for a lot overlay: (f [Hz], y).

        y is |Z| [Ω] for a one-port and |S21| [dB] for a two-port (:func:`main_curve`);
        the minimum and maximum of each of ``n`` columns are kept
        (:func:`kit.outputs.decimate.minmax`), so at most 2 n + 2 points, and the whole
        curve when it is short.
        """
        f, y, _ = main_curve(capture)
        return minmax(f, y, n)


_PAINTERS: dict[int, PartPainter] = {}


def figure_png(capture: Any, limits: Any = None, dpi: int = 80, fit: Any = None,
               resonance: Any = None) -> bytes:
    """PNG of a part's picture (:meth:`PartPainter.png`) by this process's one
    :class:`PartPainter` of that dpi (made on first use: matplotlib is imported only then)."""
    painter = _PAINTERS.get(dpi)
    if painter is None:
        painter = _PAINTERS[dpi] = PartPainter(dpi=dpi)
    return painter.png(capture, limits, fit=fit, resonance=resonance)


def lot_figure(capture: Any, limits: Any = None, dpi: int = 80):
    """A new figure of a capture's main curve (a fresh :class:`PartPainter`'s figure).

    |Z| [Ω] for a one-port, |S21| and |S11| [dB] else, over frequency in the SI prefix that
    suits the sweep; Agg canvas (no pyplot state, no display needed).
    """
    painter = PartPainter(dpi=dpi)
    painter.draw(capture, limits)
    return painter.figure
