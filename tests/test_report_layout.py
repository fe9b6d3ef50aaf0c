"""Relay diagrams that stay true at any size (issue 14): panels, labels, honest hop lengths.

Measured on the rendered figure: label boxes are the rendered text extents
(matplotlib's renderer), glyph positions come from the axes transform, true
distances from the cofactor centres in the file. Real entries come from
../shared/structures (SOURCES.md); the large synthetic is built here from the
idealised [4Fe-4S] of tests/synth.py.
"""

from __future__ import annotations

import itertools
import math

import gemmi
import numpy as np
import pytest
from matplotlib.text import Text

from fescan.analysis.scan import scan
from fescan.report.diagrams import (
    AMBIGUOUS_RATIO,
    ambiguity_ratio,
    link_ambiguity,
    relay_figure,
    save_figure,
)
from fescan.report.placement import Box
from fescan.report.scene import SCALE_TOLERANCE, panel_groups
from tests import synth
from tests.datafiles import entry_path, requires_shared


def helix_pair_structure() -> gemmi.Structure:
    """40 [4Fe-4S] with their Cys: two helices of 20 clusters, 80 Å apart (about 1,300 atoms).

    Consecutive centres 12.0 Å apart (radius 10 Å, 60° per step, rise 6.63 Å): a
    winding wire that no single flat projection draws at true hop lengths.
    """
    chains = []
    for h, name in enumerate("AB"):
        ch = gemmi.Chain(name)
        for k in range(20):
            t = math.radians(60.0 * k)
            centre = (80.0 * h + 10.0 * math.cos(t), 10.0 * math.sin(t), 6.633 * k)
            one = synth.four_fe_cluster(centre=centre, numbers=tuple(20 * k + d for d in (1, 4, 7, 11)),
                                        cluster_num=500 + k)
            for res in one[0][0]:
                ch.add_residue(res)
        chains.append(ch)
    st = gemmi.Structure()
    st.name = "HELIX"
    model = gemmi.Model(1)
    for ch in chains:
        model.add_chain(ch)
    st.add_model(model)
    st.setup_entities()
    return st


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    out = {}
    path = tmp_path_factory.mktemp("helix") / "helix.pdb"
    helix_pair_structure().write_pdb(str(path))
    out["helix"] = scan(path)
    if entry_path("2FUG").parent.is_dir():
        for k in ("2AXT", "19HC", "2FUG"):
            out[k] = scan(entry_path(k))
    return out


@pytest.fixture(scope="module")
def figures(results):
    return {k: relay_figure(r) for k, r in results.items()}


CASES = ["helix", pytest.param("2AXT", marks=requires_shared), pytest.param("19HC", marks=requires_shared),
         pytest.param("2FUG", marks=requires_shared)]


def _rendered_text_boxes(fig) -> dict[str, Box]:
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    out = {}
    for t in fig.findobj(Text):
        if t.get_gid() and t.get_text() and t.get_visible():
            bb = t.get_window_extent(r)
            out[t.get_gid()] = Box(bb.x0, bb.y0, bb.x1, bb.y1)
    return out


def test_helix_synthetic_is_large(results):
    res = results["helix"]
    assert len(res.cofactors) == 40
    assert sum(len(c.atoms) for c in res.cofactors) == 40 * 8
    assert len(res.wire.path) == 20 and len(res.wire.groups) == 1


@pytest.mark.parametrize("key", CASES)
def test_no_rendered_labels_overlap(figures, key):
    fig, _ = figures[key]
    boxes = _rendered_text_boxes(fig)
    labels = {k: b for k, b in boxes.items() if k.startswith(("label-", "hop-", "pair-", "scale-bar-label"))}
    assert labels
    for (a, ba), (b, bb) in itertools.combinations(labels.items(), 2):
        shared_w = min(ba.x1, bb.x1) - max(ba.x0, bb.x0)
        shared_h = min(ba.y1, bb.y1) - max(ba.y0, bb.y0)
        assert shared_w <= 0.5 or shared_h <= 0.5, (a, b)  # half a pixel of anti-aliasing


@pytest.mark.parametrize("key", CASES)
def test_every_cofactor_appears_once_and_the_wire_in_the_first_panel(results, figures, key):
    res = results[key]
    _, info = figures[key]
    drawn = [n.uid for p in info.panels for n in p.scene.nodes]
    # every cofactor exactly once; Zn/Ca/Mg sites are listed apart, not drawn
    assert sorted(drawn) == sorted(c.uid for c in res.cofactors if not c.is_ion_site)
    first = {n.uid for n in info.panels[0].scene.nodes}
    assert set(res.wire.path) <= first
    assert {b["cofactor"] for b in res.wire.branches} <= first
    faint = {n.uid for n in info.panels[0].scene.nodes if n.faint}
    assert faint == first - set(res.wire.path) if res.wire.path else not faint


@pytest.mark.parametrize("key", CASES)
def test_hops_to_scale_or_no_scale_bar(results, figures, key):
    res = results[key]
    fig, info = figures[key]
    cent = {c.uid: np.asarray(c.centroid) for c in res.cofactors}
    svg_ids = {t.get_gid() for t in fig.findobj(Text)} | {ln.get_gid() for ax in fig.axes for ln in ax.lines}
    n_bars = sum(1 for g in svg_ids if g == "scale-bar")
    for p in info.panels:
        ax = next(a for a in fig.axes if p.glyph_boxes and a.get_window_extent().contains(
            *next(iter(p.glyph_boxes.values())).as_array()[:2] + 1))
        x0, x1 = ax.get_xlim()
        px_per_a = ax.get_window_extent().width / (x1 - x0)
        ratios = []
        for h in res.wire.hops:
            if h.donor in p.glyph_boxes and h.acceptor in p.glyph_boxes:
                a, b = p.glyph_boxes[h.donor], p.glyph_boxes[h.acceptor]
                drawn = math.hypot((a.x0 + a.x1 - b.x0 - b.x1) / 2, (a.y0 + a.y1 - b.y0 - b.y1) / 2) / px_per_a
                ratios.append(drawn / float(np.linalg.norm(cent[h.donor] - cent[h.acceptor])))
        if p.scale_bar:
            assert all(abs(r - 1) <= SCALE_TOLERANCE + 1e-3 for r in ratios), ratios
    assert n_bars <= len(info.panels)
    if key == "helix":  # a chain of hops can always be laid flat at its true lengths
        assert info.panels[0].scale_bar
        assert all(abs(r - 1) <= SCALE_TOLERANCE for r in info.panels[0].scene.hop_ratios.values())


@pytest.mark.parametrize("key", CASES)
def test_no_label_is_ambiguous(figures, key):
    fig, info = figures[key]
    boxes = _rendered_text_boxes(fig)
    for p in info.panels:
        glyph = {n.label_gid: np.array([(p.glyph_boxes[n.uid].x0 + p.glyph_boxes[n.uid].x1) / 2,
                                        (p.glyph_boxes[n.uid].y0 + p.glyph_boxes[n.uid].y1) / 2])
                 for n in p.scene.nodes}
        for gid in glyph:
            if gid in p.leaders:
                continue  # joined to its glyph by a leader line
            assert ambiguity_ratio(boxes[gid], gid, glyph) <= AMBIGUOUS_RATIO + 1e-6, gid
        centre = {u: np.array([(b.x0 + b.x1) / 2, (b.y0 + b.y1) / 2]) for u, b in p.glyph_boxes.items()}
        lines = {lk.label_gid: (centre[lk.first], centre[lk.second]) for lk in p.scene.links if lk.label}
        for gid in lines:  # a line label is nearest its own line, or joined to it
            if gid in p.leaders:
                continue
            assert link_ambiguity(boxes[gid], gid, lines) <= AMBIGUOUS_RATIO + 1e-6, gid


@requires_shared
def test_repeated_values_said_once_in_the_legend(figures):
    # 19HC: 18 c-type hemes, all at the default heme c potential (+0.25 V here)
    fig, info = figures["19HC"]
    node_labels = [n.label for p in info.panels for n in p.scene.nodes]
    assert len(node_labels) == 18
    assert not any("V" in lab.split("\n")[-1] for lab in node_labels)
    legend_texts = [t.get_text() for leg in fig.legends for t in leg.get_texts()]
    assert sum("heme c" in t and "V" in t for t in legend_texts) == 1


@requires_shared
def test_2axt_draws_every_group(results, figures, tmp_path):
    res = results["2AXT"]
    _, info = figures["2AXT"]
    assert len(panel_groups(res)) == len(info.panels) >= 2
    svg, _ = save_figure(figures["2AXT"][0], tmp_path / "wire")
    text = svg.read_text(encoding="utf-8")
    for c in res.cofactors:  # every cofactor has a glyph in the picture (Zn/Ca/Mg sites are listed apart)
        from fescan.report import style

        if c.is_ion_site:
            assert f'id="{style.cofactor_gid(c.uid)}"' not in text, c.uid
            continue

        assert f'id="{style.cofactor_gid(c.uid)}"' in text, c.uid
