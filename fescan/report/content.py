"""A small document model shared by the HTML and Markdown renderers.

Report builders describe *what* a report says as blocks of plain text
(headings, paragraphs, fact lists, tables, notices, figures); the renderers in
:mod:`fescan.report.html` and :mod:`fescan.report.markdown` decide how it
looks. Every string in a document is plain text and is escaped by the
renderer, so text read from an input file can never turn into markup. The only
exception is :attr:`Figure.svg`, markup that fescan drew itself (matplotlib
escapes the texts inside it).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from urllib.parse import quote

__all__ = ["Run", "Inline", "Heading", "Paragraph", "Facts", "Table", "Notice", "Figure", "BulletList",
           "Document", "runs_text", "safe_href"]


@dataclass(frozen=True)
class Run:
    """A piece of inline text with an emphasis.

    Attributes
    ----------
    text : str
    strong : bool
        Bold.
    code : bool
        Monospace (identifiers, file names).
    href : str or None
        Relative link target written by fescan (never taken from an input file).
    tooltip : str or None
        Text shown on hover in HTML (e.g. the whole of a shortened title); plain
        text, escaped like any other. Markdown shows only ``text``.
    """

    text: str
    strong: bool = False
    code: bool = False
    href: str | None = None
    tooltip: str | None = None


#: Inline content: a plain string, one run, or a list of strings and runs.
Inline = str | Run | list


def runs_text(value: Inline) -> str:
    """The plain text of inline content (for alt texts and tests)."""
    if isinstance(value, Run):
        return value.text
    if isinstance(value, list):
        return "".join(runs_text(v) for v in value)
    return str(value)


def safe_href(path: str) -> str:
    """A relative link made safe: every character outside ``A-Za-z0-9/._-~%#`` percent-encoded.

    A colon is encoded too, so no link can carry a scheme such as ``javascript:``.

    Examples
    --------
    >>> safe_href("structures/a b<1>/report.html")
    'structures/a%20b%3C1%3E/report.html'
    >>> safe_href("javascript:alert(1)")
    'javascript%3Aalert%281%29'
    """
    return quote(path, safe="/._-~%#")


@dataclass(frozen=True)
class Heading:
    """A section heading (level 1-3) with an anchor id written by fescan."""

    level: int
    text: str
    anchor: str = ""


@dataclass(frozen=True)
class Paragraph:
    """A paragraph of inline content."""

    content: Inline


@dataclass(frozen=True)
class Facts:
    """Label → value pairs (a definition list)."""

    items: list[tuple[str, Inline]]


@dataclass(frozen=True)
class Table:
    """A table of inline cells.

    Attributes
    ----------
    headers : list of str
    rows : list of list of Inline
    numeric : frozenset of int
        Column indices aligned right.
    caption : str
    classes : tuple of str
        Optional HTML class of each column (``""``: none), e.g. ``"text"`` for a
        column of long text given a minimum width, ``"path"`` for file paths that
        may break anywhere. Markdown ignores them.
    """

    headers: list[str]
    rows: list[list[Inline]]
    numeric: frozenset[int] = frozenset()
    caption: str = ""
    classes: tuple[str, ...] = ()


@dataclass(frozen=True)
class Notice:
    """A highlighted paragraph (the caution about estimated rates)."""

    title: str
    content: Inline


@dataclass(frozen=True)
class BulletList:
    """A list of inline items."""

    items: list[Inline]
    ordered: bool = False


@dataclass(frozen=True)
class Figure:
    """A figure: inline SVG for HTML, a linked PNG for Markdown.

    Attributes
    ----------
    svg : str
        SVG markup drawn by fescan (trusted; inserted as is into HTML).
    png : str
        File name of the PNG beside the report (for Markdown).
    alt : str
        Short description (escaped).
    caption : Inline
    """

    svg: str
    png: str
    alt: str
    caption: Inline = ""


Block = Heading | Paragraph | Facts | Table | Notice | BulletList | Figure


@dataclass
class Document:
    """A report: a title and blocks in reading order."""

    title: str
    blocks: list = field(default_factory=list)

    def add(self, *blocks: object) -> Document:
        """Append blocks; returns the document."""
        self.blocks.extend(blocks)
        return self
