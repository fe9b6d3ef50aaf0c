"""Synthetic cofactors built in code for the role and ring tests (idealised geometry).

Ring systems are drawn on a flat hexagonal lattice (C-C and C-N 1.40 Å, a
common-practice aromatic bond length, no source); the element pattern alone
tells a flavin (isoalloxazine: benzo + pyrazine + pyrimidine rings) from a
molybdopterin (pyran + pyrazine + pyrimidine, dithiolene S on the pyran ring).
Mo-S(dithiolene) 2.4 Å and Mo=O 1.7 Å are typical values (from memory, Hille
1996 Chem Rev 96:2757 reviews them). Atom and residue names can be scrambled
to ``UNL`` / ``X1``... so that only geometry can tell the groups apart.
"""

from __future__ import annotations

import gemmi
import numpy as np

from tests.synth import _atom, _residue

BOND = 1.40
_ANG = {30: 0, 90: 1, 150: 2, 210: 3, 270: 4, 330: 5}


def _hexagon(cx: float) -> dict[int, np.ndarray]:
    return {
        a: np.array([cx + BOND * np.cos(np.radians(a)), BOND * np.sin(np.radians(a)), 0.0])
        for a in _ANG
    }


def tricycle(kind: str) -> list[tuple[str, str, np.ndarray]]:
    """Atoms (name, element, xyz) of a flavin (``"flavin"``) or a pyranopterin (``"pterin"``) ring system.

    Rings sit in a row along x (left ring 0, middle ring 1, right ring 2), in
    the z = 0 plane. The middle ring carries N at 90° and 270° (pyrazine); the
    right ring is the pyrimidine (N at 30° and 270°) with an exocyclic O at 90°
    and an O (flavin) or amino N (pterin) at 330°.
    """
    step = 2 * BOND * np.cos(np.radians(30))
    rings = [_hexagon(k * step) for k in range(3)]
    atoms: list[tuple[str, str, np.ndarray]] = []

    def add(name: str, el: str, xyz: np.ndarray) -> None:
        for _, _, p in atoms:
            if np.linalg.norm(p - xyz) < 0.1:
                return
        atoms.append((name, el, np.asarray(xyz, dtype=float)))

    def out(r: int, a: int, d: float) -> np.ndarray:
        v = rings[r][a]
        u = v - np.array([r * step, 0.0, 0.0])
        return v + d * u / np.linalg.norm(u)

    # right ring: pyrimidine
    r2 = rings[2]
    add("C4A", "C", r2[150])
    add("C4", "C", r2[90])
    add("N3", "N", r2[30])
    add("C2", "C", r2[330])
    add("N1", "N", r2[270])
    add("C10A", "C", r2[210])
    add("O4", "O", out(2, 90, 1.23))
    add("O2" if kind == "flavin" else "N2", "O" if kind == "flavin" else "N", out(2, 330, 1.30))
    # middle ring: pyrazine
    r1 = rings[1]
    add("N5", "N", r1[90])
    add("N10", "N", r1[270])
    add("C5A", "C", r1[150])
    add("C9A", "C", r1[210])
    # left ring
    r0 = rings[0]
    if kind == "flavin":
        for k, a in enumerate((90, 150, 210, 270)):
            add(f"C{6 + k}", "C", r0[a])
        add("C7M", "C", out(0, 150, 1.50))
        add("C8M", "C", out(0, 210, 1.50))
        add("C1'", "C", out(1, 270, 1.47))
        add("C2'", "C", out(1, 270, 2.9))
    else:
        add("C1'", "C", r0[90])
        add("C2'", "C", r0[150])
        add("C3'", "C", r0[210])
        add("O3'", "O", r0[270])
        add("S1'", "S", out(0, 90, 1.75))
        add("S2'", "S", out(0, 150, 1.75))
        add("C4'", "C", out(0, 210, 1.52))
        add("O4'", "O", out(0, 210, 2.9))
    return atoms


def _dithiolene_mo(pterin: list[tuple[str, str, np.ndarray]], mo_s: float = 2.4) -> np.ndarray:
    s = [p for n, e, p in pterin if e == "S"]
    mid = (s[0] + s[1]) / 2
    half = np.linalg.norm(s[0] - s[1]) / 2
    centre = np.mean([p for _, _, p in pterin], axis=0)
    u = mid - centre
    u -= np.dot(u, s[0] - s[1]) / np.dot(s[0] - s[1], s[0] - s[1]) * (s[0] - s[1])
    u /= np.linalg.norm(u)
    return mid + np.sqrt(mo_s**2 - half**2) * u


def _structure(residues: list[gemmi.Residue]) -> gemmi.Structure:
    ch = gemmi.Chain("A")
    for r in residues:
        ch.add_residue(r)
    st = gemmi.Structure()
    st.name = "SYNTH"
    m = gemmi.Model(1)
    m.add_chain(ch)
    st.add_model(m)
    st.setup_entities()
    return st


def _res(name: str, num: int, atoms, scramble: bool, offset=(0.0, 0.0, 0.0)) -> gemmi.Residue:
    r = _residue("UNL" if scramble else name, num, het=True)
    off = np.asarray(offset, dtype=float)
    for k, (n, e, p) in enumerate(atoms, start=1):
        r.add_atom(_atom(f"X{k}" if scramble else n, e, p + off))
    return r


def flavin_and_mo_bis_pterin(scramble: bool = True, metal: str = "MO") -> gemmi.Structure:
    """A flavin far from a Mo (or W) bound by the dithiolenes of two pyranopterins.

    Residues (chain A): 1 the flavin, 2 and 3 the pterins, 4 the metal with one
    oxo O. With ``scramble`` every residue is ``UNL`` and atoms are ``X1``...
    """
    p1 = tricycle("pterin")
    mo = _dithiolene_mo(p1)
    p2 = [(n, e, 2 * mo - p) for n, e, p in p1]  # inversion through the metal: second dithiolene
    fl = [(n, e, p + np.array([0.0, 0.0, 25.0])) for n, e, p in tricycle("flavin")]
    metal_res = _residue("UNL" if scramble else metal, 4, het=True)
    metal_res.add_atom(_atom("X1" if scramble else metal, metal.capitalize(), mo))
    metal_res.add_atom(_atom("X2" if scramble else "O1", "O", mo + np.array([0.0, 0.0, 1.7])))
    return _structure([
        _res("FMN", 1, fl, scramble),
        _res("MGD", 2, p1, scramble),
        _res("MGD", 3, p2, scramble),
        metal_res,
    ])


def molybdate_on_lysine(code: str = "MOO") -> gemmi.Structure:
    """A MoO4 tetrahedron (Mo-O 1.75 Å) held by a surface Lys NZ at 2.9 Å from one O (a salt bridge)."""
    mo = np.array([5.0, 5.0, 5.0])
    dirs = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], dtype=float) / np.sqrt(3)
    moo = _residue(code, 301, het=True)
    moo.add_atom(_atom("MO", "Mo", mo))
    for k, d in enumerate(dirs, start=1):
        moo.add_atom(_atom(f"O{k}", "O", mo + 1.75 * d))
    nz = mo + (1.75 + 2.9) * dirs[0]
    lys = _residue("LYS", 42)
    chain = [("N", "N", 4.5), ("CA", "C", 3.2), ("CB", "C", 2.0), ("CD", "C", 1.0), ("NZ", "N", 0.0)]
    for name, el, off in chain:
        lys.add_atom(_atom(name, el, nz + off * dirs[0]))
    return _structure([lys, moo])


def big_metal_residue(n_atoms: int = 60, metal: str = "MO") -> gemmi.Structure:
    """One residue of ``n_atoms`` atoms: a zig-zag carbon chain over 20+ Å with a metal near the far end.

    The first atom is far (> 12.5 Å) from the metal, the case that crashed the
    environment look-up. Two S on the chain's last carbons bind the metal.
    """
    atoms = []
    for k in range(n_atoms - 3):
        atoms.append((f"C{k}", "C", np.array([1.25 * k, 0.8 * (k % 2), 0.0])))
    end = atoms[-1][2]
    s1 = end + np.array([0.0, 0.0, 1.8])
    s2 = atoms[-2][2] + np.array([0.0, 0.0, 1.8])
    m = (s1 + s2) / 2 + np.array([0.0, 0.0, 2.2])
    atoms += [("S1", "S", s1), ("S2", "S", s2), ("M1", metal.capitalize(), m)]
    return _structure([_res("UNL", 1, atoms, scramble=False)])


def many_iron_residue(n_fe: int = 40) -> gemmi.Structure:
    """One residue holding ``n_fe`` Fe atoms on a 2.7 Å grid (all in metal-metal contact)."""
    atoms = []
    k = 0
    for x in range(5):
        for y in range(4):
            for z in range(3):
                if k < n_fe:
                    atoms.append((f"FE{k}", "Fe", np.array([2.7 * x, 2.7 * y, 2.7 * z])))
                    k += 1
    return _structure([_res("UNL", 1, atoms, scramble=False)])


def quinone(kind: str, scramble: bool = True) -> gemmi.Structure:
    """A quinone built on the hexagon lattice: ``"benzo"``, ``"naphtho"`` (para O) or ``"catechol"`` (ortho O).

    C=O 1.23 Å (common practice, no source); a methyl and a short tail make the
    residue look like a natural quinone head group.
    """
    step = 2 * BOND * np.cos(np.radians(30))
    r0 = _hexagon(0.0)
    atoms: list[tuple[str, str, np.ndarray]] = [(f"C{_ANG[a] + 1}", "C", p) for a, p in r0.items()]
    o_at = (90, 150) if kind == "catechol" else (90, 270)
    for k, a in enumerate(o_at, start=1):
        atoms.append((f"O{k}", "O", r0[a] * (1 + 1.23 / BOND)))
    subst = (210, 270) if kind == "catechol" else (150, 210)
    atoms.append(("CM", "C", r0[subst[0]] * (1 + 1.5 / BOND)))
    atoms.append(("CT", "C", r0[subst[1]] * (1 + 1.5 / BOND)))
    if kind == "naphtho":
        r1 = _hexagon(step)
        for a in (90, 30, 330, 270):
            atoms.append((f"C{11 + _ANG[a]}", "C", r1[a]))
    return _structure([_res("PQN" if kind == "naphtho" else "PL9", 1, atoms, scramble)])


def two_state_cluster(code_b: str = "SF4", shift: float = 0.6, occ: tuple[float, float] = (0.6, 0.4)) -> gemmi.Structure:
    """A [4Fe-4S] with its four Cys, modelled twice: residue 101 and residue 102 (code ``code_b``) moved by ``shift`` Å."""
    from tests.synth import four_fe_cluster

    st = four_fe_cluster()
    ch = st[0]["A"]
    first = ch[len(ch) - 1]
    twin = _residue(code_b, 102, het=True)
    for a in first:
        a.occ = occ[0]
        b = _atom(a.name, a.element.name, np.asarray(a.pos.tolist()) + np.array([shift, 0.0, 0.0]))
        b.occ = occ[1]
        twin.add_atom(b)
    ch.add_residue(twin)
    return st


def two_iron_positions(gap: float = 1.2) -> gemmi.Structure:
    """One Fe modelled at two positions ``gap`` Å apart (residues FE2 601 and 602, occupancy 0.5 each),
    held by three His-like N donors (residue names HIS, atoms NE2) at 2.1 Å from the midpoint."""
    mid = np.array([0.0, 0.0, 0.0])
    residues = []
    for k, d in enumerate(np.array([[1, 0, 0], [0, 1, 0], [0, 0, 1]], dtype=float)):
        his = _residue("HIS", 10 + k)
        ne2 = mid - 2.1 * d
        his.add_atom(_atom("NE2", "N", ne2))
        his.add_atom(_atom("CE1", "C", ne2 - 1.33 * d))
        residues.append(his)
    for k, sign in enumerate((-1, 1)):
        r = _residue("FE2", 601 + k, het=True)
        a = _atom("FE", "Fe", mid + sign * np.array([gap / 2, -gap / 2, 0.0]) / np.sqrt(2))
        a.occ = 0.5
        r.add_atom(a)
        residues.append(r)
    return _structure(residues)


def _his(num: int, metal: np.ndarray, direction, d: float = 2.05) -> gemmi.Residue:
    """A His whose NE2 binds ``metal`` at ``d`` Å along ``direction`` (ring atoms further out)."""
    u = np.asarray(direction, dtype=float)
    u /= np.linalg.norm(u)
    p = _perp_any(u)
    ne2 = metal + d * u
    r = _residue("HIS", num)
    for name, el, xyz in (("NE2", "N", ne2), ("CE1", "C", ne2 + 1.32 * (0.5 * u + 0.87 * p)),
                          ("CD2", "C", ne2 + 1.37 * (0.5 * u - 0.87 * p)), ("CG", "C", ne2 + 2.2 * u),
                          ("CB", "C", ne2 + 3.7 * u)):
        r.add_atom(_atom(name, el, xyz))
    return r


def _perp_any(u: np.ndarray) -> np.ndarray:
    v = np.cross(u, [0.0, 0.0, 1.0])
    if np.linalg.norm(v) < 1e-3:
        v = np.cross(u, [0.0, 1.0, 0.0])
    return v / np.linalg.norm(v)


def _ligand(resname: str, atom: str, el: str, num: int, metal: np.ndarray, direction, d: float) -> gemmi.Residue:
    u = np.asarray(direction, dtype=float)
    u /= np.linalg.norm(u)
    r = _residue(resname, num)
    x = metal + d * u
    r.add_atom(_atom(atom, el, x))
    r.add_atom(_atom("CB" if resname == "CYS" else "CG", "C", x + 1.81 * u))
    return r


def copper(num: int, xyz) -> gemmi.Residue:
    r = _residue("CU", num, het=True)
    r.add_atom(_atom("CU", "Cu", xyz))
    return r


def porphyrin(code: str, num: int, fe_xyz) -> gemmi.Residue:
    """An Fe porphyrin core in the xy plane: Fe, four pyrrole rings (N 2.0 Å from Fe) and four meso C."""
    fe = np.asarray(fe_xyz, dtype=float)
    r = _residue(code, num, het=True)
    r.add_atom(_atom("FE", "Fe", fe))
    side = 1.38
    rad = side / (2 * np.sin(np.radians(36)))
    alphas = []
    for k in range(4):
        ang = np.radians(90 * k)
        u = np.array([np.cos(ang), np.sin(ang), 0.0])
        v = np.array([-np.sin(ang), np.cos(ang), 0.0])
        c = fe + (2.0 + rad) * u
        for j in range(5):
            t = np.radians(180 + 72 * j)
            x = c + rad * (np.cos(t) * u + np.sin(t) * v)
            name = "N" + "ABCD"[k] if j == 0 else f"C{j}{'ABCD'[k]}"
            r.add_atom(_atom(name, "N" if j == 0 else "C", x))
            if j in (1, 4):
                alphas.append((k, j, x))
    for k in range(4):
        a = next(x for kk, j, x in alphas if kk == k and j == 1)
        b = next(x for kk, j, x in alphas if kk == (k + 1) % 4 and j == 4)
        mid = (a + b) / 2
        out = mid - fe
        out[2] = 0.0
        r.add_atom(_atom(f"CH{'ABCD'[k]}", "C", mid + 0.5 * out / np.linalg.norm(out)))
    return r


def oxidase_site() -> gemmi.Structure:
    """Heme a (bis-His, residue 1) 14 Å from heme a3 (residue 2: one His, CuB 4.8 Å above its Fe, 3 His on CuB)."""
    fe_a = np.array([0.0, 0.0, 0.0])
    fe_a3 = np.array([14.0, 0.0, 0.0])
    cub = fe_a3 + np.array([0.0, 0.0, 4.8])
    res = [
        _his(61, fe_a, (0, 0, 1)), _his(378, fe_a, (0, 0, -1)), _his(376, fe_a3, (0, 0, -1)),
        _his(240, cub, (1, 0, 0.3)), _his(290, cub, (-0.5, 0.87, 0.3)), _his(291, cub, (-0.5, -0.87, 0.3)),
        porphyrin("HEA", 1, fe_a), porphyrin("HEA", 2, fe_a3), copper(3, cub),
    ]
    return _structure(res)


def copper_sites(with_type2: bool = True) -> gemmi.Structure:
    """Type 1 Cu (2 His, Cys, Met) 20 Å from a trinuclear cluster (type 3 pair 3.6 Å apart + type 2 Cu),
    and a Cu with no protein ligand 30 Å away. Without ``with_type2`` the pair alone is a type 3 site."""
    t1 = np.array([0.0, 0.0, 0.0])
    res = [_his(10, t1, (1, 0, 0), 2.0), _his(11, t1, (-0.5, 0.87, 0), 2.0),
           _ligand("CYS", "SG", "S", 12, t1, (-0.5, -0.87, 0), 2.15), _ligand("MET", "SD", "S", 13, t1, (0, 0, 1), 2.9)]
    base = np.array([20.0, 0.0, 0.0])
    t3a, t3b, t2 = base + np.array([-1.8, 0, 0]), base + np.array([1.8, 0, 0]), base + np.array([0, 3.3, 0])
    n = 20
    for cu, dirs in ((t3a, ((-1, 0, 0), (0, -1, 0.5), (0, -1, -0.5))),
                     (t3b, ((1, 0, 0), (0, -1, 0.5), (0, -1, -0.5))),
                     *(((t2, ((0, 1, 0), (1, 0.5, 0))),) if with_type2 else ())):
        for d in dirs:
            res.append(_his(n, cu, d, 2.05))
            n += 1
    res += [copper(301, t1), copper(302, t3a), copper(303, t3b)]
    res += [copper(304, t2)] if with_type2 else []
    res += [copper(305, (50.0, 0, 0))]
    return _structure(res)


def h_cluster() -> gemmi.Structure:
    """A [4Fe-4S] whose fourth Cys SG also binds one Fe of a 2Fe unit (Fe-Fe 2.6 Å, two thiolate S
    bridges carrying C, CO/CN-like C=O on each Fe): the H-cluster layout (Peters et al. 1998 Science 282:1853)."""
    from tests.synth import FE_SG, cube, cys

    centre = np.array([10.0, 10.0, 10.0])
    fe, s = cube(centre)
    ch = gemmi.Chain("A")
    for k, num in enumerate((8, 11, 14, 18)):
        ch.add_residue(cys(num, fe[k], centre))
    cl = _residue("SF4", 101, het=True)
    for k in range(4):
        cl.add_atom(_atom(f"FE{k + 1}", "Fe", fe[k]))
        cl.add_atom(_atom(f"S{k + 1}", "S", s[k]))
    ch.add_residue(cl)
    u = (fe[3] - centre) / np.linalg.norm(fe[3] - centre)
    sg = fe[3] + FE_SG * u
    p = _perp_any(u)
    q = np.cross(u, p)
    fe1 = sg + 2.3 * (0.6 * u - 0.8 * p)  # away from the Cys CB, which lies along +p
    fe2 = fe1 + 2.6 * q
    mid = (fe1 + fe2) / 2
    w = (fe1 - sg) / np.linalg.norm(fe1 - sg)
    p = q  # the Fe-Fe axis, for the CO/CN-like ligands below
    two = _residue("UNL", 102, het=True)
    two.add_atom(_atom("FE1", "Fe", fe1))
    two.add_atom(_atom("FE2", "Fe", fe2))
    for k, sign in enumerate((1, -1), start=1):
        sx = mid + sign * 1.6 * np.cross(p, w) + 0.4 * w
        two.add_atom(_atom(f"S{k}", "S", sx))
        two.add_atom(_atom(f"C{k}", "C", sx + 1.82 * w))
    for k, (f, d) in enumerate(((fe1, p * -1), (fe2, p)), start=1):
        c = f + 1.8 * d
        two.add_atom(_atom(f"C{k + 2}", "C", c))
        two.add_atom(_atom(f"O{k + 2}", "O", c + 1.15 * d))
    ch.add_residue(two)
    st = gemmi.Structure()
    st.name = "SYNTH"
    m = gemmi.Model(1)
    m.add_chain(ch)
    st.add_model(m)
    st.setup_entities()
    return st


_OCTAHEDRON = ((1, 0, 0), (-1, 0, 0), (0, 1, 0), (0, -1, 0), (0, 0, 1), (0, 0, -1))


def mononuclear_site(metal: str, ligands: list[tuple[str, str, str, float]], code: str | None = None,
                     num: int = 501) -> gemmi.Residue | gemmi.Structure:
    """One metal ion (residue ``code``, default the element) at the origin with ligands on octahedral directions.

    ``ligands`` holds ``(residue name, atom name, element, distance in Å)``; a ``HIS`` binds by NE2
    with its ring further out, ``HOH`` is a water, anything else a two-atom stub (donor + carbon).
    """
    xyz = np.zeros(3)
    residues = []
    for k, ((resname, atom, el, d), u) in enumerate(zip(ligands, _OCTAHEDRON)):
        num_l = 10 + 7 * k
        if resname == "HIS":
            residues.append(_his(num_l, xyz, u, d))
        elif resname == "HOH":
            w = _residue("HOH", 900 + k, het=True)
            w.add_atom(_atom("O", "O", xyz + d * np.asarray(u, dtype=float)))
            residues.append(w)
        else:
            residues.append(_ligand(resname, atom, el, num_l, xyz, u, d))
    ion = _residue(code or metal.upper(), num, het=True)
    ion.add_atom(_atom(metal.upper(), metal.capitalize(), xyz))
    residues.append(ion)
    return _structure(residues)


#: Ligand sets (residue, atom, element, distance Å); distances typical of each metal (from memory,
#: Harding 2006 Acta Cryst D62:678 tabulates them: M-N(His) about 2.1-2.2, Zn-S(Cys) 2.3, Ca-O 2.4, Mg-O 2.1).
SOD_SET = [("HIS", "NE2", "N", 2.15), ("HIS", "NE2", "N", 2.15), ("HIS", "NE2", "N", 2.15), ("ASP", "OD2", "O", 2.05),
           ("HOH", "O", "O", 2.2)]
ZN_CYS4 = [("CYS", "SG", "S", 2.33)] * 4
CA_SITE = [("ASP", "OD1", "O", 2.4), ("ASP", "OD1", "O", 2.4), ("GLU", "OE1", "O", 2.45), ("LEU", "O", "O", 2.4),
           ("HOH", "O", "O", 2.45), ("HOH", "O", "O", 2.45)]
MG_ONE_ASP = [("ASP", "OD1", "O", 2.1), ("HOH", "O", "O", 2.1), ("HOH", "O", "O", 2.1), ("HOH", "O", "O", 2.1)]


def altloc_metal(metal: str = "FE", gap: float = 1.5, occ: tuple[float, float] = (0.6, 0.4)) -> gemmi.Structure:
    """A metal modelled at two positions ``gap`` Å apart inside one residue (altloc A and B, same atom name),
    among three His and one Asp at 2.15 Å from the midpoint (residue named after the element, number 601)."""
    st = mononuclear_site(metal, SOD_SET[:4], num=601)
    ch = st[0]["A"]
    ion = _residue(ch[len(ch) - 1].name, 601, het=True)
    u = np.array([1.0, 1.0, 1.0]) / np.sqrt(3)
    for label, sign, o in (("A", 1.0, occ[0]), ("B", -1.0, occ[1])):
        a = _atom(metal.upper(), metal.capitalize(), sign * 0.5 * gap * u)
        a.altloc, a.occ = label, o
        ion.add_atom(a)
    del ch[len(ch) - 1]
    ch.add_residue(ion)
    return st


def altloc_cluster(shift: float = 0.6, occ: tuple[float, float] = (0.6, 0.4)) -> gemmi.Structure:
    """The [4Fe-4S] of :func:`tests.synth.four_fe_cluster` in two positions inside its one residue:
    altloc A as built, altloc B moved ``shift`` Å along x (occupancies ``occ``)."""
    from tests.synth import four_fe_cluster

    st = four_fe_cluster()
    ch = st[0]["A"]
    res = ch[len(ch) - 1]
    atoms = [res[i].clone() for i in range(len(res))]
    twin = _residue(res.name, res.seqid.num, het=True)
    for label, dx, o in (("A", 0.0, occ[0]), ("B", shift, occ[1])):
        for a in atoms:
            b = a.clone()
            b.pos = gemmi.Position(a.pos.x + dx, a.pos.y, a.pos.z)
            b.altloc, b.occ = label, o
            twin.add_atom(b)
    del ch[len(ch) - 1]
    ch.add_residue(twin)
    return st
