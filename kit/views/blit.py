"""Redraw only what changed: a figure's static parts kept as a picture, the rest blitted.

A widget figure (lot browser) has parts that rarely change (Smith chart grid and its
captions, axes, ticks, legend) and parts that change on every interaction (trace lines,
pins). :class:`BlitLayers` keeps the pixels of the static parts after a full draw, and on
an interaction restores them, draws only the changing ("dynamic") artists on top and hands
the result to the canvas (:meth:`FigureCanvasBase.blit`; with ipympl the browser receives
only the changed pixels). When the static parts of one vertical band of the figure change
(new axis limits, another chart), only that band is cleared and drawn again, or restored
from a picture kept under a key that names its look (a return to an earlier view). While
one axis of a band moves, the other axis's labels and an unchanged legend keep their pixels
(strips); a legend that changed alone is redrawn in its own region (a patch).

Every kind of render gives the same pixels as a full draw of the same state: the lot
browser's session test compares them, pixel for pixel, along some 80 interactions.

Dynamic artists are marked ``animated``: a full draw (a resize in the browser, a
``draw_idle``) leaves them out of the kept background, and the ``draw_event`` handler draws
them on top, so every path shows the same picture. Saving the figure (``savefig``) draws
them as usual.

References
----------
.. [1] Matplotlib developers, "Faster rendering by using blitting", Matplotlib 3.x user
   guide (animated artists, ``copy_from_bbox``, ``restore_region``, ``draw_artist``,
   ``blit``).
"""

from __future__ import annotations

import functools
from collections import OrderedDict
from typing import Any, Callable, Iterable

#: The kinds of render (:meth:`BlitLayers.render`), counted in :attr:`BlitLayers.counts`.
RENDER_KINDS = ("full", "band", "patch", "blit")
#: Band pictures kept for a return to an earlier look (about 1 MB each for a lot browser).
KEEP = 16


def _skip(renderer) -> None:
    """Draw nothing (stands in for the draw of an artist whose pixels are kept)."""


def ticks_only(axis, renderer, draw: Callable[[Any], bool] = lambda a: False) -> None:
    """Stand-in for :meth:`matplotlib.axis.Axis.draw` that draws each tick's grid line
    and tick marks, in matplotlib's order, and of the tick labels, axis label and offset
    text only those ``draw(text)`` asks for (the others keep their pixels,
    :func:`axis_texts`). Uses matplotlib's ``Axis._update_ticks`` (the ticks in view), as
    ``Axis.draw`` itself does. (Keeping the tick marks' pixels too was tried: where a mark
    meets the axes' edge, its old pixels differ from a fresh draw once the other axis has
    moved.)"""
    for tick in axis._update_ticks():
        if tick.get_visible():
            for line in (tick.gridline, tick.tick1line, tick.tick2line):
                line.draw(renderer)
            for text in (tick.label1, tick.label2):
                if draw(text):
                    text.draw(renderer)
    for text in (axis.label, axis.offsetText):
        if draw(text):
            text.draw(renderer)


def axis_texts(ax, which: str) -> list[Any]:
    """The tick labels (major and minor), the label and the offset text of one axis."""
    a = ax.xaxis if which == "x" else ax.yaxis
    ticks = a.get_major_ticks() + a.get_minor_ticks()
    return [t.label1 for t in ticks] + [t.label2 for t in ticks] + [a.label, a.offsetText]


class BlitLayers:
    """Static background kept as pixels; dynamic artists drawn over it on each render.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        A figure on an Agg-based canvas (Agg, ipympl). Other canvases fall back to
        ``fallback`` (or ``draw_idle``) on every render.
    dynamic : callable
        Returns the dynamic artists at this moment (trace lines, pins...).
    fallback : callable, optional
        Called instead of blitting when the canvas cannot blit (e.g. a PNG host).

    Attributes
    ----------
    counts : dict of str -> int
        Renders by kind: "full" (whole figure), "band" (one band redrawn), "patch" (only
        small regions such as a legend redrawn), "blit" (dynamic artists only); also
        "kept" (band pictures restored) and "strip" (band draws that kept a strip).
    """

    def __init__(self, fig, dynamic: Callable[[], Iterable[Any]],
                 fallback: Callable[[], None] | None = None) -> None:
        from matplotlib.patches import Rectangle
        from matplotlib.transforms import IdentityTransform

        self.fig = fig
        self.dynamic = dynamic
        self.fallback = fallback
        self.bands: dict[str, tuple[float, float, Callable[[], list[Any]]]] = {}
        self.patches: dict[str, Callable[[], list[Any]]] = {}
        self.strips: dict[str, tuple[Callable, Callable, Callable | None]] = {}
        self._keep: dict[str, set[str]] = {}
        self._drawn: set[str] = set()  # bands whose artists match their pixels
        self._boxes: dict[str, list[tuple[Any, Any]]] = {}  # strip -> measured boxes
        self._extents: dict[str, Any] = {}
        self._dirty: dict[str, Any] = {}  # band or patch -> key of its new look (or None)
        self._kept: OrderedDict[tuple[str, Any], Any] = OrderedDict()
        self._bg = None
        self._bg_size: tuple[int, int] | None = None
        self._full = True
        self.counts = dict.fromkeys(RENDER_KINDS, 0)
        self.counts["kept"] = 0  # band pictures restored instead of drawn
        self.counts["strip"] = 0  # strips of a band kept while the band was drawn
        self._blank = Rectangle((0, 0), 1, 1, transform=fig.transFigure, lw=0,
                                antialiased=False)
        self._blank.set_figure(fig)
        self._blank_px = Rectangle((0, 0), 1, 1, transform=IdentityTransform(), lw=0,
                                   antialiased=False)
        self._blank_px.set_figure(fig)
        if self.can_blit:
            fig.canvas.mpl_connect("draw_event", self._on_draw)
            # the figure is drawn by its layers only: pyplot's "draw when stale" would ask
            # the page for a second, full frame after every change
            fig.stale_callback = None

    @property
    def can_blit(self) -> bool:
        """The canvas can copy and restore regions (an Agg canvas)."""
        c = self.fig.canvas
        return hasattr(c, "copy_from_bbox") and hasattr(c, "restore_region")

    def add_band(self, name: str, x0: float, x1: float, axes: Callable[[], list[Any]]) -> None:
        """A vertical band of the figure, ``x0`` to ``x1`` in figure fractions, whose
        static parts are the axes ``axes()`` returns (only visible ones are drawn). Bands
        must not overlap, and each axes must draw inside its band."""
        self.bands[name] = (float(x0), float(x1), axes)

    def add_patch(self, name: str, artists: Callable[[], list[Any]]) -> None:
        """A small static region: the extent of the artists ``artists()`` returns (a legend
        outside the axes, say). Invalidated, only that region (old and new extent) is
        cleared and those artists drawn again. Nothing else may be drawn there."""
        self.patches[name] = artists
        self._extents[name] = None

    def add_strip(self, name: str, artists: Callable[[], list[Any]],
                  skip: Callable[[], list[Any]] | None = None,
                  stand_in: Callable[[Any, Any], None] | None = None) -> None:
        """Artists inside a band whose pixels can be kept when the band is drawn again
        without them changing (an axis's tick labels and label when only the other axis
        moved, a legend): :meth:`invalidate` with ``keep=(name,)``.

        ``artists()`` are the artists whose pixel boxes are put back; ``skip()`` (default:
        the same) the artists not drawn, and ``stand_in(artist, renderer)`` draws what of
        a skipped artist lies outside those boxes (an axis's grid lines and tick marks,
        see :func:`ticks_only`)."""
        self.strips[name] = (artists, skip or artists, stand_in)

    def invalidate(self, band: str | None = None, key: Any = None,
                   keep: Iterable[str] = ()) -> None:
        """The static parts of ``band`` or patch (of the whole figure when None) have
        changed.

        ``key`` (hashable) names the band's new look completely (limits, scale, chart,
        legend...): the band's pixels are then kept under that key, and a later return to
        the same look restores them instead of drawing the band again. The caller answers
        for the key holding everything the band shows.

        ``keep`` names strips (:meth:`add_strip`) whose artists did not change: the band is
        drawn without them and their old pixels are put back (text is the costly part of
        a band)."""
        if band is None:
            self._full = True
        else:
            self._keep[band] = set(keep) & self._keep.get(band, set(keep))
            self._dirty[band] = key

    def mark_dynamic(self, artists: Iterable[Any]) -> None:
        """Mark artists as dynamic (left out of the kept background)."""
        for a in artists:
            a.set_animated(True)

    def _ordered(self) -> list[Any]:
        arts = [a for a in self.dynamic() if a.get_visible()
                and (a.axes is None or a.axes.get_visible())]
        return sorted(arts, key=lambda a: a.get_zorder())

    def _extent(self, name: str, renderer):
        """Union of the window extents [pixel] of a patch's visible artists (None if none)."""
        from matplotlib.transforms import Bbox

        boxes = [a.get_window_extent(renderer) for a in self.patches[name]()
                 if a is not None and a.get_visible()]
        return Bbox.union(boxes) if boxes else None

    def _note_extents(self, renderer) -> None:
        for name in self.patches:
            self._extents[name] = self._extent(name, renderer)

    def _redraw_patch(self, name: str, renderer, redrawn: list[tuple[float, float]]) -> bool:
        """Clear a patch's old and new extent and draw its artists; False when a band
        redrawn in this render already covered it."""
        from matplotlib.transforms import Bbox

        old, new = self._extents.get(name), self._extent(name, renderer)
        boxes = [b for b in (old, new) if b is not None]
        self._extents[name] = new
        if not boxes:
            return False
        box = Bbox.union(boxes).padded(2.0)
        width = self.fig.bbox.width
        if any(x0 * width <= box.x0 and box.x1 <= x1 * width for x0, x1 in redrawn):
            return False
        self._boxes.clear()  # a strip's artist may be among those drawn anew
        self._blank_px.set_bounds(box.x0, box.y0, box.width, box.height)
        self._blank_px.set_facecolor(self.fig.get_facecolor())
        self._blank_px.draw(renderer)
        for a in self.patches[name]():
            if a is not None and a.get_visible():
                a.draw(renderer)
        return True

    def _draw_band(self, name: str, key: Any, renderer) -> None:
        """Draw a band's static parts again, or restore its pixels kept under ``key``."""
        from matplotlib.transforms import Bbox

        canvas = self.fig.canvas
        x0, x1, axes = self.bands[name]
        if key is not None and (name, key) in self._kept:
            self._kept.move_to_end((name, key))
            canvas.restore_region(self._kept[(name, key)])
            for ax in axes():
                # what Axes.draw would have done before drawing: an equal-aspect axes
                # (Smith chart) takes its final box now, and the traces drawn over the
                # restored pixels go through the same transform
                if ax.get_visible():
                    ax.apply_aspect()
            self.counts["kept"] += 1
            # matplotlib's tick labels still hold the last drawn look, not this one: no
            # strip of this band can be kept until the band is drawn again
            self._drawn.discard(name)
            self._boxes.clear()
            return
        keep = self._keep.pop(name, set()) if name in self._drawn else set()
        self._drawn.add(name)
        kept = self._strip_boxes(keep, renderer)  # (artist, pixel box) before the draw
        if kept:  # what lies where another strip's artists may come is drawn, not kept
            zones = self._zones([n for n in self.strips if n not in keep], renderer)
            kept = [(a, b) for a, b in kept if not any(b.overlaps(z) for z in zones)]
        self._paint_band(x0, x1, axes,
                         self._skipped(keep, {id(a) for a, _ in kept}) if kept else [])
        if kept and self._overlaps_others(kept, keep, renderer):
            kept = []  # a kept label would cover a new one: draw the band in full instead
            self._paint_band(x0, x1, axes, [])
        if not kept:
            self._boxes.clear()  # artists drawn anew and not measured
        height = self.fig.bbox.height
        for _, box in kept:  # the strips' old pixels, from the picture before this render
            top, bottom = height - box.y1, height - box.y0  # the region's rows run downwards
            canvas.restore_region(self._bg, bbox=(box.x0, top, box.x1, bottom), xy=(0, 0))
        self.counts["strip"] += bool(kept)
        w = self.fig.bbox.width
        for ax in axes():  # an axis label pushed out of its band by wide tick labels
            for text in (ax.xaxis.label, ax.yaxis.label):
                if ax.get_visible() and text.get_visible() and text.get_text():
                    box = text.get_window_extent(renderer)
                    if box.x0 < x0 * w or box.x1 > x1 * w:
                        self._full = True  # the render ends with a full draw
        if key is not None:
            self._kept[(name, key)] = canvas.copy_from_bbox(
                Bbox.from_extents(x0 * w, 0.0, x1 * w, height))
            while len(self._kept) > KEEP:
                self._kept.popitem(last=False)

    def _skipped(self, names: Iterable[str], kept: set[int]) -> list[tuple[Any, Any]]:
        """(artist, its draw in this render) of every artist the strips leave out: a
        stand-in, told to draw the strip's artists that are not kept (``kept``: ids), or
        nothing for a kept artist without stand-in."""
        out = []
        for n in sorted(names):
            _, skip, stand_in = self.strips[n]
            for a in skip():
                if a is None:
                    continue
                if stand_in is not None:
                    out.append((a, functools.partial(stand_in, a,
                                                     draw=lambda t: id(t) not in kept)))
                elif id(a) in kept:
                    out.append((a, _skip))
        return out

    def _zones(self, names: Iterable[str], renderer) -> list[Any]:
        """Where the artists of other strips may be drawn anew: the union of their boxes,
        stretched across the figure along its longer side (tick labels move along their
        axis, not across it)."""
        from matplotlib.transforms import Bbox

        w, h = self.fig.bbox.width, self.fig.bbox.height
        out = []
        for name in names:
            boxes = [b for _, b in self._strip_boxes([name], renderer)]
            if boxes:
                u = Bbox.union(boxes)
                out.append(Bbox.from_extents(0, u.y0, w, u.y1) if u.width >= u.height
                           else Bbox.from_extents(u.x0, 0, u.x1, h))
        return out

    def _paint_band(self, x0: float, x1: float, axes, skipped: list[tuple[Any, Any]]) -> None:
        """Clear a band and draw its axes, leaving out the ``skipped`` artists (drawing
        their stand-ins in their place)."""
        renderer = self.fig.canvas.get_renderer()
        for a, instead in skipped:
            # skipped, not hidden: a hidden tick label would move the axis label, which
            # matplotlib places from the tick labels' extents during the draw
            a.draw = instead
        try:
            self._blank.set_bounds(x0, 0.0, x1 - x0, 1.0)
            self._blank.set_facecolor(self.fig.get_facecolor())
            self._blank.draw(renderer)
            for ax in axes():
                if ax.get_visible():
                    ax.draw(renderer)  # animated children are left out
        finally:
            for a, _ in skipped:
                del a.draw

    def _texts(self, names: Iterable[str]) -> list[Any]:
        return [a for n in names for a in self.strips[n][0]()
                if a is not None and a.get_visible()
                and (not hasattr(a, "get_text") or a.get_text())]

    def _strip_boxes(self, names: Iterable[str], renderer) -> list[tuple[Any, Any]]:
        """(artist, whole-pixel box around it) of every visible artist of the strips.

        Boxes are measured once and reused while the strip's artists are known not to
        have changed (kept, or measured after being drawn); every other draw forgets
        them (:attr:`_boxes`)."""
        from matplotlib.transforms import Bbox

        out = []
        for name in sorted(names):
            if name not in self._boxes:
                boxes = []
                for a in self._texts([name]):
                    b = a.get_window_extent(renderer).padded(1.0)
                    boxes.append((a, Bbox.from_extents(
                        int(max(b.x0, 0.0)), int(max(b.y0, 0.0)), int(b.x1) + 1,
                        int(b.y1) + 1)))
                self._boxes[name] = boxes
            out += self._boxes[name]
        return out

    def _overlaps_others(self, kept, keep: set[str], renderer) -> bool:
        """Whether a kept box meets an artist of the other strips, as just drawn (those
        are measured now, and their boxes kept for the next render)."""
        for name in self.strips:
            if name not in keep:
                self._boxes.pop(name, None)
        others = self._strip_boxes([n for n in self.strips if n not in keep], renderer)
        return any(box.overlaps(o) for _, box in kept for _, o in others)

    def _draw_dynamic(self, renderer) -> None:
        for a in self._ordered():
            a.draw(renderer)

    def _on_draw(self, event) -> None:
        """After a full draw (any cause): keep the background, then draw dynamic artists."""
        canvas = self.fig.canvas
        if event is not None and event.canvas is not canvas:
            return
        if getattr(canvas, "is_saving", lambda: False)():
            return  # savefig draws the animated artists itself
        renderer = canvas.get_renderer()
        self._bg = canvas.copy_from_bbox(self.fig.bbox)
        self._bg_size = canvas.get_width_height(physical=True)
        self._note_extents(renderer)
        self._full = False
        self._dirty.clear()
        self._keep.clear()
        self._kept.clear()  # a full draw: maybe another size, or other static parts
        self._boxes.clear()
        self._drawn = set(self.bands)
        self._draw_dynamic(renderer)

    def render(self) -> str:
        """Bring the canvas up to date with the least drawing; returns the kind of render."""
        canvas = self.fig.canvas
        if not self.can_blit:
            (self.fallback or canvas.draw_idle)()
            self.counts["full"] += 1
            return "full"
        if getattr(canvas, "syncing_data_url", False):
            # an ipympl canvas whose page has not connected yet: it asks for a full frame
            # when it does, so a request is enough (drawing now would send pixels to no one)
            canvas.draw_idle()
            self.counts["full"] += 1
            return "full"
        if (self._full or self._bg is None
                or self._bg_size != canvas.get_width_height(physical=True)):
            self.counts["full"] += 1
            canvas.draw()  # -> _on_draw
            return "full"
        renderer = canvas.get_renderer()
        canvas.restore_region(self._bg)
        kind = "blit"
        if self._dirty:
            kind = "band"
            redrawn = []
            for name in sorted(set(self._dirty) & set(self.bands)):
                self._draw_band(name, self._dirty[name], renderer)
                redrawn.append(self.bands[name][:2])
            patched = [self._redraw_patch(name, renderer, redrawn)
                       for name in sorted(set(self._dirty) & set(self.patches))]
            if not redrawn:
                kind = "patch" if any(patched) else "blit"
            if redrawn:
                self._note_extents(renderer)
            self._dirty.clear()
            self._keep.clear()
            self._bg = canvas.copy_from_bbox(self.fig.bbox)
        if self._full:  # a band's artists reached beyond it: draw everything
            self.counts["full"] += 1
            canvas.draw()  # -> _on_draw
            return "full"
        self._draw_dynamic(renderer)
        canvas.blit(self.fig.bbox)
        # the picture is current: a figure left "stale" would be drawn again in full by
        # pyplot's draw-all hook, which IPython runs after every widget message
        self.fig.stale = False
        self.counts[kind] += 1
        return kind


__all__ = ["BlitLayers", "KEEP", "RENDER_KINDS", "axis_texts", "ticks_only"]
