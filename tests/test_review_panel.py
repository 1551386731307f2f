"""Review panel built with display=False: buttons append events, history escaped, errors shown.

The escaping check parses the history HTML with Python's html.parser (independent of the
panel's code) to decide what is markup and what is text.
"""

from __future__ import annotations

from html.parser import HTMLParser

import numpy as np
import pytest
import skrf

from kit.capture import from_network
from kit.review.log import ReviewLog
from kit.ui.review_panel import review_panel


def _caps():
    f = skrf.Frequency(1, 2, 5, unit="MHz")
    return [from_network(skrf.Network(frequency=f, s=np.full((5, 1, 1), 0.1 * (i + 1)),
                                      z0=50, name=n)) for i, n in enumerate(["d1", "d2"])]


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.text = [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)

    def handle_data(self, data):
        self.text.append(data)


def test_buttons_append_verdicts_and_notes(tmp_path):
    """Clicking verdict and note buttons appends events for the selected capture."""
    log = ReviewLog(tmp_path / "r.sqlite")
    caps = _caps()
    p = review_panel(caps, log, display=False)
    p.author.value = "n.sato"
    p.note.value = "resonance sharp"
    p.add_note.click()
    p.note.value = "fs in band"
    p.buttons["accept"].click()
    p.select("d2")
    p.buttons["retest"].click()
    p.tag.value = "chipped"
    p.add_tag.click()
    ev = log.events()
    assert list(ev["kind"]) == ["note", "verdict", "verdict", "tag"]
    assert list(ev["capture"]) == ["d1", "d1", "d2", "d2"]
    assert ev.loc[1, "value"] == "accept" and ev.loc[1, "text"] == "fs in band"
    assert set(ev["author"]) == {"n.sato"} and p.message.kind != "error"
    assert "retest" in p.state.value and "chipped" in p.state.value
    p.select(0)
    assert "accept" in p.state.value and "resonance sharp" in p.history.value


def test_history_is_escaped(tmp_path):
    """A note with markup shows as text in the history table, not as markup."""
    log = ReviewLog(tmp_path / "r.sqlite")
    p = review_panel(_caps(), log, display=False)
    evil = "<script>alert(1)</script><b>bold</b>"
    p.note.value = evil
    p.add_note.click()
    parser = _Tags()
    parser.feed(p.history.value)
    assert "script" not in parser.tags and "b" not in parser.tags
    assert evil in "".join(parser.text)


def test_errors_go_to_the_message_bar_not_raised(tmp_path):
    """An empty note is refused with a plain message in the message bar; nothing is written."""
    log = ReviewLog(tmp_path / "r.sqlite")
    p = review_panel(_caps(), log, display=False)
    p.add_note.click()
    assert len(log) == 0
    assert p.message.kind == "error" and "empty" in p.message.last
    assert not p.message.last.startswith("ValueError")


def test_refresh_shows_other_reviewers(new_target):
    """The panel opened on a path or a postgresql:// URL (both back ends): events written by
    another reviewer (another log object) appear after refresh()."""
    target = new_target()
    caps = _caps()
    p = review_panel(caps, target, display=False)
    ReviewLog(target).add(caps[0], "verdict", value="reject", author="other")
    p.refresh()
    assert "reject" in p.state.value and "other" in p.state.value
    p.buttons["accept"].click()
    assert list(ReviewLog(target).events()["value"]) == ["reject", "accept"]


def test_needs_a_capture(tmp_path):
    """A panel over no loadable capture is refused with a message."""
    with pytest.raises(ValueError, match="at least one"):
        review_panel([], ReviewLog(tmp_path / "r.sqlite"), display=False)
