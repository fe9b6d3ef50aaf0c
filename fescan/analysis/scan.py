"""One structure, end to end: read → cofactors → distances → graph → wire.

:func:`scan` is the single per-structure function; the CLI and the survey call
it unchanged. Its result is plain data (picklable) with ``to_dict()``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

import gemmi
import networkx as nx
import numpy as np

from fescan.analysis.caution import CAUTION
from fescan.cofactors import count_not_analysed, find_cofactors
from fescan.cofactors.header_check import missing_cofactor_notes, models_with_cofactors
from fescan.cofactors.inventory import with_altloc_states
from fescan.cofactors.roles import apply_role_overrides
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
    off_wire : list of dict
        Cofactors kept off the wire (role ``structural`` or ``ion or
        additive``): ``id``, ``label``, ``role`` and ``reason``. They are listed in
        ``cofactors`` but are no node of ``graph`` and in no pair.
    notes : list of str
        Findings about the file as a whole (cofactors named in the header but
        absent from the coordinates, other models holding cofactors...).
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
    off_wire: list[dict] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    parameters: dict[str, CofactorParameters] = field(default_factory=dict)
    reservoirs: dict[str, float] = field(default_factory=dict)

    @property
    def reorgs(self) -> dict[str, float]:
        """Per-cofactor λ from the user file (eV), by uid."""
        return {u: p.reorg for u, p in self.parameters.items() if p.reorg is not None}

    def cofactor(self, uid: str) -> Cofactor:
        """The cofactor with this uid (on the wire or not)."""
        if uid in self.graph:
            return self.graph.nodes[uid]["cofactor"]
        for c in self.cofactors:
            if c.uid == uid:
                return c
        raise KeyError(uid)

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
            "off_wire": list(self.off_wire),
            "notes": list(self.notes),
        })


def _deposited_coordinate_error(stats: Any) -> float | None:
    """The overall coordinate error (Å) the file's header states, or ``None`` (widens the bond windows)."""
    if stats is None:
        return None
    for v in (stats.dpi_rfree, stats.dpi_r, stats.ml_error, stats.luzzati_free, stats.luzzati):
        if v is not None and v > 0:
            return float(v)
    return None


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
        Any field of :class:`fescan.core.options.ScanOptions` (``model``, ``altloc``,
        ``cutoff``, ``gap_limit``, ``reorg``, ``packing_density``,
        ``temperature``, ``rate_threshold``, ``symmetry``, ``potentials_file``,
        ``all_pairs``, ``packing`` = ``"default"`` or ``"measured"``, ``packing_scale``).

    Returns
    -------
    ScanResult

    Raises
    ------
    fescan.core.errors.StructureFileError
        The file is missing, unreadable or holds no atoms.
    fescan.core.errors.CofactorNotFound
        ``entry`` or ``exit`` names no cofactor.
    fescan.core.errors.ConfigError
        An option or the potentials file is invalid.
    """
    opts = ScanOptions.from_kwargs(entry=entry, exit=exit, **options)
    loaded = read_structure(path, model=opts.model, altloc=opts.altloc)
    cofactors = find_cofactors(loaded.model, model_number=loaded.model_number, resolution=loaded.info.resolution,
                               coordinate_error=_deposited_coordinate_error(loaded.refinement),
                               structure=loaded.structure)
    cofactors = with_altloc_states(cofactors, loaded.altloc_states, opts.altloc)
    user = load_user_file(opts.potentials_file) if opts.potentials_file else UserFile("")
    every_param = assign_parameters(cofactors, user, context_subclasses([c for c in cofactors if not c.is_ion_site],
                                                                            _landmarks(loaded.model)))
    roles = {c.key: every_param[c.uid].role for c in cofactors if every_param[c.uid].role}
    if roles:
        cofactors = apply_role_overrides(cofactors, roles, origin=f"parameter file {opts.potentials_file}")
    everything = cofactors
    cofactors = [c for c in everything if c.role in WIRE_ROLES]  # only these enter the wire
    off_wire = [{"id": c.uid, "label": c.label, "role": c.role, "reason": c.role_reason}
                for c in everything if c.role not in WIRE_ROLES]
    params = {c.uid: every_param[c.uid] for c in cofactors}
    cell = ops = None
    if opts.symmetry:
        st = loaded.structure
        sg = st.find_spacegroup()
        if sg is not None and st.cell.is_crystal():
            cell, ops = st.cell, list(sg.operations())
    pairs = pair_distances(cofactors, opts.cutoff, cell=cell, symmetry_ops=ops, edge_convention=opts.edge_atoms)
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
    potentials = {u: p.working() for u, p in every_param.items()}  # off-wire cofactors: for display
    potentials.update({u: g.nodes[u]["potential"] for u in g.nodes})
    if opts.symmetry and ops is None:
        wire.notes.append("symmetry mates requested but the file has no crystal cell/space group")
    extra = all_pair_paths(g, opts) if opts.all_pairs else []
    # pairs index the wired cofactors; the result lists every cofactor in file order
    index = {c.uid: k for k, c in enumerate(everything)}
    pairs = [replace(p, i=index[cofactors[p.i].uid], j=index[cofactors[p.j].uid]) for p in pairs]
    if off_wire:
        wire.notes.append(
            f"{len(off_wire)} cofactor(s) kept off the wire (structural metals and ions): "
            + "; ".join(f"{o['label']} ({o['role']})" for o in off_wire))
    return ScanResult(str(path), loaded.info, opts, everything, pairs, potentials, g, wire, extra,
                      count_not_analysed(loaded.model, everything), off_wire,
                      _file_notes(path, loaded, everything), every_param, dict(user.reservoirs))


def _file_notes(path, loaded, cofactors: list[Cofactor]) -> list[str]:
    """Cofactors the header names but the coordinates lack; other models holding cofactors."""
    notes: list[str] = []
    try:
        notes += missing_cofactor_notes(path, loaded.model, loaded.header_codes)
        if not cofactors and loaded.info.n_models > 1:
            others = {k: v for k, v in models_with_cofactors(path).items() if k != loaded.model_number}
            if others:
                which = ", ".join(str(k) for k in sorted(others))
                codes = sorted({c for v in others.values() for c in v})
                notes.append(f"model {loaded.model_number} holds no cofactor; model{'s' if len(others) > 1 else ''} "
                             f"{which} hold{'' if len(others) > 1 else 's'} {', '.join(codes)} (choose one with --model-number, "
                             "or model= in Python)")
    except (OSError, RuntimeError, ValueError) as exc:  # the header is a courtesy check: never fail the scan
        notes.append(f"header not checked ({exc})")
    return notes


#: Roles whose cofactors enter the cofactor graph (relays carry electrons through;
#: catalytic sites may be an entry or an exit, the path rules keep them off the inside).
WIRE_ROLES = frozenset({"relay", "catalytic"})


def _assembly_chains(st: Any) -> list[set[str]]:
    """Author chain names of each biological assembly the file declares.

    A PDB file names the assembly's author chains (REMARK 350); an mmCIF file names
    its label_asym_id subchains (``_pdbx_struct_assembly_gen.asym_id_list``), which are
    mapped to the author chains that hold them, so both formats give the same copies.
    """
    out = []
    owner: dict[str, str] | None = None
    for asm in getattr(st, "assemblies", []):
        chains: set[str] = set()
        for gen in asm.generators:
            chains.update(gen.chains)
            if len(gen.subchains):
                if owner is None:
                    owner = {span.subchain_id(): ch.name for ch in (st[0] if len(st) else [])
                             for span in ch.subchains()}
                chains.update(owner[s] for s in gen.subchains if s in owner)
        if chains:
            out.append(chains)
    return out


class _Landmarks(Mapping):
    """Atoms the context rules use (:mod:`fescan.transfer.context`), read from the model when first asked for.

    ``trp_side_chain``: side-chain atoms of tryptophans (only a rule on two
    plastoquinones asks, so most scans never read them).
    """

    _KEYS = ("trp_side_chain",)

    def __init__(self, model: Any) -> None:
        self._model = model
        self._cache: dict[str, np.ndarray] = {}

    def __getitem__(self, key: str) -> np.ndarray:
        if key not in self._KEYS:
            raise KeyError(key)
        if key not in self._cache:
            trp = gemmi.Selection("(TRP)").copy_model_selection(self._model)  # compiled: no loop over the model
            pts = [(a.pos.x, a.pos.y, a.pos.z) for ch in trp for res in ch
                   for a in res if a.name not in ("N", "CA", "C", "O", "CB")]
            self._cache[key] = np.asarray(pts, dtype=float).reshape(-1, 3)
        return self._cache[key]

    def __iter__(self):
        return iter(self._KEYS)

    def __len__(self) -> int:
        return len(self._KEYS)


def _landmarks(model: Any) -> Mapping[str, np.ndarray]:
    """Atoms the context rules use, read lazily (:class:`_Landmarks`)."""
    return _Landmarks(model)
