"""Sub-classes that decide the redox couple: HiPIP vs ferredoxin [4Fe-4S], Rieske type, heme ligation.

The structural evidence is measured on the protein around each cluster when the
cofactor is found (:func:`fes_pocket`) and read back by the role stage
(:func:`fes_subclass`, :func:`heme_ligation`).

* HiPIP vs ferredoxin [4Fe-4S]. HiPIPs are small proteins (about 60-90
  residues) holding one cluster bound by a C-x2-C-x(n)-C-x(m)-C motif, in a
  pocket lined by aromatic residues, with fewer NH···S hydrogen bonds to the
  cluster than ferredoxins (about 5 against about 8; Backes et al. 1991 J Am
  Chem Soc 113:2055; Carter et al. 1974 J Biol Chem 249:4212). Ferredoxin-type
  clusters are bound by the C-x2-C-x2-C motif. A cluster that meets neither
  description is "[4Fe-4S], couple undetermined" (empty sub-class).
* Rieske: the bc1/b6f type has a disulfide joining the two cluster-binding
  loops; the dioxygenase type has none (Iwata et al. 1996 Structure 4:567;
  Link 1999 Adv Inorg Chem 47:83).
* Heme axial ligation from the ligands of the heme iron (His/Met, bis-His,
  His/water or five-coordinate, Cys-thiolate), common practice, no source.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

import numpy as np

from fescan.cofactors.atoms import AtomArrays
from fescan.core.neighbours import pairwise_distances
from fescan.core.records import Cofactor, Ligand

__all__ = [
    "NH_S_MAX",
    "fes_pocket",
    "fes_subclass",
    "rieske_subclass",
    "heme_ligation",
    "FERREDOXIN_MOTIF",
]

#: Longest N···S distance of a backbone NH···S hydrogen bond (Å; Backes et al. 1991 use 3.6-3.8).
NH_S_MAX = 3.6
_NH_S_ANGLE_MIN = 120.0  # degrees N-H···S, common practice, no source
_AROMATIC_RADIUS = 8.0  # Å from the cluster centre to any aromatic ring atom
_AROMATIC = {"PHE": ("CG", "CD1", "CD2", "CE1", "CE2", "CZ"), "TYR": ("CG", "CD1", "CD2", "CE1", "CE2", "CZ"),
             "TRP": ("CD2", "CE2", "CE3", "CZ2", "CZ3", "CH2")}
_DISULFIDE_MAX = 2.3  # Å SG-SG
_DISULFIDE_RADIUS = 12.0  # Å from the cluster centre to the disulfide
#: Motif pattern of ferredoxin-type [4Fe-4S] binding.
FERREDOXIN_MOTIF = re.compile(r"C-x2-C-x2-C")
_HIPIP_MAX_RESIDUES = 100
_HIPIP_MIN_AROMATIC = 3
_HIPIP_MAX_NH_S = 6


def fes_pocket(env: AtomArrays, core_rows: Sequence[int], ligand_rows: Sequence[int],
               chain_residues: dict[str, int]) -> dict:
    """Measure the protein around an Fe-S cluster.

    Parameters
    ----------
    env : AtomArrays
        Atoms around the site.
    core_rows : sequence of int
        Rows of the cluster core in ``env``.
    ligand_rows : sequence of int
        Rows of the ligand atoms (Cys SG...) in ``env``.
    chain_residues : dict of str to int
        Number of amino-acid residues of each chain of the model.

    Returns
    -------
    dict
        ``nh_s_bonds`` (backbone NH···S to core S or ligand SG, N···S ≤ 3.6 Å and
        N-H···S ≥ 120° with H placed on the C(i-1)-N-CA bisector),
        ``aromatic_near`` (Phe/Tyr/Trp with a ring atom within 8 Å of the centre),
        ``disulfide_near`` (Cys-Cys disulfides within 12 Å), ``chain_residues``
        (length of the chain giving most ligands).
    """
    core_rows = list(core_rows)
    centre = env.xyz[core_rows].mean(axis=0)
    dist = pairwise_distances(centre[None, :], env.xyz)[0]
    near = np.flatnonzero(dist <= _DISULFIDE_RADIUS + 4.0)
    s_rows = [r for r in core_rows if env.element[r] in ("S", "SE")] + [
        r for r in ligand_rows if env.element[r] in ("S", "SE")]
    names = env.name[near]
    standard, is_n = env.standard[near], names == "N"
    backbone = near[standard & (is_n | (names == "CA") | (names == "C"))]
    if s_rows:  # only residues whose N (or the next residue's N) reaches a sulfur are keyed
        n_rows = near[standard & is_n]
        reach_n = n_rows[pairwise_distances(env.xyz[n_rows], env.xyz[s_rows]).min(axis=1, initial=np.inf) <= NH_S_MAX]
        nums = env.seqnum[reach_n]
        wanted = np.concatenate((nums, nums - 1))
        backbone = backbone[(env.seqnum[backbone][:, None] == wanted[None, :]).any(axis=1)]
    key = {}
    for ch, num, ic, name, i in zip(env.chain[backbone].tolist(), env.seqnum[backbone].tolist(),
                                    env.icode[backbone].tolist(), env.name[backbone].tolist(), backbone.tolist()):
        key[(ch, int(num), ic, name)] = i
    nh_s = 0
    if s_rows:
        s_xyz = env.xyz[s_rows]
        amide = [i for (_, _, _, name), i in key.items() if name == "N"]
        amide = [i for i, rn in zip(amide, env.resname[amide].tolist()) if rn != "PRO"]
        if amide:  # only amide N within reach of a sulfur are looked at
            d_all = pairwise_distances(env.xyz[amide], s_xyz)
            reach = d_all.min(axis=1) <= NH_S_MAX
            amide = [i for i, ok in zip(amide, reach.tolist()) if ok]
            d_all = d_all[reach]
        frames = []  # (N, CA, C of the residue before) of each amide with both neighbours
        for i, row in zip(amide, range(len(amide))):
            ch, num, ic = env.chain[i], int(env.seqnum[i]), env.icode[i]
            ca = key.get((ch, num, ic, "CA"))
            c_prev = key.get((ch, num - 1, "", "C"))
            if ca is not None and c_prev is not None:
                frames.append((i, ca, c_prev, row))
        if frames:
            rows = np.asarray(frames, dtype=np.intp)
            n, ca, cp = env.xyz[rows[:, 0]], env.xyz[rows[:, 1]], env.xyz[rows[:, 2]]
            u = ((n - ca) / np.linalg.norm(n - ca, axis=1)[:, None]
                 + (n - cp) / np.linalg.norm(n - cp, axis=1)[:, None])
            h = n + 1.01 * u / np.linalg.norm(u, axis=1)[:, None]  # H on the C(i-1)-N-CA bisector
            a_vec = (n - h)[:, None, :]
            b_vec = s_xyz[None, :, :] - h[:, None, :]
            cos = np.einsum("mkj,mkj->mk", np.broadcast_to(a_vec, b_vec.shape), b_vec) / (
                np.linalg.norm(a_vec, axis=2) * np.linalg.norm(b_vec, axis=2))
            angle = np.degrees(np.arccos(np.clip(cos, -1, 1)))
            bonded = (d_all[rows[:, 3]] <= NH_S_MAX) & (angle >= _NH_S_ANGLE_MIN)
            nh_s = int(bonded.any(axis=1).sum())
    aromatic = set()
    resnames = env.resname[near]
    close = near[(dist[near] <= _AROMATIC_RADIUS)
                 & np.logical_or.reduce([resnames == rn for rn in _AROMATIC])]
    for rn, name, ch, num, ic in zip(env.resname[close].tolist(), env.name[close].tolist(), env.chain[close].tolist(),
                                     env.seqnum[close].tolist(), env.icode[close].tolist()):
        if str(name) in _AROMATIC[str(rn)]:
            aromatic.add((ch, int(num), ic))
    lig_sg = set(ligand_rows)
    sg_mask = (names == "SG") & (env.element[near] == "S") & (dist[near] <= _DISULFIDE_RADIUS)
    sg = [i for i in near[sg_mask].tolist() if i not in lig_sg]
    disulfides = 0
    if len(sg) > 1:
        pair = pairwise_distances(env.xyz[sg], env.xyz[sg])
        disulfides = int(np.triu(pair <= _DISULFIDE_MAX, k=1).sum())
    chains = [str(env.chain[r]) for r in ligand_rows if env.standard[r]]
    main = max(sorted(set(chains)), key=chains.count) if chains else None
    return {
        "nh_s_bonds": nh_s,
        "aromatic_near": len(aromatic),
        "disulfide_near": disulfides,
        "chain_residues": chain_residues.get(main, 0) if main is not None else 0,
    }


def fes_subclass(cof: Cofactor, clusters_in_chain: int) -> tuple[str, str]:
    """HiPIP-type or ferredoxin-type for a [4Fe-4S] cluster, with the reason.

    Parameters
    ----------
    cof : Cofactor
        A [4Fe-4S] cofactor whose ``extra["pocket"]`` was measured by :func:`fes_pocket`.
    clusters_in_chain : int
        Fe-S clusters bound by the chain that gives the cluster most of its ligands.

    Returns
    -------
    tuple of str
        ``(subclass, reason)``; subclass ``""`` when undetermined.
    """
    pocket = cof.extra.get("pocket") or {}
    motif = cof.motif or ""
    if FERREDOXIN_MOTIF.search(motif):
        return "ferredoxin-type", f"bound by the ferredoxin motif C-x2-C-x2-C ({motif})"
    n_res = pocket.get("chain_residues", 0)
    aro = pocket.get("aromatic_near", 0)
    nhs = pocket.get("nh_s_bonds", 99)
    cys = [lig for lig in cof.ligands if lig.kind == "Cys S"]
    if (len(cys) == 4 and clusters_in_chain == 1 and 0 < n_res <= _HIPIP_MAX_RESIDUES
            and aro >= _HIPIP_MIN_AROMATIC and nhs <= _HIPIP_MAX_NH_S):
        return "HiPIP-type", (
            f"single cluster of a {n_res}-residue chain, motif {motif} (no C-x2-C-x2-C), "
            f"{aro} aromatic residues within 8 Å, {nhs} NH···S hydrogen bonds"
        )
    return "", (f"[4Fe-4S], couple undetermined: neither the ferredoxin motif nor a HiPIP pocket "
                f"(motif {motif or 'none'}, {clusters_in_chain} cluster(s) in a {n_res}-residue chain, "
                f"{aro} aromatic residues near, {nhs if nhs != 99 else '?'} NH···S)")


def rieske_subclass(cof: Cofactor) -> tuple[str, str]:
    """bc1/b6f-type (disulfide near the cluster) or dioxygenase-type Rieske, with the reason."""
    pocket = cof.extra.get("pocket") or {}
    n = pocket.get("disulfide_near")
    if n is None:
        return "", "Rieske type undetermined (protein around the cluster not measured)"
    if n > 0:
        return "bc1/b6f-type", "a Cys-Cys disulfide lies within 12 Å of the cluster (bc1/b6f Rieske loop)"
    return "dioxygenase-type", "no disulfide within 12 Å of the cluster (dioxygenase-type Rieske)"


def heme_ligation(ligands: Sequence[Ligand]) -> str:
    """Axial ligation of a heme iron from its ligands.

    Returns
    -------
    str
        ``"His/Met"``, ``"bis-His"``, ``"Cys-thiolate"``, ``"His/water or
        five-coordinate"`` or ``""`` (none of these, e.g. no protein ligand).

    Examples
    --------
    >>> heme_ligation([])
    ''
    """
    kinds = [lig.kind for lig in ligands]
    his = kinds.count("His N")
    met = kinds.count("Met S")
    cys = kinds.count("Cys S")
    if cys and not his:
        return "Cys-thiolate"
    if his >= 2:
        return "bis-His"
    if his == 1 and met >= 1:
        return "His/Met"
    if his == 1:
        return "His/water or five-coordinate"
    return ""
