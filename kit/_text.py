"""Small text helpers shared by the result objects' text and HTML views."""

from __future__ import annotations

import html


def html_rows(rows: list[tuple[str, str]]) -> str:
    """Table rows ``<tr><td>name</td><td>value</td></tr>`` with both cells escaped."""
    e = html.escape
    return "".join(f"<tr><td>{e(k)}</td><td style='text-align:right'>{e(v)}</td></tr>"
                   for k, v in rows)


def fmt_value(v, unit: str = "", fmt: str = ".6g") -> str:
    """A value with its unit; frequencies in Hz with thousands separators; None as 'not found'."""
    if v is None:
        return "not found"
    if unit == "Hz":
        return f"{v:,.2f} Hz"
    return (format(v, fmt) + (" " + unit if unit else "")).strip()
