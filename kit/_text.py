"""Small text helpers shared by the result objects' text and HTML views."""

from __future__ import annotations

import html


def html_rows(rows: list[tuple[str, str]]) -> str:
    """Table rows ``<tr><td>name</td><td>value</td></tr>`` with both cells escaped."""
    e = html.escape
    return "".join(f"<tr><td>{e(k)}</td><td style='text-align:right'>{e(v)}</td></tr>"
                   for k, v in rows)

