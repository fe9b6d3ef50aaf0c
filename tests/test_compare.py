"""Model-versus-reference comparison (fescan.compare, compare_report, ``fescan compare``).

Sources: the entries and their cofactor inventories in SOURCES.md (shared/structures): 1YQ9
SF4 A/265, F3S A/266, SF4 A/267, Ni H/538 with the relay Ni > A/267 > A/266 > A/265; 1FDN and
1CLF both 2[4Fe-4S] clostridial ferredoxins of 55 residues with SF4 A/56 and A/57 (min d 8.72
and 9.02 Å); 2FUG FMN + nine Fe–S clusters. Rewritten copies (tests/rewrite.py) are compared
with what fescan.scan itself gives on the rewritten file.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import gemmi
import numpy as np
import pytest

import fescan
from fescan.cli.main import main
from fescan.comparison.compare import compare, kabsch
from fescan.core.errors import ConfigError, StructureNotFound
from fescan.core.numbers import format_with_interval
from fescan.report.compare_report import (
    compare_document,
    md_escape,
    render_compare_text,
    write_compare_report,
)
from fescan.report.content import Paragraph, Table
from tests import rewrite
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared


def _rotation(deg: float, axis: int) -> np.ndarray:
    c, s = math.cos(math.radians(deg)), math.sin(math.radians(deg))
    m = np.eye(3)
    i, j = [k for k in range(3) if k != axis]
    m[i, i], m[i, j], m[j, i], m[j, j] = c, -s, s, c
    return m


def _move_whole(st: gemmi.Structure, rot: np.ndarray, shift: tuple[float, float, float]) -> None:
    st[0].transform_pos_and_adp(gemmi.Transform(gemmi.Mat33(rot.tolist()), gemmi.Vec3(*shift)))


@pytest.fixture(scope="module")
def yq9_self():
    return compare(entry_path("1YQ9"), entry_path("1YQ9"))


@pytest.fixture(scope="module")
def yq9_rewritten(tmp_path_factory):
    # proximal SF4 A/267 shifted by 3 Å along x, distal SF4 A/265 removed (SOURCES.md numbering)
    st = gemmi.read_structure(str(entry_path("1YQ9")))
    rewrite.move_residue(st, "A", 267, (3.0, 0.0, 0.0))
    rewrite.remove_residue(st, "A", 265)
    path = rewrite.write(st, tmp_path_factory.mktemp("cmp") / "1yq9_moved.pdb")
    return path, compare(path, entry_path("1YQ9"))


@pytest.fixture(scope="module")
def fdn_moved(tmp_path_factory):
    # 1FDN rotated 50° about z and 35° about x, translated, chain A renamed X, residues +100;
    # the file name carries characters that must be escaped in HTML and Markdown
    st = gemmi.read_structure(str(entry_path("1FDN")))
    rot = _rotation(35, 0) @ _rotation(50, 2)
    _move_whole(st, rot, (12.0, -30.0, 7.5))
    for ch in st[0]:
        ch.name = "X"
        for res in ch:
            res.seqid = gemmi.SeqId(res.seqid.num + 100, res.seqid.icode)
    path = rewrite.write(st, tmp_path_factory.mktemp("cmp") / "fdn<b>&moved.pdb")
    return path, rot, compare(path, entry_path("1FDN"))


# --------------------------------------------------------------------------- a structure against itself


def test_self_comparison_has_no_changes(yq9_self):
    r = yq9_self
    assert r.n_changes == 0 and set(r.changes().values()) == {0}
    # 3 Fe-S clusters + the NiFe site + MG H/540 (SOURCES.md; a structural Mg, matched but off the wire)
    assert len(r.matches) == 5 and all(m.how == "chain and residue" for m in r.matches)
    assert all(m.displacement < 1e-6 and not m.misligated for m in r.matches)
    assert [h.status for h in r.hops] == ["unchanged"] * 3
    assert all(h.delta("edge") == 0.0 and h.delta("log10_k_forward") == 0.0 for h in r.hops)
    assert r.superposition.method == "protein chains" and r.superposition.rmsd < 1e-3
    assert r.superposition.chain_map == {"A": "A", "H": "H"}
    assert r.problems() == []
    assert "keeps the reference wire" in r.to_dict()["verdict"]["summary"]


def test_to_dict_is_strict_json(yq9_self):
    text = json.dumps(yq9_self.to_dict(), allow_nan=False)
    d = json.loads(text)
    assert d["changes"]["missing"] == 0 and len(d["hops"]) == 3 and "estimates" in d["caution"]
    assert d["model"]["wire"]["path"] == d["reference"]["wire"]["path"]


def test_intervals_are_those_of_the_scan_report(yq9_self):
    # compare draws as many Monte Carlo samples as the scan's report (one default), so the
    # model wire's intervals equal the ones the structure report prints for the same result
    from fescan.transfer.uncertainty import wire_uncertainty

    assert yq9_self.uncertainty is not None
    assert json.dumps(yq9_self.uncertainty.to_dict()) == json.dumps(wire_uncertainty(yq9_self.model).to_dict())


# --------------------------------------------------------------------------- one cluster moved, one removed


def test_rewritten_copy_reports_exactly_those_changes(yq9_rewritten):
    _, r = yq9_rewritten
    ref = r.reference
    label = {u: ref.cofactor(u).key for u in ref.graph.nodes}
    assert [label[u] for u in r.missing] == ["A/265"] and r.extra == []
    moved = r.moved()
    assert [label[m.reference] for m in moved] == ["A/267"]
    assert moved[0].displacement == pytest.approx(3.0, abs=1e-3)  # the protein is untouched: identity fit
    assert r.superposition.rmsd < 1e-3
    assert not any(m.class_changed for m in r.matches)
    # moving the cluster away from its Cys leaves it mis-ligated; nothing else changes ligation
    assert [label[m.reference] for m in r.matches if m.ligation_changed] == ["A/267"]
    assert sum(m.displacement > 1e-3 for m in r.matches) == 1


def test_rewritten_copy_hop_deltas_match_a_scan_of_the_file(yq9_rewritten):
    path, r = yq9_rewritten
    mod = fescan.scan(path)
    # default direction from chemistry: Ni site -> proximal -> medial -> distal (H2 oxidation)
    assert [h.status for h in r.hops] == ["changed", "changed", "broken"]
    for h in r.hops[:2]:
        own = mod.graph.edges[h.model_donor, h.model_acceptor]["hop"]
        assert h.model.edge == own.edge and h.model.log10_k_forward == own.log10_k_forward
        assert h.delta("edge") == pytest.approx(own.edge - h.reference.edge)
        assert h.delta("log10_k_forward") == pytest.approx(own.log10_k_forward - h.reference.log10_k_forward)
        assert h.delta("dg") == 0.0  # same classes, same default potentials
    # the 3 Å shift lengthens the proximal–medial hop and shortens the Ni–proximal hop
    assert r.hops[1].delta("edge") > 1.0 and r.hops[0].delta("edge") < 0.0


def test_rewritten_copy_verdict(yq9_rewritten):
    _, r = yq9_rewritten
    codes = {p["step"]: {x["code"] for x in p["reasons"]} for p in r.problems()}
    assert codes[3] == {"missing_cofactor"}
    assert "misligated" in codes[1] and "misligated" in codes[2]
    drop = -r.hops[1].delta("log10_k_forward")
    assert ("rate_drop" in codes[2]) == (drop > 1.0)
    v = r.to_dict()["verdict"]
    assert v["summary"].startswith("3 of 3 hops")
    assert any("missing in the model" in n for n in v["notes"])


# --------------------------------------------------------------------------- two entries of one protein family


def test_two_ferredoxins_match_one_to_one():
    # 1FDN (X-ray) and 1CLF (NMR model 1): both 2[4Fe-4S], SF4 A/56 and A/57, 55 residues (SOURCES.md)
    r = compare(entry_path("1CLF"), entry_path("1FDN"))
    pairs = sorted((r.reference.cofactor(m.reference).key, r.model.cofactor(m.model).key) for m in r.matches)
    assert pairs == [("A/56", "A/56"), ("A/57", "A/57")]
    assert r.missing == [] and r.extra == [] and not any(m.class_changed for m in r.matches)
    assert r.superposition.method == "protein chains" and r.superposition.n_pairs >= 40
    assert all(m.displacement < 2.0 for m in r.matches)
    # SOURCES.md min d: 8.72 Å (1FDN) and 9.02 Å (1CLF model 1): the hop lengthens by about 0.30 Å
    assert r.hops[0].delta("edge") == pytest.approx(9.02 - 8.72, abs=0.02)


def test_moved_renumbered_copy_uses_the_superposition(fdn_moved):
    _, rot, r = fdn_moved
    assert r.superposition.method == "protein chains" and r.superposition.chain_map == {"X": "A"}
    assert r.superposition.rmsd < 1e-3 and r.superposition.n_pairs == 55
    # the fit undoes the rotation (x_ref = R x_model + t with R = rot⁻¹)
    assert np.allclose(np.asarray(r.superposition.rotation), rot.T, atol=1e-4)
    keys = sorted((r.reference.cofactor(m.reference).key, r.model.cofactor(m.model).key) for m in r.matches)
    assert keys == [("A/56", "X/156"), ("A/57", "X/157")]
    # matched through the residue mapping (chain X -> A, numbers - 100), which is reported
    assert all(m.how == "chain and residue, mapped" and m.displacement < 1e-3 for m in r.matches)
    (chain,) = r.superposition.chains
    assert (chain["model_chain"], chain["reference_chain"], chain["offset"], chain["aligned"]) == ("X", "A", -100, 55)
    assert chain["identity"] == pytest.approx(1.0)
    # ligands map through the sequence alignment (X/108 is A/8): no ligation change
    assert r.n_changes == 0


def test_cofactor_centre_fit_without_protein(tmp_path):
    # 2FUG with every polymer residue deleted, rotated, moved and its chains renamed: no Cα to fit,
    # so the ten cofactor centres are fitted (SOURCES.md: FMN + nine Fe–S clusters)
    st = gemmi.read_structure(str(entry_path("2FUG")))
    for ch in st[0]:
        for i in reversed(range(len(ch))):
            if ch[i].het_flag != "H":
                del ch[i]
    st.remove_empty_chains()
    _move_whole(st, _rotation(120, 0), (-40.0, 5.0, 60.0))
    for ch, name in zip(st[0], "ABCDEFGH"):
        ch.name = name
    path = rewrite.write(st, tmp_path / "2fug_cofactors_only.pdb")
    r = compare(path, entry_path("2FUG"))
    assert r.superposition.method == "cofactor centres" and r.superposition.n_pairs == 10
    assert len(r.matches) == 10 and r.missing == [] and r.extra == []
    assert all(m.displacement < 1e-2 and not m.class_changed for m in r.matches)
    # the hops keep their geometry, but every cluster lost its Cys ligands with the protein:
    # each hop is "changed" (ligation), so a hop is never both unchanged and implausible
    assert all(abs(h.delta("edge")) < 1e-3 for h in r.hops)
    assert [h.status for h in r.hops] == ["changed"] * len(r.reference.wire.hops)
    problems = {p["step"] for p in r.problems()}
    assert not [h for h in r.hops if h.status == "unchanged" and h.step in problems]


def test_incomplete_cluster_is_reported(tmp_path):
    # one Fe deleted from SF4 A/57 of 1FDN: the model's cluster is incomplete (Fe3S4 where the CCD
    # code SF4 means Fe4S4, wwPDB CCD), it loses the Cys bound to that Fe, and the hop is flagged
    st = gemmi.read_structure(str(entry_path("1FDN")))
    res = next(r for r in st[0]["A"] if r.seqid.num == 57)
    del res[[a.name for a in res].index("FE1")]
    r = compare(rewrite.write(st, tmp_path / "1fdn_no_fe1.pdb"), entry_path("1FDN"))
    m = next(m for m in r.matches if r.reference.cofactor(m.reference).key == "A/57")
    assert m.incomplete and m.misligated and len(m.ligands_lost) == 1
    assert r.changes()["incomplete"] == 1
    assert {x["code"] for x in r.problems()[0]["reasons"]} == {"misligated"}


def test_kabsch_recovers_a_rigid_motion():
    # closed form: points moved by a known rotation and translation are moved back exactly
    rng = np.random.default_rng(0)
    p = rng.normal(size=(12, 3)) * 10
    rot = _rotation(40, 1) @ _rotation(-70, 2)
    q = p @ rot.T + np.array([3.0, -2.0, 9.0])
    r, t, e = kabsch(p, q)
    assert e < 1e-9 and np.allclose(r, rot) and np.allclose(t, [3.0, -2.0, 9.0])


def test_measured_packing_per_hop():
    r = compare(entry_path("1FDN"), entry_path("1FDN"), measure_packing=True)
    h = r.hops[0]
    assert 0.0 < h.rho_reference < 1.0 and h.rho_model == h.rho_reference


def test_bad_input():
    with pytest.raises(StructureNotFound, match="nowhere.pdb"):
        compare("nowhere.pdb", entry_path("1FDN"))
    with pytest.raises(ConfigError, match="match_cutoff"):
        compare(entry_path("1FDN"), entry_path("1FDN"), match_cutoff=-1.0)


# --------------------------------------------------------------------------- reports and the command line


def test_report_files_escape_input_strings(fdn_moved, tmp_path):
    path, _, r = fdn_moved
    out = write_compare_report(r, tmp_path / "rep")
    assert set(out) == {"html", "markdown", "svg", "png"} and all(p.stat().st_size > 0 for p in out.values())
    page = out["html"].read_text(encoding="utf-8")
    assert "fdn<b>&moved" not in page and "fdn&lt;b&gt;&amp;moved" in page
    md = out["markdown"].read_text(encoding="utf-8")
    assert "<b>" not in md and "\\<b\\>" in md  # the Markdown renderer's escaping, as in every report
    svg = out["svg"].read_text(encoding="utf-8")
    assert "reference: 1FDN" in svg and "model, superposed" in svg  # both panels
    assert md_escape("a|b") == "a\\|b"


def test_interval_table_writes_hop_times_with_format_with_interval(yq9_self):
    # the model wire's hop times carry their 95% interval as format_with_interval writes it
    # (value rounded to what the interval supports), in the terminal and in the documents alike
    r = yq9_self
    u = r.uncertainty
    cells = []
    for h in u.hops:
        lo, hi = h.hop_time_interval("95%")
        cells.append(format_with_interval(10.0 ** -h.log10_k, lo, hi, "s", level="95%"))
    assert len(cells) == 3 and all("(95%: " in c for c in cells)
    summary = "summed hop time " + format_with_interval(u.summed_hop_time, *u.summed_hop_time_95, "s")
    text = render_compare_text(r)
    assert "hop time (95% interval)" in text and summary in text
    assert all(c in text for c in cells)
    tables = [b for b in compare_document(r).blocks if isinstance(b, Table)]
    (iv,) = [t for t in tables if "hop time (95% interval)" in t.headers]
    assert [row[iv.headers.index("hop time (95% interval)")] for row in iv.rows] == cells
    # the summary line under the table starts with the summed hop time (notes may follow)
    assert any(isinstance(b, Paragraph) and str(b.content).startswith(summary) for b in compare_document(r).blocks)


def test_text_view(yq9_rewritten):
    _, r = yq9_rewritten
    text = render_compare_text(r)
    assert "broken" in text and "problem: hop 1" in text and "estimates" in text


def test_cli_compare(tmp_path, capsys):
    out = tmp_path / "c.json"
    assert main(["compare", str(entry_path("1CLF")), str(entry_path("1FDN")), "--json", str(out),
                 "--report", str(tmp_path / "rep")]) == 0
    d = json.loads(out.read_text(encoding="utf-8"))
    assert d["changes"]["missing"] == 0 and len(d["matches"]) == 2
    assert "Verdict:" in capsys.readouterr().out
    assert (tmp_path / "rep" / "compare.html").exists()


def test_cli_compare_bad_file(capsys):
    assert main(["compare", "missing_model.pdb", str(entry_path("1FDN"))]) == 1
    err = capsys.readouterr().err
    assert "missing_model.pdb" in err and "Traceback" not in err


@requires_shared
def test_renamed_chains_do_not_change_non_protein_ligands(tmp_path):
    # 1YQ9 (SOURCES.md): the [NiFe] Fe carries CO/CN (FCO) and a bridging peroxide (PER); renaming
    # the chains changes nothing chemical, so no ligation change may be reported
    st = gemmi.read_structure(str(entry_path("1YQ9")))
    for ch in st[0]:
        ch.name = ch.name + "X"
    st.setup_entities()
    st.make_mmcif_document().write_file(str(tmp_path / "renamed.cif"))
    res = compare(tmp_path / "renamed.cif", entry_path("1YQ9"))
    assert res.changes()["ligation_changed"] == 0
    assert not res.problems()


def test_unchanged_hop_is_never_implausible(tmp_path):
    # the rb2 demo has a relay gap (example_structures/README.md); a renamed, renumbered and
    # rotated copy keeps it: the hop is unchanged, noted as inherited, never called implausible
    src = Path(__file__).resolve().parent.parent / "example_structures" / "rb2_gap.pdb"
    st = gemmi.read_structure(str(src))
    _move_whole(st, _rotation(90, 2), (12.0, -3.0, 40.0))
    for ch in st[0]:
        ch.name = "Q"
        for res in ch:
            res.seqid = gemmi.SeqId(res.seqid.num + 2000, " ")
    st.setup_entities()
    r = compare(rewrite.write(st, tmp_path / "rb2_moved.pdb"), str(src))
    assert r.superposition.method == "protein chains" and r.superposition.rmsd < 1e-2
    (chain,) = r.superposition.chains
    assert (chain["model_chain"], chain["offset"]) == ("Q", -2000)
    assert all(m.how == "chain and residue, mapped" for m in r.matches) and not r.missing
    assert all(h.status == "unchanged" for h in r.hops)
    assert r.problems() == []
    v = r.to_dict()["verdict"]
    assert any("unchanged and already over" in n for n in v["notes"]), v["notes"]


# --------------------------------------------------------------------------- relabelled chains, unrelated proteins


def _relabel(st: gemmi.Structure, new: dict[str, str]) -> None:
    """Rename chains at once (through temporary names, so a cycle of names does not collide)."""
    for ch in st[0]:
        if ch.name in new:
            ch.name = "tmp_" + new[ch.name]
    for ch in st[0]:
        if ch.name.startswith("tmp_"):
            ch.name = ch.name[4:]


def test_chain_labels_swapped_between_subunits_change_nothing(tmp_path):
    # SOURCES.md: 1YQ9 holds a small subunit A (the three Fe-S clusters) and a large subunit H (the
    # NiFe site); with their labels swapped each chain must still pair with its own protein, so the
    # comparison finds no change at all
    st = gemmi.read_structure(str(entry_path("1YQ9")))
    _relabel(st, {"A": "H", "H": "A"})
    path = rewrite.write(st, tmp_path / "1yq9_swapped_labels.pdb")
    r = compare(path, entry_path("1YQ9"))
    assert {(c["model_chain"], c["reference_chain"]) for c in r.superposition.chains} == {("H", "A"), ("A", "H")}
    assert r.n_changes == 0 and not r.missing and not r.extra
    assert all(m.displacement < 1e-3 for m in r.matches)


def _ca_rmsd_through(fit, ref_path, model_path) -> tuple[float, int]:
    """RMSD of the model's Cα, moved by ``fit``, from the reference Cα of the chains its chain map pairs."""
    ref, mod = gemmi.read_structure(str(ref_path))[0], gemmi.read_structure(str(model_path))[0]
    dev = []
    for m_name, r_name in fit.chain_map.items():
        want = {(res.seqid.num, res.name): res["CA"][0].pos.tolist() for res in ref[r_name] if res.find_atom("CA", "*")}
        for res in mod[m_name]:
            key = (res.seqid.num, res.name)
            if key in want and res.find_atom("CA", "*"):
                dev.append(np.linalg.norm(fit.apply(np.asarray([res["CA"][0].pos.tolist()]))[0] - want[key]))
    return float(np.sqrt(np.mean(np.square(dev)))), len(dev)


def test_copies_with_swapped_labels_pair_by_position(tmp_path):
    # SOURCES.md: 6LK1 holds two copies of one ferredoxin (chains A and B). A model in the reference
    # frame that labels its copies the other way round is the same structure: its copies pair by
    # position (model A with reference B), and nothing changed
    st = gemmi.read_structure(str(entry_path("6LK1")))
    _relabel(st, {"A": "B", "B": "A"})
    path = rewrite.write(st, tmp_path / "6lk1_swapped.pdb")
    r = compare(path, entry_path("6LK1"))
    assert r.superposition.chain_map == {"A": "B", "B": "A"}
    assert r.n_changes == 0 and all(m.displacement < 1e-3 for m in r.matches)
    rmsd, n = _ca_rmsd_through(r.superposition, entry_path("6LK1"), path)
    assert n > 150 and rmsd < 1e-3


def test_rotated_copies_with_swapped_labels_report_a_true_fit(tmp_path):
    # the same model also turned by 37° and shifted: position in the raw frames no longer tells the
    # copies apart, the copies pair by name, and the fit superposes one copy on the other (a rotation
    # close to a 2-fold). The RMSD reported must be that of the transform applied, recomputed here
    st = gemmi.read_structure(str(entry_path("6LK1")))
    _relabel(st, {"A": "B", "B": "A"})
    _move_whole(st, _rotation(37, 1) @ _rotation(20, 2), (20.0, -7.0, 12.0))
    path = rewrite.write(st, tmp_path / "6lk1_swapped_turned.pdb")
    r = compare(path, entry_path("6LK1"))
    fit = r.superposition
    assert fit.method == "protein chains" and fit.rmsd < 1.0
    rmsd, n = _ca_rmsd_through(fit, entry_path("6LK1"), path)
    assert n > 150 and rmsd < 1.0  # the transform applied is the one reported (before: 27 Å)


def test_unrelated_proteins_pair_no_chains_and_say_the_fit_is_unfounded():
    # 1FDN (a 55-residue ferredoxin) and 2FUG (complex I hydrophilic arm) share no protein (SOURCES.md):
    # no chain pair may pass the identity test, and two cofactor centres cannot found a superposition
    r = compare(entry_path("1FDN"), entry_path("2FUG"))
    from fescan.comparison.verdict import verdict

    assert not r.superposition.chains
    notes = " ".join(verdict(r)["notes"])
    assert "superposition" in notes and ("says nothing" in notes or "poor" in notes)


def test_a_potential_changed_by_context_is_named(tmp_path):
    # SOURCES.md: 2FUG's terminal [4Fe-4S] 6/182 (N2 by context); without it, the neighbouring 9/183
    # may take the N2 default instead (a context rule): the ΔG change of its hops must be explained
    from fescan.comparison.verdict import potential_changes

    st = gemmi.read_structure(str(entry_path("2FUG")))
    rewrite.remove_residue(st, "6", 182)
    path = rewrite.write(st, tmp_path / "2fug_without_6_182.pdb")
    r = compare(path, entry_path("2FUG"))
    changed = {m.reference for m in r.matches
               if abs(r.reference.potentials[m.reference].e_v - r.model.potentials[m.model].e_v) > 1e-3}
    notes = potential_changes(r)
    assert changed and len(notes) == len(changed)
    assert all("potential used" in n for n in notes)
