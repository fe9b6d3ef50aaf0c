"""Checks of a parsed structure that gemmi does not make: absurd values, bad cells, giant residues.

- a coordinate beyond :data:`MAX_COORDINATE` Å is refused (:class:`CoordinateError`):
  no deposited structure spans that far, and distances from such numbers overflow;
- a unit cell that is not a cell (an angle of 0° or 180° or more, angles that do not
  close, a zero or non-finite volume) is dropped with a note, so no symmetry mate is
  made from it;
- a residue of more than :data:`MAX_RESIDUE_ATOMS` atoms is refused: it is not a
  chemical component, and the per-residue work of the cofactor search grows with
  the square of its size;
- more than :data:`MAX_METAL_AGGREGATE` metal atoms chained by metal-metal contacts
  (≤ 3 Å) is refused: that is a metal lattice, not a cofactor, and the metal-site
  checks would grow with the square of its size;
- occupancies above 1, below 0 or NaN are noted (they make the altloc choice and
  any occupancy-weighted number meaningless).
"""

from __future__ import annotations

import itertools
import math

import gemmi

from fescan.core.errors import CoordinateError, StructureFileError

__all__ = ["MAX_COORDINATE", "MAX_RESIDUE_ATOMS", "MAX_METAL_AGGREGATE", "check_metal_aggregates", "check_extent", "check_cell",
           "check_residue_sizes", "occupancy_notes"]

#: Largest |x|, |y|, |z| accepted, in Å. The PDB format's 8.3 columns stop at 9999.999
#: (wwPDB format guide 3.3, ATOM record), and the largest assemblies span ~2000 Å.
MAX_COORDINATE = 1.0e4

#: Most atoms one residue may hold. The largest wwPDB CCD components have a few
#: hundred atoms (from memory); 5000 leaves a wide margin.
MAX_RESIDUE_ATOMS = 5000

#: Most metal atoms one chain of metal-metal contacts (≤ METAL_CONTACT Å) may hold. The
#: largest metal clusters of proteins hold 8 metals (FeMo cofactor, P-cluster; Einsle et al.
#: 2002, Science 297:1696); polyoxometalates in Mo/W storage proteins a few dozen.
MAX_METAL_AGGREGATE = 64
METAL_CONTACT = 3.0
_METALS = gemmi.Selection(
    "[Li,Na,K,Rb,Cs,Be,Mg,Ca,Sr,Ba,Sc,Ti,V,Cr,Mn,Fe,Co,Ni,Cu,Zn,Y,Zr,Nb,Mo,Tc,Ru,Rh,Pd,Ag,Cd,Hf,Ta,W,Re,Os,"
    "Ir,Pt,Au,Hg,Al,Ga,In,Sn,Tl,Pb,Bi,La,Ce,Pr,Nd,Sm,Eu,Gd,Tb,Dy,Ho,Er,Tm,Yb,Lu,Th,U]")

# An ATOM/HETATM occupancy (columns 55-60) that is negative or above 1.


def check_extent(name: str, st: gemmi.Structure) -> None:
    """Raise :class:`CoordinateError` when a coordinate of any model is beyond ±MAX_COORDINATE Å."""
    box = st.calculate_box()
    lo, hi = box.minimum, box.maximum
    worst = max(-lo.x, -lo.y, -lo.z, hi.x, hi.y, hi.z)
    if not math.isfinite(worst) or worst <= MAX_COORDINATE:  # inf: no atoms
        return
    for model in st:
        for ch in model:
            for res in ch:
                for atom in res:
                    p = atom.pos
                    if max(abs(p.x), abs(p.y), abs(p.z)) > MAX_COORDINATE:
                        raise CoordinateError(
                            f"{name}: atom {atom.name} of {res.name} {ch.name}/{res.seqid} is at "
                            f"({p.x:.6g}, {p.y:.6g}, {p.z:.6g}) Å, beyond ±{MAX_COORDINATE:g} Å: "
                            "not a real coordinate")


def check_cell(st: gemmi.Structure) -> tuple[str, ...]:
    """Drop a unit cell that is not one (so no symmetry mate is made from it); return a note."""
    c = st.cell
    if not c.is_crystal():
        return ()
    values = (c.a, c.b, c.c, c.alpha, c.beta, c.gamma)
    al, be, ga = (math.radians(v) for v in values[3:])
    # volume factor of a triclinic cell: 1 - cos²α - cos²β - cos²γ + 2 cosα cosβ cosγ > 0
    factor = (1 - math.cos(al) ** 2 - math.cos(be) ** 2 - math.cos(ga) ** 2
              + 2 * math.cos(al) * math.cos(be) * math.cos(ga)) if all(map(math.isfinite, values)) else -1.0
    bad = (not all(math.isfinite(v) for v in values) or min(values[:3]) <= 0
           or not all(0 < v < 180 for v in values[3:]) or factor <= 1e-9)
    if not bad:
        return ()
    shown = ", ".join(f"{v:g}" for v in values)
    st.cell = gemmi.UnitCell()
    return (f"the unit cell ({shown}) is not a valid cell (angles must be between 0 and 180° and close a "
            "volume): ignored, no crystal-symmetry mates",)


def check_residue_sizes(name: str, model: gemmi.Model) -> None:
    """Raise :class:`StructureFileError` for a residue of more than MAX_RESIDUE_ATOMS atoms."""
    if model.count_atom_sites() <= MAX_RESIDUE_ATOMS:
        return
    for ch in model:
        for res in ch:
            if len(res) > MAX_RESIDUE_ATOMS:
                raise StructureFileError(
                    f"{name}: residue {res.name} {ch.name}/{res.seqid} has {len(res)} atoms, more than the "
                    f"{MAX_RESIDUE_ATOMS} of any chemical component: refused (damaged or generated file?)")


def occupancy_notes(model: gemmi.Model, suspect: bool = False) -> tuple[str, ...]:
    """Notes on occupancies that are NaN, negative or above 1.

    The whole-model test is gemmi's occupancy sum (NaN as soon as one is NaN; above
    the atom count when many are above 1), or ``suspect`` (from
    :func:`fescan.structure.pdb_lines.screen_pdb_records`). Only then are atoms looked at, to count them.
    """
    total = model.count_occupancies()
    suspect = suspect or not (math.isfinite(total) and 0 <= total <= model.count_atom_sites())
    if not suspect:
        return ()
    nan = high = low = 0
    first = ""
    for ch in model:
        for res in ch:
            for atom in res:
                occ = atom.occ
                if math.isnan(occ):
                    nan += 1
                elif occ > 1.0 + 1e-6:
                    high += 1
                elif occ < 0:
                    low += 1
                else:
                    continue
                if not first:
                    first = f"{atom.name} of {res.name} {ch.name}/{res.seqid} ({occ:g})"
    if not (nan or high or low):
        return ()
    parts = [f"{k} {v}" for k, v in (("NaN", nan), ("above 1", high), ("negative", low)) if v]
    return (f"occupancies out of range ({', '.join(parts)}; first: {first}): the altloc choice and "
            "occupancy-weighted values are unreliable",)


def check_metal_aggregates(name: str, model: gemmi.Model) -> None:
    """Raise :class:`StructureFileError` for a chain of more than MAX_METAL_AGGREGATE metal contacts.

    Cheap for real entries: the metal atoms are copied out by gemmi (C++), and only
    when there are more than MAX_METAL_AGGREGATE of them are their contacts looked at
    (a neighbour grid, then connected components).
    """
    metals = _METALS.copy_model_selection(model)
    n = metals.count_atom_sites()
    if n <= MAX_METAL_AGGREGATE:
        return
    import numpy as np
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    from fescan.core.neighbours import NeighbourTree

    holder = gemmi.Structure()
    holder.add_model(metals)
    xyz = np.array(gemmi.FlatStructure(holder).pos, dtype=float).reshape(-1, 3)  # compiled: no atom loop
    pairs = NeighbourTree(xyz).query_pairs(METAL_CONTACT, output_type="ndarray")
    if len(pairs) < MAX_METAL_AGGREGATE:
        return
    graph = coo_matrix((np.ones(len(pairs), dtype=np.int8), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    _, labels = connected_components(graph, directed=False)
    sizes = np.bincount(labels)
    big = int(np.argmax(sizes))
    if sizes[big] <= MAX_METAL_AGGREGATE:
        return
    first = int(np.flatnonzero(labels == big)[0])
    every_atom = ((c.name, r, a) for c in metals for r in c for a in r)
    ch, res, atom = next(itertools.islice(every_atom, first, None))
    raise StructureFileError(
        f"{name}: {int(sizes[big])} metal atoms chained by contacts of {METAL_CONTACT:g} Å or less (from {atom.name} "
        f"of {res.name} {ch}/{res.seqid}): a metal lattice, not a cofactor (at most {MAX_METAL_AGGREGATE}); refused")
