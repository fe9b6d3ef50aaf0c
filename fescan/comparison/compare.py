"""Audit a model against a reference structure: matched cofactors, changes, per-hop deltas.

:func:`compare` scans both files, brings the model into the reference frame and
matches their cofactors:

1. **Superposition.** Protein chains are paired by sequence (gemmi
   ``align_string_sequences`` on residue names; same-named chains first, the rest
   by a Hungarian assignment on identical residues; ≥ 30 % identity over the aligned
   span, so residues scattered over an unrelated chain do not count; copies of one
   protein re-paired by position when that fits better), and the Cα
   atoms of aligned residues are superposed by least squares (:func:`kabsch`, numpy
   SVD), dropping pairs farther apart than max(2 Å, 2 × RMSD) for up to
   three cycles. Without three aligned Cα pairs, or when that fit is poor (RMSD over
   3 Å) and the cofactor centres fit better, the cofactor centres are fitted
   instead (Kabsch, numpy) on class-matched partners, iterated to a fixed point.
   The residue mapping used (chain pairs, aligned and identical residues, the
   numbering offset) is kept in :attr:`Superposition.chains` and reported.
2. **Matching.** A cofactor is matched by chain and residue when its chain
   corresponds (same chain name, aligned residues with the same numbers) and the
   category agrees, or through the mapping (model chain → reference chain, number
   + offset: ``X/1501`` → ``A/501``); the rest by position: a Hungarian assignment (scipy
   ``linear_sum_assignment``) on centroid distance after superposition, same
   category, within ``match_cutoff`` (4 Å).
3. **Changes.** Displacement of every matched cofactor (Å, after superposition;
   *moved* above ``moved_limit``), cofactors missing from the model or extra in it,
   class changes and new incompleteness, ligands lost or added (residues mapped
   through the sequence alignment), new warning flags; along the reference wire,
   the model's R, ΔG, log10 k and hop time of every hop. A hop whose partner has
   no counterpart is *broken*.
4. **Verdict** (:mod:`fescan.comparison.verdict` words it): a *changed* or broken
   model hop is implausible when it is broken, longer than the gap limit, slower
   than the rate threshold, more than ``rate_drop_limit`` decades slower than in the
   reference, or touches a mis-ligated cluster. A hop touching a re-ligated cluster
   counts as changed; an unchanged hop is never implausible (what the reference
   already has is noted, not blamed on the model).

The model's wire is traced between the counterparts of the reference's entry and
exit, so the two wires read side by side. Rates are Moser–Dutton estimates.
"""

from __future__ import annotations

import logging
import math
import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import gemmi
import numpy as np
from scipy.optimize import linear_sum_assignment

from fescan.analysis.scan import CAUTION, ScanResult, scan
from fescan.core.errors import ConfigError
from fescan.core.jsonutil import finite_json
from fescan.core.records import Cofactor
from fescan.structure.reading import read_structure
from fescan.transfer.distances import edge_distance, redox_coordinates
from fescan.transfer.graph import Hop, HopSpec, build_hop
from fescan.transfer.paths import trace_wire

__all__ = ["Superposition", "CofactorMatch", "HopChange", "CompareResult", "kabsch", "compare"]

log = logging.getLogger(__name__)

#: Warning codes that mean a cluster is mis-ligated or misbuilt (bond-length warnings alone do not).
_MISLIGATION = frozenset({"missing_ligand", "non_cys_ligand", "extra_ligand", "class_mismatch", "incomplete_cluster"})
_CIGAR = re.compile(r"(\d+)([MID])")
_MIN_IDENTITY = 0.3
#: A same-named chain pair this identical (over the aligned span) is taken without looking further.
_SAME_PROTEIN = 0.9
#: A protein superposition worse than this (Å RMSD) is checked against the cofactor-centre fit.
_POOR_RMSD = 3.0
_BIG = 1e9


def kabsch(mobile: np.ndarray, fixed: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """Least-squares rotation and translation moving ``mobile`` onto ``fixed``.

    Parameters
    ----------
    mobile, fixed : ndarray, shape=(n, 3)
        Paired points (Å), n ≥ 1 (one pair gives a pure translation).

    Returns
    -------
    rotation : ndarray, shape=(3, 3)
    translation : ndarray, shape=(3,)
        ``fixed ≈ mobile @ rotation.T + translation``.
    rmsd : float

    Examples
    --------
    >>> a = np.array([[0.0, 0, 0], [1, 0, 0], [0, 2, 0]])
    >>> r, t, e = kabsch(a + 5.0, a)
    >>> round(e, 9), [round(float(x), 6) for x in t]
    (0.0, [-5.0, -5.0, -5.0])
    """
    p, q = np.asarray(mobile, float).reshape(-1, 3), np.asarray(fixed, float).reshape(-1, 3)
    cp, cq = p.mean(axis=0), q.mean(axis=0)
    if len(p) < 2:
        rot = np.eye(3)
    else:
        u, _s, vt = np.linalg.svd((p - cp).T @ (q - cq))
        d = np.sign(np.linalg.det(vt.T @ u.T)) or 1.0
        rot = vt.T @ np.diag([1.0, 1.0, d]) @ u.T
    t = cq - cp @ rot.T
    rmsd = float(np.sqrt(np.mean(np.sum((p @ rot.T + t - q) ** 2, axis=1))))
    return rot, t, rmsd


@dataclass(frozen=True)
class Superposition:
    """Rigid transform taking model coordinates into the reference frame.

    Attributes
    ----------
    method : str
        ``"protein chains"`` (Cα of aligned residues), ``"cofactor centres"`` or ``"none"``.
    rotation, translation : tuple
        ``x_ref = R @ x_model + t`` (Å).
    rmsd : float or None
        Over the pairs used (Å).
    n_pairs : int
    chain_map : dict of str to str
        Model chain → reference chain (protein chains paired by sequence).
    chains : tuple of dict
        The residue mapping used, one record per chain pair: ``model_chain``,
        ``reference_chain``, ``aligned`` (residue pairs), ``identical``,
        ``identity`` (fraction of aligned pairs), ``offset`` (reference number −
        model number, the most common), ``model_residues`` and
        ``reference_residues`` (first-last numbers).
    note : str
        Why this superposition was chosen when another was rejected.
    """

    method: str
    rotation: tuple[tuple[float, float, float], ...]
    translation: tuple[float, float, float]
    rmsd: float | None
    n_pairs: int
    chain_map: dict[str, str] = field(default_factory=dict)
    chains: tuple[dict[str, Any], ...] = ()
    note: str = ""

    def apply(self, xyz: Any) -> np.ndarray:
        """Model coordinates (n, 3) → reference frame (n, 3)."""
        return np.asarray(xyz, float).reshape(-1, 3) @ np.asarray(self.rotation).T + np.asarray(self.translation)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record."""
        return {"method": self.method, "rotation": [list(r) for r in self.rotation],
                "translation": list(self.translation), "rmsd": self.rmsd, "n_pairs": self.n_pairs,
                "chain_map": dict(self.chain_map), "residue_mapping": [dict(c) for c in self.chains],
                "note": self.note}


def _superposition(method, rot, t, rmsd, n, cmap) -> Superposition:
    return Superposition(method, tuple(tuple(float(x) for x in r) for r in rot), tuple(float(x) for x in t),
                         None if rmsd is None else round(float(rmsd), 4), int(n), cmap)


# ----------------------------------------------------------------------------- protein superposition


@dataclass
class _Chain:
    name: str
    keys: list[tuple[int, str]]
    names: list[str]
    ca: np.ndarray


def _protein_chains(model: gemmi.Model) -> list[_Chain]:
    out = []
    for ch in model:
        keys, names, ca = [], [], []
        for res in ch:
            info = gemmi.find_tabulated_residue(res.name)
            if info is None or not info.is_amino_acid():
                continue
            atom = next((a for a in res if a.name == "CA"), None)
            if atom is not None:
                keys.append((res.seqid.num, res.seqid.icode.strip()))
                names.append(res.name)
                ca.append(atom.pos.tolist())
        if len(ca) >= 3:
            out.append(_Chain(ch.name, keys, names, np.asarray(ca, float)))
    return out


def _aligned(r: _Chain, m: _Chain) -> tuple[list[tuple[int, int]], int, int]:
    """Aligned index pairs (ref, model), the number of identical residues, and the aligned span.

    The span is the longer of the two stretches the aligned pairs cover (first to last
    pair, gaps inside included). gemmi's global alignment may scatter a short chain's
    residues over a long unrelated one, one identical residue here and there; counted
    over the span, such scattered matches give a low identity, as they should.
    """
    aln = gemmi.align_string_sequences(r.names, m.names, [])
    pairs, i, j = [], 0, 0
    for n, op in _CIGAR.findall(aln.cigar_str()):
        n = int(n)
        if op == "M":
            pairs += [(i + k, j + k) for k in range(n)]
            i, j = i + n, j + n
        elif op == "I":
            i += n
        else:
            j += n
    same = sum(1 for a, b in pairs if r.names[a] == m.names[b])
    span = max(pairs[-1][0] - pairs[0][0], pairs[-1][1] - pairs[0][1]) + 1 if pairs else 0
    return pairs, same, span


def _pair_chains(ref: list[_Chain], mod: list[_Chain]) -> list[tuple[_Chain, _Chain, list[tuple[int, int]]]]:
    """Pairs of (reference, model) chains holding the same protein, with their aligned residues.

    A same-named pair at ≥ 90 % identity over its aligned span is taken at once (the
    usual case: nothing renamed). Every other chain is paired by a Hungarian assignment
    on identical residues over all remaining pairs of ≥ 30 % identity, a same name
    only breaking ties (two copies of one protein keep their names), so chains whose
    labels were swapped between different subunits still find their partners.
    """
    out, used_r, used_m = [], set(), set()

    def good(aligned, share=_MIN_IDENTITY):
        _, same, span = aligned
        return same >= max(3, share * span)

    by_name = {m.name: m for m in mod}
    for r in ref:
        m = by_name.get(r.name)
        if m is not None:
            aligned = _aligned(r, m)
            if good(aligned, _SAME_PROTEIN):
                out.append((r, m, aligned[0]))
                used_r.add(r.name)
                used_m.add(m.name)
    rest_r = [r for r in ref if r.name not in used_r]
    rest_m = [m for m in mod if m.name not in used_m]
    if rest_r and rest_m:
        cache = {}
        score = np.zeros((len(rest_r), len(rest_m)))
        for a, r in enumerate(rest_r):
            for b, m in enumerate(rest_m):
                cache[a, b] = _aligned(r, m)
                if good(cache[a, b]):
                    score[a, b] = cache[a, b][1] + (0.5 if r.name == m.name else 0.0)
        for a, b in zip(*linear_sum_assignment(-score)):
            if score[a, b] > 0:
                out.append((rest_r[a], rest_m[b], cache[a, b][0]))
    return out


_NEAR_COPY = 10.0  # Å between Cα centroids: a chain this close in the other file's frame may be its copy


def _copies_by_position(pairs: list) -> list | None:
    """The chain pairs with copies of one protein re-paired by position, or None when that changes nothing.

    Copies of one protein are paired by name first, but a model may label its copies
    otherwise than the reference. Here each paired chain may instead take a chain of the
    other file that holds the same protein (≥ 90 % identity) and whose Cα centroid lies
    within 10 Å of its own in the two files' own frames, by a Hungarian assignment on
    that distance: right when the model lies in the reference frame, as a re-refined
    model does. :func:`_protein_fit` keeps whichever pairing fits better.
    """
    if len(pairs) < 2:
        return None
    rs, ms = [p[0] for p in pairs], [p[1] for p in pairs]
    dist = np.linalg.norm(np.asarray([c.ca.mean(axis=0) for c in rs])[:, None, :]
                          - np.asarray([c.ca.mean(axis=0) for c in ms])[None, :, :], axis=2)
    aligned = {(k, k): pairs[k][2] for k in range(len(pairs))}
    cost = np.full(dist.shape, _BIG)
    np.fill_diagonal(cost, np.diag(dist))
    for i, j in zip(*np.nonzero(dist < _NEAR_COPY)):
        if i != j:
            found = _aligned(rs[i], ms[j])
            if found[1] >= max(3, _SAME_PROTEIN * found[2]):
                cost[i, j], aligned[i, j] = dist[i, j], found[0]
    rows, cols = linear_sum_assignment(cost)
    if all(i == j for i, j in zip(rows, cols)) or any(cost[i, j] >= _BIG for i, j in zip(rows, cols)):
        return None
    return [(rs[i], ms[j], aligned[i, j]) for i, j in zip(rows, cols)]


def _protein_fit(ref_model, mod_model):
    """Superposition on Cα plus the residue map (model chain, num, icode) → reference key."""
    ref, mod = _protein_chains(ref_model), _protein_chains(mod_model)
    pairs = _pair_chains(ref, mod)
    best = _fit_pairs(pairs)
    alt_pairs = _copies_by_position(pairs)
    if alt_pairs is not None:
        alt = _fit_pairs(alt_pairs)
        if alt[0] is not None and (best[0] is None or alt[0].rmsd < best[0].rmsd - 1e-6):
            best = alt
    return best


def _fit_pairs(pairs):
    """Least-squares Cα fit and residue map of the given chain pairs (see :func:`_protein_fit`)."""
    resmap, corresponding = {}, set()
    pr, pm = [], []
    chains = []
    for r, m, idx in pairs:
        same_num = 0
        for a, b in idx:
            resmap[(m.name, *m.keys[b])] = (r.name, *r.keys[a])
            same_num += r.keys[a] == m.keys[b]
            pr.append(r.ca[a])
            pm.append(m.ca[b])
        if r.name == m.name and idx and same_num >= 0.9 * len(idx):
            corresponding.add(r.name)
        if idx:
            offsets = Counter(r.keys[a][0] - m.keys[b][0] for a, b in idx)
            identical = sum(1 for a, b in idx if r.names[a] == m.names[b])
            chains.append({"model_chain": m.name, "reference_chain": r.name, "aligned": len(idx),
                           "identical": identical, "identity": round(identical / len(idx), 3),
                           "offset": offsets.most_common(1)[0][0],
                           "model_residues": f"{m.keys[0][0]}-{m.keys[-1][0]}",
                           "reference_residues": f"{r.keys[0][0]}-{r.keys[-1][0]}"})
    cmap = {m.name: r.name for r, m, _ in pairs}
    if len(pr) < 3:
        return None, resmap, corresponding, cmap, tuple(chains)
    pr, pm = np.asarray(pr), np.asarray(pm)
    keep = np.ones(len(pr), bool)
    for _ in range(3):
        # least squares by SVD (kabsch): robust for any rotation, a copy's 2-fold included
        rot, t, rmsd = kabsch(pm[keep], pr[keep])
        count = int(keep.sum())
        dev = np.linalg.norm(pm @ rot.T + t - pr, axis=1)
        new = dev <= max(2.0, 2.0 * rmsd)
        if new.sum() < 3 or (new == keep).all():
            break
        keep = new
    fit = replace(_superposition("protein chains", rot, t, rmsd, count, cmap), chains=tuple(chains))
    return fit, resmap, corresponding, cmap, tuple(chains)


# ----------------------------------------------------------------------------- cofactor matching


def _centres(cofs: Sequence[Cofactor]) -> np.ndarray:
    return np.asarray([c.centroid for c in cofs], float).reshape(-1, 3)


def _assign(ref: Sequence[Cofactor], mod: Sequence[Cofactor], rc: np.ndarray, mc: np.ndarray, cutoff: float):
    """Hungarian assignment of same-category cofactors within cutoff: list of (i_ref, j_model)."""
    if not len(ref) or not len(mod):
        return []
    d = np.linalg.norm(rc[:, None, :] - mc[None, :, :], axis=2)
    cat = np.array([[a.category == b.category for b in mod] for a in ref])
    cost = np.where(cat & (d <= cutoff), d, _BIG)
    return [(int(i), int(j)) for i, j in zip(*linear_sum_assignment(cost)) if cost[i, j] < _BIG]


def _signature_pairs(ref, mod, rc, mc):
    """Initial correspondences from rotation-free internal distances (for the centre fit)."""
    def sig(c):
        d = np.linalg.norm(c[:, None] - c[None], axis=2)
        return [np.sort(row)[1:] for row in d]

    sr, sm = sig(rc), sig(mc)
    cost = np.full((len(ref), len(mod)), _BIG)
    for i, a in enumerate(ref):
        for j, b in enumerate(mod):
            n = min(len(sr[i]), len(sm[j]))
            if a.category == b.category:
                cost[i, j] = float(np.mean(np.abs(sr[i][:n] - sm[j][:n]))) if n else 0.0
    return [(int(i), int(j)) for i, j in zip(*linear_sum_assignment(cost)) if cost[i, j] < _BIG]


def _mapped_seed(ref: Sequence[Cofactor], mod: Sequence[Cofactor], chains: Sequence[dict[str, Any]],
                 used_r: set[int], used_m: set[int]) -> list[tuple[int, int]]:
    """Cofactors matched through the residue mapping: model chain → reference chain, number + offset.

    A cofactor numbered in its protein chain's series (``X/1501`` beside residues
    1001-1125 of chain X, aligned to A 1-125) maps to ``A/501`` of the reference.
    """
    rule = {c["model_chain"]: (c["reference_chain"], int(c["offset"])) for c in chains}
    by_key = {(c.chain, c.seqnum, c.icode, c.category): i for i, c in enumerate(ref) if i not in used_r}
    out = []
    for j, c in enumerate(mod):
        if j in used_m or c.chain not in rule:
            continue
        chain, off = rule[c.chain]
        i = by_key.get((chain, c.seqnum + off, c.icode, c.category))
        if i is not None and i not in {a for a, _ in out}:
            out.append((i, j))
    return out


def _centre_fit(ref, mod, seed_pairs, cutoff):
    rc, mc = _centres(ref), _centres(mod)
    pairs = seed_pairs if len(seed_pairs) >= 3 else _signature_pairs(ref, mod, rc, mc)
    if not pairs:
        return None
    for _ in range(20):
        rot, t, rmsd = kabsch(mc[[j for _, j in pairs]], rc[[i for i, _ in pairs]])
        new = _assign(ref, mod, rc, mc @ rot.T + t, cutoff) or pairs
        if sorted(new) == sorted(pairs):
            break
        pairs = new
    return _superposition("cofactor centres", rot, t, rmsd, len(pairs), {})


@dataclass(frozen=True)
class CofactorMatch:
    """A reference cofactor and its counterpart in the model.

    Attributes
    ----------
    reference, model : str
        Uids in the two scans.
    how : str
        ``"chain and residue"`` or ``"position"``.
    displacement : float
        Centroid distance after superposition (Å).
    reference_class, model_class : str
    ligands_lost, ligands_added : tuple of str
        ``"CYS A/8 SG (Cys S)"``, residues in reference numbering where mapped.
    new_warnings : tuple of str
        Messages of warning flags the model has and the reference lacks.
    """

    reference: str
    model: str
    how: str
    displacement: float
    reference_class: str
    model_class: str
    ligands_lost: tuple[str, ...] = ()
    ligands_added: tuple[str, ...] = ()
    new_warnings: tuple[str, ...] = ()
    new_warning_codes: tuple[str, ...] = ()

    @property
    def class_changed(self) -> bool:
        """The class differs ([4Fe-4S] → [3Fe-4S]...)."""
        return self.reference_class != self.model_class

    @property
    def incomplete(self) -> bool:
        """The model's cluster is incomplete and the reference's is not."""
        return "incomplete_cluster" in self.new_warning_codes

    @property
    def ligation_changed(self) -> bool:
        """Ligands were lost or added."""
        return bool(self.ligands_lost or self.ligands_added)

    @property
    def misligated(self) -> bool:
        """Class change, ligand change or a new ligation/geometry warning in the model."""
        return self.class_changed or self.ligation_changed or bool(set(self.new_warning_codes) & _MISLIGATION)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record."""
        return {"reference": self.reference, "model": self.model, "how": self.how,
                "displacement": round(self.displacement, 4), "reference_class": self.reference_class,
                "model_class": self.model_class, "class_changed": self.class_changed, "incomplete": self.incomplete,
                "ligands_lost": list(self.ligands_lost), "ligands_added": list(self.ligands_added),
                "new_warnings": list(self.new_warnings), "misligated": self.misligated}


@dataclass(frozen=True)
class _ChainRule:
    """``chain in rule``: the chain keeps its name and numbering in the model (corresponds, or unpaired)."""

    corresponding: set[str]
    mapped: set[str]

    def __contains__(self, chain: object) -> bool:
        return chain in self.corresponding or chain not in self.mapped


def _is_amino_acid(resname: str) -> bool:
    info = gemmi.find_tabulated_residue(resname)
    return bool(info is not None and info.is_amino_acid())


def _ligand_set(c: Cofactor, resmap=None, keeps: Any = ()) -> Counter:
    """Ligands as labels; model residues renamed to reference numbering through ``resmap``.

    Protein ligands are named by residue (mapped through the sequence alignment);
    non-protein ligands (water, CO/CN, a bridging peroxide...) have no mapped
    number, so they are named by residue name and atom only, on both sides.
    """
    out = Counter()
    for lig in c.ligands:
        a = lig.atom
        if not _is_amino_acid(a.resname):
            out[f"{a.resname} {a.name} ({lig.kind})"] += 1
            continue
        key = (a.chain, a.seqnum, a.icode)
        if resmap is not None:
            key = resmap.get(key, key if a.chain in keeps else ("model " + a.chain, a.seqnum, a.icode))
        out[f"{a.resname} {key[0]}/{key[1]}{key[2]} {a.name} ({lig.kind})"] += 1
    return out


def _describe(r: Cofactor, m: Cofactor, how: str, disp: float, resmap, keeps: _ChainRule) -> CofactorMatch:
    lr, lm = _ligand_set(r), _ligand_set(m, resmap, keeps)
    warn_r = {f.code for f in r.flags if f.severity == "warning"}
    new = [f for f in m.flags if f.severity == "warning" and f.code not in warn_r]
    return CofactorMatch(r.uid, m.uid, how, disp, r.cls, m.cls, tuple(sorted((lr - lm).elements())),
                         tuple(sorted((lm - lr).elements())), tuple(f.message for f in new),
                         tuple(f.code for f in new))


# ----------------------------------------------------------------------------- hops


@dataclass(frozen=True)
class HopChange:
    """One hop of the reference wire and the same hop in the model.

    Attributes
    ----------
    step : int
    reference_donor, reference_acceptor : str
    model_donor, model_acceptor : str or None
        Counterparts (``None`` when missing: the hop is broken).
    status : str
        ``"unchanged"``, ``"changed"`` or ``"broken"``.
    reference, model : Hop or None
        The two hops (distances Å, ΔG eV, rates s⁻¹, times s).
    rho_reference, rho_model : float or None
        Measured packing densities (``measure_packing=True`` only).
    """

    step: int
    reference_donor: str
    reference_acceptor: str
    model_donor: str | None
    model_acceptor: str | None
    status: str
    reference: Hop
    model: Hop | None
    rho_reference: float | None = None
    rho_model: float | None = None

    def delta(self, attr: str) -> float | None:
        """Model minus reference of a Hop attribute (``edge``, ``dg``, ``log10_k_forward``...)."""
        return None if self.model is None else float(getattr(self.model, attr) - getattr(self.reference, attr))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record with both hops and the deltas (model − reference)."""
        m = self.model
        ratio = m.hop_time / self.reference.hop_time if m and self.reference.hop_time > 0 else None
        return {"step": self.step, "reference_donor": self.reference_donor,
                "reference_acceptor": self.reference_acceptor, "model_donor": self.model_donor,
                "model_acceptor": self.model_acceptor, "status": self.status,
                "reference": self.reference.to_dict(), "model": m.to_dict() if m else None,
                "delta_edge": self.delta("edge"), "delta_dg_ev": self.delta("dg"),
                "delta_log10_k": self.delta("log10_k_forward"), "hop_time_ratio": ratio,
                "rho_reference": self.rho_reference, "rho_model": self.rho_model}


def _model_hop(res: ScanResult, d: str, a: str) -> Hop:
    """The model's hop d → a: from its graph, or built by the same hop builder when beyond the cutoff."""
    if res.graph.has_edge(d, a):
        return res.graph.edges[d, a]["hop"]
    cd, ca = res.cofactor(d), res.cofactor(a)
    r = edge_distance(redox_coordinates(cd, res.options.edge_atoms), redox_coordinates(ca, res.options.edge_atoms))
    centre = float(np.linalg.norm(np.subtract(cd.centroid, ca.centroid)))
    return build_hop(HopSpec(cd, ca, round(r, 4), round(centre, 4)), res.potentials, res.options, res.reorgs)


# ----------------------------------------------------------------------------- result


@dataclass
class CompareResult:
    """A model audited against a reference (see the module docstring).

    Attributes
    ----------
    model, reference : ScanResult
        The two scans (the model's wire traced between the counterparts of the
        reference's entry and exit when both exist).
    superposition : Superposition
    matches : list of CofactorMatch
    missing : list of str
        Reference uids with no counterpart in the model.
    extra : list of str
        Model uids with no counterpart in the reference.
    hops : list of HopChange
        Along the reference wire.
    settings : dict
        ``match_cutoff``, ``moved_limit``, ``rate_drop_limit``, ``distance_tolerance``.
    """

    model: ScanResult
    reference: ScanResult
    superposition: Superposition
    matches: list[CofactorMatch]
    missing: list[str]
    extra: list[str]
    hops: list[HopChange]
    settings: dict[str, float]
    uncertainty: Any = None

    def moved(self) -> list[CofactorMatch]:
        """Matches displaced more than ``moved_limit`` Å."""
        return [m for m in self.matches if m.displacement > self.settings["moved_limit"]]

    def changes(self) -> dict[str, int]:
        """Counts of every kind of change (all zero for a structure compared with itself)."""
        return {"moved": len(self.moved()), "missing": len(self.missing), "extra": len(self.extra),
                "class_changed": sum(m.class_changed for m in self.matches),
                "incomplete": sum(m.incomplete for m in self.matches),
                "ligation_changed": sum(m.ligation_changed for m in self.matches),
                "new_warnings": sum(bool(m.new_warnings) for m in self.matches),
                "hops_changed": sum(h.status == "changed" for h in self.hops),
                "hops_broken": sum(h.status == "broken" for h in self.hops)}

    @property
    def n_changes(self) -> int:
        """Total of :meth:`changes`."""
        return sum(self.changes().values())

    def problems(self) -> list[dict[str, Any]]:
        """Implausible model hops along the reference wire, with reasons in plain words."""
        from fescan.comparison.verdict import hop_problems

        return hop_problems(self)

    def model_in_reference_frame(self) -> ScanResult:
        """The model's scan with every cofactor moved into the reference frame (for drawings)."""
        sup = self.superposition

        def move(atoms):
            if not atoms:
                return atoms
            xyz = sup.apply([a.xyz for a in atoms])
            return tuple(replace(a, xyz=tuple(round(float(v), 4) for v in p)) for a, p in zip(atoms, xyz))

        cofs = [replace(c, centroid=tuple(float(v) for v in sup.apply(c.centroid)[0]), atoms=move(c.atoms),
                        redox_atoms=move(c.redox_atoms)) for c in self.model.cofactors]
        g = self.model.graph.copy()
        for c in cofs:
            g.nodes[c.uid]["cofactor"] = c
        return replace(self.model, cofactors=cofs, graph=g)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready result (no NaN or inf)."""
        from fescan.comparison.verdict import verdict

        return finite_json({
            "model_file": self.model.path, "reference_file": self.reference.path, "caution": CAUTION,
            "settings": dict(self.settings), "superposition": self.superposition.to_dict(),
            "changes": self.changes(), "matches": [m.to_dict() for m in self.matches],
            "missing_in_model": list(self.missing), "extra_in_model": list(self.extra),
            "hops": [h.to_dict() for h in self.hops], "verdict": verdict(self),
            "model_wire_intervals": self.uncertainty.to_dict() if self.uncertainty is not None else None,
            "model": self.model.to_dict(), "reference": self.reference.to_dict(),
        })


def compare(
    model_path: str,
    reference_path: str,
    *,
    match_cutoff: float = 4.0,
    moved_limit: float = 1.0,
    rate_drop_limit: float = 1.0,
    distance_tolerance: float = 0.05,
    measure_packing: bool = False,
    **options: Any,
) -> CompareResult:
    """Compare a model with a reference structure of the same protein.

    Parameters
    ----------
    model_path, reference_path : str or path-like
        Structure files (PDB or mmCIF, gzipped or not).
    match_cutoff : float, optional
        Largest centroid distance (Å) of a match by position (default 4).
    moved_limit : float, optional
        A matched cofactor displaced more than this (Å) counts as moved (default 1).
    rate_drop_limit : float, optional
        A model hop slower by more than this many decades is implausible (default 1).
    distance_tolerance : float, optional
        Hops whose R differs by less (Å), with equal ΔG, count as unchanged (default 0.05).
    measure_packing : bool, optional
        Also measure ρ of every hop in both structures (:mod:`fescan.transfer.packing`).
    **options
        :class:`fescan.core.options.ScanOptions` fields for both scans; ``entry`` and
        ``exit`` name cofactors of the *reference*.

    Returns
    -------
    CompareResult

    Raises
    ------
    fescan.core.errors.FescanError
        A file is unreadable (the message names it), an option is invalid, or a
        reference endpoint does not exist.
    """
    for name, v in (("match_cutoff", match_cutoff), ("moved_limit", moved_limit),
                    ("rate_drop_limit", rate_drop_limit), ("distance_tolerance", distance_tolerance)):
        if not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
            raise ConfigError(f"{name} must be a number >= 0, got {v!r}")
    ref = scan(reference_path, **options)
    mod_opts = {k: v for k, v in options.items() if k not in ("entry", "exit")}
    mod = scan(model_path, **mod_opts)
    lr = read_structure(reference_path, model=ref.options.model, altloc=ref.options.altloc)
    lm = read_structure(model_path, model=mod.options.model, altloc=mod.options.altloc)
    fit, resmap, corresponding, cmap, chains = _protein_fit(lr.model, lm.model)
    rc, mc = ref.cofactors, mod.cofactors

    keeps = _ChainRule(corresponding, set(cmap) | set(cmap.values()))
    keys = {(c.key, c.category): j for j, c in enumerate(mc)}
    seed = [(i, keys[(c.key, c.category)]) for i, c in enumerate(rc) if c.chain in keeps and (c.key, c.category) in keys]
    mapped_seed = _mapped_seed(rc, mc, chains, {i for i, _ in seed}, {j for _, j in seed})
    seed += mapped_seed
    if fit is not None and fit.rmsd is not None and fit.rmsd > _POOR_RMSD:
        alt = _centre_fit(rc, mc, seed, match_cutoff)
        if alt is not None and alt.n_pairs >= 3 and alt.rmsd is not None and alt.rmsd < fit.rmsd:
            fit = replace(alt, chain_map=fit.chain_map, chains=fit.chains,
                          note=f"the protein fit ({fit.n_pairs} Cα pairs, RMSD {fit.rmsd:.1f} Å) was rejected: "
                               f"the cofactor centres fit better (RMSD {alt.rmsd:.2f} Å)")
    if fit is None:
        fit = _centre_fit(rc, mc, seed, match_cutoff) or _superposition("none", np.eye(3), np.zeros(3), None, 0, {})
        fit = replace(fit, chains=chains, chain_map=cmap)
    pairs = dict(seed)
    rest_r = [i for i in range(len(rc)) if i not in pairs]
    rest_m = [j for j in range(len(mc)) if j not in pairs.values()]
    moved_c = fit.apply(_centres(mc))
    rcen = _centres(rc)
    for a, b in _assign([rc[i] for i in rest_r], [mc[j] for j in rest_m], rcen[rest_r], moved_c[rest_m],
                        match_cutoff):
        pairs[rest_r[a]] = rest_m[b]
    matches = []
    for i in sorted(pairs):
        j = pairs[i]
        disp = float(np.linalg.norm(moved_c[j] - rcen[i]))
        how = ("chain and residue, mapped" if (i, j) in mapped_seed else
               "chain and residue" if (i, j) in seed else "position")
        matches.append(_describe(rc[i], mc[j], how, disp, resmap, keeps))
    r2m = {rc[i].uid: mc[j].uid for i, j in pairs.items()}
    missing = [c.uid for i, c in enumerate(rc) if i not in pairs]
    extra = [c.uid for j, c in enumerate(mc) if j not in pairs.values()]
    mod = _retrace(mod, ref, r2m)
    settings = {"match_cutoff": match_cutoff, "moved_limit": moved_limit, "rate_drop_limit": rate_drop_limit,
                "distance_tolerance": distance_tolerance}
    relig = {m.model for m in matches if m.misligated}
    hops = _hop_changes(ref, mod, r2m, distance_tolerance, relig)
    if measure_packing:
        hops = _with_packing(hops, ref, mod, lr, lm)
    log.info("compared %s with %s: %d matches, %d missing, %d extra", model_path, reference_path,
             len(matches), len(missing), len(extra))
    result = CompareResult(mod, ref, fit, matches, missing, extra, hops, settings)
    if mod.wire.hops:
        from fescan.transfer.intervals import MONTE_CARLO_SAMPLES
        from fescan.transfer.uncertainty import wire_uncertainty

        # Monte Carlo (seeded): the linear form misjudges hops near ΔG = 0 (uncertainty.py);
        # the same number of samples as the scan's report, so both print the same intervals
        result.uncertainty = wire_uncertainty(mod, method="monte-carlo", n_samples=MONTE_CARLO_SAMPLES, seed=0)
    return result


def _retrace(mod: ScanResult, ref: ScanResult, r2m: dict[str, str]) -> ScanResult:
    e, x = r2m.get(ref.wire.entry or ""), r2m.get(ref.wire.exit or "")
    if not (e and x) or (e, x) == (mod.wire.entry, mod.wire.exit):
        return mod
    opts = replace(mod.options, entry=mod.cofactor(e).key, exit=mod.cofactor(x).key)
    wired = [c for c in mod.cofactors if c.uid in mod.graph]  # off-wire ions and structural metals stay out
    wire = trace_wire(mod.graph, wired, opts)
    wire.how_chosen = "counterparts of the reference's entry and exit"
    return replace(mod, options=opts, wire=wire)


def _hop_changes(ref: ScanResult, mod: ScanResult, r2m: dict[str, str], tol: float,
                 misligated: set[str] = frozenset()) -> list[HopChange]:
    """Each reference hop and its model counterpart; a hop touching a re-ligated cofactor is "changed"."""
    out = []
    for k, h in enumerate(ref.wire.hops, start=1):
        d, a = r2m.get(h.donor), r2m.get(h.acceptor)
        if d is None or a is None:
            out.append(HopChange(k, h.donor, h.acceptor, d, a, "broken", h, None))
            continue
        m = _model_hop(mod, d, a)
        same = (abs(m.edge - h.edge) <= tol and abs(m.dg - h.dg) <= 1e-6 and abs(m.reorg - h.reorg) <= 1e-9
                and d not in misligated and a not in misligated)
        out.append(HopChange(k, h.donor, h.acceptor, d, a, "unchanged" if same else "changed", h, m))
    return out


def _with_packing(hops, ref, mod, lr, lm) -> list[HopChange]:
    from fescan.transfer.packing import PackingMedium, pair_packing

    med_r, med_m = PackingMedium(lr), PackingMedium(lm)
    out = []
    for h in hops:
        rr = pair_packing(med_r, ref.cofactor(h.reference_donor), ref.cofactor(h.reference_acceptor)).rho
        rm = None
        if h.model is not None:
            rm = pair_packing(med_m, mod.cofactor(h.model_donor), mod.cofactor(h.model_acceptor)).rho
        out.append(replace(h, rho_reference=rr, rho_model=rm))
    return out
