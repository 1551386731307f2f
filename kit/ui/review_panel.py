"""Review panel: decide on each capture of a lot and keep the record in the review log.

``review_panel(captures, log)`` builds the panel and returns a :class:`ReviewPanel` whose
attributes are the named controls: a capture selector, the reviewer's name, verdict
buttons (accept / reject / ask for a retest), a note box, a tag box, the current state
and the history of the selected capture (an escaped HTML table), and a message bar where errors appear
instead of tracebacks.

Every action is one append to :class:`kit.review.log.ReviewLog`; the panel holds no state of
its own beyond the selection, so two engineers reviewing the same lot at once see each
other's events on :meth:`ReviewPanel.refresh`.
"""

from __future__ import annotations

import html
import os
from typing import Any

from kit.review.events import current_user
from kit.review.log import ReviewLog, as_review_log
from kit.ui.common import MessageBar, classed, show

VERDICT_BUTTONS = (("accept", "Accept", "success", "check"),
                   ("reject", "Reject", "danger", "times"),
                   ("retest", "Ask for retest", "warning", "repeat"))
HISTORY_COLUMNS = ("utc", "author", "kind", "value", "text")


def _esc(x: Any) -> str:
    if x is None or (isinstance(x, float) and x != x):
        return ""
    return html.escape(str(x), quote=True)


def history_html(events) -> str:
    """The events of one capture as an HTML table, newest first, all text escaped."""
    if events is None or len(events) == 0:
        return "<i>No review events yet.</i>"
    head = "".join(f"<th>{_esc(c)}</th>" for c in HISTORY_COLUMNS)
    rows = []
    for _, e in events.iloc[::-1].iterrows():
        utc = str(e["utc"])[:19].replace("T", " ")
        cells = [utc] + [e[c] for c in HISTORY_COLUMNS[1:]]
        rows.append("<tr>" + "".join(f"<td>{_esc(c)}</td>" for c in cells) + "</tr>")
    return (f'<table class="sb-review-history" style="border-collapse:collapse">'
            f"<tr>{head}</tr>{''.join(rows)}</table>")


class ReviewPanel:
    """The review panel's controls and actions (see :func:`review_panel`).

    Each action is one append to the review log, then a refresh of state and history.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole panel (class ``sb-review-panel``).
    selector : ipywidgets.Dropdown
        The capture under review (value: index into ``captures``).
    author : ipywidgets.Text
        The reviewer (default: the OS user).
    buttons : dict of str -> ipywidgets.Button
        ``"accept"``, ``"reject"``, ``"retest"``: append a verdict; the note box text, if
        any, is kept as its reason.
    note : ipywidgets.Textarea
    add_note : ipywidgets.Button
    tag : ipywidgets.Text
    add_tag : ipywidgets.Button
    state : ipywidgets.HTML
        The selected capture's current verdict.
    history : ipywidgets.HTML
        Its events, newest first.
    message : kit.ui.common.MessageBar
        Error messages (class ``sb-message``).
    """

    def __init__(self, captures: Any, log: ReviewLog | str | os.PathLike) -> None:
        import ipywidgets as w

        from kit.capture import Capture
        from kit.outputs.entries import as_list

        self.captures = [c for c in as_list(captures) if isinstance(c, Capture)]
        if not self.captures:
            raise ValueError("the review panel needs at least one loadable capture")
        self.log = as_review_log(log)
        self.message = MessageBar()
        g = self.message.guard
        self.selector = classed(w.Dropdown(options=[(c.name, i) for i, c in
                                                    enumerate(self.captures)], value=0,
                                           description="capture"), "review-capture")
        self.author = classed(w.Text(value=current_user(), description="reviewer"),
                              "review-author")
        self.buttons = {}
        for value, label, style, icon in VERDICT_BUTTONS:
            b = classed(w.Button(description=label, button_style=style, icon=icon),
                        "review-verdict", f"review-{value}")
            b.on_click(g(lambda _b, v=value: self.set_verdict(v)))
            self.buttons[value] = b
        self.note = classed(w.Textarea(placeholder="note, or the reason of a verdict",
                                       layout=w.Layout(width="100%", height="5em")),
                            "review-note")
        self.add_note = classed(w.Button(description="Add note", icon="pencil"),
                                "review-add-note")
        self.add_note.on_click(g(lambda _b: self.add_note_text()))
        self.tag = classed(w.Text(placeholder="tag, e.g. cracked"), "review-tag")
        self.add_tag = classed(w.Button(description="Add tag", icon="tag"), "review-add-tag")
        self.add_tag.on_click(g(lambda _b: self.add_tag_text()))
        self.state = classed(w.HTML(), "review-state")
        self.history = classed(w.HTML(), "review-history")
        self.selector.observe(g(lambda _c: self.refresh()), names="value")
        self.widget = classed(w.VBox([
            w.HBox([self.selector, self.author]),
            w.HBox(list(self.buttons.values())),
            self.note, w.HBox([self.add_note, self.tag, self.add_tag]),
            self.message.widget, self.state, self.history]), "review-panel")
        self.refresh()

    # ---- state
    @property
    def current(self):
        """The selected Capture."""
        return self.captures[self.selector.value]

    def _author(self) -> str | None:
        return self.author.value.strip() or None

    # ---- actions (also callable from code)
    def select(self, index_or_name: int | str) -> None:
        """Select a capture by index or name."""
        if isinstance(index_or_name, str):
            names = [c.name for c in self.captures]
            if index_or_name not in names:
                raise ValueError(f"no capture named {index_or_name!r} in this panel")
            index_or_name = names.index(index_or_name)
        self.selector.value = int(index_or_name)

    def set_verdict(self, value: str) -> int:
        """Append a verdict for the selected capture (note box text as the reason)."""
        text = self.note.value.strip() or None
        eid = self.log.add(self.current, "verdict", text=text, value=value,
                           author=self._author())
        self.note.value = ""
        self.refresh()
        return eid

    def add_note_text(self) -> int | None:
        """Append the note box as a note of the selected capture."""
        text = self.note.value.strip()
        if not text:
            raise ValueError("the note is empty; type it in the box first")
        eid = self.log.add(self.current, "note", text=text, author=self._author())
        self.note.value = ""
        self.refresh()
        return eid

    def add_tag_text(self) -> int:
        """Append the tag box as a tag of the selected capture."""
        eid = self.log.add(self.current, "tag", value=self.tag.value.strip(),
                           author=self._author())
        self.tag.value = ""
        self.refresh()
        return eid

    def refresh(self) -> None:
        """Re-read the log (other reviewers' events included) and redraw state and history."""
        ev = self.log.events(self.current)
        verdicts = ev[ev["kind"] == "verdict"]
        if len(verdicts):
            last = verdicts.iloc[-1]
            state = (f"<b>{_esc(last['value'])}</b> by {_esc(last['author'])} at "
                     f"{_esc(str(last['utc'])[:19].replace('T', ' '))} UTC")
        else:
            state = "<b>no verdict yet</b>"
        tags = sorted(set(ev.loc[ev["kind"] == "tag", "value"].dropna()))
        if tags:
            state += " &middot; tags: " + ", ".join(_esc(t) for t in tags)
        self.state.value = f"{_esc(self.current.name)}: {state}"
        self.history.value = history_html(ev)


def review_panel(captures: Any, log: ReviewLog | str | os.PathLike,
                 display: bool = True) -> ReviewPanel:
    """Build (and show) the review panel of a lot.

    Parameters
    ----------
    captures : list of Capture, or a :func:`kit.load_folder` table
    log : kit.ReviewLog, path or ``postgresql://`` URL
        e.g. ``kit.ReviewLog.for_folder("demo_data/lot")`` or the team's server.
    display : bool
        Show the panel in the notebook; ``False`` only builds it (tests, composition).

    Returns
    -------
    ReviewPanel
        With the named controls as attributes.
    """
    panel = ReviewPanel(captures, log)
    if display:
        show(panel.widget)
    return panel
