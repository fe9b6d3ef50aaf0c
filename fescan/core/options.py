"""Options of one analysis, frozen and passed down (no global state)."""

from __future__ import annotations

from dataclasses import asdict, dataclass, fields
from typing import Any

from fescan.core.errors import ConfigError

__all__ = ["ScanOptions"]


@dataclass(frozen=True)
class ScanOptions:
    """Every knob of :func:`fescan.scan`, with its default.

    Attributes
    ----------
    model : int
        Model number to read (1 = first).
    altloc : str
        ``"occupancy"`` (keep the alternative location with the highest occupancy
        per residue), ``"first"`` (the first label) or ``"all"``.
    cutoff : float
        Largest edge-to-edge distance (Å) of a pair considered as a hop.
    gap_limit : float
        Hops longer than this (Å) are relay gaps (Page et al. 1999: 14 Å).
    reorg : float
        Reorganisation energy λ (eV) of every hop without a user value.
    packing_density : float
        Protein packing density ρ between cofactors (0-1; 0.76 typical).
    temperature : float
        Temperature (K) of the detailed-balance factor of uphill hops.
    rate_threshold : float
        A hop slower than this (s⁻¹) is flagged as too slow for turnover.
    symmetry : bool
        Also consider hops to crystal-symmetry mates.
    potentials_file : str or None
        TOML file with per-cofactor potentials / reorganisation energies.
    entry, exit : str or None
        Selectors (``CHAIN/RESNUM``) of the entry and exit cofactors.
    all_pairs : bool
        Also compute the fastest path between every connected pair.
    packing : str
        ``"default"`` (ρ = ``packing_density`` for every hop) or ``"measured"``
        (ρ measured from the protein atoms between the two cofactors, see
        :mod:`fescan.transfer.packing`).
    packing_scale : float
        Factor applied to measured ρ values (clipped to 1).
    edge_atoms : str
        Which atoms make the edge of a metal centre for edge-to-edge distances:
        ``"core"`` (metal ions and bridging S; default) or ``"core+ligands"`` (also
        the first-shell Cys S, His N, Met S). See
        :data:`fescan.transfer.distances.EDGE_CONVENTION`.
    reverse : bool
        Run the default wire against the direction chosen from chemistry (swap
        entry and exit); ignored when the user names the endpoints.
    """

    model: int = 1
    altloc: str = "occupancy"
    cutoff: float = 25.0
    gap_limit: float = 14.0
    reorg: float = 0.7
    packing_density: float = 0.76
    temperature: float = 298.15
    rate_threshold: float = 1.0e3
    symmetry: bool = False
    potentials_file: str | None = None
    entry: str | None = None
    exit: str | None = None
    all_pairs: bool = False
    packing: str = "default"
    packing_scale: float = 1.0
    edge_atoms: str = "core"
    reverse: bool = False

    def __post_init__(self) -> None:
        if not isinstance(self.model, int) or self.model < 1:
            raise ConfigError(f"model must be a positive integer, got {self.model!r}")
        if self.altloc not in ("occupancy", "first", "all"):
            raise ConfigError(f"altloc must be 'occupancy', 'first' or 'all', got {self.altloc!r}")
        for name in ("cutoff", "gap_limit", "reorg", "temperature", "rate_threshold"):
            v = getattr(self, name)
            if not isinstance(v, (int, float)) or not v > 0:
                raise ConfigError(f"{name} must be a positive number, got {v!r}")
        if self.packing not in ("default", "measured"):
            raise ConfigError(f"packing must be 'default' or 'measured', got {self.packing!r}")
        if self.edge_atoms not in ("core", "core+ligands"):
            raise ConfigError(f"edge_atoms must be 'core' or 'core+ligands', got {self.edge_atoms!r}")
        if not isinstance(self.packing_scale, (int, float)) or not self.packing_scale > 0:
            raise ConfigError(f"packing_scale must be a positive number, got {self.packing_scale!r}")
        if not 0.0 <= self.packing_density <= 1.0:
            raise ConfigError(f"packing_density must lie in [0, 1], got {self.packing_density!r}")
        if self.cutoff < self.gap_limit:
            raise ConfigError(f"cutoff ({self.cutoff} Å) must not be below gap_limit ({self.gap_limit} Å)")

    @classmethod
    def from_kwargs(cls, **kwargs: Any) -> ScanOptions:
        """Build options from keyword arguments, rejecting unknown names."""
        known = {f.name for f in fields(cls)}
        unknown = sorted(set(kwargs) - known)
        if unknown:
            raise ConfigError(f"unknown option(s): {', '.join(unknown)}; known: {', '.join(sorted(known))}")
        return cls(**kwargs)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict of every option."""
        return asdict(self)
