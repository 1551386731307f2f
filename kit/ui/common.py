"""Shared helpers of the widget cells: figures, messages, guarded callbacks, controls.

* :class:`FigureHost` makes a matplotlib figure once and shows it either as an ipympl
  canvas (when the notebook runs ``%matplotlib widget``) or as a PNG in an
  ``ipywidgets.Image`` (any other backend, and plain pytest). ``host.refresh()`` redraws
  after artists were updated (``draw_idle`` on ipympl; a new PNG otherwise).
* :class:`MessageBar` shows errors and notes in the panel (HTML-escaped), and
  :meth:`MessageBar.guard` wraps a callback so an exception becomes a message instead of a
  traceback that kills the panel.
* :func:`classed` puts our CSS class names on widgets (stable selectors for browser tests).
* :func:`span_slider` is a range slider that only reports when released.

All CSS classes start with ``sb-``.
"""

from __future__ import annotations

import functools
import html
import io
import re
import warnings
from typing import Any, Callable

from kit.ui.frames import faster_frames
from kit.units import from_unit, to_unit

#: Message colours (error, note).
ERROR_FG = "#8c1d18"
NOTE_FG = "#5b4a14"
#: Message kinds: colour and mark.
KINDS = {"error": (ERROR_FG, "⚠"), "warning": ("#8a4b08", "⚠"), "note": (NOTE_FG, "ℹ")}


def classed(widget, *names: str):
    """Add ``sb-<name>`` CSS classes to a widget and return it."""
    for n in names:
        widget.add_class(n if n.startswith("sb-") else f"sb-{n}")
    return widget


def interactive_backend() -> bool:
    """True when matplotlib draws to ipympl canvases (``%matplotlib widget``)."""
    import matplotlib

    b = matplotlib.get_backend().lower()
    return "ipympl" in b or b.endswith("widget") or "nbagg" in b


class FigureHost:
    """A figure made once, shown as an ipympl canvas or as a PNG image widget.

    Parameters
    ----------
    figsize : (float, float)
        Size [inch].
    dpi : int
        Resolution of the PNG fallback [dot/inch].
    interactive : bool, optional
        Force (True) or refuse (False) the ipympl canvas; default: follow the backend.
    css : str
        CSS class name of the shown widget.

    Attributes
    ----------
    fig : matplotlib.figure.Figure
    widget : ipywidgets.DOMWidget
        The canvas (ipympl) or an ``ipywidgets.Image``.
    interactive : bool
    """

    def __init__(self, figsize=(10.0, 4.2), dpi: int = 90, interactive: bool | None = None,
                 css: str = "figure") -> None:
        import ipywidgets as w

        self.interactive = interactive_backend() if interactive is None else bool(interactive)
        self.dpi = dpi
        if self.interactive:
            import matplotlib.pyplot as plt

            with plt.ioff():
                self.fig = plt.figure(figsize=figsize, dpi=dpi)
            canvas = self.fig.canvas
            for attr, val in (("header_visible", False), ("footer_visible", False),
                              ("resizable", False), ("toolbar_position", "left")):
                try:
                    setattr(canvas, attr, val)
                except Exception:  # noqa: BLE001 - older ipympl lacks some traits
                    pass
            faster_frames(canvas)  # the same frames, encoded about 20x faster (kit.ui.frames)
            self.widget = canvas
        else:
            from matplotlib.figure import Figure

            self.fig = Figure(figsize=figsize, dpi=dpi)
            self.widget = w.Image(format="png", layout=w.Layout(max_width="100%"))
        classed(self.widget, css)
        self.renders = 0

    def refresh(self) -> None:
        """Show the current state of the figure (after artists were updated)."""
        self.renders += 1
        if self.interactive:
            self.fig.canvas.draw_idle()
            return
        buf = io.BytesIO()
        self.fig.savefig(buf, format="png", dpi=self.dpi)
        self.widget.value = buf.getvalue()

    def close(self) -> None:
        """Release the figure (ipympl keeps figures alive through pyplot)."""
        if self.interactive:
            import matplotlib.pyplot as plt

            plt.close(self.fig)


class MessageBar:
    """The one place where a panel speaks to the user: errors, warnings and notes.

    Every panel shows its messages here, in one style: a mark (⚠ for an error or a warning,
    ℹ for a note), then a plain sentence (HTML-escaped) that says what happened and what to
    do, never a Python class name (:func:`plain_error`).

    Attributes
    ----------
    widget : ipywidgets.HTML
        Class ``sb-message``; the shown span carries ``data-kind``.
    last : str
        The last plain-text message ('' when cleared).
    kind : str
        "error", "warning", "note" or ''.
    """

    def __init__(self) -> None:
        import ipywidgets as w

        self.widget = classed(w.HTML(""), "message")
        self.last = ""
        self.kind = ""

    def show(self, text: str, kind: str = "error") -> None:
        """Show ``text`` (escaped) as an "error", a "warning" or a "note"."""
        if kind not in KINDS:
            raise ValueError(f"a message is an error, a warning or a note, not {kind!r}")
        self.last, self.kind = text, kind
        fg, mark = KINDS[kind]
        self.widget.value = (f'<span style="color:{fg}" data-kind="{kind}">{mark} '
                             f"{html.escape(text)}</span>")

    def clear(self) -> None:
        """Remove the message."""
        self.last, self.kind = "", ""
        self.widget.value = ""

    def guard(self, fn: Callable[..., Any]) -> Callable[..., Any]:
        """Wrap a callback: exceptions become an error; warnings are added as a note (after
        an error or warning the callback showed itself, which they do not replace)."""

        @functools.wraps(fn)
        def wrapper(*args, **kwargs):
            self.clear()
            try:
                with warnings.catch_warnings(record=True) as caught:
                    warnings.simplefilter("always")
                    out = fn(*args, **kwargs)
            except Exception as exc:  # noqa: BLE001 - shown to the user instead
                self.show(plain_error(exc), "error")
                return None
            notes = [str(c.message) for c in caught
                     if not issubclass(c.category, (DeprecationWarning, PendingDeprecationWarning))]
            if notes:
                text = "; ".join(dict.fromkeys(notes))
                if self.kind in ("error", "warning"):
                    self.show(f"{self.last}; {text}", self.kind)
                else:
                    self.show(text, "note")
            return out

        return wrapper


#: A Python class name at the head of a text ("ValueError: ...") or around it
#: ("KeyError('x')"): what a panel never shows.
_CLASS_HEAD = re.compile(r"\b(?:[A-Za-z_][\w.]*\.)?[A-Z]\w*(?:Error|Exception|Warning)"
                         r"(?::\s*|\((['\"])(.*?)\1\))")


def plain_error(exc: BaseException) -> str:
    """The text a panel shows for an exception: its message as a plain sentence, without
    the Python class name (also where a message quotes another exception's).

    An exception without a message is described as an unexpected failure, with what to do.
    """
    text = str(exc.args[0] if isinstance(exc, KeyError) and exc.args else exc).strip()
    text = _CLASS_HEAD.sub(lambda m: m.group(2) or "", text).strip()
    return text or ("the action failed without saying why; check the inputs, or run the "
                    "same kit function in a cell to see where it stops")


def span_slider(lo_hz: float, hi_hz: float, description: str = "span [MHz]"):
    """A frequency range slider in MHz that reports only when released (:func:`span_hz`)."""
    import ipywidgets as w

    lo, hi = to_unit(lo_hz, "MHz"), to_unit(hi_hz, "MHz")
    step = _step(lo, hi)
    return classed(w.FloatRangeSlider(
        value=(lo, hi), min=lo, max=hi, step=step, description=description,
        continuous_update=False, readout_format=".4f",
        style={"description_width": "initial"}, layout=w.Layout(width="520px")), "span")


def span_hz(slider) -> tuple[float, float]:
    """The (low, high) frequencies [Hz] of a span slider, which shows MHz."""
    lo, hi = slider.value
    return float(from_unit(lo, "MHz")), float(from_unit(hi, "MHz"))


def set_span_hz(slider, lo_hz: float, hi_hz: float) -> None:
    """Move a span slider to (lo_hz, hi_hz) [Hz], clipped to its range."""
    lo, hi = sorted((to_unit(lo_hz, "MHz"), to_unit(hi_hz, "MHz")))
    slider.value = (max(lo, slider.min), min(hi, slider.max))


def reset_span(slider, lo_hz: float, hi_hz: float) -> None:
    """Give a span slider a new range (lo_hz, hi_hz) [Hz] and select all of it."""
    lo, hi = to_unit(lo_hz, "MHz"), to_unit(hi_hz, "MHz")
    slider.min, slider.max = -1e12, 1e12  # so that no intermediate state is clipped
    slider.value = (lo, hi)
    slider.min, slider.max = lo, hi
    slider.step = _step(lo, hi)


def _step(lo: float, hi: float) -> float:
    return max((hi - lo) / 1000.0, 1e-9)


def touchstone_names(folder) -> dict[str, Any]:
    """Touchstone files under ``folder`` (with sub-folders) by their path relative to it.

    An absent folder gives an empty dict. The files are found by
    :func:`kit.io.folder.touchstone_files`.
    """
    from pathlib import Path

    from kit.io.folder import touchstone_files

    if folder is None or not Path(folder).is_dir():
        return {}
    root = Path(folder)
    return {str(p.relative_to(root)): p.resolve() for p in touchstone_files(root, recursive=True)}


def guess(names: list[str], word: str, none: str = "(none)") -> str:
    """The name whose file stem is ``word``, else the first containing it, else ``none``."""
    from pathlib import Path

    stems = [(n, Path(n).stem.lower()) for n in names]
    hits = [n for n, s in stems if s == word] or [n for n, s in stems if word in s]
    return hits[0] if hits else none


def section(title: str, body, css: str, open_: bool = True):
    """A titled, collapsible block of our own (a header button over its body).

    Returns
    -------
    ipywidgets.VBox
        Class ``sb-section`` and ``sb-<css>``; ``.header`` and ``.body`` attributes.
    """
    import ipywidgets as w

    head = classed(w.ToggleButton(value=open_, description=title, icon="minus" if open_ else "plus",
                                  layout=w.Layout(width="100%"), style={"button_color": "#dfe8e6",
                                                                       "font_weight": "bold"}),
                   "section-header", f"{css}-header")
    box = w.VBox([head, body], layout=w.Layout(border="1px solid #c9d6d3", margin="4px 0",
                                               padding="2px"))
    classed(box, "section", css)
    body.layout.display = None if open_ else "none"

    def _toggle(change):
        body.layout.display = None if change["new"] else "none"
        head.icon = "minus" if change["new"] else "plus"

    head.observe(_toggle, names="value")
    box.header, box.body = head, body
    return box


class StopNotebook(Exception):
    """Raised by a notebook cell to stop a run with a plain message and no traceback.

    IPython shows only the message (through ``_render_traceback_``); running all cells stops
    there, which is the clean end of a notebook whose data are absent.
    """

    def _render_traceback_(self) -> list[str]:
        return [f"Stopped: {self}"]


def require_folder(path, what: str = "data"):
    """The folder as a Path, or :class:`StopNotebook` naming it and what is missing."""
    from pathlib import Path

    p = Path(path)
    if not p.is_dir():
        raise StopNotebook(f"the {what} folder {p.resolve()} is absent; this notebook needs it "
                           "and stops here (nothing else is wrong)")
    return p


def show(widget) -> None:
    """Display a widget in the notebook."""
    from IPython.display import display as _display

    _display(widget)
