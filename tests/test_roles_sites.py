"""Sub-classes and roles of metal sites built in code: oxidase hemes, copper types, the H-cluster.

Sources (all from memory, to be read as the chemistry each case encodes):
heme a3 is the high-spin heme about 4.5-5 Å from CuB (Tsukihara et al. 1995 Science 269:1069);
copper site types (type 1: 2 His + Cys (+ Met), type 2: N/O donors, type 3: His3 pairs about
3.6 Å apart, trinuclear = type 2 + type 3) after Solomon, Sundaram & Machonkin 1996 Chem Rev
96:2563; the H-cluster is a [4Fe-4S] joined by a Cys to a 2Fe subcluster (Peters et al. 1998
Science 282:1853); FeMo-co is MoFe7S9C (Spatzal et al. 2011 Science 334:940) and the P-cluster
Fe8S7 (Peters et al. 1997 Biochemistry 36:1181).
"""

from __future__ import annotations

import pytest

from fescan.analysis.scan import scan
from fescan.cofactors.metal_sites import core_class
from tests import synth_cofactors as sc


def _scan(st, tmp_path):
    p = tmp_path / "s.pdb"
    st.write_pdb(str(p))
    return scan(p)


def test_heme_a3_next_to_cub_is_catalytic_and_heme_a_a_relay(tmp_path):
    res = _scan(sc.oxidase_site(), tmp_path)
    c = {x.key: x for x in res.cofactors}
    assert (c["A/1"].role, c["A/1"].subclass) == ("relay", "bis-His")
    assert (c["A/2"].role, c["A/2"].subclass) == ("catalytic", "heme a3")
    assert (c["A/3"].role, c["A/3"].subclass) == ("catalytic", "CuB")


@pytest.mark.parametrize(("with_type2", "cluster"), [(True, "trinuclear"), (False, "type 3")])
def test_copper_types(tmp_path, with_type2, cluster):
    c = {x.key: x for x in _scan(sc.copper_sites(with_type2), tmp_path).cofactors}
    assert (c["A/301"].role, c["A/301"].subclass) == ("relay", "type 1")
    assert c["A/302"].subclass == c["A/303"].subclass == cluster
    assert c["A/302"].role == "catalytic"
    assert c["A/305"].role == "ion or additive"  # no protein ligand sphere
    if with_type2:
        assert c["A/304"].subclass == "trinuclear"


@pytest.mark.parametrize("code", ["UNL", "HC1"])
def test_h_cluster_is_one_catalytic_site(tmp_path, code):
    st = sc.h_cluster()
    st[0]["A"][len(st[0]["A"]) - 1].name = code  # the 2Fe unit, unnamed or with its CCD code
    (h,) = _scan(st, tmp_path).cofactors
    assert h.cls == "H-cluster" and h.role == "catalytic"
    assert h.composition == "Fe6S4" and len(h.residues) == 2
    assert h.extra["bridging_ligands"] == ["A/18 SG"]
    assert not any(f.severity == "warning" for f in h.flags)


@pytest.mark.parametrize(("elements", "cls"), [
    (["FE"] * 7 + ["MO"] + ["S"] * 9 + ["C"], "FeMo-co"),
    (["FE"] * 7 + ["V"] + ["S"] * 8 + ["C"], "FeV-co"),
    (["FE"] * 8 + ["S"] * 7, "[8Fe-7S]"),
])
def test_nitrogenase_cores(elements, cls):
    assert core_class(elements, [], list(range(len(elements))))[1] == cls
