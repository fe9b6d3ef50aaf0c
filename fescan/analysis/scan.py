"""One structure, end to end: read → cofactors → distances → graph → wire.

:func:`scan` is the single per-structure function; the CLI and the survey call
it unchanged. Its result is plain data (picklable) with ``to_dict()``.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import networkx as nx
import numpy as np

from fescan.cofactors import count_not_analysed, find_cofactors
from fescan.core.errors import CofactorNotFound, ConfigError
from fescan.core.jsonutil import finite_json
from fescan.core.options import ScanOptions
from fescan.core.records import Cofactor
from fescan.structure.reading import StructureInfo, read_structure
from fescan.transfer.context import context_subclasses
from fescan.transfer.distances import EDGE_CONVENTION, Pair, pair_distances
from fescan.transfer.graph import build_cofactor_graph
from fescan.transfer.paths import (
    Wire,
    all_pair_paths,
    choose_endpoints,
    mark_crystal_contacts,
    trace_wire,
)
from fescan.transfer.potentials import (
    CofactorParameters,
    Potential,
    UserFile,
    assign_parameters,
    load_user_file,
)

__all__ = ["CAUTION", "ScanResult", "scan", "finite_json"]

#: Printed with every rate and time fescan reports.
CAUTION = (
    "Rates and transfer times are estimates from the empirical Moser-Dutton tunnelling "
    "law (Page, Moser, Chen & Dutton 1999, Nature 402:47), good to about +/-0.8 decade "
    "for natural proteins; they are not measurements."
)


@dataclass
class ScanResult:
    """Everything fescan found in one structure.

    Attributes
    ----------
    path : str
        The file read.
    info : StructureInfo
        Title, method, resolution, models... of the file.
    options : ScanOptions
        The options used.
    cofactors : list of Cofactor
    pairs : list of Pair
        Cofactor pairs within the cutoff (indices into ``cofactors``).
    potentials : dict of str to Potential
        The couple each cofactor works at on this wire (uid → value and origin):
        a one-electron centre's couple; ``sq/red`` for a two-electron entry,
        ``ox/sq`` for other flavins and quinones.
    graph : networkx.DiGraph
        Cofactor graph with a hop on every directed edge.
    wire : Wire
        Entry, exit, fastest path, bottleneck, gaps, transfer times.
    all_pairs : list of dict
        Fastest path of every connected pair (only with ``all_pairs=True``).
    not_analysed : dict of str to int
        Residues of redox-active groups fescan does not model (chlorophylls,
        nicotinamides...), counted by CCD code.
    parameters : dict of str to CofactorParameters
        Every parameter of each cofactor (all couples, λ, role override) with its origin.
    reservoirs : dict of str to float
        Reservoir potentials (V) the user file sets (``source``, ``sink``).
    """

    path: str
    info: StructureInfo
    options: ScanOptions
    cofactors: list[Cofactor]
    pairs: list[Pair]
    potentials: dict[str, Potential]
    graph: nx.DiGraph
    wire: Wire
    all_pairs: list[dict] = field(default_factory=list)
    not_analysed: dict[str, int] = field(default_factory=dict)
    parameters: dict[str, CofactorParameters] = field(default_factory=dict)
    reservoirs: dict[str, float] = field(default_factory=dict)

    @property
    def reorgs(self) -> dict[str, float]:
        """Per-cofactor λ from the user file (eV), by uid."""
        return {u: p.reorg for u, p in self.parameters.items() if p.reorg is not None}

    def cofactor(self, uid: str) -> Cofactor:
        """The cofactor with this uid."""
        return self.graph.nodes[uid]["cofactor"]

    def pair_records(self) -> list[dict[str, Any]]:
        """Every pair considered, with both distances, ΔG (first → second), k_f and k_b."""
        out = []
        for p in self.pairs:
            a, b = self.cofactors[p.i], self.cofactors[p.j]
            hop = self.graph.edges[a.uid, b.uid]["hop"]
            rec = {"first": a.uid, "second": b.uid, "first_class": a.cls, "second_class": b.cls,
                   "closest_atoms": f"{p.atom_i}-{p.atom_j}"}
            rec.update(hop.to_dict())
            del rec["donor"], rec["acceptor"]
            out.append(rec)
        return out

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready result: ``structure``, ``options``, ``cofactors``, ``pairs``, ``wire``...

        No value is NaN or infinite (undefined times are ``None``).
        """
        pots = {}
        for uid, p in self.potentials.items():
            pots[uid] = {"e_v": p.e_v, "low_v": p.low_v, "high_v": p.high_v, "source": p.source,
                         "origin": p.origin, "couple": p.couple, "step": p.step, "basis": p.basis,
                         "citation_kind": p.status}
            if uid in self.parameters:
                pots[uid]["all_couples"] = [c.to_dict() for c in self.parameters[uid].couples]
        cofs = []
        for c in self.cofactors:
            rec = c.to_dict()
            pot = self.potentials[c.uid]
            rec["potential_v"] = pot.e_v
            rec["potential_origin"] = pot.origin
            rec["couple_used"] = pot.couple
            rec["potential_basis"] = pot.basis
            if c.uid in self.parameters:
                par = self.parameters[c.uid]
                rec["potential_subclass"] = par.subclass
                rec["potential_subclass_reason"] = par.subclass_reason
                rec["reorg_ev"] = par.reorg
                rec["reorg_origin"] = par.reorg_origin
            cofs.append(rec)
        opts = self.options.to_dict()
        opts["edge_convention"] = EDGE_CONVENTION[self.options.edge_atoms]
        return finite_json({
            "file": self.path,
            "structure": self.info.to_dict(),
            "options": opts,
            "symmetry_mates": "included" if self.options.symmetry else "not included (asymmetric unit only)",
            "caution": CAUTION,
            "cofactors": cofs,
            "potentials": pots,
            "pairs": self.pair_records(),
            "wire": self.wire.to_dict(),
            "all_pairs": self.all_pairs,
            "not_analysed": dict(self.not_analysed),
        })


def scan(path: str, entry: str | None = None, exit: str | None = None, **options: Any) -> ScanResult:  # noqa: A002
    """Analyse one structure file: cofactors, checks, distances, rates and the wire.

    Parameters
    ----------
    path : str or path-like
        A PDB or mmCIF file, gzipped or not.
    entry, exit : str, optional
        Selectors ``CHAIN/RESNUM[ICODE]`` of the entry and exit cofactors
        (defaults: a flavin → the fastest-reached quinone or heme; else the
        two ends of the longest chain).
    **options
        Any field of :class:`fescan.options.ScanOptions` (``model``, ``altloc``,
        ``cutoff``, ``gap_limit``, ``reorg``, ``packing_density``,
        ``temperature``, ``rate_threshold``, ``symmetry``, ``potentials_file``,
        ``all_pairs``, ``packing`` = ``"default"`` or ``"measured"``, ``packing_scale``).

    Returns
    -------
    ScanResult

    Raises
    ------
    fescan.errors.StructureFileError
        The file is missing, unreadable or holds no atoms.
    fescan.errors.CofactorNotFound
        ``entry`` or ``exit`` names no cofactor.
    fescan.errors.ConfigError
        An option or the potentials file is invalid.
    """
    opts = ScanOptions.from_kwargs(entry=entry, exit=exit, **options)
    loaded = read_structure(path, model=opts.model, altloc=opts.altloc)
    cofactors = find_cofactors(loaded.model, model_number=loaded.model_number, resolution=loaded.info.resolution)
    cell = ops = None
    if opts.symmetry:
        st = loaded.structure
        sg = st.find_spacegroup()
        if sg is not None and st.cell.is_crystal():
            cell, ops = st.cell, list(sg.operations())
    pairs = pair_distances(cofactors, opts.cutoff, cell=cell, symmetry_ops=ops, edge_convention=opts.edge_atoms)
    user = load_user_file(opts.potentials_file) if opts.potentials_file else UserFile("")
    params = assign_parameters(cofactors, user, context_subclasses(cofactors, _landmarks(loaded.model)))
    cofactors = [replace(c, role=params[c.uid].role, role_reason=f"set in {params[c.uid].role_origin}")
                 if params[c.uid].role else c for c in cofactors]
    reorgs = {u: p.reorg for u, p in params.items() if p.reorg is not None}
    packing = None
    if opts.packing == "measured":
        from fescan.transfer.packing import measured_packing_densities

        packing = measured_packing_densities(loaded, cofactors, pairs, scale=opts.packing_scale)

    def graph(entry: str | None) -> nx.DiGraph:
        pots = {u: p.working(entry=u == entry) for u, p in params.items()}
        g = build_cofactor_graph(cofactors, pairs, pots, opts, reorgs, packing=packing)
        for u, p in params.items():
            g.nodes[u]["parameters"] = p
        mark_crystal_contacts(g, assemblies)
        return g

    assemblies = _assembly_chains(loaded.structure)

    try:
        g = graph(None)
        ends = choose_endpoints(g, cofactors, opts)
        if ends[0] is not None and params[ends[0]].two_electron:
            g = graph(ends[0])  # a two-electron entry gives its first electron at sq/red
        wire = trace_wire(g, cofactors, opts, ends, user.reservoirs, user.path)
    except (CofactorNotFound, ConfigError) as exc:  # name the structure in the message
        raise type(exc)(f"{path}: {exc}") from None
    potentials = {u: g.nodes[u]["potential"] for u in g.nodes}
    if opts.symmetry and ops is None:
        wire.notes.append("symmetry mates requested but the file has no crystal cell/space group")
    extra = all_pair_paths(g, opts) if opts.all_pairs else []
    return ScanResult(str(path), loaded.info, opts, cofactors, pairs, potentials, g, wire, extra,
                      count_not_analysed(loaded.model), params, dict(user.reservoirs))


def _assembly_chains(st: Any) -> list[set[str]]:
    """Author chain names of each biological assembly the file declares (PDB REMARK 350 style)."""
    out = []
    for asm in getattr(st, "assemblies", []):
        chains = {c for gen in asm.generators for c in gen.chains}
        if chains:
            out.append(chains)
    return out


def _landmarks(model: Any) -> dict[str, np.ndarray]:
    """Atoms the context rules use (:mod:`fescan.transfer.context`): Trp side chains."""
    pts = [(a.pos.x, a.pos.y, a.pos.z) for ch in model for res in ch if res.name == "TRP"
           for a in res if a.name not in ("N", "CA", "C", "O", "CB")]
    return {"trp_side_chain": np.asarray(pts, dtype=float).reshape(-1, 3)}
