"""One structure, end to end: read → cofactors → distances → graph → wire.

:func:`scan` is the single per-structure function; the CLI and the survey call
it unchanged. Its result is plain data (picklable) with ``to_dict()``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import networkx as nx

from fescan.cofactors import count_not_analysed, find_cofactors
from fescan.core.errors import CofactorNotFound, ConfigError
from fescan.core.jsonutil import finite_json
from fescan.core.options import ScanOptions
from fescan.core.records import Cofactor
from fescan.structure.reading import StructureInfo, read_structure
from fescan.transfer.distances import Pair, pair_distances
from fescan.transfer.graph import build_cofactor_graph
from fescan.transfer.paths import Wire, all_pair_paths, trace_wire
from fescan.transfer.potentials import (
    Potential,
    assign_potentials,
    load_user_parameters,
    reorganisation_overrides,
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
        Potential used for each cofactor (uid → value and origin).
    graph : networkx.DiGraph
        Cofactor graph with a hop on every directed edge.
    wire : Wire
        Entry, exit, fastest path, bottleneck, gaps, transfer times.
    all_pairs : list of dict
        Fastest path of every connected pair (only with ``all_pairs=True``).
    not_analysed : dict of str to int
        Residues of redox-active groups fescan does not model (chlorophylls,
        nicotinamides...), counted by CCD code.
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
        pots = {
            uid: {"e_v": p.e_v, "low_v": p.low_v, "high_v": p.high_v, "source": p.source, "origin": p.origin}
            for uid, p in self.potentials.items()
        }
        cofs = []
        for c in self.cofactors:
            rec = c.to_dict()
            rec["potential_v"] = self.potentials[c.uid].e_v
            rec["potential_origin"] = self.potentials[c.uid].origin
            cofs.append(rec)
        return finite_json({
            "file": self.path,
            "structure": self.info.to_dict(),
            "options": self.options.to_dict(),
            "symmetry_mates": "included" if self.options.symmetry else "not included (asymmetric unit only)",
            "caution": CAUTION,
            "cofactors": cofs,
            "potentials": pots,
            "pairs": self.pair_records(),
            "wire": self.wire.to_dict(),
            "all_pairs": self.all_pairs,
            "not_analysed": dict(self.not_analysed),
        })


def _deposited_coordinate_error(path: str) -> float | None:
    """The overall coordinate error (Å) the file's header states, or ``None`` (widens the bond windows)."""
    try:
        from fescan.structure.refinement import read_refinement_stats
    except ImportError:  # before the refinement-statistics reader: the header patterns of the uncertainty module
        from fescan.transfer.uncertainty import _header_text, deposited_coordinate_error

        return deposited_coordinate_error(_header_text(path, 2_000_000))
    st = read_refinement_stats(path)
    for v in (st.dpi_rfree, st.dpi_r, st.ml_error, st.luzzati_free, st.luzzati):
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
    cofactors = find_cofactors(loaded.model, model_number=loaded.model_number, resolution=loaded.info.resolution,
                               coordinate_error=_deposited_coordinate_error(str(path)))
    cell = ops = None
    if opts.symmetry:
        st = loaded.structure
        sg = st.find_spacegroup()
        if sg is not None and st.cell.is_crystal():
            cell, ops = st.cell, list(sg.operations())
    pairs = pair_distances(cofactors, opts.cutoff, cell=cell, symmetry_ops=ops)
    user = load_user_parameters(opts.potentials_file) if opts.potentials_file else None
    potentials = assign_potentials(cofactors, user)
    reorgs = reorganisation_overrides(cofactors, user)
    packing = None
    if opts.packing == "measured":
        from fescan.transfer.packing import measured_packing_densities

        packing = measured_packing_densities(loaded, cofactors, pairs, scale=opts.packing_scale)
    g = build_cofactor_graph(cofactors, pairs, potentials, opts, reorgs, packing=packing)
    try:
        wire = trace_wire(g, cofactors, opts)
    except (CofactorNotFound, ConfigError) as exc:  # name the structure in the message
        raise type(exc)(f"{path}: {exc}") from None
    if opts.symmetry and ops is None:
        wire.notes.append("symmetry mates requested but the file has no crystal cell/space group")
    extra = all_pair_paths(g, opts) if opts.all_pairs else []
    return ScanResult(str(path), loaded.info, opts, cofactors, pairs, potentials, g, wire, extra,
                      count_not_analysed(loaded.model))
