"""Render a :class:`~fescan.report.content.Document` as Markdown (CommonMark with pipe tables).

Every text is escaped with :func:`md_escape`: backslash, `` ` ``, ``*``,
``_``, ``[``, ``]``, ``<``, ``>``, ``|``, ``&`` and ``~`` get a backslash, a leading
``#``, ``-``, ``+``, ``=`` or ``1.`` / ``1)`` gets one too (it would start a heading,
a list, a thematic break ``---`` or a setext underline), and line breaks become spaces, so a title or chain name from an input file renders
as the same characters, never as emphasis, a link, a table cell break or raw
HTML. Figures are linked PNG files written by fescan.
"""

from __future__ import annotations

import re

from fescan.report.content import (
    BulletList,
    Document,
    Facts,
    Figure,
    Heading,
    Inline,
    Notice,
    Paragraph,
    Run,
    Table,
    safe_href,
)

__all__ = ["md_escape", "render_markdown"]

_SPECIAL = re.compile(r"([\\`*_\[\]<>|&~])")
# What makes a line a heading, list item, thematic break or setext underline when it leads a line.
# ("-1.5" stays as it is: a number is no list item.)
_LEADING = re.compile(r"^(\s*)(#|=|[-+](?=\s)|-(?=-)|\d{1,9}(?=[.)](?:\s|$)))")
_SPACE = re.compile(r"\s+")


def md_escape(text: object) -> str:
    """Escape text for Markdown (see the module docstring).

    Examples
    --------
    >>> md_escape('<script>alert(1)</script>')
    '\\\\<script\\\\>alert(1)\\\\</script\\\\>'
    >>> md_escape("a|b *c* [d](e)")
    'a\\\\|b \\\\*c\\\\* \\\\[d\\\\](e)'
    """
    out = _SPECIAL.sub(r"\\\1", _SPACE.sub(" ", str(text)))
    m = _LEADING.match(out)
    if m is None:
        return out
    if m.group(2).isdigit():  # "1." or "1)": escape the punctuation
        end = m.end()
        return out[:end] + "\\" + out[end:]
    return out[: m.start(2)] + "\\" + out[m.start(2):]


def _inline(value: Inline) -> str:
    if isinstance(value, list):
        return "".join(_inline(v) for v in value)
    if isinstance(value, Run):
        out = md_escape(value.text)  # code runs stay plain text: code spans would not escape "|" in tables
        if value.strong:
            out = f"**{out}**"
        if value.href:
            out = f"[{out}]({safe_href(value.href)})"
        return out
    return md_escape(value)


def _cell(value: Inline) -> str:
    text = _inline(value)
    return text if text.strip() else " "


def _table(t: Table) -> list[str]:
    out = []
    if t.caption:
        out += [f"*{md_escape(t.caption)}*", ""]
    out.append("| " + " | ".join(md_escape(h) for h in t.headers) + " |")
    out.append("|" + "|".join("---:" if k in t.numeric else "---" for k in range(len(t.headers))) + "|")
    for row in t.rows:
        out.append("| " + " | ".join(_cell(v) for v in row) + " |")
    return out


def _block(b: object) -> list[str]:
    if isinstance(b, Heading):
        return ["#" * min(max(b.level, 1), 4) + " " + md_escape(b.text)]
    if isinstance(b, Paragraph):
        return [_inline(b.content)]
    if isinstance(b, Facts):
        return [f"- **{md_escape(k)}:** {_inline(v)}" for k, v in b.items]
    if isinstance(b, Table):
        return _table(b)
    if isinstance(b, Notice):
        return [f"> **{md_escape(b.title)}** {_inline(b.content)}"]
    if isinstance(b, BulletList):
        return [f"{k + 1}. {_inline(v)}" if b.ordered else f"- {_inline(v)}" for k, v in enumerate(b.items)]
    if isinstance(b, Figure):
        out = [f"![{md_escape(b.alt)}]({b.png})"]
        if b.caption:
            out += ["", f"*{_inline(b.caption)}*"]
        return out
    raise TypeError(f"unknown block {type(b).__name__}")


def render_markdown(doc: Document, *, subtitle: str = "", footer: Inline = "") -> str:
    """The document as Markdown text.

    Parameters
    ----------
    doc : Document
    subtitle : str, optional
        Line under the main title.
    footer : Inline, optional
        Closing line.

    Returns
    -------
    str
    """
    lines = ["# " + md_escape(doc.title), ""]
    if subtitle:
        lines += [md_escape(subtitle), ""]
    for b in doc.blocks:
        lines += _block(b)
        lines.append("")
    if footer:
        lines += ["---", "", _inline(footer), ""]
    return "\n".join(lines)
