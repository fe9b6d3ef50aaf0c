"""Small synthetic structures built in code for unit tests (idealised geometry).

Geometry from the project's reference values (shared/reference/REFERENCES.md s2):
[4Fe-4S] Fe-S(Cys) 2.268 Å (cctbx), Fe...Fe about 2.75 Å and Fe-S(mu3) about
2.29 Å (from memory values quoted there). Only what the checks look at is
realistic: the cluster core, Cys SG/CB and a rough backbone.
"""

from __future__ import annotations

from pathlib import Path

import gemmi
import numpy as np

FE_FE = 2.75
S_S = 3.60
FE_SG = 2.268

_FE_DIRS = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], dtype=float)
_S_DIRS = -_FE_DIRS


def cube(centre=(0.0, 0.0, 0.0)) -> tuple[np.ndarray, np.ndarray]:
    """Fe4 and S4 positions of an ideal [4Fe-4S] cube around ``centre``."""
    a = FE_FE / (2 * np.sqrt(2))
    b = S_S / (2 * np.sqrt(2))
    c = np.asarray(centre, dtype=float)
    return c + a * _FE_DIRS, c + b * _S_DIRS


def _atom(name: str, el: str, xyz, b: float = 20.0) -> gemmi.Atom:
    a = gemmi.Atom()
    a.name = name
    a.element = gemmi.Element(el)
    a.pos = gemmi.Position(*map(float, xyz))
    a.occ = 1.0
    a.b_iso = b
    return a


def _residue(name: str, num: int, het: bool = False) -> gemmi.Residue:
    r = gemmi.Residue()
    r.name = name
    r.seqid = gemmi.SeqId(num, " ")
    r.het_flag = "H" if het else "A"
    return r


def _perp(u: np.ndarray) -> np.ndarray:
    v = np.cross(u, [0.0, 0.0, 1.0])
    if np.linalg.norm(v) < 1e-3:
        v = np.cross(u, [0.0, 1.0, 0.0])
    return v / np.linalg.norm(v)


def cys(num: int, fe: np.ndarray, centre: np.ndarray, fe_sg: float = FE_SG, resname: str = "CYS") -> gemmi.Residue:
    """A Cys whose SG binds ``fe`` along the outward centre→Fe line (SG-CB 1.81 Å, angle ~110°)."""
    u = (fe - centre) / np.linalg.norm(fe - centre)
    sg = fe + fe_sg * u
    p = _perp(u)
    cb = sg + 1.81 * (np.cos(np.radians(70)) * u + np.sin(np.radians(70)) * p)
    ca = cb + 1.53 * (0.8 * u + 0.6 * p)
    n = ca + 1.46 * _perp(ca - cb)
    c = ca + 1.52 * u
    o = c + 1.23 * p
    r = _residue(resname, num)
    for name, el, xyz in (("N", "N", n), ("CA", "C", ca), ("C", "C", c), ("O", "O", o), ("CB", "C", cb)):
        r.add_atom(_atom(name, el, xyz))
    if resname == "CYS":
        r.add_atom(_atom("SG", "S", sg))
    return r


def four_fe_cluster(
    *, centre=(10.0, 10.0, 10.0), numbers=(8, 11, 14, 18), drop_ligand: int | None = None,
    stretch: tuple[int, float] | None = None, code: str = "SF4", split: bool = False, cluster_num: int = 101,
) -> gemmi.Structure:
    """Chain A with four Cys and one [4Fe-4S] (optionally broken for the checks).

    Parameters
    ----------
    drop_ligand : int, optional
        Index (0-3) of the Cys turned into Ala (no SG: a missing ligand).
    stretch : (int, float), optional
        Index of the Cys and its Fe-SG distance (Å), e.g. (1, 2.8).
    code : str
        Residue name of the cluster (``"UNL"`` to hide the CCD code).
    split : bool
        Write each cluster atom as its own FE or S residue.
    """
    c = np.asarray(centre, dtype=float)
    fe, s = cube(c)
    ch = gemmi.Chain("A")
    for k, num in enumerate(numbers):
        d = stretch[1] if stretch and stretch[0] == k else FE_SG
        ch.add_residue(cys(num, fe[k], c, fe_sg=d, resname="ALA" if drop_ligand == k else "CYS"))
    if split:
        for k in range(4):
            r = _residue("FE", cluster_num + k, het=True)
            r.add_atom(_atom("FE", "Fe", fe[k]))
            ch.add_residue(r)
        for k in range(4):
            r = _residue("S", cluster_num + 4 + k, het=True)
            r.add_atom(_atom("S", "S", s[k]))
            ch.add_residue(r)
    else:
        r = _residue(code, cluster_num, het=True)
        for k in range(4):
            r.add_atom(_atom(f"FE{k + 1}", "Fe", fe[k]))
        for k in range(4):
            r.add_atom(_atom(f"S{k + 1}", "S", s[k]))
        ch.add_residue(r)
    st = gemmi.Structure()
    st.name = "SYNTH"
    m = gemmi.Model(1)
    m.add_chain(ch)
    st.add_model(m)
    st.setup_entities()
    return st


def write_pdb(st: gemmi.Structure, path: Path) -> Path:
    """Write a structure as PDB and return the path."""
    st.write_pdb(str(path))
    return path
