#!/usr/bin/env python3
"""Build the invented *Tidewater Protein Foundry* relay-bundle example structures.

Every coordinate written by this script is INVENTED.  Nothing is taken from the
PDB or any deposited entry: the cofactors are built from ideal geometry (values
from ``../shared/reference/REFERENCES.md`` section 2), laid out along a gently
curved "wire", and a made-up protein chain is threaded around them.

Usage::

    python example_structures/build_examples.py             # write next to this script, then check
    python example_structures/build_examples.py --out DIR   # write into DIR, then check
    python example_structures/build_examples.py --check     # rebuild in memory, compare with DIR, check

How a model is built:

1. cofactors from ideal geometry (cube = two interpenetrating tetrahedra, [3Fe-4S] = cube
   minus FE2, [2Fe-2S] = rhomb, flavin/quinone/porphyrin from regular polygons);
2. each is put on an arc (radius 48 A) at the arc position that gives the designed
   edge-to-edge distance to its predecessor (bisection);
3. ligand residues are built outward from the metal (SG on the cube-centre -> Fe line at the
   reference Fe-SG distance, Fe-SG-CB 107 deg) and chosen, per motif, by dynamic programming
   so the sequence spacing (C-x2-C-x2-C-x3-C ...) can be closed by real peptides;
4. the rest of the chain: a CA trace relaxed under distance restraints, ideal peptides placed
   by dynamic programming, then a Cartesian restraint regularisation of all backbone atoms,
   then clash-checked side chains.

The build is deterministic (fixed seed, no dates, gzip mtime 0): two runs give
byte-identical files (same numpy/gemmi versions).  The check exits non-zero when a design
constraint fails.
"""

from __future__ import annotations

import argparse
import functools
import gzip
import hashlib
import io
import itertools
import sys
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

import gemmi
import numpy as np

SEED = 20240607

# --- Reference geometry (REFERENCES.md section 2; cctbx mcl_sf4_coordination values, FOUND) ---
FE_SG = {"SF4": 2.268, "FES": 2.305, "F3S": 2.318}  # Fe-S(gamma, Cys) per cluster class
FE_N_RIESKE = 2.14  # Fe-N(delta1, His) of a Rieske [2Fe-2S]
FE_N_HEME = 2.00  # axial Fe-NE2(His) of a bis-His heme b (typical value)
# Core geometry (REFERENCES.md section 2, MEMORY values from synthetic analogues):
CUBE_FE_S, CUBE_FE_FE = 2.29, 2.75  # [4Fe-4S] Fe-S(mu3) and Fe...Fe
F3S_FE_S, F3S_FE_FE = 2.29, 2.70  # [3Fe-4S]: the cube with one Fe removed
RHOMB_FE_S, RHOMB_FE_FE = 2.22, 2.72  # [2Fe-2S] Fe-S(mu2) and Fe...Fe
SGFE_SGFE = 107.77  # [2Fe-2S] Sgamma-Fe-Sgamma angle (FOUND)
# Protein geometry (Engh & Huber-like round values).
B_N_CA, B_CA_C, B_C_O, B_C_N, B_CA_CB, B_CB_SG = 1.46, 1.52, 1.23, 1.33, 1.53, 1.81
FE_SG_CB = 107.0  # Fe-SG-CB angle (degrees)
AA3 = {"A": "ALA", "G": "GLY", "L": "LEU", "K": "LYS", "E": "GLU"}
FREE_PATTERN = "AKLEALKEGLAEKALEGK"  # cyclic residue pattern for non-ligand positions
SCENARIO = "Tidewater Protein Foundry relay bundle"

Vec = np.ndarray


# ----------------------------------------------------------------------------- geometry
def unit(v: Vec) -> Vec:
    """Return ``v`` scaled to unit length."""
    return v / np.linalg.norm(v)


def place(a: Vec, b: Vec, c: Vec, bond: float, angle: float, torsion: float) -> Vec:
    """NeRF: the point d with |cd| = bond, angle(b, c, d) = angle, dihedral(a, b, c, d) = torsion."""
    ang, tor = np.radians(angle), np.radians(torsion)
    bc = unit(c - b)
    n = unit(np.cross(b - a, bc))
    m = np.cross(n, bc)
    return c + bond * (-np.cos(ang) * bc + np.sin(ang) * np.cos(tor) * m + np.sin(ang) * np.sin(tor) * n)


def angle(a: Vec, b: Vec, c: Vec) -> float:
    """Angle a-b-c in degrees."""
    u, v = unit(a - b), unit(c - b)
    return float(np.degrees(np.arccos(np.clip(u @ v, -1.0, 1.0))))


def dihedral(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Dihedral angle a-b-c-d in degrees (broadcasts over leading axes)."""
    b0, b1, b2 = a - b, c - b, d - c
    b1n = b1 / np.linalg.norm(b1, axis=-1, keepdims=True)
    v = b0 - (b0 * b1n).sum(-1, keepdims=True) * b1n
    w = b2 - (b2 * b1n).sum(-1, keepdims=True) * b1n
    x = (v * w).sum(-1)
    y = (np.cross(b1n, v) * w).sum(-1)
    return np.degrees(np.arctan2(y, x))


RAMA = np.array([[-120.0, 130.0], [-70.0, 145.0], [-63.0, -42.0], [-90.0, 0.0]])  # beta, PPII, alpha, bridge


def rama_pen(phi: np.ndarray, psi: np.ndarray) -> np.ndarray:
    """Distance-like penalty from the favoured (phi, psi) regions of non-Gly residues."""
    dphi = (phi[..., None] - RAMA[:, 0] + 180.0) % 360.0 - 180.0
    dpsi = (psi[..., None] - RAMA[:, 1] + 180.0) % 360.0 - 180.0
    return ((dphi / 35.0) ** 2 + (dpsi / 35.0) ** 2).min(-1)


def phi_pen(phi: np.ndarray) -> np.ndarray:
    """Penalty for phi outside -170..-50 degrees."""
    out = np.minimum(np.abs(phi + 110.0), 360.0 - np.abs(phi + 110.0)) - 60.0
    return (np.clip(out, 0.0, None) / 20.0) ** 2


def psi_pen(psi: np.ndarray) -> np.ndarray:
    """Penalty for psi outside the alpha (-65..-15) and beta (100..190) bands."""
    def band(centre: float, half: float) -> np.ndarray:
        """Angular distance outside a band."""
        d = np.abs((psi - centre + 180.0) % 360.0 - 180.0)
        return np.clip(d - half, 0.0, None)
    return (np.minimum(band(-40.0, 25.0), band(145.0, 45.0)) / 20.0) ** 2


def rotmat(axis: Vec, deg: float) -> np.ndarray:
    """Rotation matrix (Rodrigues) about ``axis`` by ``deg`` degrees."""
    x, y, z = unit(np.asarray(axis, float))
    t = np.radians(deg)
    k = np.array([[0, -z, y], [z, 0, -x], [-y, x, 0]])
    return np.eye(3) + np.sin(t) * k + (1 - np.cos(t)) * k @ k


def kabsch(src: Vec, dst: Vec) -> tuple[np.ndarray, Vec]:
    """Rotation R and translation t with ``src @ R.T + t`` ~ ``dst`` (least squares)."""
    cs, cd = src.mean(0), dst.mean(0)
    u, _, vt = np.linalg.svd((src - cs).T @ (dst - cd))
    d = np.sign(np.linalg.det(vt.T @ u.T))
    r = vt.T @ np.diag([1.0, 1.0, d]) @ u.T
    return r, cd - cs @ r.T


def pair_min(a: Vec, b: Vec) -> float:
    """Smallest distance between two point sets."""
    return float(np.sqrt(((a[:, None, :] - b[None, :, :]) ** 2).sum(-1)).min())


# ----------------------------------------------------------------------------- cofactors
@dataclass
class Cof:
    """A cofactor: atom names, elements, coordinates (local or world), bonds, redox atoms."""

    code: str
    cls: str
    names: list[str]
    elems: list[str]
    xyz: np.ndarray
    bonds: list[tuple[str, str, str, float]]  # (atom, atom, class, nominal length)
    redox: list[str]
    lig_dirs: dict[str, list[Vec]] = field(default_factory=dict)
    seq: int = 0
    rot: np.ndarray | None = None  # template frame -> world (set by ``put``)
    origin: Vec | None = None

    def at(self, name: str) -> Vec:
        """Coordinates of one atom."""
        return self.xyz[self.names.index(name)]

    def sub(self, names: list[str]) -> np.ndarray:
        """Coordinates of several atoms."""
        return self.xyz[[self.names.index(n) for n in names]]

    def moved(self, rot: np.ndarray, origin: Vec) -> Cof:
        """Copy transformed by ``rot`` then shifted to ``origin``."""
        dirs = {k: [rot @ d for d in v] for k, v in self.lig_dirs.items()}
        return Cof(self.code, self.cls, self.names, self.elems, self.xyz @ rot.T + origin,
                   self.bonds, self.redox, dirs, self.seq)


def build_cube(code: str, fe_fe: float, fe_s: float, drop: str = "") -> Cof:
    """[4Fe-4S] as two interpenetrating tetrahedra (Fe4 and S4); drop one Fe for [3Fe-4S].

    Fe_i = a v_i and S_i = -b v_i, so Fe_i binds the three S_j with j != i (CCD SF4 naming).
    The Fe tetrahedron edge is Fe...Fe; b follows from |a v_i + b v_j| = Fe-S with v_i.v_j = -1/3.
    """
    v = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], float) / np.sqrt(3)
    a = fe_fe * np.sqrt(6) / 4
    b = (2 * a / 3 + np.sqrt((2 * a / 3) ** 2 - 4 * (a * a - fe_s**2))) / 2
    names, elems, xyz, dirs = [], [], [], {}
    for i in range(4):
        if f"FE{i + 1}" != drop:
            names.append(f"FE{i + 1}")
            elems.append("Fe")
            xyz.append(a * v[i])
            dirs[f"FE{i + 1}"] = [v[i]]
    for i in range(4):
        names.append(f"S{i + 1}")
        elems.append("S")
        xyz.append(-b * v[i])
    cls = "[3Fe-4S]" if drop else "[4Fe-4S]"
    bonds = [(f, f"S{j + 1}", f"Fe-S core {cls}", fe_s) for f in dirs for j in range(4) if int(f[2]) != j + 1]
    return Cof(code, cls, names, elems, np.array(xyz), bonds, list(names), dirs)


def build_rhomb(cls: str = "[2Fe-2S]") -> Cof:
    """[2Fe-2S] rhomb: Fe on +/-y, S on +/-x, terminal ligands in the yz planes (S-Fe-S angle 107.77)."""
    h, w = RHOMB_FE_FE / 2, np.sqrt(RHOMB_FE_S**2 - (RHOMB_FE_FE / 2) ** 2)
    half = np.radians(SGFE_SGFE / 2)
    xyz = np.array([[0, h, 0], [0, -h, 0], [-w, 0, 0], [w, 0, 0]], float)
    dirs = {"FE1": [np.array([0, np.cos(half), s * np.sin(half)]) for s in (1, -1)],
            "FE2": [np.array([0, -np.cos(half), s * np.sin(half)]) for s in (1, -1)]}
    names = ["FE1", "FE2", "S1", "S2"]
    bonds = [(f, s, "Fe-S(mu2) [2Fe-2S]", RHOMB_FE_S) for f in ("FE1", "FE2") for s in ("S1", "S2")]
    return Cof("FES", cls, names, ["Fe", "Fe", "S", "S"], xyz, bonds, list(names), dirs)


class _Mol:
    """Small helper to grow an organic cofactor atom by atom."""

    def __init__(self) -> None:
        """Start empty."""
        self.names: list[str] = []
        self.elems: list[str] = []
        self.xyz: list[Vec] = []
        self.bonds: list[tuple[str, str, str, float]] = []

    def add(self, name: str, elem: str, pos: Vec, bonded: tuple[str, ...] = (), cls: str = "") -> None:
        """Add an atom and its bonds to already present atoms."""
        self.names.append(name)
        self.elems.append(elem)
        self.xyz.append(np.asarray(pos, float))
        for other in bonded:
            d = float(np.linalg.norm(self.xyz[-1] - self[other]))
            self.bonds.append((other, name, cls, round(d, 3)))

    def __getitem__(self, name: str) -> Vec:
        """Coordinates of an atom added before."""
        return self.xyz[self.names.index(name)]

    def cof(self, code: str, cls: str, redox: list[str]) -> Cof:
        """Freeze into a :class:`Cof`."""
        return Cof(code, cls, self.names, self.elems, np.array(self.xyz), self.bonds, redox)


def _hexagon(cx: float, r: float = 1.40) -> dict[int, Vec]:
    """Vertices (by angle in degrees) of a pointy-top hexagon centred at (cx, 0, 0)."""
    return {a: np.array([cx + r * np.cos(np.radians(a)), r * np.sin(np.radians(a)), 0.0])
            for a in (30, 90, 150, 210, 270, 330)}


def build_fmn() -> Cof:
    """FMN: isoalloxazine from three fused ideal hexagons (1.40 A) plus ribityl phosphate (CCD names)."""
    m = _Mol()
    ra, rb, rc = _hexagon(-2.425), _hexagon(0.0), _hexagon(2.425)  # benzenoid, pyrazine, pyrimidine
    ring = "flavin ring"
    m.add("C5A", "C", rb[150])
    m.add("C9A", "C", rb[210], ("C5A",), ring)
    m.add("N5", "N", rb[90], ("C5A",), ring)
    m.add("C4A", "C", rb[30], ("N5",), ring)
    m.add("C10", "C", rb[330], ("C4A",), ring)
    m.add("N10", "N", rb[270], ("C10", "C9A"), ring)
    m.add("C4", "C", rc[90], ("C4A",), ring)
    m.add("N3", "N", rc[30], ("C4",), ring)
    m.add("C2", "C", rc[330], ("N3",), ring)
    m.add("N1", "N", rc[270], ("C2", "C10"), ring)
    m.add("C6", "C", ra[90], ("C5A",), ring)
    m.add("C7", "C", ra[150], ("C6",), ring)
    m.add("C8", "C", ra[210], ("C7",), ring)
    m.add("C9", "C", ra[270], ("C8", "C9A"), ring)
    out = {n: unit(m[n] - np.array([c, 0, 0])) for n, c in
           (("C4", 2.425), ("C2", 2.425), ("C7", -2.425), ("C8", -2.425), ("N10", 0.0))}
    m.add("O4", "O", m["C4"] + 1.23 * out["C4"], ("C4",), "flavin C=O")
    m.add("O2", "O", m["C2"] + 1.23 * out["C2"], ("C2",), "flavin C=O")
    m.add("C7M", "C", m["C7"] + 1.50 * out["C7"], ("C7",), "FMN substituent")
    m.add("C8M", "C", m["C8"] + 1.50 * out["C8"], ("C8",), "FMN substituent")
    tail = "FMN ribityl phosphate"
    m.add("C1'", "C", m["N10"] + 1.47 * out["N10"], ("N10",), tail)
    m.add("C2'", "C", place(m["C9A"], m["N10"], m["C1'"], 1.53, 112, 90), ("C1'",), tail)
    m.add("C3'", "C", place(m["N10"], m["C1'"], m["C2'"], 1.53, 112, 180), ("C2'",), tail)
    m.add("C4'", "C", place(m["C1'"], m["C2'"], m["C3'"], 1.53, 112, 180), ("C3'",), tail)
    m.add("C5'", "C", place(m["C2'"], m["C3'"], m["C4'"], 1.53, 112, 180), ("C4'",), tail)
    m.add("O2'", "O", place(m["N10"], m["C1'"], m["C2'"], 1.43, 109.5, -60), ("C2'",), tail)
    m.add("O3'", "O", place(m["C1'"], m["C2'"], m["C3'"], 1.43, 109.5, 60), ("C3'",), tail)
    m.add("O4'", "O", place(m["C2'"], m["C3'"], m["C4'"], 1.43, 109.5, -60), ("C4'",), tail)
    m.add("O5'", "O", place(m["C3'"], m["C4'"], m["C5'"], 1.43, 109.5, 180), ("C5'",), tail)
    m.add("P", "P", place(m["C4'"], m["C5'"], m["O5'"], 1.60, 120, 180), ("O5'",), tail)
    for name, tor in (("O1P", 60), ("O2P", 180), ("O3P", -60)):
        m.add(name, "O", place(m["C5'"], m["O5'"], m["P"], 1.50, 109.5, tor), ("P",), tail)
    ring_atoms = ["N1", "C2", "N3", "C4", "C4A", "N5", "C5A", "C6", "C7", "C8", "C9", "C9A", "N10", "C10"]
    return m.cof("FMN", "FMN", ring_atoms)


def build_uq1() -> Cof:
    """Ubiquinone-1 (UQ1): ideal benzoquinone ring (x-z plane), C=O 1.23, methoxy, methyl, prenyl tail.

    Ring order puts O4 towards -x (the upstream neighbour) and the tail on the far side.
    """
    m = _Mol()
    deg = {4: 180, 3: 120, 2: 60, 1: 0, 6: 300, 5: 240}
    rad = {i: np.array([np.cos(np.radians(a)), 0.0, np.sin(np.radians(a))]) for i, a in deg.items()}
    for i in range(1, 7):
        bonded = (f"C{i - 1}",) if i > 1 else ()
        m.add(f"C{i}", "C", 1.40 * rad[i], bonded, "quinone ring")
    m.bonds.append(("C6", "C1", "quinone ring", 1.40))
    m.add("O1", "O", m["C1"] + 1.23 * rad[1], ("C1",), "quinone C=O")
    m.add("O4", "O", m["C4"] + 1.23 * rad[4], ("C4",), "quinone C=O")
    sub = "UQ1 substituent"
    m.add("O2", "O", m["C2"] + 1.36 * rad[2], ("C2",), sub)
    m.add("O3", "O", m["C3"] + 1.36 * rad[3], ("C3",), sub)
    m.add("CM2", "C", place(m["C3"], m["C2"], m["O2"], 1.42, 117, 90), ("O2",), sub)
    m.add("CM3", "C", place(m["C2"], m["C3"], m["O3"], 1.42, 117, -90), ("O3",), sub)
    m.add("CM5", "C", m["C5"] + 1.50 * rad[5], ("C5",), sub)
    m.add("C7", "C", m["C6"] + 1.51 * rad[6], ("C6",), sub)
    m.add("C8", "C", place(m["C1"], m["C6"], m["C7"], 1.50, 112, 90), ("C7",), sub)
    m.add("C9", "C", place(m["C6"], m["C7"], m["C8"], 1.34, 125, 180), ("C8",), sub)
    m.add("C10", "C", place(m["C7"], m["C8"], m["C9"], 1.50, 122, 0), ("C9",), sub)
    m.add("C11", "C", place(m["C7"], m["C8"], m["C9"], 1.50, 122, 180), ("C9",), sub)
    return m.cof("UQ1", "ubiquinone", ["C1", "C2", "C3", "C4", "C5", "C6", "O1", "O4"])


def build_heme() -> Cof:
    """Heme b (HEM, CCD names): ideal porphyrin in the x-z plane, Fe-N 2.00, regular pyrroles.

    Pyrrole A/B/C/D point along 0/90/180/270 degrees; CHB/CHC/CHD/CHA sit at 45/135/225/315.
    The macrocycle is then turned so that meso CHC faces -x (the upstream neighbour).
    """
    m = _Mol()
    rpen = 1.40 / (2 * np.sin(np.radians(36)))
    dc = FE_N_HEME + rpen
    m.add("FE", "Fe", np.zeros(3))
    subst = {"A": ("CAA", "CMA"), "B": ("CMB", "CAB"), "C": ("CMC", "CAC"), "D": ("CMD", "CAD")}
    for k, ring in enumerate("ABCD"):
        t0 = np.radians(90 * k)
        e = np.array([np.cos(t0), 0.0, np.sin(t0)])
        t = np.array([-np.sin(t0), 0.0, np.cos(t0)])
        c = dc * e
        m.add(f"N{ring}", "N", c - rpen * e, ("FE",), "Fe-N(pyrrole)")
        p72, p36 = np.radians(72), np.radians(36)
        m.add(f"C1{ring}", "C", c + rpen * (-np.cos(p72) * e - np.sin(p72) * t), (f"N{ring}",), "porphyrin")
        m.add(f"C4{ring}", "C", c + rpen * (-np.cos(p72) * e + np.sin(p72) * t), (f"N{ring}",), "porphyrin")
        m.add(f"C2{ring}", "C", c + rpen * (np.cos(p36) * e - np.sin(p36) * t), (f"C1{ring}",), "porphyrin")
        m.add(f"C3{ring}", "C", c + rpen * (np.cos(p36) * e + np.sin(p36) * t), (f"C2{ring}", f"C4{ring}"),
              "porphyrin")
        for cb, sname in zip((f"C2{ring}", f"C3{ring}"), subst[ring]):
            m.add(sname, "C", m[cb] + 1.50 * unit(m[cb] - c), (cb,), "heme substituent")
    # meso carbons: 1.39 A from both flanking alpha carbons, on the diagonal
    for meso, (r1, r2), ang in (("CHB", ("C4A", "C1B"), 45), ("CHC", ("C4B", "C1C"), 135),
                                ("CHD", ("C4C", "C1D"), 225), ("CHA", ("C4D", "C1A"), 315)):
        u = np.array([np.cos(np.radians(ang)), 0.0, np.sin(np.radians(ang))])
        half = np.linalg.norm(m[r1] - m[r2]) / 2
        mid = (m[r1] + m[r2]) / 2
        m.add(meso, "C", mid + np.sqrt(1.39**2 - half**2) * u, (r1, r2), "porphyrin")
    sub = "heme substituent"
    for vin, v2, ref in (("CAB", "CBB", "C2B"), ("CAC", "CBC", "C2C")):
        base = "C3" + vin[-1]
        m.add(v2, "C", place(m[ref], m[base], m[vin], 1.34, 125, 180), (vin,), sub)
    for ca, cb, cg, o1, o2, base, ref, tor in (("CAA", "CBA", "CGA", "O1A", "O2A", "C2A", "C1A", 90),
                                              ("CAD", "CBD", "CGD", "O1D", "O2D", "C3D", "C4D", 90)):
        m.add(cb, "C", place(m[ref], m[base], m[ca], 1.52, 112, tor), (ca,), sub)
        m.add(cg, "C", place(m[base], m[ca], m[cb], 1.52, 112, 180), (cb,), sub)
        m.add(o1, "O", place(m[ca], m[cb], m[cg], 1.25, 117, 0), (cg,), sub)
        m.add(o2, "O", place(m[ca], m[cb], m[cg], 1.25, 117, 180), (cg,), sub)
    macro = ["FE", "NA", "NB", "NC", "ND", "CHA", "CHB", "CHC", "CHD"] + [
        f"C{i}{r}" for r in "ABCD" for i in range(1, 5)]
    cof = m.cof("HEM", "heme b", macro)
    cof.xyz = cof.xyz @ rotmat([0, 1, 0], -45).T  # CHC (135 deg in the x-z plane) -> -x
    cof.lig_dirs = {"FE": [np.array([0, 1.0, 0]), np.array([0, -1.0, 0])]}
    return cof


@functools.cache
def template(kind: str) -> Cof:
    """Local-frame cofactor of a site kind (x = wire direction, redox edge facing -x/+x)."""
    if kind == "FMN":
        fmn = build_fmn()
        return fmn.moved(rotmat([0, 1, 0], 180), np.zeros(3))  # dimethylbenzene edge faces +x
    if kind == "FES":
        return build_rhomb()
    if kind == "RSK":
        return build_rhomb("Rieske [2Fe-2S]")
    if kind == "SF4":
        return build_cube("SF4", CUBE_FE_FE, CUBE_FE_S)
    if kind == "F3S":
        return build_cube("F3S", F3S_FE_FE, F3S_FE_S, drop="FE2")
    if kind == "UQ1":
        return build_uq1()
    return build_heme()


# ----------------------------------------------------------------------------- layout
WIRE_RADIUS = 48.0  # radius of the arc the cofactors follow (gently curved, not straight)


def wire_frame(s: float) -> tuple[Vec, np.ndarray]:
    """Point and frame (columns: tangent, inward normal, binormal) of the wire at arc length s."""
    t = s / WIRE_RADIUS
    p = np.array([WIRE_RADIUS * np.sin(t), WIRE_RADIUS * (1 - np.cos(t)), 0.0])
    frame = np.column_stack([[np.cos(t), np.sin(t), 0.0], [-np.sin(t), np.cos(t), 0.0], [0.0, 0.0, 1.0]])
    return p, frame


def edge(a: Cof, b: Cof) -> float:
    """Edge-to-edge distance: closest pair of redox-active atoms."""
    return pair_min(a.sub(a.redox), b.sub(b.redox))


@dataclass
class Site:
    """One cofactor position of a design."""

    kind: str  # FMN FES RSK SF4 F3S UQ1 HEM
    seq: int  # residue number of the cofactor in chain A
    edge: float = 0.0  # target edge-to-edge distance to the previous site (0 for the first)
    s: float | None = None  # arc position; None = solve from ``edge``
    lift: float = 0.0  # offset along the binormal
    spin: float | None = None  # rotation about the wire tangent; None = chosen by the ligand search
    gap_next: float | None = None  # also solve s and lift so the edge to the next site is this value


def put(kind: str, s: float, lift: float, spin: float, seq: int) -> Cof:
    """Place the template of ``kind`` on the wire."""
    p, frame = wire_frame(s)
    rot, origin = frame @ rotmat([1, 0, 0], spin), p + lift * frame[:, 2]
    cof = template(kind).moved(rot, origin)
    cof.seq, cof.rot, cof.origin = seq, rot, origin
    return cof


def bisect(f: Callable[[float], float], lo: float, hi: float, target: float, n: int = 60) -> float:
    """Solve f(x) = target for increasing f on [lo, hi]."""
    for _ in range(n):
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if f(mid) < target else (lo, mid)
    return (lo + hi) / 2


def solve_position(site: Site, spin: float, prev: Cof | None, s_prev: float, nxt: Cof | None) -> tuple[float, float]:
    """Arc position (and lift) of a site so that its edges match the design targets."""
    if site.s is not None and site.gap_next is None:
        return site.s, site.lift
    if prev is None:
        return 0.0, site.lift

    def s_for(lift: float) -> float:
        """Arc position giving the target edge to the previous site."""
        return bisect(lambda s: edge(prev, put(site.kind, s, lift, spin, 0)), s_prev + 1.0, s_prev + 40.0,
                      site.edge)

    if site.gap_next is None:
        return s_for(site.lift), site.lift
    lift = bisect(lambda z: edge(put(site.kind, s_for(z), z, spin, 0), nxt), 0.0, 25.0, site.gap_next, 40)
    return s_for(lift), lift


# ----------------------------------------------------------------------------- ligand residues
def ideal_peptide() -> dict[str, Vec]:
    """Trans peptide unit CA(i), C, O, N(i+1), CA(i+1) in a frame with CA(i) at 0 and CA(i+1) on +x."""
    ca0, c = np.zeros(3), np.array([B_CA_C, 0.0, 0.0])
    n1 = c + B_C_N * np.array([-np.cos(np.radians(116.2)), np.sin(np.radians(116.2)), 0.0])
    ca1 = place(ca0, c, n1, B_N_CA, 121.7, 180.0)
    o = place(n1, ca0, c, B_C_O, 120.5, 180.0)
    pts = {"CA0": ca0, "C": c, "O": o, "N": n1, "CA1": ca1}
    x = unit(ca1)
    y = unit(n1 - (n1 @ x) * x)
    rot = np.array([x, y, np.cross(x, y)])
    return {k: rot @ v for k, v in pts.items()}


PEP = ideal_peptide()
D_CA = float(np.linalg.norm(PEP["CA1"]))  # 3.80 A virtual bond
D_C_CA = float(np.linalg.norm(PEP["CA1"] - PEP["C"]))  # C(i)...CA(i+1)
D_N_CA = float(np.linalg.norm(PEP["N"]))  # CA(i)...N(i+1)

MOTIFS = {  # (sequence offset, residue) of each ligand; realistic spacings
    "SF4": [(0, "CYS"), (3, "CYS"), (6, "CYS"), (10, "CYS")],  # C-x2-C-x2-C-x3-C
    "F3S": [(0, "CYS"), (6, "CYS"), (10, "CYS")],  # C-x5-C-x3-C (middle Cys of the box absent)
    "FES": [(0, "CYS"), (5, "CYS"), (8, "CYS"), (38, "CYS")],  # C-x4-C-x2-C-x29-C (plant type)
    "RSK": [(0, "CYS"), (2, "HIS"), (19, "CYS"), (22, "HIS")],  # Rieske C-x-H-x16-C-x2-H
    "HEM": [(0, "HIS"), (16, "HIS")],  # bis-His heme, H-x15-H
}


def assignments(kind: str) -> list[list[tuple[str, int]]]:
    """Possible (metal, ligand direction) of each motif ligand, in motif order."""
    if kind == "SF4":
        return [[(f"FE{i}", 0) for i in p] for p in itertools.permutations((1, 2, 3, 4))]
    if kind == "F3S":
        return [[(f"FE{i}", 0) for i in p] for p in itertools.permutations((1, 3, 4))]
    if kind == "HEM":
        return [[("FE", 0), ("FE", 1)], [("FE", 1), ("FE", 0)]]
    out = []
    for m1, m2 in (("FE1", "FE2"), ("FE2", "FE1")):
        for d1, d2 in itertools.product((0, 1), (0, 1)):
            if kind == "FES":
                out.append([(m1, d1), (m1, 1 - d1), (m2, d2), (m2, 1 - d2)])
            else:  # Rieske: Cys on one Fe, His on the other
                out.append([(m1, d1), (m2, d2), (m1, 1 - d1), (m2, 1 - d2)])
    return out


@dataclass
class Lig:
    """A ligand residue fixed by the cofactor geometry (N, CA, C and side chain)."""

    resname: str
    atoms: dict[str, Vec]
    cof: int  # index of the site it binds
    metal: str
    lig_atom: str
    offset: int
    dist: float
    targets: dict[int, Vec] = field(default_factory=dict)  # preferred CA of residue -1 / +1


@dataclass
class Cand:
    """A ligand conformer with the places its sequence neighbours' CA may take."""

    atoms: dict[str, Vec]
    nxt: np.ndarray  # candidate CA(i+1), shape (S, 3)
    prv: np.ndarray  # candidate CA(i-1)
    pen_n: np.ndarray  # clash penalty of each CA(i+1) choice (its peptide O and N included)
    pen_p: np.ndarray
    margin: float


def _backbone_from(side: Vec, cb: Vec, ca: Vec, chi: float) -> tuple[Vec, Vec]:
    """N and C on CA with ideal angles, chi1 = chi, and L chirality."""
    n = place(side, cb, ca, B_N_CA, 110.5, chi)
    for off in (-120.0, 120.0):
        c = place(side, cb, ca, B_CA_C, 110.1, chi + off)
        if (n - ca) @ np.cross(c - ca, cb - ca) > 0:
            return n, c
    raise RuntimeError("no L-chiral backbone")


def cys_conformers(cof: Cof, metal: str, dirv: Vec, dist: float) -> list[dict[str, Vec]]:
    """Cys residues whose SG sits on the outward Fe line at ``dist`` (Fe-SG-CB 107 deg)."""
    fe = cof.at(metal)
    sg = fe + dist * dirv
    ref = next(cof.at(b) for a, b, *_ in cof.bonds if a == metal)
    out = []
    for t1 in range(0, 360, 30):
        cb = place(ref, fe, sg, B_CB_SG, FE_SG_CB, t1)
        for t2 in (180, -90, 90, -150, 150):
            ca = place(fe, sg, cb, B_CA_CB, 114.0, t2)
            for chi in (-60, 180, 60):
                n, c = _backbone_from(sg, cb, ca, chi)
                out.append({"N": n, "CA": ca, "C": c, "CB": cb, "SG": sg})
    return out


R5 = 1.37 / (2 * np.sin(np.radians(36)))  # circumradius of the ideal imidazole pentagon


def his_conformers(cof: Cof, metal: str, dirv: Vec, dist: float, lig: str) -> list[dict[str, Vec]]:
    """His residues bound through ``lig`` (ND1 or NE2), the metal on that N's exterior bisector."""
    ln = cof.at(metal) + dist * dirv
    centre = ln + R5 * dirv
    order = ["ND1", "CE1", "NE2", "CD2", "CG"] if lig == "ND1" else ["NE2", "CE1", "ND1", "CG", "CD2"]
    perp0 = unit(np.cross(dirv, [0.3, 0.5, 0.8]))
    out = []
    for psi in range(0, 360, 30):
        p = rotmat(dirv, psi) @ perp0
        ring = {nm: centre + R5 * (-np.cos(np.radians(72 * i)) * dirv + np.sin(np.radians(72 * i)) * p)
                for i, nm in enumerate(order)}
        cb = ring["CG"] + 1.50 * unit(ring["CG"] - centre)
        for t2 in (90, -90, 150, -150):
            ca = place(ring["ND1"], ring["CG"], cb, B_CA_CB, 113.8, t2)
            for chi in (-60, 180, 60):
                n, c = _backbone_from(ring["CG"], cb, ca, chi)
                out.append({"N": n, "CA": ca, "C": c, "CB": cb, **ring})
    return out


def _circle(ca: Vec, other: Vec, along: float, n: int = 12) -> np.ndarray:
    """Points where a neighbouring CA can sit (3.8 A from ``ca``, ``along`` fixed by ``other``)."""
    e = unit(other - ca)
    dist_o = float(np.linalg.norm(other - ca))
    x = (D_CA**2 + dist_o**2 - along**2) / (2 * dist_o)
    r = np.sqrt(max(D_CA**2 - x * x, 0.0))
    u = unit(np.cross(e, [0.2, 0.9, 0.4]))
    w = np.cross(e, u)
    t = np.radians(np.arange(n) * 360.0 / n)
    return ca + x * e + r * (np.cos(t)[:, None] * u + np.sin(t)[:, None] * w)


def _flat(d: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Flat-bottom squared penalty."""
    return np.where(d < lo, (lo - d) ** 2, np.where(d > hi, (d - hi) ** 2, 0.0))


def _closure(k: int, d: np.ndarray) -> np.ndarray:
    """Cost of closing a k-residue step between the neighbour-CA estimates of two ligands."""
    if k == 2:
        return 4 * d**2
    if k == 3:
        return 4 * (d - D_CA) ** 2
    if k == 4:
        return 4 * _flat(d, 5.4, 7.0)
    return _flat(d, 4.5, 3.2 * (k - 2))


def lig_dist(kind: str, res: str) -> float:
    """Design metal-ligand distance for a ligand residue of a site kind."""
    if res == "HIS":
        return FE_N_RIESKE if kind == "RSK" else FE_N_HEME
    return FE_SG["FES" if kind == "RSK" else kind]


def _coeffs(origin: Vec, u: Vec, v: Vec, pts: dict[str, Vec]) -> dict[str, Vec]:
    """In-plane coefficients of peptide atoms on the basis (u, v) of the ideal peptide."""
    m = np.column_stack([u, v])
    return {k: np.linalg.lstsq(m, p - origin, rcond=None)[0] for k, p in pts.items()}


NEXT_COEF = _coeffs(PEP["CA0"], PEP["C"] - PEP["CA0"], PEP["CA1"] - PEP["CA0"], {"O": PEP["O"], "N": PEP["N"]})
PREV_COEF = _coeffs(PEP["CA1"], PEP["N"] - PEP["CA1"], PEP["CA0"] - PEP["CA1"], {"C": PEP["C"], "O": PEP["O"]})


def search_ligands(kind: str, cof: Cof, obstacles: np.ndarray, index: int) -> tuple[float, list[Lig]]:
    """Choose ligand conformations (and their metals) that can be closed by the motif spacing."""
    motif = MOTIFS[kind]
    env = np.vstack([obstacles, cof.xyz]) if len(obstacles) else cof.xyz
    pools: dict[tuple[str, int, str], list[Cand]] = {}
    best: tuple[float, list[Lig]] = (np.inf, [])
    for assign in assignments(kind):
        cands = []
        for (_, res), (metal, di) in zip(motif, assign):
            key = (metal, di, res)
            if key not in pools:
                names, local = local_conformers(kind, metal, di, res)
                lig = "SG" if res == "CYS" else ("ND1" if kind == "RSK" else "NE2")
                pools[key] = _filter(names, local @ cof.rot.T + cof.origin, env, cof.at(metal), lig)
            cands.append(pools[key])
        if any(not c for c in cands):
            continue
        total, choice, samples = _dp_ligands(motif, cands)
        if total < best[0]:
            ligs = []
            for i, ((off, res), (metal, _)) in enumerate(zip(motif, assign)):
                c = cands[i][choice[i]]
                lig = "SG" if res == "CYS" else ("ND1" if kind == "RSK" else "NE2")
                tg = {-1: c.prv[samples[i][0]], 1: c.nxt[samples[i][1]]}
                ligs.append(Lig(res, c.atoms, index, metal, lig, off, lig_dist(kind, res), tg))
            best = (total, ligs)
    if best[1]:
        refine_targets(motif, best[1], env)
    return best


@functools.cache
def local_conformers(kind: str, metal: str, di: int, res: str) -> tuple[tuple[str, ...], np.ndarray]:
    """All ligand conformers of one metal/direction in the template frame: (atom names, array K x A x 3)."""
    cof = template(kind)
    dirv, dist = cof.lig_dirs[metal][di], lig_dist(kind, res)
    if res == "CYS":
        confs = cys_conformers(cof, metal, dirv, dist)
    else:
        confs = his_conformers(cof, metal, dirv, dist, "ND1" if kind == "RSK" else "NE2")
    names = tuple(confs[0])
    return names, np.array([[c[n] for n in names] for c in confs])


def _filter(names: tuple[str, ...], confs: np.ndarray, env: np.ndarray, metal: Vec, lig: str,
            keep: int = 30) -> list[Cand]:
    """Keep the conformers with the most room (backbone >= 3.4 A, side chain >= 3.05 A from others)."""
    bbm = np.array([n in ("N", "CA", "C") for n in names])
    d = np.sqrt(((confs[:, :, None, :] - env[None, None]) ** 2).sum(-1))
    not_metal = np.sqrt(((env - metal) ** 2).sum(1)) > 0.01
    per_atom = np.where(bbm, d.min(-1) - 3.4, np.where(not_metal, d, 99.0).min(-1) - 3.05)
    per_atom[:, [n == lig for n in names]] = np.inf
    margin = per_atom.min(1)
    ca_col = names.index("CA")
    order: list[int] = []
    for k in np.lexsort((np.arange(len(margin)), -margin)):  # most room first, spread-out CA positions
        if margin[k] >= 0 and len(order) < keep and all(
                np.linalg.norm(confs[k, ca_col] - confs[j, ca_col]) > 1.0 for j in order):
            order.append(int(k))
    out = []
    for k in order:
        conf = dict(zip(names, confs[k]))
        nxt, prv = _circle(conf["CA"], conf["C"], D_C_CA), _circle(conf["CA"], conf["N"], D_N_CA)
        out.append(Cand(conf, nxt, prv, _side_pen(conf, nxt, 1, env), _side_pen(conf, prv, -1, env),
                        float(margin[k])))
    return out


def _side_pen(conf: dict[str, Vec], pts: np.ndarray, side: int, env: np.ndarray) -> np.ndarray:
    """Penalty of each possible neighbour CA: its room, its peptide's O/N (or C/O) room, and psi (or phi)."""
    ca = conf["CA"]
    own = np.array([p for n, p in conf.items() if n not in ("N", "CA", "C")])
    ref, coef = (conf["C"], NEXT_COEF) if side == 1 else (conf["N"], PREV_COEF)
    pen = 4 * _flat(np.sqrt(((pts[:, None] - env[None]) ** 2).sum(-1)).min(1), 4.6, 99)
    pep = {}
    for name, (a, b) in coef.items():
        pep[name] = atom = ca + a * (ref - ca) + b * (pts - ca)
        pen += 10 * _flat(np.sqrt(((atom[:, None] - env[None]) ** 2).sum(-1)).min(1), 3.4, 99)
        pen += 10 * _flat(np.sqrt(((atom[:, None] - own[None]) ** 2).sum(-1)).min(1), 2.95, 99)
    if side == 1:  # psi of the ligand residue
        return pen + 2 * psi_pen(dihedral(conf["N"], ca, conf["C"], pep["N"]))
    return pen + 2 * phi_pen(dihedral(pep["C"], conf["N"], ca, conf["C"]))


def refine_targets(motif: list[tuple[int, str]], ligs: list[Lig], env: np.ndarray, n: int = 90) -> None:
    """Re-choose the neighbour-CA targets of tightly spaced ligands on a fine circle grid (in place)."""
    for (oa, _), (ob, _), a, b in zip(motif, motif[1:], ligs, ligs[1:]):
        k = ob - oa
        if k > 3:
            continue
        pa = _circle(a.atoms["CA"], a.atoms["C"], D_C_CA, n)
        pb = _circle(b.atoms["CA"], b.atoms["N"], D_N_CA, n)
        d = np.linalg.norm(pa[:, None] - pb[None], axis=-1)
        tot = _closure(k, d) * 25.0 + _side_pen(a.atoms, pa, 1, env)[:, None] + _side_pen(b.atoms, pb, -1, env)[None]
        if k == 3:
            tot += 4 * _flat(np.linalg.norm(a.atoms["CA"] - pb, axis=-1), 5.4, 7.1)[None]
            tot += 4 * _flat(np.linalg.norm(pa - b.atoms["CA"], axis=-1), 5.4, 7.1)[:, None]
        i, j = np.unravel_index(int(tot.argmin()), tot.shape)
        a.targets[1], b.targets[-1] = pa[i], pb[j]
        if k == 2:  # one shared residue: meet half way
            a.targets[1] = b.targets[-1] = (pa[i] + pb[j]) / 2


def _dp_ligands(motif: list[tuple[int, str]], pools: list[list[Cand]]) -> tuple[float, list[int], list]:
    """Viterbi over the ligands in sequence order; pair cost = loop closure + clashes.

    Returns the cost, the chosen conformer of each ligand and, per ligand, the chosen
    (CA(i-1), CA(i+1)) sample indices.
    """
    last = len(pools) - 1
    cost = np.array([-0.2 * min(c.margin, 1.0) + c.pen_p.min() for c in pools[0]])
    back, picks = [], []
    for i in range(1, len(pools)):
        a, b = pools[i - 1], pools[i]
        k = motif[i][0] - motif[i - 1][0]
        nxt = np.array([c.nxt for c in a])
        prv = np.array([c.prv for c in b])
        d = np.sqrt(((nxt[:, None, :, None, :] - prv[None, :, None, :, :]) ** 2).sum(-1))
        tot = _closure(k, d) + np.array([c.pen_n for c in a])[:, None, :, None] + \
            np.array([c.pen_p for c in b])[None, :, None, :]
        ca_a = np.array([c.atoms["CA"] for c in a])
        ca_b = np.array([c.atoms["CA"] for c in b])
        if k == 2:  # virtual angle at the single residue in between
            tot += 4 * _flat(np.linalg.norm(ca_a[:, None] - ca_b[None], axis=-1), 5.4, 7.1)[:, :, None, None]
        if k == 3:  # virtual angles at both residues in between
            tot += 4 * _flat(np.linalg.norm(ca_a[:, None, None, :] - prv[None, :, :, :], axis=-1),
                             5.4, 7.1)[:, :, None, :]
            tot += 4 * _flat(np.linalg.norm(nxt[:, None, :, :] - ca_b[None, :, None, :], axis=-1),
                             5.4, 7.1)[:, :, :, None]
        flat = tot.reshape(len(a), len(b), -1)
        pair = flat.min(-1)
        picks.append(np.array(np.unravel_index(flat.argmin(-1), tot.shape[2:])))  # (2, na, nb)
        xa = np.array([list(c.atoms.values()) for c in a])
        xb = np.array([list(c.atoms.values()) for c in b])
        close = np.sqrt(((xa[:, None, :, None] - xb[None, :, None, :]) ** 2).sum(-1)).min(axis=(2, 3))
        pair += 50.0 * (close < 3.2)
        unary = np.array([-0.2 * min(c.margin, 1.0) + (c.pen_n.min() if i == last else 0.0) for c in b])
        tot2 = cost[:, None] + pair + unary[None, :]
        back.append(tot2.argmin(0))
        cost = tot2.min(0)
    j = int(cost.argmin())
    total = float(cost[j])
    choice = [j]
    for bp in reversed(back):
        j = int(bp[j])
        choice.append(j)
    choice = choice[::-1]
    samples = [[0, 0] for _ in pools]
    samples[0][0] = int(pools[0][choice[0]].pen_p.argmin())
    samples[last][1] = int(pools[last][choice[last]].pen_n.argmin())
    for i, pk in enumerate(picks, start=1):
        samples[i - 1][1] = int(pk[0][choice[i - 1], choice[i]])
        samples[i][0] = int(pk[1][choice[i - 1], choice[i]])
    return total, choice, samples


def _flank_atoms(lig: Lig) -> list[Vec]:
    """Where the neighbouring CA atoms and the two flanking peptides of a ligand residue will be."""
    ca, out = lig.atoms["CA"], [lig.targets[-1], lig.targets[1]]
    for side, ref, coef in ((1, lig.atoms["C"], NEXT_COEF), (-1, lig.atoms["N"], PREV_COEF)):
        out += [ca + a * (ref - ca) + b * (lig.targets[side] - ca) for a, b in coef.values()]
    return out


def place_sites(sites: list[Site]) -> tuple[list[Cof], list[Lig], list[tuple[float, float, float]]]:
    """Lay the cofactors along the wire one after another and pick their ligand residues."""
    cofs: list[Cof] = []
    ligs: list[Lig] = []
    poses: list[tuple[float, float, float]] = []
    obst = np.zeros((0, 3))
    for k, site in enumerate(sites):
        prev = cofs[-1] if cofs else None
        nxt = None
        if site.gap_next is not None:
            n = sites[k + 1]
            nxt = put(n.kind, n.s, n.lift, n.spin, n.seq)
        spins = [site.spin] if site.spin is not None else []
        spins += [float(a) for a in range(0, 360, 30) if float(a) not in spins]  # fallbacks
        best = None
        for n_try, spin in enumerate(spins):
            if n_try and site.spin is not None and best is not None and np.isfinite(best[0]):
                break
            s, lift = solve_position(site, spin, prev, poses[-1][0] if poses else 0.0, nxt)
            cof = put(site.kind, s, lift, spin, site.seq)
            cost, found = (search_ligands(site.kind, cof, obst, k) if site.kind in MOTIFS else (0.0, []))
            if len(obst):
                d = np.sqrt(((cof.xyz[:, None] - obst[None]) ** 2).sum(-1))
                cost += 10.0 * float((np.clip(3.8 - d, 0.0, None) ** 2).sum())
            if best is None or cost < best[0] - 1e-9:
                best = (cost, cof, found, (s, lift, spin))
        if best is None or not np.isfinite(best[0]):
            raise RuntimeError(f"no ligand set found for site {k} ({site.kind})")
        _, cof, found, pose = best
        cofs.append(cof)
        ligs.extend(found)
        poses.append(pose)
        extra = [np.array(list(g.atoms.values()) + _flank_atoms(g)) for g in found]
        obst = np.vstack([obst, cof.xyz, *extra])
    return cofs, ligs, poses


# ----------------------------------------------------------------------------- protein chain
def _bezier_points(p: Vec, q: Vec, w: Vec, n: int) -> np.ndarray:
    """n points, evenly spaced by arc length, on the quadratic Bezier from p to q through w."""
    if n == 1:
        return np.array([(p + q) / 2])
    ctrl = 2 * w - (p + q) / 2
    t = np.linspace(0, 1, 400)[:, None]
    curve = (1 - t) ** 2 * p + 2 * t * (1 - t) * ctrl + t**2 * q
    arc = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(curve, axis=0), axis=1))])
    idx = [int(np.searchsorted(arc, a)) for a in np.linspace(0, arc[-1], n)]
    return curve[np.clip(idx, 0, len(curve) - 1)]


def _zigzag(pts: np.ndarray, out: Vec, amp: float = 0.9) -> np.ndarray:
    """Add alternating sideways offsets (a strand-like Calpha zigzag)."""
    if len(pts) < 2:
        return pts
    res = pts.copy()
    for i in range(len(pts)):
        tan = unit(pts[min(i + 1, len(pts) - 1)] - pts[max(i - 1, 0)])
        side = np.cross(tan, out)
        side = unit(side) if np.linalg.norm(side) > 1e-6 else unit(np.cross(tan, [0.1, 0.2, 0.9]))
        res[i] += (amp if i % 2 else -amp) * side
    return res


def _path_length(p: Vec, q: Vec, w: Vec) -> float:
    """Length of the quadratic Bezier from p to q through w."""
    ctrl = 2 * w - (p + q) / 2
    t = np.linspace(0, 1, 200)[:, None]
    curve = (1 - t) ** 2 * p + 2 * t * (1 - t) * ctrl + t**2 * q
    return float(np.linalg.norm(np.diff(curve, axis=0), axis=1).sum())


def _poly_length(path: list[Vec]) -> float:
    """Length of a polyline."""
    return float(sum(np.linalg.norm(b - a) for a, b in zip(path, path[1:])))


def _polyline_points(path: list[Vec], n: int) -> np.ndarray:
    """n points evenly spaced along a polyline (first and last included)."""
    seg = np.array([np.linalg.norm(b - a) for a, b in zip(path, path[1:])])
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    out = []
    for t in np.linspace(0.0, cum[-1], n):
        i = min(int(np.searchsorted(cum, t, side="right")) - 1, len(seg) - 1)
        f = (t - cum[i]) / seg[i] if seg[i] > 0 else 0.0
        out.append(path[i] + f * (path[i + 1] - path[i]))
    return np.array(out)


def _waypoint(mid: Vec, cof_xyz: np.ndarray) -> Vec:
    """A point 10-13 A off the wire near ``mid``, as far as possible from every cofactor atom."""
    wp, frame = wire_frame(_arc_of(mid))
    best, best_score = wp, -np.inf
    for rad in (10.0, 13.0):
        for phi in np.radians(np.arange(0, 360, 30)):
            w = wp + rad * (np.cos(phi) * frame[:, 1] + np.sin(phi) * frame[:, 2])
            score = min(float(np.linalg.norm(cof_xyz - w, axis=1).min()), 8.0) - 0.15 * float(np.linalg.norm(w - mid))
            if score > best_score + 1e-9:
                best, best_score = w, score
    return best


def _cluster_centre(cof: Cof) -> Vec:
    """Mean position of the metal/sulfur core (all atoms for organic cofactors)."""
    core = [n for n, e in zip(cof.names, cof.elems) if e in ("Fe", "S")]
    return cof.sub(core).mean(0) if core else cof.xyz.mean(0)


def _arc_of(x: Vec) -> float:
    """Arc length of the wire point closest to x."""
    return float(np.arctan2(x[0], WIRE_RADIUS - x[1]) * WIRE_RADIUS)


def chain_plan(sites: list[Site], cofs: list[Cof], ligs: list[Lig], tail: int = 7) -> tuple[list, np.ndarray]:
    """Order residues (ligands at motif offsets, linkers sized to span the gaps) and guess a CA trace."""
    blocks = []
    for k, _ in enumerate(sites):
        mine = [g for g in ligs if g.cof == k]
        if mine:
            blocks.append((k, mine))
    slots: list[Lig | None] = [None] * tail
    trace: list[Vec] = []
    entry, exit_ = cofs[0].sub(cofs[0].redox).mean(0), cofs[-1].sub(cofs[-1].redox).mean(0)
    cof_xyz = np.vstack([c.xyz for c in cofs])
    first = blocks[0][1][0]
    q = first.targets[-1]
    start = entry + 8.0 * wire_frame(0.0)[1][:, 2]
    path = [start, q + 4.0 * unit(q - _cluster_centre(cofs[blocks[0][0]])), q]
    trace.extend(_zigzag(_polyline_points(path, tail), unit(q - entry)))
    for bi, (k, mine) in enumerate(blocks):
        centre = _cluster_centre(cofs[k])
        length = mine[-1].offset + 1
        for off in range(length):
            g = next((x for x in mine if x.offset == off), None)
            if g is not None:
                slots.append(g)
                trace.append(g.atoms["CA"])
                continue
            slots.append(None)
            trace.append(np.zeros(3))
        # fill the motif loops: bulge away from the cluster, path length ~3.25 A per residue
        tangent = wire_frame(_arc_of(centre))[1][:, 0]
        for a, b in zip(mine, mine[1:]):
            n_free = b.offset - a.offset - 1
            p, q = a.targets[1], b.targets[-1]
            mid = (p + q) / 2
            out = (mid - centre) - ((mid - centre) @ tangent) * tangent
            out = unit(out) if np.linalg.norm(out) > 1.0 else wire_frame(0.0)[1][:, 2]
            r0 = max(np.linalg.norm(p - centre), np.linalg.norm(q - centre)) + 1.0
            rad = r0
            if n_free >= 3:
                rad = bisect(lambda r: _path_length(p, q, centre + r * out), r0, 80.0, 3.25 * (n_free - 1))
            pts = _zigzag(_bezier_points(p, q, centre + rad * out, n_free), out)
            base = len(slots) - length + a.offset + 1
            for i, pt in enumerate(pts):
                trace[base + i] = pt
        if bi + 1 < len(blocks):
            a, b = mine[-1], blocks[bi + 1][1][0]
            p, q = a.targets[1], b.targets[-1]
            w = _waypoint((p + q) / 2, cof_xyz)
            out = unit(w - wire_frame(_arc_of(w))[0])
            nxt_centre = _cluster_centre(cofs[blocks[bi + 1][0]])
            path = [p, p + 4.0 * unit(p - centre), w, q + 4.0 * unit(q - nxt_centre), q]
            n_free = max(4, int(np.ceil(_poly_length(path) / 2.9)) + 2)
            slots.extend([None] * n_free)
            trace.extend(_zigzag(_polyline_points(path, n_free), out))
    last = blocks[-1][1][-1]
    p = last.targets[1]
    end = exit_ + 8.0 * wire_frame(60.0)[1][:, 2]
    slots.extend([None] * tail)
    path = [p, p + 4.0 * unit(p - _cluster_centre(cofs[blocks[-1][0]])), end]
    trace.extend(_zigzag(_polyline_points(path, tail), unit(p - exit_)))
    return slots, np.array(trace)


def _fb(x: np.ndarray, y: np.ndarray, lo: np.ndarray, hi: np.ndarray, w: np.ndarray) -> tuple[float, np.ndarray]:
    """Flat-bottom restraint energy and its gradient with respect to x (rows are pairs)."""
    v = x - y
    d = np.maximum(np.linalg.norm(v, axis=1), 1e-9)
    viol = np.where(d < lo, d - lo, np.where(d > hi, d - hi, 0.0))
    return float((w * viol**2).sum()), (2 * w * viol / d)[:, None] * v


def _dihedral_grad(x0: np.ndarray, x1: np.ndarray, x2: np.ndarray, x3: np.ndarray) -> tuple[np.ndarray, ...]:
    """Gradient of the dihedral angle (radians) with respect to its four points (Blondel-Karplus)."""
    b1, b2, b3 = x1 - x0, x2 - x1, x3 - x2
    n1, n2 = np.cross(b1, b2), np.cross(b2, b3)
    nb2 = np.linalg.norm(b2, axis=-1, keepdims=True)
    g0 = -nb2 / (n1 * n1).sum(-1, keepdims=True) * n1
    g3 = nb2 / (n2 * n2).sum(-1, keepdims=True) * n2
    f1 = (b1 * b2).sum(-1, keepdims=True) / nb2**2
    f3 = (b3 * b2).sum(-1, keepdims=True) / nb2**2
    g1 = -(1 + f1) * g0 + f3 * g3
    return g0, g1, -g0 - g1 - g3, g3


def relax_trace(x: np.ndarray, slots: list, obst: np.ndarray, obst_thr: np.ndarray, obst_res: np.ndarray,
                seed: int = SEED, n_iter: int = 6000) -> np.ndarray:
    """Move the free CA atoms until spacing, virtual angles and clearances are satisfied.

    Restraints: CA-CA 3.80 A; CA(i)-CA(i+2) 5.3-7.2 A (virtual angle ~88-142 deg); CA pairs three or
    more apart >= 4.8 A; CA to cofactor/ligand atoms >= the per-atom threshold; next to a ligand
    residue, the CA sits where an ideal trans peptide reaches the fixed N or C.
    """
    rng = np.random.default_rng(seed)
    n = len(x)
    free = np.array([s is None for s in slots])
    i1 = np.arange(n - 1)
    i2 = np.arange(n - 2)
    ii, jj = np.triu_indices(n, 3)
    pi, pp, plo, phi, pw = [], [], [], [], []
    for r, g in enumerate(slots):
        if g is None:
            continue
        for nb, key, dd in ((r + 1, "C", D_C_CA), (r - 1, "N", D_N_CA)):
            if 0 <= nb < n and slots[nb] is None:
                pi.append(nb), pp.append(g.atoms[key]), plo.append(dd), phi.append(dd), pw.append(20.0)
                pi.append(nb), pp.append(g.targets[nb - r]), plo.append(0.0), phi.append(0.1), pw.append(30.0)
                for name, pos in g.atoms.items():
                    if name not in ("N", "CA", "C"):
                        lo = 3.3 if name == "CB" else 3.6
                        pi.append(nb), pp.append(pos), plo.append(lo), phi.append(99.0), pw.append(5.0)
    pi, pp = np.array(pi, int), np.array(pp)
    plo, phi, pw = np.array(plo), np.array(phi), np.array(pw)
    res_idx = np.arange(n)
    near = np.abs(res_idx[:, None] - obst_res[None, :]) <= 1
    q4 = np.arange(n - 3)
    qw = np.array([2.0 if all(slots[i + j] is None for j in range(4)) else 0.5 for i in q4])
    vel = np.zeros_like(x)
    for it in range(n_iter + 2000):
        stiff, lr = (1.0, 0.01) if it < n_iter else (8.0, 0.002)  # final phase: exact spacing
        g = np.zeros_like(x)
        _, gr = _fb(x[i1], x[i1 + 1], D_CA, D_CA, np.full(n - 1, 20.0 * stiff))
        np.add.at(g, i1, gr)
        np.add.at(g, i1 + 1, -gr)
        _, gr = _fb(x[i2], x[i2 + 2], 5.3, 7.2, np.full(n - 2, 5.0))
        np.add.at(g, i2, gr)
        np.add.at(g, i2 + 2, -gr)
        if it % 25 == 0:
            close = np.linalg.norm(x[ii] - x[jj], axis=1) < 8.0
            ni, nj = ii[close], jj[close]
            oi, oj = np.nonzero(free[:, None] & ~near & (np.linalg.norm(x[:, None] - obst[None], axis=2) < 8.0))
        _, gr = _fb(x[ni], x[nj], 4.8, 1e9, np.full(len(ni), 5.0))
        np.add.at(g, ni, gr)
        np.add.at(g, nj, -gr)
        # virtual dihedrals near -170 deg (extended, strand-like chain)
        tau = np.radians(dihedral(x[q4], x[q4 + 1], x[q4 + 2], x[q4 + 3]))
        force = (qw * np.sin(tau - np.radians(-170.0)))[:, None]
        for j, gj in enumerate(_dihedral_grad(x[q4], x[q4 + 1], x[q4 + 2], x[q4 + 3])):
            np.add.at(g, q4 + j, force * gj)
        if len(pi):
            _, gr = _fb(x[pi], pp, plo, phi, pw * np.where(plo == phi, stiff, 1.0))
            np.add.at(g, pi, gr)
        _, gr = _fb(x[oi], obst[oj], obst_thr[oj], 1e9, np.full(len(oi), 5.0))
        np.add.at(g, oi, gr)
        g[~free] = 0.0
        vel = 0.85 * vel - lr * g
        step = np.linalg.norm(vel, axis=1, keepdims=True)
        vel = np.where(step > 0.2, vel * 0.2 / np.maximum(step, 1e-9), vel)
        x = x + vel
        if it < n_iter // 3:
            x[free] += rng.normal(0.0, 0.01, size=(int(free.sum()), 3))
    return x


def _clash_pen(pts: np.ndarray, obst: np.ndarray, thr: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """Sum of squared intrusions of each point (last axis = xyz) into the masked obstacles."""
    d = np.sqrt(((pts[..., None, :] - obst[mask]) ** 2).sum(-1))
    return (np.clip(thr[mask] - d, 0.0, None) ** 2).sum(-1)


def ideal_cb(n: np.ndarray, ca: np.ndarray, c: np.ndarray) -> np.ndarray:
    """Ideal L-amino-acid CB (1.53 A) from N, CA, C (broadcasts over leading axes)."""
    b, cc = ca - n, c - ca
    a = np.cross(b, cc)
    cb = -0.58273431 * a + 0.56802827 * b - 0.54067466 * cc
    return ca + B_CA_CB * cb / np.linalg.norm(cb, axis=-1, keepdims=True)


def backbone(ca: np.ndarray, slots: list, obst: np.ndarray, obst_thr: np.ndarray,
             obst_res: np.ndarray) -> dict[int, dict[str, Vec]]:
    """Place N, C, O of every residue: rigid ideal peptides, rotations chosen by dynamic programming."""
    n = len(ca)
    states = []
    for p in range(n - 1):
        a, b = ca[p], ca[p + 1]
        if slots[p] is not None or slots[p + 1] is not None:
            if slots[p] is not None:
                src = np.array([PEP["CA0"], PEP["C"], PEP["CA1"]])
                dst = np.array([a, slots[p].atoms["C"], b])
            else:
                src = np.array([PEP["CA0"], PEP["N"], PEP["CA1"]])
                dst = np.array([a, slots[p + 1].atoms["N"], b])
            r, t = kabsch(src, dst)
            st = np.array([[PEP[k] @ r.T + t for k in ("C", "O", "N")]])
            st[0] += (dst[1] - st[0, 0 if slots[p] is not None else 2])  # keep the ligand's own C / N
        else:
            ex = unit(b - a)
            ey = unit(np.cross(ex, [0.3, 0.4, 0.87]))
            shift = a + (np.linalg.norm(b - a) - D_CA) / 2 * ex
            st = []
            for ang in range(0, 360, 10):
                rot = rotmat(ex, ang)
                frame = np.column_stack([ex, rot @ ey, np.cross(ex, rot @ ey)])
                st.append([frame @ PEP[k] + shift for k in ("C", "O", "N")])
            st = np.array(st)
        states.append(st)
    unary = []
    for p, st in enumerate(states):
        mask = (np.abs(obst_res - p) > 1) & (np.abs(obst_res - p - 1) > 1)
        unary.append(_clash_pen(st, obst, obst_thr, mask).sum(1) * 10.0)
    cost = unary[0]
    back = []
    for r in range(1, n - 1):
        nn = states[r - 1][:, 2]
        cc = states[r][:, 0]
        if slots[r] is not None:
            pair = np.zeros((len(nn), len(cc)))
        else:
            u = nn[:, None, :] - ca[r]
            v = cc[None, :, :] - ca[r]
            cosang = (u * v).sum(-1) / (np.linalg.norm(u, axis=-1) * np.linalg.norm(v, axis=-1))
            ang = np.degrees(np.arccos(np.clip(cosang, -1, 1)))
            pair = ((ang - 111.0) / 5.0) ** 2
            cb = ideal_cb(nn[:, None, :], ca[r], cc[None, :, :])
            mask = np.abs(obst_res - r) > 1
            pair += 10.0 * _clash_pen(cb, obst, obst_thr + 0.1, mask)
            o_prev, c_prev, n_next = states[r - 1][:, 1], states[r - 1][:, 0], states[r][:, 2]
            for x, y, lim in ((o_prev[:, None], states[r][:, 1][None], 3.0), (o_prev[:, None], cb, 2.9),
                              (o_prev[:, None], n_next[None], 2.9)):
                pair += 10.0 * np.clip(lim - np.linalg.norm(x - y, axis=-1), 0, None) ** 2
            phi = dihedral(c_prev[:, None], nn[:, None], ca[r], cc[None])
            psi = dihedral(nn[:, None], ca[r], cc[None], n_next[None])
            pair += 3.0 * rama_pen(phi, psi)
        tot = cost[:, None] + pair + unary[r][None, :]
        back.append(tot.argmin(0))
        cost = tot.min(0)
    j = int(cost.argmin())
    pick = [j]
    for bp in reversed(back):
        j = int(bp[j])
        pick.append(j)
    pick = pick[::-1]
    atoms: dict[int, dict[str, Vec]] = {r: {"CA": ca[r]} for r in range(n)}
    for p, st in enumerate(states):
        c, o, nn = st[pick[p]]
        atoms[p]["C"], atoms[p]["O"] = c, o
        atoms[p + 1]["N"] = nn
    # termini: N of the first residue, C/O/OXT of the last
    first, last = atoms[0], atoms[n - 1]
    first["N"] = _best(lambda t: place(atoms[1]["N"], first["C"], first["CA"], B_N_CA, 111.0, t),
                       (150, 120, 180, -60), obst, obst_thr, obst_res, 0)
    last["C"] = _best(lambda t: place(atoms[n - 2]["C"], last["N"], last["CA"], B_CA_C, 111.0, t),
                      (-120, -70, -150, 60), obst, obst_thr, obst_res, n - 1)
    last["O"] = place(last["N"], last["CA"], last["C"], B_C_O, 117.0, -40.0)
    last["OXT"] = place(last["N"], last["CA"], last["C"], 1.25, 117.0, 140.0)
    return atoms


def _best(make: Callable[[float], Vec], torsions: tuple[float, ...], obst: np.ndarray, thr: np.ndarray, res: np.ndarray, r: int) -> Vec:
    """The first candidate position with the least clash."""
    mask = np.abs(res - r) > 1
    cands = [make(t) for t in torsions]
    pens = [float(_clash_pen(c[None], obst, thr, mask)[0]) for c in cands]
    return cands[int(np.argmin(pens))]


SIDE_BONDS = {  # side-chain bonds (atom, atom, class, nominal length)
    "ALA": [("CA", "CB", "CA-CB", B_CA_CB)],
    "LEU": [("CA", "CB", "CA-CB", B_CA_CB), ("CB", "CG", "side-chain C-C", 1.53),
            ("CG", "CD1", "side-chain C-C", 1.52), ("CG", "CD2", "side-chain C-C", 1.52)],
    "LYS": [("CA", "CB", "CA-CB", B_CA_CB), ("CB", "CG", "side-chain C-C", 1.52),
            ("CG", "CD", "side-chain C-C", 1.52), ("CD", "CE", "side-chain C-C", 1.52),
            ("CE", "NZ", "Lys CE-NZ", 1.49)],
    "GLU": [("CA", "CB", "CA-CB", B_CA_CB), ("CB", "CG", "side-chain C-C", 1.52),
            ("CG", "CD", "side-chain C-C", 1.52), ("CD", "OE1", "Glu C-O", 1.25), ("CD", "OE2", "Glu C-O", 1.25)],
    "CYS": [("CA", "CB", "CA-CB", B_CA_CB), ("CB", "SG", "CB-SG", B_CB_SG)],
    "HIS": [("CA", "CB", "CA-CB", B_CA_CB), ("CB", "CG", "His CB-CG", 1.50)] + [
        (a, b, "His ring", 1.37) for a, b in
        (("CG", "ND1"), ("ND1", "CE1"), ("CE1", "NE2"), ("NE2", "CD2"), ("CD2", "CG"))],
    "GLY": [],
}
ATOM_ORDER = ["N", "CA", "C", "O", "CB", "SG", "CG", "ND1", "CD", "CD1", "CD2", "CE", "CE1", "NE2", "OE1",
              "OE2", "NZ", "OXT"]


def side_chain(name: str, bb: dict[str, Vec], chi1: float, chi2: float) -> dict[str, Vec]:
    """Side-chain atoms of ALA/LEU/LYS/GLU with the given chi angles (GLY: none)."""
    if name == "GLY":
        return {}
    n, ca, c = bb["N"], bb["CA"], bb["C"]
    cb = bb["CB"] if "CB" in bb else ideal_cb(n, ca, c)
    out = {"CB": cb}
    if name == "ALA":
        return out
    if name == "LEU":
        cg = place(n, ca, cb, 1.53, 116.3, chi1)
        out.update(CG=cg, CD1=place(ca, cb, cg, 1.52, 110.5, chi2), CD2=place(ca, cb, cg, 1.52, 110.5, chi2 + 120))
    elif name == "LYS":
        cg = place(n, ca, cb, 1.52, 114.0, chi1)
        cd = place(ca, cb, cg, 1.52, 111.5, chi2)
        ce = place(cb, cg, cd, 1.52, 111.5, 180.0)
        out.update(CG=cg, CD=cd, CE=ce, NZ=place(cg, cd, ce, 1.49, 111.7, 180.0))
    elif name == "GLU":
        cg = place(n, ca, cb, 1.52, 114.0, chi1)
        cd = place(ca, cb, cg, 1.52, 113.0, chi2)
        out.update(CG=cg, CD=cd, OE1=place(cb, cg, cd, 1.25, 117.0, 0.0),
                   OE2=place(cb, cg, cd, 1.25, 117.0, 180.0))
    return out


@dataclass
class Res:
    """One residue as written to the file."""

    chain: str
    seq: int
    name: str
    het: bool
    atoms: list[tuple[str, str, Vec]]  # (name, element, xyz)


Key = tuple[str, int, str]


@dataclass
class Model:
    """A complete example: residues, bonds (with classes), cofactor table and design notes."""

    name: str
    title: str
    residues: list[Res]
    bonds: list[tuple[Key, Key, str, float]]
    cofactors: list[dict]
    hop_rule: list[tuple[float, float]]
    notes: dict = field(default_factory=dict)


def dress(ca: np.ndarray, slots: list, bb: dict[int, dict[str, Vec]], cof_atoms: np.ndarray,
          cluster_mask: np.ndarray) -> tuple[list[Res], list[tuple[Key, Key, str, float]]]:
    """Give every position a residue type and side chain (greedy, clash-checked), return residues + bonds."""
    n = len(ca)
    placed = [(pos, -10, "cof", bool(cl)) for pos, cl in zip(cof_atoms, cluster_mask)]
    for r in range(n):
        for nm, pos in bb[r].items():
            placed.append((pos, r, nm, False))
        if slots[r] is not None:
            for nm, pos in slots[r].atoms.items():
                if nm not in ("N", "CA", "C"):
                    placed.append((pos, r, nm, False))
    residues, bonds = [], []
    for r in range(n):
        seq = r + 1
        if slots[r] is not None:
            name, atoms = slots[r].resname, {**slots[r].atoms, **bb[r]}
        else:
            want = AA3[FREE_PATTERN[r % len(FREE_PATTERN)]]
            atoms = None
            if "CB" in bb[r] and not _room({"CB": bb[r]["CB"]}, r, placed):
                del bb[r]["CB"]  # no room for a side chain here: glycine
            for name in ((want, "ALA") if "CB" in bb[r] else ("GLY",)):
                for chi1, chi2 in itertools.product((-60, 180, 60), (180, 60, -60)):
                    sc = side_chain(name, bb[r], chi1, chi2)
                    if _room(sc, r, placed):
                        atoms = {**bb[r], **sc}
                        break
                if atoms is not None:
                    break
            if atoms is None:  # the regularised CB stays; no room for more
                name, atoms = "ALA", {**bb[r], "CB": bb[r]["CB"]}
            for nm, pos in atoms.items():
                if nm in ("CB", "CG", "CD", "CD1", "CD2", "CE", "NZ", "OE1", "OE2"):
                    placed.append((pos, r, nm, False))
        order = sorted(atoms, key=ATOM_ORDER.index)
        residues.append(Res("A", seq, name, False, [(k, k[0], atoms[k]) for k in order]))
        for a, b, cls, d0 in [("N", "CA", "N-CA", B_N_CA), ("CA", "C", "CA-C", B_CA_C), ("C", "O", "C=O", B_C_O)] + \
                SIDE_BONDS[name] + ([("C", "OXT", "C-OXT", 1.25)] if "OXT" in atoms else []):
            bonds.append((("A", seq, a), ("A", seq, b), cls, d0))
        if r > 0:
            bonds.append((("A", seq - 1, "C"), ("A", seq, "N"), "C-N peptide", B_C_N))
    return residues, bonds


def _ideal_pairs() -> dict[str, float]:
    """1-3 and 1-4 distances of ideal backbone geometry (used as angle / planarity restraints)."""
    n, ca = np.array([-B_N_CA, 0.0, 0.0]), np.zeros(3)
    c = B_CA_C * np.array([-np.cos(np.radians(111.0)), np.sin(np.radians(111.0)), 0.0])
    cb = ideal_cb(n, ca, c)
    d = {"N:C": np.linalg.norm(n - c), "N:CB": np.linalg.norm(n - cb), "C:CB": np.linalg.norm(c - cb),
         "chiral": float((n - ca) @ np.cross(c - ca, cb - ca))}
    for a, b in (("CA0", "O"), ("CA0", "N"), ("O", "N"), ("C", "CA1"), ("CA0", "CA1"), ("O", "CA1")):
        d[f"{a}:{b}"] = float(np.linalg.norm(PEP[a] - PEP[b]))
    return d


IDEAL = _ideal_pairs()


def regularize(bb: dict[int, dict[str, Vec]], slots: list, env: np.ndarray, env_thr: np.ndarray,
               n_iter: int = 4000) -> None:
    """Cartesian restraint minimisation of the free backbone atoms (N, CA, C, O, CB), in place.

    Bonds and 1-3 distances (bond angles), trans-peptide 1-4 distances and planarity, CA chirality and a
    repulsion (>= 3.0 A, N...O >= 2.8 A; per-atom thresholds for cofactor/ligand atoms) between atoms
    more than three bonds apart.  Ligand side chains (CB onwards) stay fixed; their N, CA, C may adjust.
    """
    n = len(slots)
    idx: dict[tuple[int, str], int] = {}
    pos, fixed, elem = [], [], []
    for r in range(n):
        if slots[r] is not None:
            bb[r]["CB"] = slots[r].atoms["CB"]
        elif FREE_PATTERN[r % len(FREE_PATTERN)] != "G":
            bb[r]["CB"] = ideal_cb(bb[r]["N"], bb[r]["CA"], bb[r]["C"])
        atoms = {nm: bb[r][nm] for nm in ("N", "CA", "C", "O", "CB") if nm in bb[r]}
        if slots[r] is not None:  # the ligand side chain is fixed; its backbone may adjust
            atoms.update({nm: p for nm, p in slots[r].atoms.items() if nm not in ("N", "CA", "C")})
        for nm, p in atoms.items():
            idx[(r, nm)] = len(pos)
            pos.append(p)
            fixed.append(slots[r] is not None and nm not in ("N", "CA", "C", "O"))
            elem.append(nm[0])
    x, fixed = np.array(pos), np.array(fixed)
    rest: list[tuple[int, int, float, float]] = []  # (i, j, target, weight)
    bonds: list[tuple[int, int]] = []

    def add(a: tuple[int, str], b: tuple[int, str], d0: float, w: float, bond: bool = False) -> None:
        """Register a distance restraint (and a bond for the exclusion graph)."""
        if a in idx and b in idx:
            rest.append((idx[a], idx[b], d0, w))
            if bond:
                bonds.append((idx[a], idx[b]))

    for r in range(n):
        if slots[r] is not None:  # keep CA where the fixed side chain wants it (CA-CB-SG / CA-CB-CG angle)
            lig = slots[r]
            side = "SG" if "SG" in lig.atoms else "CG"
            add((r, "CA"), (r, side), float(np.linalg.norm(lig.atoms["CA"] - lig.atoms[side])), 20)
            for a, b, *_ in SIDE_BONDS[lig.resname][1:]:
                bonds.append((idx[(r, a)], idx[(r, b)]))
        add((r, "N"), (r, "CA"), B_N_CA, 50, True)
        add((r, "CA"), (r, "C"), B_CA_C, 50, True)
        add((r, "CA"), (r, "CB"), B_CA_CB, 50, True)
        add((r, "C"), (r, "O"), B_C_O, 50, True)
        add((r, "N"), (r, "C"), IDEAL["N:C"], 20)
        add((r, "N"), (r, "CB"), IDEAL["N:CB"], 20)
        add((r, "C"), (r, "CB"), IDEAL["C:CB"], 20)
        if r + 1 < n:
            add((r, "C"), (r + 1, "N"), B_C_N, 50, True)
            for (a, ra), (b, rb), key in ((("CA", r), ("O", r), "CA0:O"), (("CA", r), ("N", r + 1), "CA0:N"),
                                          (("O", r), ("N", r + 1), "O:N"), (("C", r), ("CA", r + 1), "C:CA1"),
                                          (("CA", r), ("CA", r + 1), "CA0:CA1"), (("O", r), ("CA", r + 1), "O:CA1")):
                add((ra, a), (rb, b), IDEAL[key], {"O:N": 50, "CA0:CA1": 10, "O:CA1": 10}.get(key, 20))
    ri, rj = np.array([t[0] for t in rest]), np.array([t[1] for t in rest])
    r0, rw = np.array([t[2] for t in rest]), np.array([t[3] for t in rest])
    m = len(x)
    adj = np.zeros((m, m), bool)
    for a, b in bonds:
        adj[a, b] = adj[b, a] = True
    reach = np.eye(m, dtype=np.float32) + adj
    for _ in range(2):
        reach = reach + reach @ adj.astype(np.float32)
    ai, aj = np.triu_indices(m, 1)
    keep = (reach[ai, aj] == 0) & ~(fixed[ai] & fixed[aj])
    ai, aj = ai[keep], aj[keep]
    el = np.array(elem)
    alim = np.where(((el[ai] == "N") & (el[aj] == "O")) | ((el[ai] == "O") & (el[aj] == "N")), 2.8, 3.0)
    # signed volumes about the second atom: CA chirality (L) and peptide planarity (0)
    quads = [((r, "N"), (r, "CA"), (r, "C"), (r, "CB"), IDEAL["chiral"]) for r in range(n)]
    for r in range(n - 1):
        quads += [((r, "CA"), (r, "C"), (r + 1, "N"), (r + 1, "CA"), 0.0),
                  ((r, "O"), (r, "C"), (r + 1, "N"), (r, "CA"), 0.0)]
    quads = [q for q in quads if all(k in idx for k in q[:4])]
    ch = np.array([[idx[k] for k in q[:4]] for q in quads], int).reshape(-1, 4)
    v0 = np.array([q[4] for q in quads])
    free = ~fixed
    vel = np.zeros_like(x)
    for it in range(n_iter + 1500):
        stiff, lr = (1.0, 0.003) if it < n_iter else (4.0, 0.00075)  # final phase: exact bonds
        if it % 25 == 0:  # neighbour lists
            near = np.linalg.norm(x[ai] - x[aj], axis=1) < 6.0
            pi, pj, plim = ai[near], aj[near], alim[near]
            ei, ej = np.nonzero(free[:, None] & (np.linalg.norm(x[:, None] - env[None], axis=2) < 7.0))
        g = np.zeros_like(x)
        _, gr = _fb(x[ri], x[rj], r0, r0, rw * stiff)
        np.add.at(g, ri, gr)
        np.add.at(g, rj, -gr)
        _, gr = _fb(x[pi], x[pj], plim, 1e9, np.full(len(pi), 10.0))
        np.add.at(g, pi, gr)
        np.add.at(g, pj, -gr)
        _, gr = _fb(x[ei], env[ej], env_thr[ej], 1e9, np.full(len(ei), 10.0))
        np.add.at(g, ei, gr)
        if len(ch):
            a, b, c, e = (x[ch[:, k]] for k in range(4))
            u, v, w = a - b, c - b, e - b
            vol = (u * np.cross(v, w)).sum(1)
            f = (10.0 * stiff * (vol - v0))[:, None]
            ga, gc, ge = np.cross(v, w), np.cross(w, u), np.cross(u, v)
            for k, gk in ((0, ga), (2, gc), (3, ge), (1, -(ga + gc + ge))):
                np.add.at(g, ch[:, k], f * gk)
        g[~free] = 0.0
        vel = 0.9 * vel - lr * g
        step = np.linalg.norm(vel, axis=1, keepdims=True)
        vel = np.where(step > 0.1, vel * 0.1 / np.maximum(step, 1e-9), vel)
        x = x + vel
    for (r, nm), i in idx.items():
        if free[i]:
            bb[r][nm] = x[i]


def _room(sc: dict[str, Vec], r: int, placed: list) -> bool:
    """True when new side-chain atoms keep >= 3.0 A (3.4 A from clusters) from other residues."""
    if not sc:
        return True
    pos = np.array([p[0] for p in placed])
    res = np.array([p[1] for p in placed])
    bbn = np.array([p[2] in ("N", "CA", "C", "O") for p in placed])
    thr = np.where(np.array([p[3] for p in placed]), 3.4, 3.0)
    for nm, x in sc.items():
        d = np.linalg.norm(pos - x, axis=1)
        skip = (res == r) & ((~bbn) | (nm in ("CB", "CG")))  # own residue: only far side-chain atoms vs N/C/O
        skip |= (np.abs(res - r) == 1) & bbn & (nm == "CB")
        if np.any((d < thr) & ~skip):
            return False
    return True


# ----------------------------------------------------------------------------- designs
LINK_CLASS = {"SF4": "Fe-SG [4Fe-4S]", "F3S": "Fe-SG [3Fe-4S]", "FES": "Fe-SG [2Fe-2S]",
              "RSK": "Fe-SG [2Fe-2S]", "HEM": "Fe-NE2 His (heme)"}


def _slot_index(slots: list, lig: Lig) -> int:
    """Position of a ligand object in the slot list (identity, not equality)."""
    return next(i for i, s in enumerate(slots) if s is lig)


def build_design(name: str, title: str, sites: list[Site], hop_rule: list[tuple[float, float]]) -> Model:
    """Lay out cofactors and thread the chain; retry the threading with the next seed if a check fails."""
    cofs, ligs, poses = place_sites(sites)
    best: tuple[tuple[int, int], Model] | None = None
    for attempt in range(4):
        model = thread_chain(name, title, sites, cofs, ligs, poses, hop_rule, SEED + attempt)
        model.notes["seed"] = SEED + attempt
        coords = {(r.chain, r.seq, a[0]): a[2] for r in model.residues for a in r.atoms}
        score = (len(geometry_fails(model, coords, lambda *_: None)),
                 len(geometry_fails(model, coords, lambda *_: None, margin=0.08)))
        if best is None or score < best[0]:
            best = (score, model)
        if score == (0, 0):
            break
    return best[1]


def thread_chain(name: str, title: str, sites: list[Site], cofs: list[Cof], ligs: list[Lig],
                 poses: list[tuple[float, float, float]], hop_rule: list[tuple[float, float]], seed: int) -> Model:
    """Plan, relax and regularise the protein around placed cofactors; return the complete model."""
    slots, trace = chain_plan(sites, cofs, ligs)
    cof_xyz = np.vstack([c.xyz for c in cofs])
    is_cluster = np.concatenate([[c.code in ("SF4", "F3S", "FES") for _ in c.names] for c in cofs])
    obst, thr, ores, dp_thr = [], [], [], []
    for pos, cl in zip(cof_xyz, is_cluster):
        obst.append(pos), thr.append(4.2 if cl else 4.0), ores.append(-10), dp_thr.append(3.3 if cl else 3.1)
    for g in ligs:
        r = _slot_index(slots, g)
        for nm, pos in g.atoms.items():
            if nm != "CA":
                obst.append(pos), thr.append(3.6 if nm in ("N", "C") else 3.8), ores.append(r), dp_thr.append(3.0)
    obst, thr, ores, dp_thr = np.array(obst), np.array(thr), np.array(ores), np.array(dp_thr)
    ca = relax_trace(trace, slots, obst, thr, ores, seed)
    dp_obst = np.vstack([obst, ca])
    dp_res = np.concatenate([ores, np.arange(len(ca))])
    bb = backbone(ca, slots, dp_obst, np.concatenate([dp_thr, np.full(len(ca), 3.3)]), dp_res)
    env = [(p, 3.3 if cl else 3.1) for p, cl in zip(cof_xyz, is_cluster)]
    regularize(bb, slots, np.array([e[0] for e in env]), np.array([e[1] for e in env]))
    last = bb[len(ca) - 1]
    last["O"] = place(last["N"], last["CA"], last["C"], B_C_O, 117.0, -40.0)
    last["OXT"] = place(last["N"], last["CA"], last["C"], 1.25, 117.0, 140.0)
    residues, bonds = dress(ca, slots, bb, cof_xyz, is_cluster)
    table = []
    for k, (site, cof) in enumerate(zip(sites, cofs)):
        residues.append(Res("A", cof.seq, cof.code, True, list(zip(cof.names, cof.elems, cof.xyz))))
        bonds.extend((("A", cof.seq, a), ("A", cof.seq, b), cls, d0) for a, b, cls, d0 in cof.bonds)
        table.append({"kind": site.kind, "code": cof.code, "cls": cof.cls,
                      "keys": [("A", cof.seq, n) for n in cof.names],
                      "redox": [("A", cof.seq, n) for n in cof.redox],
                      "role": "entry" if k == 0 else ("exit" if k == len(sites) - 1 else "relay"),
                      "pose": tuple(round(v, 3) for v in poses[k])})
    for g in ligs:
        seq = _slot_index(slots, g) + 1
        kind = sites[g.cof].kind
        cls = "Fe-ND1 His (Rieske)" if g.lig_atom == "ND1" else LINK_CLASS[kind]
        bonds.append((("A", seq, g.lig_atom), ("A", cofs[g.cof].seq, g.metal), cls, g.dist))
    model = Model(name, title, residues, bonds, table, hop_rule)
    model.notes["motifs"] = {cofs[k].seq: [_slot_index(slots, g) + 1 for g in ligs if g.cof == k]
                             for k in range(len(cofs)) if any(g.cof == k for g in ligs)}
    return model


def recentre(model: Model, margin: float = 12.0) -> tuple[float, float, float]:
    """Shift all atoms into a positive P1 box; return the box edges."""
    allxyz = np.array([a[2] for r in model.residues for a in r.atoms])
    lo, hi = allxyz.min(0), allxyz.max(0)
    shift = margin - lo
    for r in model.residues:
        r.atoms = [(n, e, np.round(x + shift, 3)) for n, e, x in r.atoms]
    box = np.ceil(hi - lo + 2 * margin)
    return float(box[0]), float(box[1]), float(box[2])


def variant_misligated(base: Model) -> Model:
    """rb3: [4Fe-4S] #1 keeps 3 Cys (4th -> Ala), one Fe-SG of the [2Fe-2S] at 2.80 A, [4Fe-4S] #2 loses S3."""
    m = Model("rb3", "", [Res(r.chain, r.seq, r.name, r.het, list(r.atoms)) for r in base.residues],
              list(base.bonds), [dict(c) for c in base.cofactors], base.hop_rule, dict(base.notes))
    by_seq = {r.seq: r for r in m.residues}
    sf4a, sf4b, fes = 503, 504, 502
    ala = m.notes["motifs"][sf4a][-1]
    r = by_seq[ala]
    r.name, r.atoms = "ALA", [a for a in r.atoms if a[0] != "SG"]
    m.bonds = [b for b in m.bonds if ("A", ala, "SG") not in (b[0], b[1])]
    # stretched bond: turn SG about CA-CB (chi1) until Fe-SG = 2.80 A
    cys = by_seq[m.notes["motifs"][fes][0]]
    link = next(b for b in m.bonds if b[0] == ("A", cys.seq, "SG"))
    fe = {a[0]: a[2] for a in by_seq[fes].atoms}[link[1][2]]
    at = {a[0]: a[2] for a in cys.atoms}
    others = np.array([a[2] for rr in m.residues if rr is not cys for a in rr.atoms if not np.allclose(a[2], fe)])

    def sg_at(t: float) -> Vec:
        """SG turned by t degrees about the CA-CB axis."""
        return at["CB"] + rotmat(at["CB"] - at["CA"], t) @ (at["SG"] - at["CB"])

    grid = np.arange(0.0, 360.0, 1.0)
    dist = np.array([np.linalg.norm(sg_at(t) - fe) for t in grid])
    ok = [t for t, d, d2 in zip(grid, dist, np.roll(dist, -1)) if d < 2.80 <= d2]  # rising crossings
    best = max(ok, key=lambda t: (round(float(np.linalg.norm(others - sg_at(t), axis=1).min()), 3), -t))
    best = bisect(lambda t: float(np.linalg.norm(sg_at(t) - fe)), best, best + 1.0, 2.80)
    new_sg = np.round(sg_at(best), 3)
    cys.atoms = [(n, e, new_sg if n == "SG" else x) for n, e, x in cys.atoms]
    m.bonds = [(b[0], b[1], "Fe-SG stretched (intended)", 2.80) if b is link else b for b in m.bonds]
    r = by_seq[sf4b]
    r.atoms = [a for a in r.atoms if a[0] != "S3"]
    m.bonds = [b for b in m.bonds if ("A", sf4b, "S3") not in (b[0], b[1])]
    for c in m.cofactors:
        c["keys"] = [k for k in c["keys"] if k != ("A", sf4b, "S3")]
        c["redox"] = [k for k in c["redox"] if k != ("A", sf4b, "S3")]
    m.notes.update(mutated_to_ala=ala, mutated_metal=next(b[1] for b in base.bonds if b[0] == ("A", ala, "SG")),
                   stretched=(cys.seq, link[1][2]), missing_sulfide=(sf4b, "S3"))
    return m


def variant_split(base: Model) -> Model:
    """rb4: cluster atoms written as single-atom FE / S residues in chain B, numbered 1, 2, 3 ..."""
    m = Model("rb4", "", [], [], [], base.hop_rule, dict(base.notes))
    remap: dict[Key, Key] = {}
    nxt = 1
    for r in base.residues:
        if r.name in ("SF4", "F3S", "FES"):
            for nm, el, x in sorted(r.atoms, key=lambda a: (a[1] != "Fe", a[0])):
                resname = "FE" if el == "Fe" else "S"
                m.residues.append(Res("B", nxt, resname, True, [(resname, el, x)]))
                remap[(r.chain, r.seq, nm)] = ("B", nxt, resname)
                nxt += 1
        else:
            m.residues.append(r)
    m.bonds = [(remap.get(a, a), remap.get(b, b), cls, d) for a, b, cls, d in base.bonds]
    for c in base.cofactors:
        c2 = dict(c)
        c2["keys"] = [remap.get(k, k) for k in c["keys"]]
        c2["redox"] = [remap.get(k, k) for k in c["redox"]]
        m.cofactors.append(c2)
    return m


# ----------------------------------------------------------------------------- output
def _labels() -> Iterator[str]:
    """A, B, ..., Z, AA, BA, ... (label_asym_id generator)."""
    for n in itertools.count(1):
        for combo in itertools.product("ABCDEFGHIJKLMNOPQRSTUVWXYZ", repeat=n):
            yield "".join(reversed(combo))


def to_structure(model: Model, box: tuple[float, float, float], method: str,
                 resolution: float | None) -> gemmi.Structure:
    """Convert a model into a gemmi Structure (P1 box, title, method, resolution, entities)."""
    st = gemmi.Structure()
    st.name = model.name.upper()
    st.cell = gemmi.UnitCell(*box, 90.0, 90.0, 90.0)
    st.spacegroup_hm = "P 1"
    st.info["_struct.title"] = model.title
    st.info["_exptl.method"] = method
    if resolution is not None:
        st.resolution = resolution
        ri = gemmi.RefinementInfo()
        ri.id = "1"
        ri.resolution_high = resolution
        st.meta.refinement = [ri]
    gm = gemmi.Model(1)
    labels = _labels()
    entities: dict[str, gemmi.Entity] = {}
    poly_sub = next(labels)
    for chain_name in sorted({r.chain for r in model.residues}):
        ch = gemmi.Chain(chain_name)
        for r in (x for x in model.residues if x.chain == chain_name):
            res = gemmi.Residue()
            res.name, res.seqid = r.name, gemmi.SeqId(r.seq, " ")
            res.het_flag = "H" if r.het else "A"
            if r.het:
                res.subchain = next(labels)
                res.entity_type = gemmi.EntityType.NonPolymer
                ent = entities.setdefault(r.name, gemmi.Entity(str(len(entities) + 2)))
                ent.entity_type = gemmi.EntityType.NonPolymer
                ent.subchains = [*ent.subchains, res.subchain]
            else:
                res.subchain = poly_sub
                res.entity_type = gemmi.EntityType.Polymer
            for i, (nm, el, x) in enumerate(r.atoms):
                at = gemmi.Atom()
                at.name, at.element = nm, gemmi.Element(el)
                at.pos = gemmi.Position(*(float(v) for v in x))
                at.occ = 1.0
                wave = 0.5 + 0.5 * np.sin(0.31 * r.seq)
                at.b_iso = round(16.0 + 2.0 * wave + 0.4 * (i % 8) if r.het else
                                 15.0 + 10.0 * wave + 0.5 * min(i, 6), 2)
                res.add_atom(at)
            ch.add_residue(res)
        gm.add_chain(ch)
    st.add_model(gm)
    poly = gemmi.Entity("1")
    poly.entity_type = gemmi.EntityType.Polymer
    poly.polymer_type = gemmi.PolymerType.PeptideL
    poly.subchains = [poly_sub]
    poly.full_sequence = [r.name for r in model.residues if not r.het]
    st.entities.append(poly)
    for ent in entities.values():
        st.entities.append(ent)
    st.assign_label_seq_id()
    return st


def serialise(st: gemmi.Structure, filename: str) -> bytes:
    """File bytes for .cif, .pdb or .pdb.gz (gzip without name and with mtime 0)."""
    if filename.endswith(".cif"):
        return st.make_mmcif_document().as_string().encode()
    text = st.make_pdb_string(gemmi.PdbWriteOptions()).encode()
    if not filename.endswith(".gz"):
        return text
    buf = io.BytesIO()
    with gzip.GzipFile(filename="", mode="wb", fileobj=buf, mtime=0, compresslevel=9) as gz:
        gz.write(text)
    return buf.getvalue()


# ----------------------------------------------------------------------------- check
TOL = {"C-N peptide": 0.06, "N-CA": 0.05, "CA-C": 0.05, "C=O": 0.03, "Fe-SG [4Fe-4S]": 0.02,
       "Fe-SG [2Fe-2S]": 0.02, "Fe-SG [3Fe-4S]": 0.02, "Fe-ND1 His (Rieske)": 0.02,
       "Fe-NE2 His (heme)": 0.03, "Fe-SG stretched (intended)": 0.05}
CLUSTERS = ("SF4", "F3S", "FES")


def read_back(path: Path) -> tuple[dict[Key, Vec], dict[str, tuple[int, int]]]:
    """Coordinates by (chain, resnum, atom) and per-chain (residues, atoms) counts, read with gemmi."""
    st = gemmi.read_structure(str(path))
    coords, counts = {}, {}
    for ch in st[0]:
        n_at = 0
        for res in ch:
            for at in res:
                coords[(ch.name, res.seqid.num, at.name)] = np.array(at.pos.tolist())
                n_at += 1
        prev = counts.get(ch.name, (0, 0))
        counts[ch.name] = (prev[0] + len(ch), prev[1] + n_at)
    return coords, counts


def check_model(model: Model, path: Path, log: Callable[..., None] = print) -> list[str]:
    """Read the file back with gemmi, compare counts, then check its geometry; return the failures."""
    coords, counts = read_back(path)
    want: dict[str, tuple[int, int]] = {}
    for r in model.residues:
        n = want.get(r.chain, (0, 0))
        want[r.chain] = (n[0] + 1, n[1] + len(r.atoms))
    keys = [(r.chain, r.seq, a[0]) for r in model.residues for a in r.atoms]
    if counts != want or set(keys) != set(coords):
        return [f"read-back counts {counts} != intended {want}"]
    log(f"\n== {path.name}: {model.title}  [threading seed {model.notes.get('seed')}]")
    log("   read back with gemmi: " + ", ".join(f"chain {c}: {n[0]} residues / {n[1]} atoms"
                                                for c, n in sorted(counts.items())))
    return geometry_fails(model, coords, log)


def geometry_fails(model: Model, coords: dict[Key, Vec], log: Callable[..., None] = print,
                   margin: float = 0.0) -> list[str]:
    """Bond classes, Fe-SG-CB angles, contacts, cluster clearance, cofactor table and hops.

    ``margin`` tightens the cluster clearance (and the bond tolerances by an eighth of it) so that the
    build can prefer a model that passes with room to spare.
    """
    fails: list[str] = []
    keys = [(r.chain, r.seq, a[0]) for r in model.residues for a in r.atoms]
    classes: dict[str, list[tuple[float, float]]] = {}
    for a, b, cls, d0 in model.bonds:
        classes.setdefault(cls, []).append((float(np.linalg.norm(coords[a] - coords[b])), d0))
    log(f"   {'bond class':30s} {'n':>4s} {'min':>6s} {'max':>6s} {'nominal':>8s}")
    for cls in sorted(classes):
        vals = classes[cls]
        dev = max(abs(d - d0) for d, d0 in vals)
        nominal = sorted({round(d0, 2) for _, d0 in vals})
        nom = f"{nominal[0]:.3f}" if len(nominal) == 1 else f"{nominal[0]:.2f}-{nominal[-1]:.2f}"
        log(f"   {cls:30s} {len(vals):4d} {min(v for v, _ in vals):6.3f} {max(v for v, _ in vals):6.3f} {nom:>8s}")
        if dev > TOL.get(cls, 0.04) - margin / 8:
            fails.append(f"bond class {cls}: deviation {dev:.3f} A")
    # Fe-SG-CB angles of intact Cys ligands, CB-Fe distances
    angs, cbfe = [], []
    for a, b, cls, _ in model.bonds:
        if cls.startswith("Fe-SG") and "stretched" not in cls:
            cb = (a[0], a[1], "CB")
            angs.append(angle(coords[b], coords[a], coords[cb]))
        if cls.startswith("Fe-") and a[2] in ("SG", "ND1", "NE2"):
            cbfe.append(float(np.linalg.norm(coords[(a[0], a[1], "CB")] - coords[b])))
    if angs:
        log(f"   Fe-SG-CB angle {min(angs):.1f}-{max(angs):.1f} deg; ligand CB...Fe >= {min(cbfe):.2f} A")
        if min(angs) < 105 or max(angs) > 110 or min(cbfe) < 3.0:
            fails.append("Fe-SG-CB angle or CB...Fe distance out of range")
    # non-bonded contacts
    idx = {k: i for i, k in enumerate(keys)}
    xyz = np.array([coords[k] for k in keys])
    nb = [set() for _ in keys]
    for a, b, *_ in model.bonds:
        nb[idx[a]].add(idx[b])
        nb[idx[b]].add(idx[a])
    dmat = np.sqrt(((xyz[:, None] - xyz[None]) ** 2).sum(-1))
    np.fill_diagonal(dmat, 99.0)
    close = np.argwhere(np.triu(dmat < 2.2))
    bad = [(keys[i], keys[j], dmat[i, j]) for i, j in close if j not in nb[i]]
    for i, j in close:
        if j in nb[i] and dmat[i, j] > 2.6:
            bad.append((keys[i], keys[j], dmat[i, j]))
    adj = np.zeros((len(keys), len(keys)), np.float32)
    for i, others in enumerate(nb):
        adj[i, list(others)] = 1.0
    reach = np.eye(len(keys), dtype=np.float32) + adj
    reach = reach + reach @ adj
    reach = reach + reach @ adj
    nonb = adj == 0
    far = reach == 0
    log(f"   min non-bonded distance {dmat[nonb].min():.2f} A (all pairs), "
          f"{dmat[far].min():.2f} A (pairs > 3 bonds apart)")
    if bad:
        fails.append(f"{len(bad)} non-bonded pairs < 2.2 A, e.g. {bad[0]}")
    # protein atoms near cluster atoms
    het = {(r.chain, r.seq) for r in model.residues if r.het}
    clus = [k for c in model.cofactors if c["code"] in CLUSTERS for k in c["keys"]]
    prot = [i for i, k in enumerate(keys) if (k[0], k[1]) not in het]
    worst = 99.0
    for k in clus:
        i = idx[k]
        for j in prot:
            if j not in nb[i]:
                worst = min(worst, dmat[i, j])
    log(f"   closest non-ligand protein atom to a cluster atom: {worst:.2f} A")
    if worst < 3.0 + margin:
        fails.append(f"protein atom {worst:.2f} A from a cluster atom")
    fails += _cofactor_table(model, coords, log)
    fails += _hops(model, coords, log)
    fails += _special(model, coords, log)
    return fails


FE_FE = {"[4Fe-4S]": CUBE_FE_FE, "[3Fe-4S]": F3S_FE_FE, "[2Fe-2S]": RHOMB_FE_FE, "Rieske [2Fe-2S]": RHOMB_FE_FE}


def _cofactor_table(model: Model, coords: dict[Key, Vec], log: Callable[..., None] = print) -> list[str]:
    """Per cofactor: residue, class, Fe...Fe, ligands and the sequence motif they form."""
    fails = []
    res_names = {(r.chain, r.seq): r.name for r in model.residues}
    for c in model.cofactors:
        keys = set(c["keys"])
        fes = [k for k in c["keys"] if k[2].startswith("FE")]
        ffe = [float(np.linalg.norm(coords[a] - coords[b])) for a, b in itertools.combinations(fes, 2)]
        ligs = sorted((a, b, float(np.linalg.norm(coords[a] - coords[b]))) for a, b, cls, _ in model.bonds
                      if b in keys and cls.startswith("Fe-") and a not in keys)
        first = c["keys"][0]
        text = f"   {c['role']:5s} {c['cls']:16s} {first[0]}/{first[1]} {res_names[first[:2]]}"
        if len(ffe) > 1 or (ffe and c["cls"] != "heme b"):
            text += f"  Fe...Fe {min(ffe):.2f}-{max(ffe):.2f}"
            if abs(min(ffe) - FE_FE[c["cls"]]) > 0.03 or abs(max(ffe) - FE_FE[c["cls"]]) > 0.03:
                fails.append(f"{c['cls']} Fe...Fe off")
        log(text)
        if ligs:
            nums = [a[1] for a, _, _ in ligs]
            motif = "-".join(
                (f"x{nums[i] - nums[i - 1] - 1}-" if i else "") + res_names[(a[0], a[1])][0]
                for i, (a, _, _) in enumerate(ligs))
            log("         ligands: " + ", ".join(f"{res_names[a[:2]].title()} {a[0]}/{a[1]} {a[2]}-{b[2]} {d:.3f}"
                                             for a, b, d in ligs) + f"  motif {motif}")
    return fails


def _hops(model: Model, coords: dict[Key, Vec], log: Callable[..., None] = print) -> list[str]:
    """Edge-to-edge distances of consecutive cofactors against the design rule."""
    fails = []
    red = [np.array([coords[k] for k in c["redox"]]) for c in model.cofactors]
    labels = [f"{c['cls']} {c['keys'][0][0]}/{c['keys'][0][1]}" for c in model.cofactors]
    log(f"   {'hop':44s} {'edge (A)':>8s} {'rule':>10s} {'best bypass':>11s}")
    for i, (lo, hi) in enumerate(model.hop_rule):
        e = pair_min(red[i], red[i + 1])
        cross = min(pair_min(red[a], red[b]) for a in range(i + 1) for b in range(i + 1, len(red)))
        log(f"   {labels[i] + ' -> ' + labels[i + 1]:44s} {e:8.2f} {f'{lo:g}-{hi:g}':>10s} {cross:11.2f}")
        if not lo <= e <= hi:
            fails.append(f"hop {i} edge {e:.2f} outside {lo}-{hi}")
        if cross < e - 1e-6:
            fails.append(f"hop {i} is bypassed by a shorter cross-link ({cross:.2f} A)")
    cen = [r.mean(0) for r in red]
    axis = unit(cen[-1] - cen[0])
    bend = max(np.linalg.norm((c - cen[0]) - ((c - cen[0]) @ axis) * axis) for c in cen)
    span = float(np.linalg.norm(cen[-1] - cen[0]))
    log(f"   span entry->exit (redox-centroid distance) {span:.1f} A; largest off-axis offset {bend:.1f} A")
    if bend < 2.0:
        fails.append("wire is straight")
    return fails


def _special(model: Model, coords: dict[Key, Vec], log: Callable[..., None] = print) -> list[str]:
    """Checks of the deliberate defects of rb3."""
    fails, notes = [], model.notes
    if "mutated_to_ala" in notes:
        fe = coords[notes["mutated_metal"]]
        sg = min(np.linalg.norm(v - fe) for k, v in coords.items() if k[2] == "SG")
        seq, metal = notes["stretched"]
        st = np.linalg.norm(coords[("A", seq, "SG")] - coords[("A", 502, metal)])
        n_sf4 = sum(1 for k in coords if k[:2] == ("A", notes["missing_sulfide"][0]))
        log(f"   defects: A/{notes['mutated_to_ala']} ALA -> nearest SG to {notes['mutated_metal'][2]} "
              f"{sg:.2f} A; A/{seq} SG-Fe {st:.2f} A; SF4 A/{notes['missing_sulfide'][0]} has {n_sf4} atoms")
        if sg < 3.5 or abs(st - 2.80) > 0.05 or n_sf4 != 7:
            fails.append("rb3 defects not as designed")
    return fails


# ----------------------------------------------------------------------------- the example set
def _title(code: str, text: str) -> str:
    """Title line naming the invented scenario."""
    return f"{SCENARIO} {code} (invented design model): {text}"


RB1_SITES = [Site("FMN", 501, spin=0.0), Site("FES", 502, 7.8), Site("SF4", 503, 9.2), Site("SF4", 504, 10.1),
             Site("F3S", 505, 8.6), Site("UQ1", 506, 7.1)]
RB5_SITES = [Site("FMN", 501, spin=0.0), Site("RSK", 502, 7.9), Site("SF4", 503, 9.4), Site("HEM", 504, 8.8)]
WIRE = (6.0, 12.0)


def build_all() -> dict[str, tuple[bytes, Model]]:
    """Build every example; return file name -> (bytes, model)."""
    out: dict[str, tuple[bytes, Model]] = {}
    rb1 = build_design("rb1", _title("RB-1", "FMN entry, [2Fe-2S]-[4Fe-4S]-[4Fe-4S]-[3Fe-4S] relay, "
                                               "ubiquinone exit; sound wire"), RB1_SITES, [WIRE] * 5)
    box1 = recentre(rb1)
    rb3 = variant_misligated(rb1)
    rb3.title = _title("RB-3", "misligated variant of RB-1 (Cys-to-Ala, stretched Fe-SG, missing sulfide)")
    rb4 = variant_split(rb1)
    rb4.title = _title("RB-4", "RB-1 as a hand-built model writes it, clusters as single FE/S atoms")
    # rb2: the first [4Fe-4S] is pushed sideways until its downstream hop is an 18 A relay gap
    gap_sites = []
    for site, cof in zip(RB1_SITES, rb1.cofactors):
        s, lift, spin = cof["pose"]
        gap_sites.append(Site(site.kind, site.seq, site.edge, s, lift, spin))
    gap_sites[2] = Site("SF4", 503, 10.4, None, 0.0, None, gap_next=18.0)
    for site in gap_sites[4:]:  # downstream of the moved cluster: same edge targets as RB-1
        site.s = site.spin = None
    rb2 = build_design("rb2", _title("RB-2", "RB-1 with the middle [4Fe-4S] displaced, 18 A relay gap"),
                       gap_sites, [WIRE, WIRE, (17.0, 19.0), WIRE, WIRE])
    box2 = recentre(rb2)
    rb5 = build_design("rb5", _title("RB-5", "FMN entry, Rieske [2Fe-2S], [4Fe-4S], bis-His heme b exit"),
                       RB5_SITES, [WIRE] * 3)
    box5 = recentre(rb5)
    xray = "X-RAY DIFFRACTION"
    for fname, model, box, method, res in (("rb1_sound_wire.cif", rb1, box1, xray, 1.9),
                                           ("rb2_gap.pdb", rb2, box2, xray, 2.1),
                                           ("rb3_misligated.pdb.gz", rb3, box1, xray, 2.4),
                                           ("rb4_split_atoms.pdb", rb4, box1, "THEORETICAL MODEL", None),
                                           ("rb5_rieske_heme.cif", rb5, box5, xray, 1.8)):
        out[fname] = (serialise(to_structure(model, box, method, res), fname), model)
    return out


def main(argv: list[str] | None = None) -> int:
    """Build (or only verify) the examples; return the exit status."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=Path(__file__).resolve().parent, help="output directory")
    ap.add_argument("--check", action="store_true", help="do not write: rebuild, compare and check the files")
    args = ap.parse_args(argv)
    built = build_all()
    args.out.mkdir(parents=True, exist_ok=True)
    fails: list[str] = []
    for fname, (data, _) in built.items():
        path = args.out / fname
        if args.check:
            if not path.exists() or path.read_bytes() != data:
                fails.append(f"{fname}: file on disk differs from a fresh build")
        else:
            path.write_bytes(data)
    for fname, (data, model) in built.items():
        fails += [f"{fname}: {f}" for f in check_model(model, args.out / fname)]
    print("\nsha256")
    for fname, (data, _) in built.items():
        print(f"   {hashlib.sha256(data).hexdigest()}  {fname}")
    if fails:
        print("\nCHECK FAILED:\n  " + "\n  ".join(fails), file=sys.stderr)
        return 1
    print("\nall design constraints hold")
    return 0


if __name__ == "__main__":
    sys.exit(main())
