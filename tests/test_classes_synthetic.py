"""Class labels of synthetic metal sites built from ideal geometry (common practice, no source).

Topology rules: a cuboidal [3Fe-4S] has one sulfide bridging all three Fe, a linear one has
only two-Fe bridges; a Rieske [2Fe-2S] has one Fe bound by two His; rubredoxin-type Fe has
four Cys and no sulfide.
"""

from __future__ import annotations

import gemmi
import numpy as np
import pytest

from fescan.cofactors import find_cofactors
from fescan.cofactors.metal_sites import composition_string
from tests import synth


def structure(atoms: list[tuple[str, str, str, tuple[float, float, float]]], code: str = "UNL") -> gemmi.Structure:
    """One chain: the site as residue ``code`` (name, element) plus (resname, atoms) protein pieces."""
    ch = gemmi.Chain("A")
    site = synth._residue(code, 201, het=True)
    num = 1
    for kind, name, el, xyz in atoms:
        if kind == "site":
            site.add_atom(synth._atom(name, el, xyz))
        else:
            r = synth._residue(kind, num)
            r.add_atom(synth._atom(name, el, xyz))
            ch.add_residue(r)
            num += 1
    ch.add_residue(site)
    st = gemmi.Structure()
    m = gemmi.Model(1)
    m.add_chain(ch)
    st.add_model(m)
    return st


def _one(st):
    cofs = find_cofactors(st[0])
    assert len(cofs) == 1, [c.label for c in cofs]
    return cofs[0]


def test_linear_3fe_4s():
    fe = [(-2.7, 0, 0), (0, 0, 0), (2.7, 0, 0)]
    s = [(-1.35, 1.8, 0), (-1.35, -1.8, 0), (1.35, 0, 1.8), (1.35, 0, -1.8)]
    st = structure([("site", f"FE{k}", "Fe", p) for k, p in enumerate(fe, 1)] +
                   [("site", f"S{k}", "S", p) for k, p in enumerate(s, 1)])
    assert _one(st).cls == "linear [3Fe-4S]"


def test_cuboidal_3fe_4s_from_cube():
    fe, s = synth.cube()
    st = structure([("site", f"FE{k}", "Fe", p) for k, p in enumerate(fe[:3], 1)] +
                   [("site", f"S{k}", "S", p) for k, p in enumerate(s, 1)])
    assert _one(st).cls == "[3Fe-4S]"


def test_4fe_3s():
    fe, s = synth.cube()
    st = structure([("site", f"FE{k}", "Fe", p) for k, p in enumerate(fe, 1)] +
                   [("site", f"S{k}", "S", p) for k, p in enumerate(s[:3], 1)])
    assert _one(st).cls == "[4Fe-3S]"


def _rhomb():
    # [2Fe-2S]: Fe...Fe 2.72, Fe-S 2.21 (REFERENCES.md s2, from memory values)
    fe = np.array([[-1.36, 0, 0], [1.36, 0, 0]])
    h = float(np.sqrt(2.21**2 - 1.36**2))
    s = np.array([[0, h, 0], [0, -h, 0]])
    return fe, s


def test_rieske_needs_two_his_on_one_fe():
    fe, s = _rhomb()
    atoms = [("site", "FE1", "Fe", fe[0]), ("site", "FE2", "Fe", fe[1]),
             ("site", "S1", "S", s[0]), ("site", "S2", "S", s[1])]
    cys = [("CYS", "SG", "S", fe[0] + d) for d in ([-1.6, 0, 1.6], [-1.6, 0, -1.6])]
    # Fe-N(His) 2.14 Å (cctbx, REFERENCES.md s2)
    his = [("HIS", "ND1", "N", fe[1] + 2.14 * np.array(d) / np.linalg.norm(d)) for d in ([1, 0, 1], [1, 0, -1])]
    c = _one(structure(atoms + cys + his, code="FES"))
    assert c.cls == "Rieske [2Fe-2S]" and c.detected_by == "ccd+geometry"
    plain = _one(structure(atoms + cys + [("CYS", "SG", "S", fe[1] + d) for d in ([1.6, 0, 1.6], [1.6, 0, -1.6])],
                           code="FES"))
    assert plain.cls == "[2Fe-2S]"


def test_rubredoxin_fe_cys4_and_copper():
    d = 2.29 / np.sqrt(3)  # Fe-S(Cys) 2.29 Å (from memory, REFERENCES.md s2 Harding target 2.30)
    tet = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]]) * d
    st = structure([("site", "FE", "Fe", (0, 0, 0))] + [("CYS", "SG", "S", p) for p in tet], code="FE")
    c = _one(st)
    assert (c.category, c.cls, c.ccd_code) == ("iron", "Fe(Cys)4", "FE")
    cu = _one(structure([("site", "CU", "Cu", (0, 0, 0))] + [("HIS", "ND1", "N", p * 2.0 / 2.29) for p in tet[:2]]
                        + [("CYS", "SG", "S", tet[2])], code="CU"))
    assert (cu.category, cu.cls) == ("copper", "Cu")


@pytest.mark.parametrize("elements,expected", [
    (["FE"] * 7 + ["MO"] + ["S"] * 9 + ["C"], "MoFe7S9C"),  # FeMo-cofactor composition (REFERENCES.md s6, ICS)
    (["FE"] * 8 + ["S"] * 7, "Fe8S7"),  # P-cluster (REFERENCES.md s6, CLF)
    (["NI", "FE"], "NiFe"),
])
def test_composition_strings(elements, expected):
    assert composition_string(elements) == expected
