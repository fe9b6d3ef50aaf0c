"""Render a :class:`~fescan.report.content.Document` as one self-contained HTML page.

The page has inline CSS and inline SVG figures, no scripts and no network
references. Every table sits in its own horizontally scrolling box, so a wide
table never widens the page. Every text of the document goes through :func:`html.escape`;
only figure SVG drawn by fescan is inserted as markup.
"""

from __future__ import annotations

import html
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

__all__ = ["CSS", "esc", "render_html", "inline_svg"]

#: Style sheet of fescan pages (inlined into every page).
CSS = """
:root { --ink: #1f1f1f; --muted: #5a5a5a; --rule: #d9d4cc; --band: #f6f3ee; --accent: #a0522d; }
body { font-family: "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; color: var(--ink);
       max-width: 80rem; margin: 2rem auto; padding: 0 1.2rem; line-height: 1.45; font-size: 15px; }
main { max-width: 100%; }
div.scroll { overflow-x: auto; max-width: 100%; margin: .5rem 0 1.2rem; }
div.scroll > table { margin: 0; }
p, li, figcaption { overflow-wrap: anywhere; }
h1 { font-size: 1.55rem; margin: 0 0 .2rem; border-bottom: 3px solid var(--accent); padding-bottom: .3rem; }
h2 { font-size: 1.2rem; margin: 2.2rem 0 .6rem; color: var(--accent); }
h3 { font-size: 1.02rem; margin: 1.4rem 0 .4rem; }
p.subtitle { color: var(--muted); margin: .2rem 0 1.2rem; }
dl.facts { display: grid; grid-template-columns: fit-content(20rem) 1fr; gap: .15rem 1.2rem; margin: .4rem 0 1rem; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; }
table { border-collapse: collapse; margin: .5rem 0 1.2rem; font-size: .9rem; }
caption { text-align: left; color: var(--muted); padding-bottom: .3rem; }
th, td { padding: .22rem .5rem; border-bottom: 1px solid var(--rule); vertical-align: top; text-align: left; }
th { background: var(--band); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
td.text, th.text { min-width: 11rem; }
td.path { min-width: 10rem; }
td.path, td.path code { overflow-wrap: anywhere; }
code { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: .88em; }
aside.notice { border-left: 4px solid var(--accent); background: var(--band); padding: .6rem .9rem;
               margin: 1rem 0; }
aside.notice strong.title { display: block; margin-bottom: .2rem; }
figure { margin: 1rem 0 1.4rem; }
figure svg { width: min(100%, 36rem); height: auto; }
figcaption { color: var(--muted); font-size: .88rem; max-width: 42rem; }
footer { margin-top: 3rem; color: var(--muted); font-size: .85rem; border-top: 1px solid var(--rule);
         padding-top: .6rem; }
@media print { body { margin: 0; max-width: none; } h2 { break-after: avoid; } figure { break-inside: avoid; } }
""".strip()

_PROLOG = re.compile(r"\A\s*(<\?xml[^>]*\?>\s*)?(<!DOCTYPE[^>]*>\s*)?", re.IGNORECASE)


def esc(text: object) -> str:
    """HTML-escape any value as text (``&``, ``<``, ``>``, both quotes).

    Examples
    --------
    >>> esc('<script>alert("x")</script>')
    '&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;'
    """
    return html.escape(str(text), quote=True)


def inline_svg(svg: str) -> str:
    """SVG file text made ready for inlining: XML declaration and DOCTYPE removed."""
    return _PROLOG.sub("", svg, count=1).strip()


def _inline(value: Inline) -> str:
    if isinstance(value, list):
        return "".join(_inline(v) for v in value)
    if isinstance(value, Run):
        out = esc(value.text)
        if value.code:
            out = f"<code>{out}</code>"
        if value.strong:
            out = f"<strong>{out}</strong>"
        if value.href:
            out = f'<a href="{esc(safe_href(value.href))}">{out}</a>'
        if value.tooltip:
            out = f'<span title="{esc(value.tooltip)}">{out}</span>'
        return out
    return esc(value)


def _table(t: Table) -> str:
    out = ['<div class="scroll"><table>']
    if t.caption:
        out.append(f"<caption>{esc(t.caption)}</caption>")
    names = [" ".join(x for x in ("num" if k in t.numeric else "", t.classes[k] if k < len(t.classes) else "") if x)
             for k in range(len(t.headers))]
    cls = [f' class="{esc(n)}"' if n else "" for n in names]
    out.append("<thead><tr>" + "".join(f"<th{c}>{esc(h)}</th>" for h, c in zip(t.headers, cls)) + "</tr></thead>")
    out.append("<tbody>")
    for row in t.rows:
        out.append("<tr>" + "".join(f"<td{cls[k] if k < len(cls) else ''}>{_inline(v)}</td>"
                                    for k, v in enumerate(row)) + "</tr>")
    out.append("</tbody></table></div>")
    return "\n".join(out)


def _block(b: object) -> str:
    if isinstance(b, Heading):
        level = min(max(b.level, 1), 3)
        anchor = f' id="{esc(b.anchor)}"' if b.anchor else ""
        return f"<h{level}{anchor}>{esc(b.text)}</h{level}>"
    if isinstance(b, Paragraph):
        return f"<p>{_inline(b.content)}</p>"
    if isinstance(b, Facts):
        rows = "".join(f"<dt>{esc(k)}</dt><dd>{_inline(v)}</dd>" for k, v in b.items)
        return f'<dl class="facts">{rows}</dl>'
    if isinstance(b, Table):
        return _table(b)
    if isinstance(b, Notice):
        return f'<aside class="notice"><strong class="title">{esc(b.title)}</strong>{_inline(b.content)}</aside>'
    if isinstance(b, BulletList):
        tag = "ol" if b.ordered else "ul"
        return f"<{tag}>" + "".join(f"<li>{_inline(v)}</li>" for v in b.items) + f"</{tag}>"
    if isinstance(b, Figure):
        cap = f"<figcaption>{_inline(b.caption)}</figcaption>" if b.caption else ""
        return f'<figure role="img" aria-label="{esc(b.alt)}">\n{inline_svg(b.svg)}\n{cap}</figure>'
    raise TypeError(f"unknown block {type(b).__name__}")


def render_html(doc: Document, *, subtitle: str = "", footer: Inline = "") -> str:
    """The document as a complete HTML page (UTF-8 text, no scripts, no network).

    Parameters
    ----------
    doc : Document
    subtitle : str, optional
        Line under the main title.
    footer : Inline, optional
        Page footer.

    Returns
    -------
    str
    """
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{esc(doc.title)}</title>",
        f"<style>\n{CSS}\n</style>",
        "</head>",
        "<body>",
        "<main>",
        f"<h1>{esc(doc.title)}</h1>",
    ]
    if subtitle:
        parts.append(f'<p class="subtitle">{esc(subtitle)}</p>')
    parts += [_block(b) for b in doc.blocks]
    parts.append("</main>")
    if footer:
        parts.append(f"<footer>{_inline(footer)}</footer>")
    parts += ["</body>", "</html>", ""]
    return "\n".join(parts)
