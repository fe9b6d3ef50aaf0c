"""Energetics and kinetics of real entries against published potentials and kinetics.

Potentials are written in the TOML files of tests/data/, each value with its citation. Chain
positions, not EPR names, are used for complex I (REFERENCES.md naming pitfall; 2FUG positions as
in tests/test_wire_real.py).
"""

from __future__ import annotations

import importlib.util
import json
import math
from pathlib import Path

import gemmi
import numpy as np
import pytest

import fescan
from fescan.comparison.compare import compare
from fescan.report.text import render_text
from tests import rewrite
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared
DATA = Path(__file__).parent / "data"
needs_steady_state = pytest.mark.skipif(importlib.util.find_spec("fescan.transfer.steady_state") is None,
                                        reason="the steady-state engine (fescan.transfer.steady_state) is absent")


def keys(res, uids):
    return [res.cofactor(u).key for u in uids]


@pytest.fixture(scope="module")
def fug_published():
    return fescan.scan(entry_path("2FUG"), potentials_file=str(DATA / "2fug_published.toml"))


@pytest.fixture(scope="module")
def fug_default():
    return fescan.scan(entry_path("2FUG"))


def test_2fug_direction_and_couples(fug_published):
    r = fug_published
    # physiology: NADH reduces the FMN, electrons run to N2 and on to ubiquinone
    assert keys(r, [r.wire.entry, r.wire.exit]) == ["7/500", "6/182"]
    assert "substrate-oxidising flavin" in r.wire.how_chosen
    # the reduced flavin gives its first electron at sq/red (Sled et al. 1994, from memory: -0.336 V)
    first = r.wire.hops[0]
    assert first.donor_couple == "FMN sq/red"
    assert first.dg == pytest.approx(-((-0.315) - (-0.336)), abs=1e-9)  # ΔG = -(E_acceptor - E_donor)
    assert r.potentials[r.wire.entry].basis == "user value"


@needs_steady_state
def test_2fug_transit_matches_nadh_to_n2(fug_published):
    # Verkhovskaya ML, Belevich N, Euro L, Wikström M, Verkhovsky MI 2008, PNAS 105:3763 (from memory):
    # N2 is reduced about 90 µs after NADH; the model's steady-state transit time (electrons on the
    # path / flux) with published potentials must lie within a factor 3 of it.
    ss = fug_published.wire.steady_state
    assert ss["flux_per_s"] > 0
    assert 90e-6 / 3 <= ss["transit_time_s"] <= 90e-6 * 3
    assert set(ss) >= {"flux_per_s", "occupancy", "control", "sensitivity"}
    assert ss["source"]["basis"] == ss["sink"]["basis"] == "user value"  # the file's [reservoirs]
    assert ss["source"]["e_v"] == pytest.approx(-0.32) and ss["sink"]["e_v"] == pytest.approx(0.09)
    assert len(ss["sensitivity_couples"][fug_published.wire.entry]) == 2  # FMN: ox/sq and sq/red
    # summation theorem of metabolic control analysis (Kacser & Burns 1973; Heinrich & Rapoport 1974)
    assert sum(c["coefficient"] for c in ss["control"]) == pytest.approx(1.0, abs=1e-6)
    json.dumps(fug_published.to_dict(), allow_nan=False)


@needs_steady_state
def test_2fug_bottleneck_is_largest_flux_control_not_slowest_hop_by_name(fug_published):
    # Kaila (REFERENCES.md s4a): N5 -> N6a is the bottleneck of the complex I chain
    w = fug_published.wire
    assert keys(fug_published, [w.bottleneck.donor, w.bottleneck.acceptor]) == ["3/784", "9/184"]
    assert "flux-control" in w.bottleneck_basis
    assert w.slowest_hop is not None


def test_2fug_default_run_has_no_millisecond_artefact(fug_default):
    # issue 10: the default run gave 24.9 ms with the two-electron FMN midpoint; the measured
    # NADH -> N2 time is about 90 µs (Verkhovskaya et al. 2008, from memory)
    w = fug_default.wire
    assert w.mean_first_passage_time < 1e-3
    if w.steady_state is not None:
        assert w.steady_state["transit_time_s"] < 1e-3
    # the complex I sub-classes were chosen by context and say so
    fmn = fug_default.parameters[w.entry]
    assert fmn.subclass == "complex I" and "by context" in fmn.subclass_reason
    assert "not measured for this protein" in fug_default.potentials[w.entry].basis


@needs_steady_state
def test_1kf6_direction_and_bottleneck():
    # E. coli QFR physiology: menaquinol -> [3Fe-4S] -> [4Fe-4S] -> [2Fe-2S] -> FAD -> fumarate; with the
    # FrdB potentials of Cecchini et al. 2002 (from memory) the low-potential [4Fe-4S] (-0.32 V, about
    # 0.25 V below both neighbours) is the uphill step that controls the flux
    r = fescan.scan(entry_path("1KF6"), potentials_file=str(DATA / "1kf6_qfr.toml"))
    w = r.wire
    assert keys(r, w.path) == ["B/245", "B/246", "B/244", "A/721"]
    assert "B/246" in keys(r, [w.bottleneck.donor, w.bottleneck.acceptor])
    assert w.hops[0].dg > 0.2  # into the low-potential cluster
    assert w.steady_state["flux_per_s"] > 0


@needs_steady_state
def test_1yq9_direction_and_bottleneck():
    # [NiFe]-hydrogenase, H2 oxidation: Ni site -> proximal -> medial -> distal (Volbeda et al. 2005
    # J Biol Inorg Chem 10:239, SOURCES.md relay order); the medial [3Fe-4S] sits about 0.4 V above
    # its neighbours (Dementin et al. 2006, from memory): the flux is controlled at its two hops
    r = fescan.scan(entry_path("1YQ9"), potentials_file=str(DATA / "1yq9_nife.toml"))
    w = r.wire
    assert keys(r, w.path) == ["H/538", "A/267", "A/266", "A/265"]
    assert "hydrogenase" in w.how_chosen
    assert "A/266" in keys(r, [w.bottleneck.donor, w.bottleneck.acceptor])
    ctrl = {(r.cofactor(c["donor"]).key if c["donor"] in r.parameters else c["donor"]): c["coefficient"]
            for c in w.steady_state["control"]}
    assert ctrl["A/267"] + ctrl["A/266"] > 0.8


def test_2axt_qa_to_qb_is_direct_and_downhill():
    # photosystem II: QA -> QB with the non-heme Fe between them not carrying the electron
    # (Ferreira et al. 2004 Science 303:1831, from memory); QA -145 mV and QB +90 mV
    # (de Causmaecker et al. 2019 PNAS 116:19458, read)
    r = fescan.scan(entry_path("2AXT"))
    w = r.wire
    assert [r.cofactor(u).cls for u in w.path] == ["plastoquinone", "plastoquinone"]
    assert r.parameters[w.entry].subclass == "photosystem II QA"
    assert r.parameters[w.exit].subclass == "photosystem II QB"
    (hop,) = w.hops
    assert hop.dg < 0 and hop.donor_couple == "Q/SQ" and hop.acceptor_couple == "Q/SQ"
    assert hop.dg == pytest.approx(-(0.090 - -0.145), abs=1e-9)


def test_edge_convention_changes_a_real_hop_and_is_stated(fug_default):
    # The research note could not confirm whether Page et al. 1999 / Moser et al. 1992 measure a
    # cluster's edge with or without its Cys S; both are offered. On the N5 -> N6a hop of 2FUG the
    # ligand S atoms bring the edges closer (common practice: Fe-S(Cys) about 2.3 Å)
    lig = fescan.scan(entry_path("2FUG"), edge_atoms="core+ligands")
    def hop(r):
        by = {r.cofactor(u).key: u for u in r.graph.nodes}
        return r.graph.edges[by["3/784"], by["9/184"]]["hop"]
    core_hop, lig_hop = hop(fug_default), hop(lig)
    assert 13.5 < core_hop.edge < 14.5
    assert 1.0 < core_hop.edge - lig_hop.edge < 4.5
    # about 0.6 decade per Å (Page et al. 1999, rho = 0.76)
    gain = lig_hop.log10_k_forward - core_hop.log10_k_forward
    assert gain == pytest.approx(0.592 * (core_hop.edge - lig_hop.edge), rel=1e-6)
    for r in (fug_default, lig):
        d = r.to_dict()
        assert d["options"]["edge_atoms"] == r.options.edge_atoms and d["options"]["edge_convention"]
        assert d["options"]["edge_convention"] in render_text(r, details=False)
    assert "Cys S" in lig.to_dict()["options"]["edge_convention"]


def test_compare_and_scan_agree_beyond_the_cutoff_with_per_cofactor_lambda(tmp_path):
    # issue 13: compare rebuilt a hop beyond the cutoff with the global λ and no per-cofactor λ
    # (λ 0.7 vs 0.4 from the user file). One hop builder now serves both.
    toml = tmp_path / "lam.toml"
    toml.write_text('[cofactor."A/266"]\nreorganisation = 0.4\n[cofactor."A/265"]\nreorganisation = 0.5\n'
                    '[cofactor."A/267"]\nreorganisation = 0.6\n', encoding="utf-8")
    ref = fescan.scan(entry_path("1YQ9"))
    cen = {ref.cofactor(u).key: np.asarray(ref.cofactor(u).centroid) for u in ref.graph.nodes}
    away = cen["A/265"] - cen["A/266"]
    st = gemmi.read_structure(str(entry_path("1YQ9")))
    # the distal cluster moves 6 Å away from the medial one: their hop leaves the 10 Å cutoff
    rewrite.move_residue(st, "A", 265, tuple(6.0 * away / np.linalg.norm(away)))
    model = rewrite.write(st, tmp_path / "1yq9_far.pdb")
    opts = {"cutoff": 10.0, "gap_limit": 10.0, "potentials_file": str(toml)}
    r = compare(model, entry_path("1YQ9"), **opts)
    wide = fescan.scan(model, **{**opts, "cutoff": 40.0})
    by = {wide.cofactor(u).key: u for u in wide.graph.nodes}
    beyond = [h for h in r.hops if h.model is not None and h.model.edge > 10.0]
    assert beyond, "the rewritten model must have a hop beyond the cutoff"
    for h in r.hops:
        if h.model is None:
            continue
        d, a = r.model.cofactor(h.model_donor).key, r.model.cofactor(h.model_acceptor).key
        own = wide.graph.edges[by[d], by[a]]["hop"]
        assert h.model.reorg == pytest.approx(own.reorg)
        assert h.model.dg == pytest.approx(own.dg)
        assert h.model.packing_density == pytest.approx(own.packing_density)
        assert h.model.log10_k_forward == pytest.approx(own.log10_k_forward, abs=1e-9)
    assert not math.isclose(beyond[0].model.reorg, 0.7)


def test_1kf6_each_copy_gets_its_own_wire():
    # SOURCES.md: 1KF6 holds two FrdABCD copies (chains A-D and M-P); the file's assemblies 1 and 2
    # are the two copies, assembly 3 joins them, so no hop between them is a crystal contact
    r = fescan.scan(entry_path("1KF6"))
    w = r.wire
    assert keys(r, w.path) == ["B/245", "B/246", "B/244", "A/721"]
    (other,) = w.copies
    assert keys(r, other["path"]) == ["N/245", "N/246", "N/244", "M/821"]
    assert "fumarate reductase" in other["how_chosen"]
    assert not any(h.crystal_contact for _, _, h in r.graph.edges(data="hop"))
    json.dumps(r.to_dict(), allow_nan=False)


@pytest.mark.parametrize("pdb_id", ["6LK1", "1KF6"])
def test_assemblies_read_alike_from_pdb_and_mmcif(pdb_id, tmp_path):
    # A PDB file names an assembly's author chains (REMARK 350), an mmCIF file its label_asym_id
    # subchains (wwPDB mmCIF dictionary, _pdbx_struct_assembly_gen.asym_id_list): the crystal-contact
    # flags must not depend on the format. SOURCES.md: 6LK1 has two single-chain assemblies (A, B),
    # so its one hop between the copies is a possible crystal contact; 1KF6's assembly 3 joins its two.
    st = gemmi.read_structure(str(entry_path(pdb_id)))
    st.setup_entities()
    cif = tmp_path / f"{pdb_id}.cif"
    st.make_mmcif_document().write_file(str(cif))
    flags = {}
    for path in (entry_path(pdb_id), cif):
        pairs = fescan.scan(path).to_dict()["pairs"]
        flags[path.suffix] = sorted((p["first"], p["second"], round(p["edge_distance"], 2),
                                     p["possible_crystal_contact"]) for p in pairs)
    assert flags[".pdb"] == flags[".cif"]
    assert any(flag for *_, flag in flags[".pdb"]) is (pdb_id == "6LK1")
