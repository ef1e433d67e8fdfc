"""Stored text made safe to show, whatever the medium.

Pure. A note, reason or name is shown exactly as stored, but a character that would
act rather than show (an escape sequence, a bidirectional override, NUL, a zero-width
character) is written visibly as ``\\x1b``-style escapes, so it can neither style,
move nor hide anything on a screen, a label or a report. Each medium then escapes its
own markup: Rich in ``prepbook.cli.output.text``, reportlab in ``prepbook.render``,
Textual in ``prepbook.tui.widgets``.
"""

from __future__ import annotations


def visible(value: object) -> str:
    """``value`` as text whose control and format characters are shown as escapes;
    line breaks and tabs stay (a note of several lines)."""
    raw = str(value)
    if raw.isprintable():
        return raw
    return "".join(ch if ch.isprintable() or ch in "\n\t" else _escaped(ch) for ch in raw)


def _escaped(ch: str) -> str:
    code = ord(ch)
    if code < 0x100:
        return f"\\x{code:02x}"
    return f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}"


def for_pdf(value: object) -> str:
    """Stored text for a reportlab Paragraph: visible, and its ``<``, ``>`` and ``&``
    escaped so that no tag in the record (``<link>``, ``<font>``, ``<img>``) is read."""
    from xml.sax.saxutils import escape

    return escape(visible(value))
