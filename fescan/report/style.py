"""House style of fescan figures: one glyph and colour per cofactor class, line styles, sizes.

The drawing code (:mod:`fescan.report.diagrams`) reads everything visual from
here, so a figure's look is changed in one place. Nothing here imports
matplotlib: glyph outlines are plain vertex lists (unit radius), turned into
marker paths by the drawing module.

Design rules of the house style (fescan's own):

* **shape carries the class**, colour only repeats it, so a greyscale print
  still tells the classes apart: iron-sulfur clusters are four-sided (a square
  for the cube-like [4Fe-4S], the square with one corner cut off for the
  [3Fe-4S] cube that lost an iron, a diamond for the rhomb-shaped [2Fe-2S] core),
  flavins a wide hexagon (the flat tricyclic ring seen edge-on), quinones an
  upright hexagon (the single ring), hemes a disc with the iron as a white dot,
  copper a triangle, single irons a pentagon, other metals a downward triangle;
* **colours follow the colour a cofactor gives a protein solution**: brown-rust
  for iron-sulfur proteins, yellow for flavoproteins, red for cytochromes, blue
  for blue-copper proteins; quinones (pale in reality) are teal and other metals
  slate so that no two categories share a hue;
* the relay path is a heavy near-black line with direction arrows; other
  pairs within the gap limit are thin grey; a hop longer than the gap limit is
  dashed, interrupted by a white break mark with two slashes and labelled
  ``gap 17.8 Å``, so it stays visible in greyscale.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

__all__ = [
    "Glyph",
    "LineStyle",
    "FONT_FAMILY",
    "FONT_PT",
    "TITLE_PT",
    "COLUMN_WIDTH_IN",
    "INK",
    "GLYPH_PT",
    "SHAPES",
    "glyph_for",
    "LEGEND_ORDER",
    "legend_rank",
    "PATH_HOP",
    "PAIR",
    "GAP_HOP",
    "NEAR_GAP",
    "BOTTLENECK_HALO",
    "svg_id",
    "cofactor_gid",
    "hop_gid",
    "gap_gid",
    "pair_gid",
    "label_gid",
]

#: Font family of every figure text (bundled with matplotlib, so output is the same everywhere).
FONT_FAMILY = "DejaVu Sans"
#: Size of labels, legend and notes (pt); 7 pt is the smallest readable size in print.
FONT_PT = 7.0
#: Size of figure titles (pt).
TITLE_PT = 8.0
#: One journal column: 85 mm.
COLUMN_WIDTH_IN = 85.0 / 25.4
#: Near-black used for outlines, path lines and text.
INK = "#1f1f1f"
#: Glyph size (pt, outer diameter).
GLYPH_PT = 9.5


def _regular(n: int, start_deg: float, sx: float = 1.0, sy: float = 1.0) -> tuple[tuple[float, float], ...]:
    pts = []
    for k in range(n):
        a = math.radians(start_deg + 360.0 * k / n)
        pts.append((round(sx * math.cos(a), 6), round(sy * math.sin(a), 6)))
    return tuple(pts)


#: Glyph outlines: closed polygons, vertices within the unit disc (``None`` = circle).
SHAPES: dict[str, tuple[tuple[float, float], ...] | None] = {
    "square": ((-0.8, -0.8), (0.8, -0.8), (0.8, 0.8), (-0.8, 0.8)),
    "cut-square": ((-0.8, -0.8), (0.8, -0.8), (0.8, 0.15), (0.15, 0.8), (-0.8, 0.8)),
    "diamond": ((0.0, -1.0), (0.9, 0.0), (0.0, 1.0), (-0.9, 0.0)),
    "wide-hexagon": ((-1.0, 0.0), (-0.55, -0.62), (0.55, -0.62), (1.0, 0.0), (0.55, 0.62), (-0.55, 0.62)),
    "hexagon": _regular(6, 90.0),
    "disc": None,
    "triangle": _regular(3, 90.0),
    "pentagon": _regular(5, 90.0),
    "down-triangle": _regular(3, -90.0),
    "octagon": _regular(8, 22.5),
}


@dataclass(frozen=True)
class Glyph:
    """How one cofactor class is drawn.

    Attributes
    ----------
    shape : str
        Key of :data:`SHAPES`.
    face : str
        Fill colour (hex).
    mark : str
        Inner white mark: ``""`` (none), ``"dot"`` or ``"bar"``.
    legend : str
        Legend text of the class.
    """

    shape: str
    face: str
    mark: str = ""
    legend: str = ""


_FES = "#a0522d"       # iron-sulfur: rust brown
_FES_LIGHT = "#cd7f3c"  # two-iron clusters: lighter rust
_FLAVIN = "#e8c01e"     # flavoprotein yellow
_QUINONE = "#2a9d8f"    # teal
_HEME = "#c0392b"       # cytochrome red
_COPPER = "#2e6db4"     # blue copper
_IRON = "#7d4f9e"       # single iron sites: violet
_METAL = "#5d6d7e"      # other metals: slate

_CLASS_GLYPHS: dict[str, Glyph] = {
    "[4Fe-4S]": Glyph("square", _FES, legend="[4Fe-4S]"),
    "[4Fe-3S]": Glyph("square", _FES, "dot", legend="[4Fe-3S]"),
    "[3Fe-4S]": Glyph("cut-square", _FES, legend="[3Fe-4S]"),
    "linear [3Fe-4S]": Glyph("cut-square", _FES_LIGHT, legend="linear [3Fe-4S]"),
    "[2Fe-2S]": Glyph("diamond", _FES_LIGHT, legend="[2Fe-2S]"),
    "Rieske [2Fe-2S]": Glyph("diamond", _FES_LIGHT, "bar", legend="Rieske [2Fe-2S]"),
    "CuA": Glyph("triangle", _COPPER, "dot", legend="CuA"),
}

_CATEGORY_GLYPHS: dict[str, Glyph] = {
    "iron-sulfur": Glyph("octagon", _FES, legend="other Fe-S"),
    "flavin": Glyph("wide-hexagon", _FLAVIN, legend="flavin"),
    "quinone": Glyph("hexagon", _QUINONE, legend="quinone"),
    "heme": Glyph("disc", _HEME, "dot", legend="heme"),
    "copper": Glyph("triangle", _COPPER, legend="copper"),
    "iron": Glyph("pentagon", _IRON, legend="single Fe"),
    "metal": Glyph("down-triangle", _METAL, legend="other metal"),
}


#: Order of glyphs in legends (by legend text); unknown texts go last.
LEGEND_ORDER: tuple[str, ...] = (
    "[4Fe-4S]", "[4Fe-3S]", "[3Fe-4S]", "linear [3Fe-4S]", "[2Fe-2S]", "Rieske [2Fe-2S]", "other Fe-S",
    "flavin", "quinone", "heme", "copper", "CuA", "single Fe", "other metal",
)


def legend_rank(text: str) -> int:
    """Position of a glyph's legend text in :data:`LEGEND_ORDER`."""
    return LEGEND_ORDER.index(text) if text in LEGEND_ORDER else len(LEGEND_ORDER)


def glyph_for(category: str, cls: str) -> Glyph:
    """Return the glyph of a cofactor class (falling back to its category, then to 'metal').

    Parameters
    ----------
    category : str
        Cofactor category (:data:`fescan.core.records.CATEGORIES`).
    cls : str
        Cofactor class (``"[4Fe-4S]"``, ``"FMN"``...).

    Returns
    -------
    Glyph

    Examples
    --------
    >>> glyph_for("iron-sulfur", "[4Fe-4S]").shape
    'square'
    >>> glyph_for("heme", "heme c").legend
    'heme'
    """
    return _CLASS_GLYPHS.get(cls) or _CATEGORY_GLYPHS.get(category) or _CATEGORY_GLYPHS["metal"]


@dataclass(frozen=True)
class LineStyle:
    """A hop line: colour, width (pt), dash pattern (on/off in units of the width), layer."""

    colour: str
    width: float
    dashes: tuple[float, ...] | None = None
    zorder: float = 2.0


#: Hop on the relay path (fastest path entry → exit).
PATH_HOP = LineStyle(INK, 1.8, None, 3.0)
#: Any other pair within the gap limit.
PAIR = LineStyle("#a6a6a6", 0.7, None, 1.5)
#: Path hop longer than the gap limit.
GAP_HOP = LineStyle(INK, 1.4, (3.0, 2.0), 3.0)
#: Nearest partner of a cofactor with none within the gap limit.
NEAR_GAP = LineStyle("#6e6e6e", 0.8, (3.0, 2.5), 1.6)
#: Light wide underlay marking the bottleneck hop of the path.
BOTTLENECK_HALO = LineStyle("#c9c9c9", 6.0, None, 2.5)

_UNSAFE = re.compile(r"[^A-Za-z0-9]")


def svg_id(text: str) -> str:
    """Turn a cofactor uid into a string usable in an SVG/HTML id.

    ``:`` becomes ``.``, ``/`` becomes ``_``, ``-`` is kept and every other
    character outside ``A-Za-z0-9`` becomes ``x`` + its code point in hex.

    Examples
    --------
    >>> svg_id("1:A/501:FMN")
    '1.A_501.FMN'
    >>> svg_id('1:"><b/7:-')
    '1.x22x3ex3cb_7.-'
    """

    def one(m: re.Match[str]) -> str:
        c = m.group(0)
        return {":": ".", "/": "_", "-": "-"}.get(c, f"x{ord(c):x}")

    return _UNSAFE.sub(one, text)


def cofactor_gid(uid: str) -> str:
    """Id of a cofactor glyph: ``cofactor-<uid>``."""
    return f"cofactor-{svg_id(uid)}"


def label_gid(uid: str) -> str:
    """Id of a cofactor label: ``label-<uid>``."""
    return f"label-{svg_id(uid)}"


def hop_gid(donor: str, acceptor: str) -> str:
    """Id of a relay-path hop line: ``hop-<donor>-<acceptor>``."""
    return f"hop-{svg_id(donor)}-{svg_id(acceptor)}"


def gap_gid(first: str, second: str) -> str:
    """Id of a gap mark (break mark and its label): ``gap-<first>-<second>``."""
    return f"gap-{svg_id(first)}-{svg_id(second)}"


def pair_gid(first: str, second: str) -> str:
    """Id of an off-path pair line: ``pair-<first>-<second>``."""
    return f"pair-{svg_id(first)}-{svg_id(second)}"
