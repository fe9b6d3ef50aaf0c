"""Relay diagrams: view plane, SVG elements, gap styling, label layout, determinism.

Checks read the SVG text (element ids and dash styles) or the matplotlib
artists, never pixels. Real entries come from shared/structures (SOURCES.md).
"""

from __future__ import annotations

import itertools
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib.text import Text

from fescan.analysis.scan import scan
from fescan.cofactors.registry import ccd_table
from fescan.report import style
from fescan.report.diagrams import DiagramInfo, draw_wire, new_figure, relay_diagram, relay_figure
from fescan.report.placement import overlap
from fescan.report.projection import principal_projection
from fescan.report.scene import build_scene
from tests.datafiles import entry_path, requires_shared
from tests.report_fixtures import write_wire

SVG_NS = "{http://www.w3.org/2000/svg}"


def svg_groups(path) -> dict[str, ET.Element]:
    """Every SVG element with an id, by id."""
    root = ET.parse(path).getroot()
    return {el.get("id"): el for el in root.iter() if el.get("id")}


def is_dashed(group: ET.Element) -> bool:
    return any("stroke-dasharray" in (el.get("style") or "") for el in group.iter())


@pytest.fixture(scope="module")
def straight(tmp_path_factory):
    # five [4Fe-4S] 12 Å apart (centre to centre) on a line along (1, 2, 3): common practice, no source
    p = write_wire(tmp_path_factory.mktemp("wire") / "straight.pdb", [0, 12, 24, 36, 48])
    return scan(p)


@pytest.fixture(scope="module")
def gapped(tmp_path_factory):
    # 21 Å between the second and third centre: an edge distance over the 14 Å limit
    # (Page et al. 1999, Nature 402:47: the 14 Å rule)
    p = write_wire(tmp_path_factory.mktemp("wire") / "gapped.pdb", [0, 12, 33, 45])
    return scan(p)


@pytest.fixture(scope="module")
def real():
    if not entry_path("2FUG").parent.is_dir():
        pytest.skip("shared structures not present")
    return {k: scan(entry_path(k)) for k in ("2FUG", "1KF6", "1YQ9")}


# --------------------------------------------------------------------------- view plane


@pytest.mark.parametrize("zigzag", [0.0, 3.0])
def test_projection_keeps_order_along_a_straight_wire(tmp_path, zigzag):
    # geometry of the synthetic wire: common practice, no source
    res = scan(write_wire(tmp_path / "w.pdb", [0, 12, 24, 36, 48], zigzag=zigzag))
    pos = build_scene(res).positions()
    xs = [pos[u][0] for u in res.wire.path]
    assert len(res.wire.path) == 5
    assert all(b > a for a, b in zip(xs, xs[1:]))  # entry on the left, in wire order
    assert xs[-1] - xs[0] == pytest.approx(48.0, abs=2e-3)  # a rotation keeps distances (PDB: 0.001 Å)


def test_projection_entry_left_and_orthonormal():
    pts = np.array([[0, 0, 0], [3, 1, 0], [6, -1, 1], [9, 0, 2]], dtype=float)
    p = principal_projection(pts, entry=3, exit=0)
    assert p.apply(pts)[3, 0] < p.apply(pts)[0, 0]
    assert p.axes @ p.axes.T == pytest.approx(np.eye(2))
    q = principal_projection(pts, entry=0, exit=3)
    assert q.apply(pts)[0, 0] < q.apply(pts)[3, 0]


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(*[st.floats(-50, 50, allow_nan=False)] * 3), min_size=3, max_size=12, unique=True),
       st.randoms(use_true_random=False))
def test_projection_does_not_depend_on_cofactor_order(points, rnd):
    pts = np.array(points)
    vals = np.linalg.eigvalsh(np.cov(pts.T) * len(pts))
    if np.min(np.diff(vals)) < 1e-3 * max(vals[-1], 1.0):  # degenerate spreads have no unique axes
        return
    order = list(range(len(pts)))
    rnd.shuffle(order)
    a = principal_projection(pts).apply(pts)
    b = principal_projection(pts[order]).apply(pts)
    assert a == pytest.approx(b, abs=1e-6)


# --------------------------------------------------------------------------- SVG content


def test_svg_has_a_node_per_cofactor_and_a_hop_per_wire_edge(tmp_path, straight):
    svg, png = relay_diagram(straight, tmp_path / "wire")
    assert svg.name == "wire.svg" and png.name == "wire.png" and png.stat().st_size > 0
    ids = svg_groups(svg)
    assert {i for i in ids if i.startswith("cofactor-")} == {style.cofactor_gid(c.uid) for c in straight.cofactors}
    assert {i for i in ids if i.startswith("label-")} == {style.label_gid(c.uid) for c in straight.cofactors}
    hops = {i for i in ids if re.fullmatch(r"hop-[^ ]*", i) and not i.endswith(("-arrow", "-label"))}
    assert hops == {style.hop_gid(h.donor, h.acceptor) for h in straight.wire.hops}
    assert not any(is_dashed(ids[g]) for g in hops)
    assert not any(i.startswith("gap-") for i in ids)
    assert {"entry-" + style.svg_id(straight.wire.entry), "exit-" + style.svg_id(straight.wire.exit)} <= set(ids)


def test_gap_hops_are_dashed_with_a_break_mark_and_a_label(tmp_path, gapped):
    gaps = [h for h in gapped.wire.hops if h.gap]
    assert len(gaps) == 1 and gaps[0].edge > 14.0  # Page et al. 1999: 14 Å limit
    svg, _ = relay_diagram(gapped, tmp_path / "wire")
    ids = svg_groups(svg)
    for h in gapped.wire.hops:
        assert is_dashed(ids[style.hop_gid(h.donor, h.acceptor)]) == h.gap
    g = style.gap_gid(gaps[0].donor, gaps[0].acceptor)
    assert g in ids and g + "-slashes" in ids  # the break mark
    label = "".join(ids[style.hop_gid(gaps[0].donor, gaps[0].acceptor) + "-label"].itertext())
    assert f"gap {gaps[0].edge:.1f} Å" in label


@requires_shared
def test_isolated_cofactor_shows_its_nearest_partner_as_a_gap(real):
    res = real["2FUG"]
    # SOURCES.md (2FUG inventory): SF4 3/786 has its nearest partner SF4 3/785 at 20.45 Å
    assert [res.cofactor(u).key for u in res.wire.isolated] == ["3/786"]
    scene = build_scene(res)
    near = [lk for lk in scene.links if lk.kind == "near"]
    assert len(near) == 1 and {res.cofactor(near[0].first).key, res.cofactor(near[0].second).key} == {"3/785", "3/786"}
    assert near[0].line.dashes and near[0].label == "gap 20.4 Å"  # 20.45 Å edge to edge (SOURCES.md)


def test_no_cofactors_and_single_cofactor_draw_without_error(tmp_path):
    res = scan(write_wire(tmp_path / "one.pdb", [0]))
    svg, _ = relay_diagram(res, tmp_path / "one")
    ids = svg_groups(svg)
    assert sum(i.startswith("cofactor-") for i in ids) == 1 and not any(i.startswith("hop-") for i in ids)


# --------------------------------------------------------------------------- layout


def _texts(fig):
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    return {t.get_gid(): t.get_window_extent(r) for t in fig.findobj(Text) if t.get_gid() and t.get_text()}


@requires_shared
@pytest.mark.parametrize("pdb_id", ["2FUG", "1KF6", "1YQ9"])
def test_labels_do_not_overlap(real, pdb_id):
    fig, info = relay_figure(real[pdb_id])
    boxes = info.label_boxes
    for a, b in itertools.combinations(boxes, 2):
        assert overlap(boxes[a], boxes[b]) == 0.0, (a, b)
    for key, box in boxes.items():  # no label on any glyph (its own included)
        for uid, g in info.glyph_boxes.items():
            assert overlap(box, g) == 0.0, (key, uid)
    drawn = {k: v for k, v in _texts(fig).items() if k in boxes}
    assert len(drawn) == len(boxes) - 1  # every label but the scale bar is a text
    for (a, ba), (b, bb) in itertools.combinations(drawn.items(), 2):
        assert not ba.overlaps(bb), (a, b)
    ax = fig.axes[0].get_window_extent()
    for k, bb in drawn.items():  # inside the drawing
        assert ax.x0 - 0.5 <= bb.x0 and bb.x1 <= ax.x1 + 0.5 and ax.y0 - 0.5 <= bb.y0 and bb.y1 <= ax.y1 + 0.5, k


@requires_shared
def test_one_column_width_and_readable_fonts(real):
    fig, _ = relay_figure(real["2FUG"])
    assert fig.get_figwidth() == pytest.approx(85 / 25.4)  # one journal column, 85 mm: common practice, no source
    sizes = [t.get_fontsize() for t in fig.findobj(Text) if t.get_text()]
    assert sizes and min(sizes) >= 7.0  # 7 pt minimum in print: common practice, no source


def test_draw_wire_on_given_axes_with_a_shared_projection(straight, gapped):
    fig = new_figure(7.0, 3.0)
    a1, a2 = fig.add_axes((0.0, 0.1, 0.48, 0.8)), fig.add_axes((0.52, 0.1, 0.48, 0.8))
    i1 = draw_wire(a1, straight, title="model")
    i2 = draw_wire(a2, gapped, projection=i1.projection, title="reference", extent=i1.extent)
    assert isinstance(i2, DiagramInfo) and i2.projection is i1.projection
    lo = min(i1.extent[0], i2.extent[0])
    assert i2.extent[0] == pytest.approx(lo) and i2.extent[1] >= i1.extent[1]  # covers the first panel's region
    assert a1.get_title(loc="left") == "model"
    assert len(i2.scene.nodes) == len(gapped.cofactors)


# --------------------------------------------------------------------------- style and determinism


def test_every_known_class_has_a_glyph_and_categories_differ_in_shape():
    for entry in ccd_table().values():
        assert style.glyph_for(entry.category, entry.cls).shape in style.SHAPES
    cats = ["iron-sulfur", "flavin", "quinone", "heme", "copper", "iron", "metal"]
    shapes = [style.glyph_for(c, "?").shape for c in cats]
    assert len(set(shapes)) == len(shapes)  # greyscale-safe: shape alone tells categories apart
    looks = {(g.shape, g.mark, g.face) for g in (style.glyph_for(c, k) for c, k in [
        ("iron-sulfur", "[4Fe-4S]"), ("iron-sulfur", "[3Fe-4S]"), ("iron-sulfur", "[2Fe-2S]"),
        ("iron-sulfur", "Rieske [2Fe-2S]"), ("iron-sulfur", "[4Fe-3S]")])}
    assert len(looks) == 5


def test_svg_ids_are_safe():
    assert style.svg_id('1:"><img src=x/7:-') == "1.x22x3ex3cimgx20srcx3dx_7.-"
    assert re.fullmatch(r"[A-Za-z0-9._-]+", style.svg_id("1:<script>alert(1)</script>/101:SF4"))


def test_same_input_gives_the_same_bytes(tmp_path, gapped):
    a = relay_diagram(gapped, tmp_path / "a" / "wire")
    b = relay_diagram(gapped, tmp_path / "b" / "wire")
    for x, y in zip(a, b):
        assert x.read_bytes() == y.read_bytes(), x.name
    svg = a[0].read_text(encoding="utf-8")
    assert "<dc:date>" not in svg
    assert b"Software" not in a[1].read_bytes()[:4096]  # no Software tEXt chunk in the PNG header
