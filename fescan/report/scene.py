"""What a relay diagram shows, decided without drawing: nodes, links, labels and ids.

:func:`build_scene` turns a :class:`~fescan.scan.ScanResult` into a
:class:`Scene` of plain records: every cofactor as a node at its projected
position with its glyph and label, and every line as a link (relay-path hop,
gap, other pair within the gap limit, nearest partner of an isolated cofactor)
with its style, its label and its SVG id. :mod:`fescan.report.diagrams` only
renders a scene, so what is shown can be tested without matplotlib.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from fescan.report import style
from fescan.report.labels import cofactor_label, hop_label
from fescan.report.projection import Projection, principal_projection

if TYPE_CHECKING:  # pragma: no cover
    from fescan.analysis.scan import ScanResult

__all__ = ["Node", "Link", "Scene", "build_scene", "default_projection", "NOTE"]

#: Explanation printed under every relay diagram (λ and ρ filled in).
NOTE = ("Label: chain/residue, class, midpoint potential used. Hop: edge-to-edge distance and "
        "hop time 1/k, a Moser-Dutton estimate (λ = {reorg:g} eV, ρ {rho}), not a measurement.")


@dataclass(frozen=True)
class Node:
    """One cofactor in the drawing.

    Attributes
    ----------
    uid : str
        Cofactor uid.
    xy : tuple of float
        Projected centre (Å).
    glyph : style.Glyph
    label : str
        Label text (several lines).
    role : str
        ``"entry"``, ``"exit"`` or ``""``.
    """

    uid: str
    xy: tuple[float, float]
    glyph: style.Glyph
    label: str
    role: str = ""

    @property
    def gid(self) -> str:
        """SVG id of the glyph."""
        return style.cofactor_gid(self.uid)

    @property
    def label_gid(self) -> str:
        """SVG id of the label."""
        return style.label_gid(self.uid)


@dataclass(frozen=True)
class Link:
    """One line between two cofactors.

    Attributes
    ----------
    kind : str
        ``"path"`` (relay hop within the limit), ``"gap"`` (relay hop over the
        limit), ``"pair"`` (other pair within the limit) or ``"near"`` (nearest
        partner of an isolated cofactor, over the limit).
    first, second : str
        Cofactor uids (donor and acceptor for relay hops).
    line : style.LineStyle
    gid : str
        SVG id of the line.
    label : str or None
        Text beside the line.
    bold : bool
        Label in bold (gaps and the slowest hop).
    arrow : float or None
        Fraction of the way from ``first`` to ``second`` where a direction arrow sits.
    break_gid : str or None
        SVG id of the break mark of a gap.
    halo : bool
        Underlay marking the slowest hop.
    dotted : bool
        Pair to a crystal-symmetry mate (drawn to the copy in the file).
    """

    kind: str
    first: str
    second: str
    line: style.LineStyle
    gid: str
    label: str | None = None
    bold: bool = False
    arrow: float | None = None
    break_gid: str | None = None
    halo: bool = False
    dotted: bool = False

    @property
    def label_gid(self) -> str:
        """SVG id of the label."""
        return self.gid + "-label"


@dataclass
class Scene:
    """Everything one relay diagram shows.

    Attributes
    ----------
    projection : Projection
    nodes : list of Node
    links : list of Link
        In drawing order (background first).
    note : str
        Explanation under the diagram.
    """

    projection: Projection
    nodes: list[Node] = field(default_factory=list)
    links: list[Link] = field(default_factory=list)
    note: str = ""

    def positions(self) -> dict[str, tuple[float, float]]:
        """Projected centre of each node, by uid."""
        return {n.uid: n.xy for n in self.nodes}

    def kinds(self) -> set[str]:
        """Kinds of links present, plus ``"ends"`` (entry/exit marked), ``"bottleneck"``
        (a slowest hop marked) and ``"symmetry"`` (a pair to a crystal-symmetry mate)."""
        out = {lk.kind for lk in self.links if not (lk.kind == "pair" and lk.dotted)}
        if any(n.role for n in self.nodes):
            out.add("ends")
        if any(lk.halo for lk in self.links):
            out.add("bottleneck")
        if any(lk.dotted for lk in self.links):
            out.add("symmetry")
        return out


def shown_cofactors(result: ScanResult) -> list:
    """Cofactors the diagram shows: all of them, or only the wire's own group when others exist.

    With other connected groups (other copies in the asymmetric unit, say), the
    drawing keeps the path, its side branches and isolated cofactors whose nearest
    partner belongs to them, so a short wire is not lost among copies.
    """
    w = result.wire
    if not w.path or not getattr(w, "groups", None):
        return list(result.cofactors)
    keep = set(w.path) | {b["cofactor"] for b in w.branches}
    for a, b, _ in _near_partners(result):
        if a in keep or b in keep:
            keep |= {a, b}
    return [c for c in result.cofactors if c.uid in keep]


def default_projection(result: ScanResult) -> Projection:
    """Principal-component view of the shown cofactors, entry on the left."""
    cofs = shown_cofactors(result)
    ix = {c.uid: k for k, c in enumerate(cofs)}
    return principal_projection([c.centroid for c in cofs], entry=ix.get(result.wire.entry),
                                exit=ix.get(result.wire.exit))


def _near_partners(result: ScanResult) -> list[tuple[str, str, float]]:
    """For each isolated cofactor its nearest partner within the cutoff (a gap over the limit)."""
    out, seen = [], set()
    for uid in result.wire.isolated:
        best = None
        for p in result.pairs:
            a, b = result.cofactors[p.i].uid, result.cofactors[p.j].uid
            if uid in (a, b) and (best is None or p.edge < best[2]):
                best = (a, b, p.edge)
        if best and frozenset(best[:2]) not in seen:
            seen.add(frozenset(best[:2]))
            out.append(best)
    return out


def build_scene(result: ScanResult, projection: Projection | None = None) -> Scene:
    """Decide what the relay diagram of one result shows.

    Parameters
    ----------
    result : ScanResult
    projection : Projection, optional
        Default :func:`default_projection`.

    Returns
    -------
    Scene
    """
    proj = projection if projection is not None else default_projection(result)
    w, opts = result.wire, result.options
    rho = ("measured per hop" if getattr(opts, "packing", "default") == "measured"
           else f"= {opts.packing_density:g}")
    cofs = shown_cofactors(result)
    note = NOTE.format(reorg=opts.reorg, rho=rho)
    if len(cofs) < len(result.cofactors):
        note += f" {len(result.cofactors) - len(cofs)} cofactors outside this wire's group (other copies, isolated) not drawn."
    scene = Scene(proj, note=note)
    shown = {c.uid for c in cofs}
    xy = proj.apply([c.centroid for c in cofs]) if cofs else np.zeros((0, 2))
    isolated = set(w.isolated)
    for c, (x, y) in zip(cofs, xy):
        role = ("entry" if c.uid == w.entry else "exit" if c.uid == w.exit else "") if w.path else ""
        scene.nodes.append(Node(c.uid, (float(x), float(y)), style.glyph_for(c.category, c.cls),
                                cofactor_label(c, result.potentials[c.uid], role, c.uid in isolated), role))
    on_path = {frozenset((h.donor, h.acceptor)) for h in w.hops}
    for p in result.pairs:
        a, b = result.cofactors[p.i].uid, result.cofactors[p.j].uid
        if a not in shown or b not in shown:
            continue
        if p.edge <= opts.gap_limit and frozenset((a, b)) not in on_path:
            scene.links.append(Link("pair", a, b, style.PAIR, style.pair_gid(a, b), dotted=bool(p.symmetry),
                                    label=f"{p.edge:.1f} Å, sym." if p.symmetry else None))
    for a, b, d in _near_partners(result):
        if a not in shown or b not in shown:
            continue
        scene.links.append(Link("near", a, b, style.NEAR_GAP, style.pair_gid(a, b), label=f"gap {d:.1f} Å",
                                break_gid=style.gap_gid(a, b)))
    many = len(w.hops) > 1
    for h in w.hops:
        text, bold = hop_label(h, opts.rate_threshold, bottleneck=many and h is w.bottleneck)
        scene.links.append(Link(
            "gap" if h.gap else "path", h.donor, h.acceptor, style.GAP_HOP if h.gap else style.PATH_HOP,
            style.hop_gid(h.donor, h.acceptor), label=text, bold=bold, arrow=0.3 if h.gap else 0.5,
            break_gid=style.gap_gid(h.donor, h.acceptor) if h.gap else None,
            halo=many and h is w.bottleneck, dotted=bool(h.symmetry)))
    return scene
