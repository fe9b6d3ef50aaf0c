"""Relay diagrams and survey figures: the only fescan module that imports matplotlib.

Figures are built on :class:`matplotlib.figure.Figure` with an Agg canvas, never
through pyplot, so no global backend or figure registry is touched. Output is
deterministic: a fixed SVG hash salt, no dates in the metadata, the bundled
DejaVu Sans font, a seeded label layout.

The relay diagram renders a :class:`fescan.report.scene.Scene`: every cofactor
where it sits in the structure (principal-component view), glyphs of
:mod:`fescan.report.style`, labels placed by :mod:`fescan.report.placement`.
SVG elements carry ids: ``cofactor-<uid>``, ``label-<uid>``,
``hop-<donor>-<acceptor>``, ``gap-<a>-<b>`` (break mark of a gap),
``pair-<a>-<b>``, ``warning-<uid>`` (mark of a cofactor with a check warning; uids
made id-safe by :func:`fescan.report.style.svg_id`).
"""

from __future__ import annotations

import contextlib
import math
import textwrap
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import matplotlib
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.legend_handler import HandlerTuple
from matplotlib.lines import Line2D
from matplotlib.markers import MarkerStyle
from matplotlib.path import Path as MplPath
from matplotlib.ticker import MaxNLocator
from matplotlib.transforms import Affine2D, ScaledTranslation

from fescan.report import style
from fescan.report.labels import plain_words, plural, structure_name
from fescan.report.placement import Box, Placement, Segment, leader, place_labels
from fescan.report.projection import Projection
from fescan.report.scene import SCALE_TOLERANCE, Scene, build_scene, panel_groups

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes

    from fescan.analysis.scan import ScanResult

__all__ = ["RC", "figure_context", "new_figure", "save_figure", "draw_wire", "draw_scene", "relay_figure",
           "relay_diagram", "legend_handles", "DiagramInfo", "distance_by_class_figure", "rate_distance_figure",
           "counts_figure", "bottleneck_figure", "ligation_by_resolution_figure", "ambiguity_ratio", "link_ambiguity",
           "AMBIGUOUS_RATIO", "MAX_PANELS", "RATE_AXIS", "RATE_MARGIN", "WARNING_OFFSET_PT", "WARNING_PT",
           "WARNING_TEXT"]

#: rcParams of every fescan figure (see :func:`figure_context`).
RC: dict[str, object] = {
    "svg.hashsalt": "fescan", "svg.fonttype": "none", "font.family": style.FONT_FAMILY,
    "font.size": style.FONT_PT, "axes.titlesize": style.TITLE_PT, "axes.labelsize": style.FONT_PT,
    "xtick.labelsize": style.FONT_PT, "ytick.labelsize": style.FONT_PT, "legend.fontsize": style.FONT_PT,
    "axes.linewidth": 0.6, "xtick.major.width": 0.6, "ytick.major.width": 0.6, "savefig.dpi": 300,
    "path.simplify": False,
}
_PT = 72.0  # points per inch
#: Room (pt) kept free around the cofactors for labels: horizontal, vertical.
_MARGIN_PT = (14.0, 40.0)
#: A label farther than this (pt) from its glyph centre gets a leader line.
_LEADER_FROM_PT = 0.5 * style.GLYPH_PT + 9.0
#: Directions (degrees) tried for a cofactor label, best first.
_DIRECTIONS = (90.0, 270.0, 0.0, 180.0, 45.0, 135.0, 315.0, 225.0, 67.5, 112.5, 292.5, 247.5, 22.5, 157.5,
               337.5, 202.5)
_SEGMENT_WEIGHT = {"path": 12.0, "gap": 12.0, "near": 6.0, "pair": 2.0}
#: Opacity of cofactors off the wire.
_FAINT = 0.4
#: Colour of labels of cofactors off the wire.
_FAINT_INK = "#6b6b6b"


@contextlib.contextmanager
def figure_context(salt: str = "fescan") -> Iterator[None]:
    """fescan rcParams inside a ``with`` block; give each figure of one HTML page its own ``salt``."""
    with matplotlib.rc_context({**RC, "svg.hashsalt": salt}):
        yield


def new_figure(width_in: float, height_in: float) -> Figure:
    """A figure with an Agg canvas (no pyplot), sized in inches."""
    fig = Figure(figsize=(width_in, height_in), dpi=100)
    FigureCanvasAgg(fig)
    return fig


def save_figure(fig: Figure, out_base: str | Path, *, salt: str = "fescan") -> list[Path]:
    """Write ``<out_base>.svg`` and ``<out_base>.png`` (300 dpi), byte-for-byte reproducible.

    Returns
    -------
    list of pathlib.Path
        The SVG and the PNG.
    """
    base = Path(out_base)
    base.parent.mkdir(parents=True, exist_ok=True)
    svg, png = base.with_name(base.name + ".svg"), base.with_name(base.name + ".png")
    with figure_context(salt):
        fig.savefig(svg, format="svg", metadata={"Date": None, "Creator": "fescan"})
        fig.savefig(png, format="png", dpi=300, metadata={"Software": None})
    return [svg, png]


# --------------------------------------------------------------------------- glyphs and legend


def _marker(shape: str) -> tuple[MarkerStyle | str, float]:
    """Marker and marker size (pt) of a house shape; every shape is drawn at one scale."""
    verts = style.SHAPES[shape]
    if verts is None:
        return "o", 0.85 * style.GLYPH_PT
    v = np.asarray(verts + (verts[0],), dtype=float)
    codes = [MplPath.MOVETO] + [MplPath.LINETO] * (len(verts) - 1) + [MplPath.CLOSEPOLY]
    return MarkerStyle(MplPath(v, codes)), float(np.max(np.abs(v))) * style.GLYPH_PT


def _glyph_lines(g: style.Glyph, x: list[float], y: list[float], gid: str | None = None,
                 faint: bool = False) -> list[Line2D]:
    m, ms = _marker(g.shape)
    out = [Line2D(x, y, linestyle="none", marker=m, markersize=ms, markerfacecolor=g.face,
                  markeredgecolor=style.INK, markeredgewidth=0.6, zorder=6, gid=gid, alpha=_FAINT if faint else 1.0)]
    mark_gid = gid.replace("cofactor-", "mark-", 1) if gid else None
    if g.mark == "dot":
        out.append(Line2D(x, y, linestyle="none", marker="o", markersize=2.6, markerfacecolor="white",
                          markeredgewidth=0, zorder=6.1, gid=mark_gid))
    elif g.mark == "bar":
        out.append(Line2D(x, y, linestyle="none", marker="|", markersize=6.0, markeredgecolor="white",
                          markeredgewidth=1.5, zorder=6.1, gid=mark_gid))
    return out


def _line_kw(s: style.LineStyle, dotted: bool = False) -> dict:
    kw = {"color": s.colour, "linewidth": s.width, "zorder": s.zorder, "solid_capstyle": "butt",
          "dash_capstyle": "butt"}
    if dotted:
        kw["linestyle"] = (0, (1.0, 1.5))
    elif s.dashes:
        kw["linestyle"] = (0, s.dashes)
    return kw


def _ring(x: list[float], y: list[float], gid: str | None = None) -> Line2D:
    return Line2D(x, y, linestyle="none", marker="o", markersize=style.GLYPH_PT + 5, markerfacecolor="none",
                  markeredgecolor=style.INK, markeredgewidth=1.0, zorder=5.5, gid=gid)


#: Diameter (pt) of the warning mark: a black disc with a white "!".
WARNING_PT = 5.8
#: Offset (pt, right and up) of the warning mark from the centre of its cofactor's glyph: a badge on
#: the glyph's upper right corner that stays inside the room kept free for the glyph (no label moves).
WARNING_OFFSET_PT = (0.5 * style.GLYPH_PT + 1.5 - 0.5 * WARNING_PT,) * 2
#: Legend text of the warning mark.
WARNING_TEXT = "cofactor with a check warning"


def _warning_lines(x: list[float], y: list[float], gid: str | None = None,
                   offset: object | None = None) -> list[Line2D]:
    """The warning mark: a black disc with a white "!" (reads in greyscale), optionally offset."""
    kw = {} if offset is None else {"transform": offset}
    return [Line2D(x, y, linestyle="none", marker="o", markersize=WARNING_PT, markerfacecolor=style.INK,
                   markeredgecolor="white", markeredgewidth=0.6, zorder=6.5, gid=gid, **kw),
            Line2D(x, y, linestyle="none", marker="$!$", markersize=0.66 * WARNING_PT, markerfacecolor="white",
                   markeredgecolor="white", markeredgewidth=0.25, zorder=6.6,
                   gid=(gid + "-sign") if gid else None, **kw)]


def legend_handles(scenes: Sequence[Scene]) -> tuple[list, list[str]]:
    """Legend handles and texts for the glyphs and line kinds present in some scenes.

    Use with ``handler_map={tuple: HandlerTuple(ndivide=1)}`` (glyphs with an
    inner mark are tuples of two overlaid markers).
    """
    glyphs: dict[str, style.Glyph] = {}
    kinds: set[str] = set()
    texts: dict[str, str] = {}
    neck = "bottleneck"
    for sc in scenes:
        for n in sc.nodes:
            glyphs.setdefault(n.glyph.legend, n.glyph)
        kinds |= sc.kinds()
        texts.update(sc.legend_text)
        if "bottleneck" in sc.kinds() and neck == "bottleneck":
            neck = sc.bottleneck_text or neck
    order = sorted(glyphs, key=lambda t: (style.legend_rank(t), t))
    handles: list = [tuple(_glyph_lines(glyphs[t], [], [])) for t in order]
    labels = [texts.get(t, t) for t in order]
    if "warning" in kinds:  # a mark on cofactors: listed with the glyphs
        handles.append(tuple(_warning_lines([], [])))
        labels.append(WARNING_TEXT)
    lines = [
        ("path", Line2D([], [], **_line_kw(style.PATH_HOP)), "relay path (fastest)"),
        ("bottleneck", (Line2D([], [], **_line_kw(style.BOTTLENECK_HALO)), Line2D([], [], **_line_kw(style.PATH_HOP))),
         neck),
        ("gap", Line2D([], [], **_line_kw(style.GAP_HOP)), "hop over the gap limit"),
        ("pair", Line2D([], [], **_line_kw(style.PAIR)), "other pair within limit"),
        ("near", Line2D([], [], **_line_kw(style.NEAR_GAP)), "nearest partner, over limit"),
        ("symmetry", Line2D([], [], **_line_kw(style.PAIR, dotted=True)), "via a symmetry mate"),
        ("ends", _ring([], []), "entry / exit"),
        ("faint", tuple(_glyph_lines(style.Glyph("disc", "#bbbbbb"), [], [], faint=True)), "off the wire"),
    ]
    for key, h, text in lines:
        if key in kinds:
            handles.append(h)
            labels.append(text)
    return handles, labels


def _legend_kw() -> dict:
    return {"frameon": False, "fontsize": style.FONT_PT, "handlelength": 2.4, "columnspacing": 1.2,
            "handletextpad": 0.6, "borderaxespad": 0.0, "labelspacing": 0.35,
            "handler_map": {tuple: HandlerTuple(ndivide=1, pad=0.0)}}


# --------------------------------------------------------------------------- relay diagram


@dataclass
class DiagramInfo:
    """What :func:`draw_wire` drew (for callers and tests).

    Attributes
    ----------
    scene : Scene
        Nodes and links drawn, with the projection.
    label_boxes : dict of str to Box
        Final label boxes (display pixels), by SVG id of the label.
    glyph_boxes : dict of str to Box
        Glyph boxes (display pixels), by cofactor uid.
    extent : (xmin, xmax, ymin, ymax) or None
        Region of the view plane (Å) fitted into the axes.
    leaders : set of str
        SVG ids of the labels joined to their glyph by a leader line.
    scale_bar : bool
        Whether a scale bar was drawn (only when :attr:`Scene.to_scale`).
    panels : list of DiagramInfo
        Every panel of a :func:`relay_figure` (empty for a single :func:`draw_wire`).
    """

    scene: Scene
    label_boxes: dict[str, Box] = field(default_factory=dict)
    glyph_boxes: dict[str, Box] = field(default_factory=dict)
    extent: tuple[float, float, float, float] | None = None
    leaders: set[str] = field(default_factory=set)
    scale_bar: bool = False
    panels: list[DiagramInfo] = field(default_factory=list)

    @property
    def projection(self) -> Projection:
        """The view plane used."""
        return self.scene.projection


def draw_wire(ax: Axes, result: ScanResult, *, projection: Projection | None = None, title: str | None = None,
              legend: bool = False, extent: tuple[float, float, float, float] | None = None) -> DiagramInfo:
    """Draw the relay diagram of one scan result on a given Axes.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Axes to draw on; its size in the figure sets the scale (equal aspect).
    result : ScanResult
        From :func:`fescan.scan`.
    projection : Projection, optional
        View plane; default the principal components of the cofactor centres,
        entry on the left. Pass one projection to several calls to show two
        structures in the same view.
    title : str, optional
        Axes title (shown as given, never parsed as math text).
    legend : bool, optional
        Put a legend under the axes.
    extent : (xmin, xmax, ymin, ymax), optional
        Region of the view plane (Å) to show at least; give two panels the
        ``extent`` of :attr:`DiagramInfo.extent` (or their union) to draw them
        at one scale.

    Returns
    -------
    DiagramInfo
    """
    return draw_scene(ax, build_scene(result, projection), title=title, legend=legend, extent=extent)


def _set_limits(ax: Axes, xy: np.ndarray, extent: tuple[float, float, float, float] | None) -> tuple:
    """Equal-aspect limits that fit the points (and ``extent``) plus the label margins; returns the extent."""
    bb = ax.get_window_extent()
    k = ax.figure.dpi / _PT
    mx, my = _MARGIN_PT[0] * k, _MARGIN_PT[1] * k
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    if extent is not None:
        lo = np.minimum(lo, [extent[0], extent[2]])
        hi = np.maximum(hi, [extent[1], extent[3]])
    span = np.maximum(hi - lo, 1e-6)
    s = min((bb.width - 2 * mx) / span[0], (bb.height - 2 * my) / span[1], 12.0 * k)  # px per Å
    s = max(s, 1e-3)
    c = (lo + hi) / 2
    ax.set_xlim(c[0] - bb.width / (2 * s), c[0] + bb.width / (2 * s))
    ax.set_ylim(c[1] - bb.height / (2 * s), c[1] + bb.height / (2 * s))
    return (float(lo[0]), float(hi[0]), float(lo[1]), float(hi[1]))


def draw_scene(ax: Axes, scene: Scene, *, title: str | None = None, legend: bool = False,
               extent: tuple[float, float, float, float] | None = None) -> DiagramInfo:
    """Render a :class:`~fescan.report.scene.Scene` on an Axes (see :func:`draw_wire`)."""
    info = DiagramInfo(scene)
    ax.set_axis_off()
    if title:
        ax.set_title(title, loc="left", fontsize=style.TITLE_PT, fontweight="bold", parse_math=False, pad=2)
    if not scene.nodes:
        ax.text(0.5, 0.5, "no redox cofactors found", ha="center", va="center", transform=ax.transAxes,
                fontsize=style.FONT_PT, color=style.INK)
        return info
    pos = scene.positions()
    info.extent = _set_limits(ax, np.array(list(pos.values())), extent)
    k = ax.figure.dpi / _PT
    px = {u: tuple(ax.transData.transform(p)) for u, p in pos.items()}
    segments: list[Segment] = []
    marks: list[Box] = []
    for lk in scene.links:
        p, q = pos[lk.first], pos[lk.second]
        if lk.halo:
            ax.plot(*zip(p, q), gid="bottleneck-" + lk.gid, **_line_kw(style.BOTTLENECK_HALO))
        ax.plot(*zip(p, q), gid=lk.gid, **_line_kw(lk.line, lk.dotted))
        angle = math.degrees(math.atan2(px[lk.second][1] - px[lk.first][1], px[lk.second][0] - px[lk.first][0]))
        if lk.arrow is not None:
            marks.append(_arrow(ax, p, q, lk.arrow, angle, lk.gid + "-arrow"))
        if lk.break_gid:
            marks.append(_break_mark(ax, p, q, angle, lk.break_gid, lk.line.colour))
        width = (style.BOTTLENECK_HALO.width if lk.halo else lk.line.width) * k
        segments.append(Segment(px[lk.first], px[lk.second], _SEGMENT_WEIGHT[lk.kind], width))
    r0 = (0.5 * style.GLYPH_PT + 1.0) * k
    for n in scene.nodes:
        for art in _glyph_lines(n.glyph, [n.xy[0]], [n.xy[1]], n.gid, faint=n.faint):
            ax.add_line(art)
        if n.role:
            ax.add_line(_ring([n.xy[0]], [n.xy[1]], f"{n.role}-{style.svg_id(n.uid)}"))
        r = r0 + (2.5 * k if n.role else 0.0)
        x, y = px[n.uid]
        info.glyph_boxes[n.uid] = Box(x - r, y - r, x + r, y + r)
        if n.warned:
            dx, dy = WARNING_OFFSET_PT
            shift = ax.transData + ScaledTranslation(dx / _PT, dy / _PT, ax.figure.dpi_scale_trans)
            for art in _warning_lines([n.xy[0]], [n.xy[1]], "warning-" + style.svg_id(n.uid), shift):
                ax.add_line(art)
            h = 0.5 * WARNING_PT * k
            cx, cy = x + dx * k, y + dy * k
            marks.append(Box(cx - h, cy - h, cx + h, cy + h))
    fixed = list(info.glyph_boxes.values()) + marks
    info.label_boxes, info.leaders, info.scale_bar = _place_texts(ax, scene, px, segments, fixed)
    if legend:
        h, lab = legend_handles([scene])
        ax.legend(h, lab, loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=2, **_legend_kw())
    return info


def _mark_box(ax: Axes, x: float, y: float, half_pt: float) -> Box:
    cx, cy = ax.transData.transform((x, y))
    r = half_pt * ax.figure.dpi / _PT
    return Box(cx - r, cy - r, cx + r, cy + r)


def _arrow(ax: Axes, p, q, t: float, angle: float, gid: str) -> Box:
    x, y = p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1])
    m = MarkerStyle(">", transform=Affine2D().rotate_deg(angle))
    ax.plot([x], [y], linestyle="none", marker=m, markersize=5.0, markerfacecolor=style.INK, markeredgewidth=0,
            zorder=3.2, gid=gid)
    return _mark_box(ax, x, y, 2.5)


def _break_mark(ax: Axes, p, q, angle: float, gid: str, colour: str) -> Box:
    """A white gap with two slashes across the line at its middle (reads in greyscale)."""
    x, y = (p[0] + q[0]) / 2, (p[1] + q[1]) / 2
    rot = Affine2D().rotate_deg(angle)
    gap = MplPath([(-0.35, -0.9), (0.35, -0.9), (0.35, 0.9), (-0.35, 0.9), (-0.35, -0.9)], closed=True)
    slashes = MplPath([(-0.55, -0.8), (-0.05, 0.8), (0.05, -0.8), (0.55, 0.8)],
                      [MplPath.MOVETO, MplPath.LINETO, MplPath.MOVETO, MplPath.LINETO])
    ax.plot([x], [y], linestyle="none", marker=MarkerStyle(gap, transform=rot), markersize=7,
            markerfacecolor="white", markeredgewidth=0, zorder=3.4, gid=gid)
    ax.plot([x], [y], linestyle="none", marker=MarkerStyle(slashes, fillstyle="none", transform=rot), markersize=8,
            markeredgecolor=colour, markeredgewidth=0.9, zorder=3.5, gid=gid + "-slashes")
    return _mark_box(ax, x, y, 4.0)


def _scale_bar_item(ax: Axes) -> tuple[float, Placement]:
    """Length (Å) of the scale bar and its placement item (candidates along the frame)."""
    x0, x1 = ax.get_xlim()
    length = next((v for v in (50.0, 20.0, 10.0, 5.0, 2.0) if v <= 0.22 * (x1 - x0)), 1.0)
    k = ax.figure.dpi / _PT
    bb = ax.get_window_extent()
    w = length * bb.width / (x1 - x0) + 4 * k
    h = 13 * k
    cands = []
    for uy in (0.0, 1.0, 0.5):
        for ux in (0.0, 1.0, 0.5):
            if (ux, uy) == (0.5, 0.5):
                continue
            cands.append((bb.x0 + w / 2 + ux * (bb.width - w), bb.y0 + h / 2 + uy * (bb.height - h)))
    return length, Placement("scale-bar", w, h, cands, [2.0 * r for r in range(len(cands))])


def _draw_scale_bar(ax: Axes, length: float, box: Box) -> None:
    inv = ax.transData.inverted()
    k = ax.figure.dpi / _PT
    (bx, by) = inv.transform((box.x0 + 2 * k, box.y0 + 2 * k))
    ax.plot([bx, bx + length], [by, by], color=style.INK, linewidth=1.2, solid_capstyle="butt", gid="scale-bar")
    ax.annotate(f"{length:g} Å", (bx + length / 2, by), xytext=(0, 2), textcoords="offset points", ha="center",
                va="bottom", fontsize=style.FONT_PT, color=style.INK, gid="scale-bar-label")


def _place_texts(ax: Axes, scene: Scene, px: dict, segments: list[Segment],
                 fixed: list[Box]) -> tuple[dict[str, Box], set[str], bool]:
    """Create every label, measure it, place them all, then move each into place.

    A cofactor label gets a leader line when it lies far from its glyph or when another
    glyph is about as near to it as its own (so no label can be read as a neighbour's).
    The scale bar is placed only when the scene is drawn to scale.
    """
    renderer = ax.figure.canvas.get_renderer()
    k = ax.figure.dpi / _PT
    texts, items = {}, []

    def text(s: str, gid: str, bold: bool = False, faint: bool = False):
        t = ax.text(0, 0, s, ha="center", va="center", fontsize=style.FONT_PT, color=_FAINT_INK if faint else style.INK,
                    linespacing=1.15,
                    fontweight="bold" if bold else "normal", parse_math=False, gid=gid, zorder=8,
                    bbox={"boxstyle": "square,pad=0.1", "facecolor": "white", "edgecolor": "none", "alpha": 0.85})
        bb = t.get_window_extent(renderer)
        return t, bb.width + 2 * k, bb.height + 1 * k

    for n_index, n in enumerate(scene.nodes):
        t, w, h = text(n.label, n.label_gid, faint=n.faint)
        ax_, ay_ = px[n.uid]
        cands, pens = [], []
        for ring, (rad, pen) in enumerate(((1.0, 0.0), (1.9, 60.0), (2.9, 150.0), (4.2, 300.0))):
            gap = (0.5 * style.GLYPH_PT + 1.5 + (2.5 if n.role else 0.0)) * k * rad
            for rank, ang in enumerate(_DIRECTIONS):
                dx, dy = math.cos(math.radians(ang)), math.sin(math.radians(ang))
                # just clear of the square of half-size ``gap`` around the glyph
                f = min((gap + w / 2) / max(abs(dx), 1e-9), (gap + h / 2) / max(abs(dy), 1e-9))
                cands.append((ax_ + dx * f, ay_ + dy * f))
                pens.append(pen + 0.4 * rank + 5.0 * ring)
        texts[n.label_gid] = (t, (ax_, ay_))
        items.append(Placement(n.label_gid, w, h, cands, pens, own_boxes=frozenset({n_index}), anchor=(ax_, ay_),
                               leader_from=_LEADER_FROM_PT * k))
    for s_index, lk in enumerate(scene.links):
        if lk.label is None:
            continue
        t, w, h = text(lk.label, lk.label_gid, lk.bold)
        p, q = np.asarray(px[lk.first]), np.asarray(px[lk.second])
        d = q - p
        nvec = np.array([-d[1], d[0]]) / (float(np.hypot(*d)) or 1.0)
        reach = abs(nvec[0]) * w / 2 + abs(nvec[1]) * h / 2 + 3.5 * k  # clear of the halo
        cands, pens = [], []
        for extra, pen in ((0.0, 0.0), (5.0 * k, 40.0), (11.0 * k, 90.0)):
            for rank, f in enumerate((0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8)):
                for side in (1, -1):
                    c = p + f * d + side * nvec * (reach + extra)
                    cands.append((float(c[0]), float(c[1])))
                    pens.append(pen + 3.0 * rank + (0.5 if side < 0 else 0.0))
        texts[lk.label_gid] = (t, None)
        items.append(Placement(lk.label_gid, w, h, cands, pens, own_segments=frozenset({s_index})))
    length = 0.0
    if scene.to_scale:
        length, bar = _scale_bar_item(ax)
        items.append(bar)
    bb = ax.get_window_extent()
    boxes = place_labels(items, fixed=fixed, segments=segments, frame=Box(bb.x0, bb.y0, bb.x1, bb.y1))
    inv = ax.transData.inverted()
    glyph_xy = {n.label_gid: np.asarray(px[n.uid]) for n in scene.nodes}
    link_xy = {lk.label_gid: (np.asarray(px[lk.first]), np.asarray(px[lk.second]))
               for lk in scene.links if lk.label is not None}
    leaders: set[str] = set()
    for key, box in boxes.items():
        if key == "scale-bar":
            _draw_scale_bar(ax, length, box)
            continue
        t, anchor = texts[key]
        t.set_position(tuple(inv.transform(((box.x0 + box.x1) / 2, (box.y0 + box.y1) / 2))))
        if anchor is None:
            own = link_xy.get(key)
            if own is not None and link_ambiguity(box, key, link_xy) > AMBIGUOUS_RATIO:
                p, q = own
                a = _nearest_on_segment(p, q, box)
                near = np.array([min(max(a[0], box.x0), box.x1), min(max(a[1], box.y0), box.y1)])
                if float(np.hypot(*(near - a))) > 1.0:
                    leaders.add(key)
                    (x0, y0), (x1, y1) = inv.transform(a), inv.transform(near)
                    ax.plot([x0, x1], [y0, y1], color="#555555", linewidth=0.5, zorder=7, linestyle=(0, (1.0, 1.0)),
                            gid=key.replace("-label", "-leader"))
            continue
        seg = leader(anchor, box, _LEADER_FROM_PT * k)
        if seg is None and _ambiguous(box, key, glyph_xy):
            seg = leader(anchor, box, 0.0)
            if seg is not None:  # start outside the glyph
                a = np.asarray(anchor)
                d = seg[1] - a
                dist = float(np.hypot(*d)) or 1.0
                seg = (a + d * min(0.5 * _LEADER_FROM_PT * k / dist, 0.9), seg[1])
        if seg is not None:
            leaders.add(key)
            (x0, y0), (x1, y1) = inv.transform(seg[0]), inv.transform(seg[1])
            ax.plot([x0, x1], [y0, y1], color="#555555", linewidth=0.5, zorder=7,
                    gid=key.replace("label-", "leader-", 1))
    return boxes, leaders, "scale-bar" in boxes


def _box_distance(box: Box, xy: np.ndarray) -> float:
    dx = max(box.x0 - xy[0], 0.0, xy[0] - box.x1)
    dy = max(box.y0 - xy[1], 0.0, xy[1] - box.y1)
    return float(math.hypot(dx, dy))


def ambiguity_ratio(box: Box, own: str, glyph_xy: dict[str, np.ndarray]) -> float:
    """Distance of a label box to its own glyph over the distance to the nearest other glyph.

    Below :data:`AMBIGUOUS_RATIO` the label reads as its own glyph's without a leader.
    """
    mine = _box_distance(box, glyph_xy[own])
    others = [_box_distance(box, xy) for k, xy in glyph_xy.items() if k != own]
    if not others:
        return 0.0
    return mine / max(min(others), 1e-9)


def _nearest_on_segment(p: np.ndarray, q: np.ndarray, box: Box) -> np.ndarray:
    """Point of segment p-q nearest to the centre of a box."""
    c = np.array([(box.x0 + box.x1) / 2, (box.y0 + box.y1) / 2])
    d = q - p
    t = float(np.clip((c - p) @ d / max(float(d @ d), 1e-12), 0.0, 1.0))
    return p + t * d


def _segment_distance(box: Box, p: np.ndarray, q: np.ndarray) -> float:
    return _box_distance(box, _nearest_on_segment(p, q, box))


def link_ambiguity(box: Box, own: str, link_xy: dict[str, tuple[np.ndarray, np.ndarray]]) -> float:
    """Distance of a line label to its own line over the distance to the nearest other labelled line."""
    mine = _segment_distance(box, *link_xy[own])
    others = [_segment_distance(box, *pq) for k, pq in link_xy.items() if k != own]
    if not others:
        return 0.0
    return mine / max(min(others), 1e-9)


#: A label nearer than this fraction of the distance to any other glyph needs no leader.
AMBIGUOUS_RATIO = 0.6


def _ambiguous(box: Box, own: str, glyph_xy: dict[str, np.ndarray]) -> bool:
    return ambiguity_ratio(box, own, glyph_xy) > AMBIGUOUS_RATIO


def _panel_title(result: ScanResult, scene: Scene, k: int, n_panels: int) -> str:
    entry = structure_name(result.path)
    keys = {n.uid: n.label.split("\n")[0] for n in scene.nodes}
    chains = sorted({uid.split(":")[1].split("/")[0] for uid in keys if uid.count(":") >= 2})
    where = f"chain{'s' * (len(chains) > 1)} {', '.join(chains)}" if chains else ""
    if k == 0 and result.wire.path:
        head = f"{entry}: the wire"
    elif n_panels == 1:
        return entry
    else:
        head = f"{entry}: group {k + 1}"
    return f"{head} ({len(scene.nodes)} cofactor{'s' * (len(scene.nodes) != 1)}{', ' + where if where else ''})"


def _panel_height(scene: Scene, width_in: float) -> float:
    """Height (in) of one panel's drawing area: room for its spread and its labels."""
    xy = np.array(list(scene.positions().values())).reshape(-1, 2)
    span = np.ptp(xy, axis=0) if len(xy) > 1 else np.ones(2)
    ax_w = width_in - 0.1
    s = (ax_w * _PT - 2 * _MARGIN_PT[0]) / max(span[0], 1e-6)
    # room for the labels: about 0.21 in² per cofactor label and 0.10 in² per line label,
    # filling no more than 30 % of the drawing
    n_line_labels = sum(1 for lk in scene.links if lk.label)
    need = (0.21 * len(scene.nodes) + 0.10 * n_line_labels) / 0.3 / ax_w
    small = 0.35 * width_in if len(scene.nodes) <= 2 else 0.6 * width_in
    return min(max((span[1] * s + 2 * _MARGIN_PT[1]) / _PT, small, need), 1.25 * width_in)


#: Most panels one relay figure draws (the rest are named in its note).
MAX_PANELS = 8


def relay_figure(result: ScanResult, *, width_in: float = style.COLUMN_WIDTH_IN,
                 title: str | None = None) -> tuple[Figure, DiagramInfo]:
    """The relay diagram of one result as a figure with legend and note (see :func:`relay_diagram`).

    One panel per group of cofactors (:func:`fescan.report.scene.panel_groups`): the
    wire's group first, with the cofactors off the wire drawn faint, then each other
    group (other copies, other chains), so every cofactor appears once.

    Returns
    -------
    fig : matplotlib.figure.Figure
    info : DiagramInfo
        What the first panel drew; ``info.panels`` holds every panel's.
    """
    with figure_context("fescan-relay"):
        groups = panel_groups(result)
        left_out = groups[MAX_PANELS:]
        groups = groups[:MAX_PANELS] or [[]]
        scenes = [build_scene(result, members=g) for g in groups]
        titles = [_panel_title(result, sc, k, len(scenes)) for k, sc in enumerate(scenes)]
        if title is not None:
            titles[0] = title
        ax_w = width_in - 0.1
        heights = [_panel_height(sc, width_in) for sc in scenes]
        handles, labels = legend_handles(scenes)
        note_text = scenes[0].note
        if all(sc.to_scale for sc in scenes):
            note_text += (f" Layout: the 3-D arrangement laid flat; wire hops drawn to scale within "
                          f"±{SCALE_TOLERANCE:.0%} (centre to centre).")
        else:
            note_text += (" Not to scale: no flat layout keeps every hop's length here (within "
                          f"±{SCALE_TOLERANCE:.0%}), so no scale bar; read distances from the labels.")
        if left_out:
            n_left = sum(len(g) for g in left_out)
            note_text += (f" {plural(len(left_out), 'further group')} ({plural(n_left, 'cofactor')}) "
                          "not drawn.")
        note = textwrap.fill(note_text, 66)
        leg_h = 0.08 + math.ceil(len(labels) / 2) * 0.165 if labels else 0.0
        note_h = 0.06 + 0.125 * (note.count("\n") + 1)
        title_h = 0.2
        height = sum(heights) + title_h * len(scenes) + leg_h + note_h
        fig = new_figure(width_in, height)
        bottom = (leg_h + note_h) / height
        top = 1.0
        infos = []
        for sc, h, t in zip(scenes, heights, titles):
            y0 = top - (title_h + h) / height
            ax = fig.add_axes((0.05 / width_in, y0, ax_w / width_in, h / height))
            infos.append(draw_scene(ax, sc, title=t))
            top = y0
        if labels:
            fig.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, bottom), ncol=2, **_legend_kw())
        fig.text(0.06 / width_in, 0.04 / height, note, ha="left", va="bottom", fontsize=style.FONT_PT,
                 color="#333333", parse_math=False, gid="note")
    info = infos[0]
    info.panels = infos
    return fig, info


def relay_diagram(result: ScanResult, out_base: str | Path, *, width_in: float = style.COLUMN_WIDTH_IN,
                  title: str | None = None) -> list[Path]:
    """Write the relay diagram of one result as ``<out_base>.svg`` and ``<out_base>.png``.

    Parameters
    ----------
    result : ScanResult
    out_base : str or path-like
        Output path without suffix (``out/wire`` gives ``out/wire.svg`` and ``out/wire.png``).
    width_in : float, optional
        Figure width in inches (default one journal column, 85 mm).
    title : str, optional
        Title; default the structure's file name without folders and suffix
        (:func:`fescan.report.labels.structure_name`), the same for every report.

    Returns
    -------
    list of pathlib.Path
        The SVG and the PNG.
    """
    fig, _ = relay_figure(result, width_in=width_in, title=title)
    return save_figure(fig, out_base, salt="fescan-relay")


# --------------------------------------------------------------------------- survey figures


def _plain_axes(ax: Axes) -> None:
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(labelsize=style.FONT_PT, length=2.5, width=0.6, pad=2)


def _jitter(n: int, width: float = 0.5) -> np.ndarray:
    """Deterministic spread in [-width/2, width/2] (golden-ratio sequence, no randomness)."""
    return ((np.arange(n) * 0.6180339887498949 + 0.5) % 1.0 - 0.5) * width


def distance_by_class_figure(groups: Sequence[tuple[str, style.Glyph, np.ndarray, int]], *, gap_limit: float,
                             cutoff: float) -> Figure:
    """Nearest-neighbour edge-to-edge distance of every cofactor, one row per class.

    Parameters
    ----------
    groups : sequence of (label, glyph, distances, n_without)
        Class label, its glyph, the finite nearest-neighbour distances (Å) and
        the number of cofactors with no partner within the cutoff.
    gap_limit, cutoff : float
        Gap limit (marked) and pair cutoff (Å).
    """
    with figure_context("fescan-survey-nn"):
        n = max(len(groups), 1)
        height = 0.85 + 0.24 * n
        fig = new_figure(style.COLUMN_WIDTH_IN, height)
        ax = fig.add_axes((0.36, 0.55 / height, 0.6, (0.24 * n) / height))
        _plain_axes(ax)
        none_x = cutoff + 3.0
        for row, (_label, g, d, n_without) in enumerate(groups):
            m, ms = _marker(g.shape)
            ax.plot(d, row + _jitter(len(d)), linestyle="none", marker=m, markersize=0.6 * ms, markerfacecolor=g.face,
                    markeredgecolor=style.INK, markeredgewidth=0.4, alpha=0.9, gid=f"nn-{row}")
            if n_without:
                ax.plot(np.full(n_without, none_x), row + _jitter(n_without, 0.3), linestyle="none", marker=m,
                        markersize=0.6 * ms, markerfacecolor="white", markeredgecolor=style.INK,
                        markeredgewidth=0.6, gid=f"nn-none-{row}")
        ax.axvline(gap_limit, color=style.INK, linewidth=0.8, linestyle=(0, (3.0, 2.0)), zorder=0, gid="gap-limit")
        ax.axvline(cutoff + 1.0, color="#bdbdbd", linewidth=0.6, zorder=0)
        ax.text(gap_limit, 1.01, f"{gap_limit:g} Å limit", transform=ax.get_xaxis_transform(), ha="center",
                va="bottom", fontsize=style.FONT_PT)
        ax.set_yticks(range(len(groups)))
        ax.set_yticklabels([f"{lab} ({len(d) + w})" for lab, _, d, w in groups], fontsize=style.FONT_PT)
        ax.set_ylim(n - 0.4, -0.6)
        ax.set_xlim(0, cutoff + 5.0)
        ticks = list(range(0, int(cutoff) + 1, 5))
        ax.set_xticks(ticks + [none_x], [str(t) for t in ticks] + ["none"], fontsize=style.FONT_PT)
        ax.set_xlabel(f"nearest-neighbour edge-to-edge distance (Å)\nnone: no partner within {cutoff:g} Å",
                      fontsize=style.FONT_PT, linespacing=1.3)
    return fig


#: Least range of the log10 k axis of :func:`rate_distance_figure` (widened to fit every point).
RATE_AXIS = (-2.0, 13.5)
#: Margin (decades) between the outermost point and the end of the log10 k axis.
RATE_MARGIN = 0.5


def rate_distance_figure(pairs_r: np.ndarray, pairs_logk: np.ndarray, path_r: np.ndarray, path_logk: np.ndarray,
                         curves: Sequence[tuple[float, np.ndarray, np.ndarray]], *, gap_limit: float,
                         log10_threshold: float, reorg: float, rho: float) -> Figure:
    """log10 k against edge-to-edge distance for every pair, with Moser-Dutton curves.

    Parameters
    ----------
    pairs_r, pairs_logk : ndarray
        Distances (Å) and log10 k (s⁻¹) of every pair, both directions.
    path_r, path_logk : ndarray
        The same for hops on a relay path (drawn on top).
    curves : sequence of (dg, r, log10 k)
        Moser-Dutton curves, one per driving force ΔG (eV).
    gap_limit, log10_threshold : float
        Gap limit (Å) and log10 of the turnover threshold (s⁻¹), marked.
    reorg, rho : float
        λ (eV) and ρ of the curves (stated in the legend).

    Returns
    -------
    matplotlib.figure.Figure
        The vertical axis spans every finite point (at least −2 to 13.5) with a margin of
        :data:`RATE_MARGIN` decades; points without a finite rate are counted in a note
        on the axes.
    """
    points = np.concatenate([np.asarray(pairs_logk, dtype=float).ravel(), np.asarray(path_logk, dtype=float).ravel()])
    finite = points[np.isfinite(points)]
    y_lo, y_hi = RATE_AXIS
    if finite.size:
        y_lo = min(y_lo, float(finite.min()) - RATE_MARGIN)
        y_hi = max(y_hi, float(finite.max()) + RATE_MARGIN)
    n_off = int(points.size - finite.size)
    with figure_context("fescan-survey-rate"):
        fig = new_figure(style.COLUMN_WIDTH_IN, 2.9)
        ax = fig.add_axes((0.15, 0.30, 0.82, 0.66))
        _plain_axes(ax)
        ax.plot(pairs_r, pairs_logk, linestyle="none", marker="o", markersize=2.2, markerfacecolor="#9a9a9a",
                markeredgewidth=0, alpha=0.8, label="pair, either direction", gid="pairs")
        ax.plot(path_r, path_logk, linestyle="none", marker="o", markersize=3.0, markerfacecolor=style.INK,
                markeredgewidth=0, label="hop on a relay path", gid="path-hops")
        greys = ("#1f1f1f", "#4d4d4d", "#7a7a7a", "#a6a6a6", "#c4c4c4")
        dashes = (None, (4.0, 1.5), (1.5, 1.5), (5.0, 1.5, 1.5, 1.5), (0.8, 1.2))
        for k, (dg, r, lk) in enumerate(curves):
            kw = {"linestyle": (0, dashes[k % 5])} if dashes[k % 5] else {}
            text = "0" if abs(dg) < 5e-3 else f"{dg:+.1f}".replace("-", "−")
            text += " (−λ)" if abs(dg + reorg) < 1e-9 else ""
            ax.plot(r, lk, color=greys[k % 5], linewidth=1.0, label=f"ΔG = {text} eV", gid=f"curve-{k}", **kw)
        ax.axvline(gap_limit, color=style.INK, linewidth=0.7, linestyle=(0, (3.0, 2.0)), zorder=0, gid="gap-limit")
        ax.axhline(log10_threshold, color="#8c8c8c", linewidth=0.6, zorder=0, gid="threshold")
        ax.text(gap_limit, 1.0, f" {gap_limit:g} Å", transform=ax.get_xaxis_transform(), ha="left", va="top",
                fontsize=style.FONT_PT)
        ax.text(1.0, log10_threshold, "turnover\nthreshold", transform=ax.get_yaxis_transform(), ha="right",
                va="bottom", fontsize=style.FONT_PT, color="#555555", linespacing=1.0)
        ax.set_xlabel("edge-to-edge distance R (Å)", fontsize=style.FONT_PT)
        ax.set_ylabel("log10 k (k in s⁻¹), estimate", fontsize=style.FONT_PT)
        ax.set_ylim(y_lo, y_hi)
        if n_off:
            ax.text(0.01, 0.01, f"{plural(n_off, 'rate')} not finite, not drawn", transform=ax.transAxes,
                    ha="left", va="bottom", fontsize=style.FONT_PT, color="#555555", gid="not-drawn")
        ax.legend(loc="upper center", bbox_to_anchor=(0.45, -0.17), ncol=2, title=f"Moser-Dutton, λ = {reorg:g} eV, "
                  f"ρ = {rho:g}", title_fontsize=style.FONT_PT, **{**_legend_kw(), "handlelength": 2.0,
                                                                   "labelspacing": 0.2})
    return fig


def counts_figure(class_counts: Sequence[tuple[str, style.Glyph, int]],
                  flag_counts: Sequence[tuple[str, int, int]]) -> Figure:
    """Bar charts: cofactors per class, and findings per flag code (warnings and notes).

    Counts are whole numbers, so the count axes carry integer ticks only; flag codes are
    written in plain words (``incomplete_cluster`` → "incomplete cluster"); the legend
    names only the kinds of finding present and sits under the axis, clear of the bars.

    Parameters
    ----------
    class_counts : sequence of (label, glyph, count)
    flag_counts : sequence of (code, warnings, notes)

    Returns
    -------
    matplotlib.figure.Figure
    """
    with figure_context("fescan-survey-counts"):
        warn = np.array([w for _, w, _ in flag_counts], dtype=int)
        note = np.array([n for _, _, n in flag_counts], dtype=int)
        kinds = [k for k, present in (("warning", warn.sum() > 0), ("note", note.sum() > 0)) if present]
        leg_h = 0.2 if kinds else 0.0
        rows = max(len(class_counts), 1) + max(len(flag_counts), 1)
        height = 1.15 + leg_h + 0.17 * rows
        fig = new_figure(style.COLUMN_WIDTH_IN, height)
        h1 = 0.17 * max(len(class_counts), 1) / height
        h2 = 0.17 * max(len(flag_counts), 1) / height
        top = fig.add_axes((0.40, 1.0 - 0.22 / height - h1, 0.50, h1))
        bottom = fig.add_axes((0.40, (0.36 + leg_h) / height, 0.50, h2))
        for ax in (top, bottom):
            _plain_axes(ax)
            ax.xaxis.set_major_locator(MaxNLocator(integer=True))
        y = np.arange(len(class_counts))
        top.barh(y, [c for _, _, c in class_counts], color=[g.face for _, g, _ in class_counts],
                 edgecolor=style.INK, linewidth=0.5, height=0.7, gid="class-counts")
        top.set_yticks(y, [lab for lab, _, _ in class_counts], fontsize=style.FONT_PT)
        for yy, (_, _, c) in zip(y, class_counts):
            top.text(c, yy, f" {c}", va="center", ha="left", fontsize=style.FONT_PT)
        top.invert_yaxis()
        top.set_title("cofactors per class", loc="left", fontsize=style.FONT_PT, fontweight="bold", pad=3)
        y = np.arange(len(flag_counts))
        handles = []
        if "warning" in kinds:
            handles.append(bottom.barh(y, warn, color="#6e6e6e", edgecolor=style.INK, linewidth=0.5, height=0.7,
                                       label="warning", gid="flag-warnings"))
        if "note" in kinds:
            handles.append(bottom.barh(y, note, left=warn, color="white", edgecolor=style.INK, linewidth=0.5,
                                       height=0.7, hatch="////", label="note", gid="flag-notes"))
        bottom.set_yticks(y, [plain_words(code) for code, _, _ in flag_counts], fontsize=style.FONT_PT)
        for yy, w, nt in zip(y, warn, note):
            bottom.text(w + nt, yy, f" {w + nt}", va="center", ha="left", fontsize=style.FONT_PT)
        if len(flag_counts):
            bottom.set_xlim(0, max(1, int((warn + note).max())) * 1.05)
        bottom.invert_yaxis()
        bottom.set_title("findings of the checks", loc="left", fontsize=style.FONT_PT, fontweight="bold", pad=3)
        if not flag_counts:
            bottom.text(0.5, 0.5, "no findings", transform=bottom.transAxes, ha="center", fontsize=style.FONT_PT)
        bottom.set_xlabel("count", fontsize=style.FONT_PT)
        if handles:  # under the axis label, clear of the bars
            fig.legend(handles, kinds, loc="lower left", bbox_to_anchor=(0.40, 0.03 / height), ncol=len(kinds),
                       **{**_legend_kw(), "handlelength": 1.2})
    return fig


def bottleneck_figure(distances: np.ndarray, *, gap_limit: float, n_without: int = 0) -> Figure:
    """Histogram of the edge-to-edge distance of every wire's bottleneck hop (1 Å bins).

    Parameters
    ----------
    distances : ndarray
        Bottleneck edge-to-edge distances (Å), one per wire.
    gap_limit : float
        Gap limit (Å), marked.
    n_without : int, optional
        Structures without a wire (said in the axis label).
    """
    with figure_context("fescan-survey-bottleneck"):
        fig = new_figure(style.COLUMN_WIDTH_IN, 2.2)
        ax = fig.add_axes((0.15, 0.27, 0.8, 0.62))
        _plain_axes(ax)
        d = np.asarray(distances, dtype=float)
        d = d[np.isfinite(d)]
        top = max(float(np.ceil(d.max())) + 1 if len(d) else 0.0, gap_limit + 2.0)
        bins = np.arange(0.0, top + 1.0, 1.0)
        below, above = d[d <= gap_limit], d[d > gap_limit]
        ax.hist([below, above], bins=bins, stacked=True, color=["#8c8c8c", "white"], edgecolor=style.INK,
                linewidth=0.5, hatch=None, gid="bottlenecks")
        for patch in ax.patches[len(bins) - 1:]:
            patch.set_hatch("////")
        ax.axvline(gap_limit, color=style.INK, linewidth=0.8, linestyle=(0, (3.0, 2.0)), gid="gap-limit")
        ax.text(gap_limit, 1.0, f" {gap_limit:g} Å limit", transform=ax.get_xaxis_transform(), ha="left", va="top",
                fontsize=style.FONT_PT)
        ax.set_xlim(0, top + 1.0)
        ax.yaxis.get_major_locator().set_params(integer=True)
        ax.set_ylabel("wires", fontsize=style.FONT_PT)
        extra = f"; {plural(n_without, 'structure')} without a wire" if n_without else ""
        ax.set_xlabel(f"edge-to-edge distance of the bottleneck hop (Å), {plural(len(d), 'wire')}{extra}\n"
                      "hatched: over the gap limit", fontsize=style.FONT_PT, linespacing=1.3)
    return fig


def ligation_by_resolution_figure(rows: Sequence[tuple[str, int, int]]) -> Figure:
    """Share of Fe-S clusters with a ligation or geometry warning, by resolution bin.

    Parameters
    ----------
    rows : sequence of (bin label, clusters with a warning, clusters)
    """
    with figure_context("fescan-survey-ligation"):
        n = max(len(rows), 1)
        fig = new_figure(style.COLUMN_WIDTH_IN, 0.9 + 0.22 * n)
        h = fig.get_figheight()
        ax = fig.add_axes((0.30, 0.5 / h, 0.58, 0.22 * n / h))
        _plain_axes(ax)
        y = np.arange(len(rows))
        total = np.array([t for _, _, t in rows], dtype=float)
        bad = np.array([b for _, b, _ in rows], dtype=float)
        share = np.divide(bad, total, out=np.zeros_like(bad), where=total > 0)
        ax.barh(y, share, color="#6e6e6e", edgecolor=style.INK, linewidth=0.5, height=0.7, gid="warned-share")
        for yy, (_, b, t), v in zip(y, rows, share):
            ax.text(v, yy, f" {b} of {t}", va="center", ha="left", fontsize=style.FONT_PT)
        ax.set_yticks(y, [lab for lab, _, _ in rows], fontsize=style.FONT_PT)
        ax.set_xlim(0, 1.0)
        ax.invert_yaxis()
        ax.set_xlabel("share of Fe-S clusters with a warning", fontsize=style.FONT_PT)
        ax.set_ylabel("resolution", fontsize=style.FONT_PT)
        if not rows:
            ax.text(0.5, 0.5, "no Fe-S clusters", transform=ax.transAxes, ha="center", fontsize=style.FONT_PT)
    return fig
