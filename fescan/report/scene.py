"""What a relay diagram shows, decided without drawing: nodes, links, labels and ids.

:func:`build_scene` turns a :class:`~fescan.analysis.scan.ScanResult` into a
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
from fescan.report.projection import Projection, principal_projection, stress_layout

if TYPE_CHECKING:  # pragma: no cover
    from fescan.analysis.scan import ScanResult

__all__ = ["Node", "Link", "Scene", "build_scene", "default_projection", "panel_groups", "shared_values",
           "bottleneck_legend", "NOTE", "SCALE_TOLERANCE"]

#: Explanation printed under every relay diagram (λ and ρ filled in).
NOTE = ("Label: chain/residue, class, midpoint potential used (shared values in the legend). Hop: edge-to-edge "
        "distance and hop time 1/k, a Moser-Dutton estimate (λ = {reorg:g} eV, ρ {rho}), not a measurement.")
#: Largest relative error of a drawn hop (centre to centre) for the drawing to carry a scale bar.
SCALE_TOLERANCE = 0.10


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
    faint : bool
        Off the wire (drawn faint).
    warned : bool
        The cofactor carries a warning of the ligation or geometry checks (drawn with a mark).
    """

    uid: str
    xy: tuple[float, float]
    glyph: style.Glyph
    label: str
    role: str = ""
    faint: bool = False
    warned: bool = False

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
        Label in bold (gaps and the bottleneck).
    arrow : float or None
        Fraction of the way from ``first`` to ``second`` where a direction arrow sits.
    break_gid : str or None
        SVG id of the break mark of a gap.
    halo : bool
        Underlay marking the bottleneck (``Wire.bottleneck``).
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
    hop_ratios : dict of str to float
        Drawn / true centre-to-centre length of each drawn wire hop (by SVG id of the hop).
    to_scale : bool
        Every ratio within ``1 ± SCALE_TOLERANCE``: the drawing may carry a scale bar.
    legend_text : dict of str to str
        Legend text of a glyph when the values its labels share are moved there
        (``"heme" → "heme c, +0.25 V"``).
    title : str
        Panel title (which group of cofactors).
    bottleneck_text : str
        Legend text of the bottleneck halo, naming how it was chosen (largest flux control
        of the steady state, else the slowest forward hop).
    """

    projection: Projection
    nodes: list[Node] = field(default_factory=list)
    links: list[Link] = field(default_factory=list)
    note: str = ""
    hop_ratios: dict[str, float] = field(default_factory=dict)
    to_scale: bool = True
    legend_text: dict[str, str] = field(default_factory=dict)
    title: str = ""
    bottleneck_text: str = "bottleneck"

    def positions(self) -> dict[str, tuple[float, float]]:
        """Projected centre of each node, by uid."""
        return {n.uid: n.xy for n in self.nodes}

    def kinds(self) -> set[str]:
        """Kinds of links present, plus ``"ends"`` (entry/exit marked), ``"bottleneck"``
        (the bottleneck marked), ``"symmetry"`` (a pair to a crystal-symmetry mate) and
        ``"warning"`` (a cofactor with a check warning)."""
        out = {lk.kind for lk in self.links if not (lk.kind == "pair" and lk.dotted)}
        if any(n.role for n in self.nodes):
            out.add("ends")
        if any(n.faint for n in self.nodes):
            out.add("faint")
        if any(lk.halo for lk in self.links):
            out.add("bottleneck")
        if any(lk.dotted for lk in self.links):
            out.add("symmetry")
        if any(n.warned for n in self.nodes):
            out.add("warning")
        return out


def _nearest_partner(result: ScanResult, uid: str) -> str | None:
    """The cofactor nearest (edge to edge, within the cutoff) to ``uid``; else nearest by centre."""
    best = None
    for p in result.pairs:
        a, b = result.cofactors[p.i].uid, result.cofactors[p.j].uid
        if uid in (a, b) and (best is None or p.edge < best[1]):
            best = (b if a == uid else a, p.edge)
    if best is not None:
        return best[0]
    me = next(c for c in result.cofactors if c.uid == uid)
    others = [c for c in result.cofactors if c.uid != uid and not c.is_ion_site]
    if not others:
        return None
    return min(others, key=lambda c: float(np.linalg.norm(np.subtract(c.centroid, me.centroid)))).uid


def panel_groups(result: ScanResult) -> list[list[str]]:
    """Cofactor uids of each panel: the wire's group first, then the other groups.

    The wire's group is its path and side branches; the other groups are those of
    :attr:`Wire.groups` (other copies, other chains). A cofactor with no partner
    within the gap limit joins the panel of its nearest partner, so every cofactor
    is drawn exactly once. Without any group, one panel holds every cofactor.
    """
    w = result.wire
    drawn = [c for c in result.cofactors if not c.is_ion_site]  # Zn/Ca/Mg sites are listed, not drawn
    order = {c.uid: k for k, c in enumerate(drawn)}
    groups: list[list[str]] = []
    if w.path:
        groups.append(list(dict.fromkeys(list(w.path) + [b["cofactor"] for b in w.branches])))
    groups += [list(g) for g in getattr(w, "groups", []) or []]
    if not groups:
        return [[c.uid for c in drawn]] if drawn else []
    where = {u: k for k, g in enumerate(groups) for u in g}
    pending = [c.uid for c in drawn if c.uid not in where]
    for _ in range(len(pending) + 1):  # partners may themselves be pending: settle in rounds
        left = []
        for uid in pending:
            partner = _nearest_partner(result, uid)
            if partner in where:
                where[uid] = where[partner]
                groups[where[uid]].append(uid)
            else:
                left.append(uid)
        if len(left) == len(pending):
            break
        pending = left
    if pending:  # cofactors whose nearest partners are also left: one panel per chain of partners
        parent = {u: u for u in pending}

        def root(u: str) -> str:
            while parent[u] != u:
                u = parent[u]
            return u

        for uid in pending:
            partner = _nearest_partner(result, uid)
            if partner in parent:
                parent[root(uid)] = root(partner)
        comps: dict[str, list[str]] = {}
        for uid in pending:
            comps.setdefault(root(uid), []).append(uid)
        groups += list(comps.values())
    return [sorted(g, key=order.get) for g in groups]


def shown_cofactors(result: ScanResult) -> list:
    """Cofactors of the first panel (the wire's group and the isolated ones nearest it)."""
    groups = panel_groups(result)
    keep = set(groups[0]) if groups else set()
    return [c for c in result.cofactors if c.uid in keep]


def default_projection(result: ScanResult, members: list[str] | None = None) -> Projection:
    """Principal-component view of a panel's cofactors (default the first), entry on the left."""
    keep = set(members) if members is not None else {c.uid for c in shown_cofactors(result)}
    cofs = [c for c in result.cofactors if c.uid in keep]
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


def shared_values(result: ScanResult) -> dict[str, str]:
    """Values every cofactor drawn with one glyph shares, said once in the legend.

    When two or more cofactors share a glyph and all have the same class and the same
    potential, their labels keep only the chain/residue and the legend says
    ``"heme c, +0.25 V"``; when they share only the class, the legend says the class.

    Returns
    -------
    dict of str to str
        Glyph legend text → legend text with the shared values.
    """
    by_glyph: dict[str, list] = {}
    for c in result.cofactors:
        by_glyph.setdefault(style.glyph_for(c.category, c.cls).legend, []).append(c)
    out = {}
    for legend, cofs in by_glyph.items():
        if len(cofs) < 2:
            continue
        classes = {c.cls for c in cofs}
        pots = {cofactor_label(c, result.potentials[c.uid]).split("\n")[-1] for c in cofs}
        if len(classes) == 1 and len(pots) == 1:
            out[legend] = f"{next(iter(classes))}, {next(iter(pots))}"
        elif len(classes) == 1:
            out[legend] = next(iter(classes))
    return out


def bottleneck_legend(basis: str) -> str:
    """Legend text of the bottleneck mark from ``Wire.bottleneck_basis``.

    The bottleneck is the hop of largest flux control in the steady state when one was
    solved, else the slowest forward hop (:mod:`fescan.transfer.paths`).

    Examples
    --------
    >>> bottleneck_legend("largest flux-control coefficient of the steady state (0.71)")
    'bottleneck (largest flux control)'
    >>> bottleneck_legend("slowest forward hop (no steady-state solution)")
    'bottleneck (slowest forward hop)'
    """
    b = (basis or "").lower()
    if "flux-control" in b or "flux control" in b:
        return "bottleneck (largest flux control)"
    if "slowest" in b:
        return "bottleneck (slowest forward hop)"
    return "bottleneck"


def _label(result: ScanResult, c, role: str, isolated: bool, shared: dict[str, str]) -> str:
    full = cofactor_label(c, result.potentials[c.uid], role, isolated).split("\n")
    said = shared.get(style.glyph_for(c.category, c.cls).legend)
    if said is None:
        return "\n".join(full)
    if "," in said:  # class and potential in the legend
        return full[0]
    return "\n".join([full[0], full[2]])


def _layout(result: ScanResult, cofs: list, proj: Projection, relax: bool) -> np.ndarray:
    xy = proj.apply([c.centroid for c in cofs]) if cofs else np.zeros((0, 2))
    if not relax or len(cofs) < 3:
        return xy
    ix = {c.uid: k for k, c in enumerate(cofs)}
    weights: dict[tuple[int, int], float] = {}
    for h in result.wire.hops:
        if h.donor in ix and h.acceptor in ix:
            i, j = sorted((ix[h.donor], ix[h.acceptor]))
            weights[(i, j)] = 200.0
    for b in result.wire.branches:
        a, t = b.get("cofactor"), b.get("attached_to")
        if a in ix and t in ix:
            i, j = sorted((ix[a], ix[t]))
            weights.setdefault((i, j), 20.0)
    return stress_layout([c.centroid for c in cofs], xy, weights=weights)


def build_scene(result: ScanResult, projection: Projection | None = None, members: list[str] | None = None,
                *, title: str = "") -> Scene:
    """Decide what one panel of the relay diagram shows.

    Parameters
    ----------
    result : ScanResult
    projection : Projection, optional
        View plane, used as given (two structures drawn in one view). Without it
        the principal-component view of the panel is relaxed by :func:`stress_layout`
        so that the wire's hops are drawn at their true lengths.
    members : list of str, optional
        Uids of the panel (default the first of :func:`panel_groups`).
    title : str, optional
        Panel title.

    Returns
    -------
    Scene
    """
    relax = projection is None
    if members is None:
        members = [c.uid for c in shown_cofactors(result)]
    proj = projection if projection is not None else default_projection(result, members)
    w, opts = result.wire, result.options
    rho = ("measured per hop" if getattr(opts, "packing", "default") == "measured"
           else f"= {opts.packing_density:g}")
    keep = set(members)
    cofs = [c for c in result.cofactors if c.uid in keep]
    scene = Scene(proj, note=NOTE.format(reorg=opts.reorg, rho=rho), title=title,
                  bottleneck_text=bottleneck_legend(getattr(w, "bottleneck_basis", "")))
    shared = shared_values(result)
    scene.legend_text = shared
    xy = _layout(result, cofs, proj, relax)
    isolated = set(w.isolated)
    on_wire = set(w.path)
    for c, (x, y) in zip(cofs, xy):
        role = ("entry" if c.uid == w.entry else "exit" if c.uid == w.exit else "") if w.path else ""
        scene.nodes.append(Node(c.uid, (float(x), float(y)), style.glyph_for(c.category, c.cls),
                                _label(result, c, role, c.uid in isolated, shared), role,
                                faint=bool(w.path) and c.uid not in on_wire,
                                warned=any(f.severity == "warning" for f in c.flags)))
    on_path = {frozenset((h.donor, h.acceptor)) for h in w.hops}
    for p in result.pairs:
        a, b = result.cofactors[p.i].uid, result.cofactors[p.j].uid
        if a not in keep or b not in keep:
            continue
        if p.edge <= opts.gap_limit and frozenset((a, b)) not in on_path:
            scene.links.append(Link("pair", a, b, style.PAIR, style.pair_gid(a, b), dotted=bool(p.symmetry),
                                    label=f"{p.edge:.1f} Å, sym." if p.symmetry else None))
    for a, b, d in _near_partners(result):
        if a not in keep or b not in keep:
            continue
        scene.links.append(Link("near", a, b, style.NEAR_GAP, style.pair_gid(a, b), label=f"gap {d:.1f} Å",
                                break_gid=style.gap_gid(a, b)))
    many = len(w.hops) > 1
    pos = scene.positions()
    cent = {c.uid: np.asarray(c.centroid, dtype=float) for c in cofs}
    for h in w.hops:
        if h.donor not in keep or h.acceptor not in keep:
            continue
        text, bold = hop_label(h, opts.rate_threshold, bottleneck=many and h is w.bottleneck)
        gid = style.hop_gid(h.donor, h.acceptor)
        scene.links.append(Link(
            "gap" if h.gap else "path", h.donor, h.acceptor, style.GAP_HOP if h.gap else style.PATH_HOP,
            gid, label=text, bold=bold, arrow=0.3 if h.gap else 0.5,
            break_gid=style.gap_gid(h.donor, h.acceptor) if h.gap else None,
            halo=many and h is w.bottleneck, dotted=bool(h.symmetry)))
        true = float(np.linalg.norm(cent[h.donor] - cent[h.acceptor]))
        if not h.symmetry and true > 1e-6:
            scene.hop_ratios[gid] = float(np.hypot(*np.subtract(pos[h.donor], pos[h.acceptor]))) / true
    scene.to_scale = all(abs(r - 1.0) <= SCALE_TOLERANCE for r in scene.hop_ratios.values())
    return scene
