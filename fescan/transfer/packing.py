"""Packing density ρ measured from the atoms between two cofactors.

The Moser–Dutton law (Page, Moser, Chen & Dutton 1999, Nature 402:47) takes the
distance decay from ρ, "the fraction of the volume between the redox centres that
lies within the van der Waals radii of the intervening atoms"; the typical value
0.76 gives the usual 0.6 decades per Å. This module measures ρ for one pair of
cofactors instead of assuming 0.76. The paper gives the idea; the concrete volume
below is fescan's own choice, stated here so that the number can be reproduced.

The volume between two cofactors
--------------------------------
* **Axis**: the segment joining the two closest redox-active atoms of the two
  cofactors (the atoms that define the edge-to-edge distance R).
* **Volume**: the cylinder of radius ``radius`` (default 3.0 Å) around that
  segment, between the two planes through its end atoms and perpendicular to it.
* **Cofactor space removed**: points inside the van der Waals sphere of any
  redox-active atom of either cofactor belong to the donor or the acceptor, not
  to the medium between them, and are left out of the volume altogether.
* **Medium**: every other atom of the model - protein, the non-redox parts of
  cofactors (a flavin's ribityl chain, a heme's propionates), other
  heteroatoms - and, only with ``include_water=True``, water. Water is left out
  by default: ρ is a *protein* packing density.
* **Sampling**: a cubic grid of spacing ``spacing`` (default 0.35 Å) clipped to
  the volume (deterministic, no random numbers); ρ = points within a medium atom's
  van der Waals radius / all points of the volume. The grid error is a few per
  cent at the default spacing (about 1 % at 0.1 Å).

Radii are Bondi's (Bondi 1964, J. Phys. Chem. 68:441; values from memory):
H 1.20, C 1.70, N 1.55, O 1.52, F 1.47, P 1.80, S 1.80, Cl 1.75, Se 1.90,
Br 1.85, I 1.98, Ni 1.63, Cu 1.40, Zn 1.39, Mg 1.73, Na 2.27, K 2.75 Å. Elements
Bondi does not list (Fe, Mo, Mn, Ca, Co, W, V...) get 1.70 Å (common practice, no
source). Hydrogen atoms count when the structure holds them; fescan's reader drops
them by default, so the medium is heavy atoms only, as in most X-ray entries.

When the two redox sets touch, the volume holds (almost) no points and ρ is
undefined; fewer than ``min_points`` points give ``fallback`` (0.76) and
:class:`PackingMeasure` says so. ρ here is a geometric estimate feeding an
empirical law: rates computed with it are model estimates, not measurements.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import gemmi
import numpy as np

from fescan.cofactors.atoms import WATER_NAMES, index_model
from fescan.core.arrays import distinct
from fescan.core.errors import ConfigError
from fescan.core.neighbours import NeighbourTree
from fescan.core.records import Cofactor
from fescan.transfer.distances import Pair, redox_coordinates
from fescan.transfer.rate_law import DEFAULT_PACKING_DENSITY

__all__ = [
    "BONDI_RADII",
    "FALLBACK_RADIUS",
    "PackingMeasure",
    "PackingMedium",
    "vdw_radius",
    "packing_between",
    "measured_packing_densities",
    "pair_packing",
    "hop_packing",
]

#: Bondi 1964 van der Waals radii (Å), J. Phys. Chem. 68:441 (from memory).
BONDI_RADII: dict[str, float] = {
    "H": 1.20, "D": 1.20, "C": 1.70, "N": 1.55, "O": 1.52, "F": 1.47, "P": 1.80, "S": 1.80,
    "CL": 1.75, "SE": 1.90, "BR": 1.85, "I": 1.98, "NI": 1.63, "CU": 1.40, "ZN": 1.39,
    "MG": 1.73, "NA": 2.27, "K": 2.75,
}
#: Radius (Å) of elements without a Bondi value (carbon's; common practice, no source).
FALLBACK_RADIUS: float = 1.70
_SAME_ATOM = 1e-3  # Å: a model atom this close to a redox atom is that atom
_RESIDUE_EXTENT = 7.5  # Å: no standard residue reaches farther from its first atom
_MAX_RADIUS = 2.75  # Å: largest radius in BONDI_RADII


def vdw_radius(element: str) -> float:
    """Bondi van der Waals radius of an element (Å), 1.70 Å when Bondi gives none.

    Examples
    --------
    >>> vdw_radius("S"), vdw_radius("fe")
    (1.8, 1.7)
    """
    return BONDI_RADII.get(element.strip().upper(), FALLBACK_RADIUS)


@dataclass(frozen=True, slots=True)
class PackingMeasure:
    """Measured packing density between two cofactors.

    Attributes
    ----------
    rho : float
        Packing density used (0-1); ``fallback`` when the volume was too small.
    measured : bool
        False when ``rho`` is the fallback (the redox sets touch).
    n_points : int
        Grid points in the volume (after removing the cofactors' own spheres).
    n_filled : int
        Points within a medium atom's van der Waals radius.
    volume : float
        Sampled volume (Å³) = ``n_points`` × spacing³.
    length : float
        Length of the axis, the edge-to-edge distance (Å).
    radius, spacing : float
        Cylinder radius and grid spacing used (Å).
    """

    rho: float
    measured: bool
    n_points: int
    n_filled: int
    volume: float
    length: float
    radius: float
    spacing: float

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record."""
        return {"rho": round(self.rho, 4), "measured": self.measured, "n_points": self.n_points,
                "n_filled": self.n_filled, "volume_a3": round(self.volume, 2), "length": round(self.length, 4),
                "radius": self.radius, "spacing": self.spacing}


class PackingMedium:
    """The atoms of one model that can fill the space between cofactors, indexed for lookup.

    Atoms are extracted lazily, residue by residue, only near the hop asked for
    (plus every non-standard residue, whose atoms may reach far from its first
    atom), so a large model is never copied whole.

    Parameters
    ----------
    model : gemmi.Model or fescan.structure.reading.LoadedStructure
        The model (a loaded structure gives its chosen model).
    """

    def __init__(self, model: gemmi.Model | Any) -> None:
        self._model = getattr(model, "model", model)  # keeps the gemmi model alive
        self._index = index_model(self._model)
        self._hetero = np.flatnonzero(self._index.is_candidate)

    def near(self, a: np.ndarray, b: np.ndarray, reach: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Atoms of residues that may come within ``reach`` Å of the segment a–b.

        Returns
        -------
        xyz : ndarray, shape=(n, 3)
        radius : ndarray, shape=(n,)
            Bondi radii (Å).
        water : ndarray of bool, shape=(n,)
        """
        n = max(2, int(np.ceil(np.linalg.norm(b - a))) + 1)
        axis = a + np.linspace(0.0, 1.0, n)[:, None] * (b - a)
        ids = set(self._index.residues_near(axis, reach + _RESIDUE_EXTENT + 0.5).tolist()) | set(self._hetero.tolist())
        arr = self._index.extract(np.asarray(sorted(ids), dtype=int))
        radius = np.asarray([vdw_radius(e) for e in arr.element], dtype=float)
        water = np.asarray([r in WATER_NAMES for r in arr.resname], dtype=bool)
        return arr.xyz, radius, water


def _check(radius: float, spacing: float) -> None:
    for name, v in (("radius", radius), ("spacing", spacing)):
        if not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
            raise ConfigError(f"packing {name} must be a positive number of Å, got {v!r}")
    if spacing > radius:
        raise ConfigError(f"packing grid spacing ({spacing} Å) must not exceed the cylinder radius ({radius} Å)")


def _cylinder_points(a: np.ndarray, b: np.ndarray, radius: float, spacing: float) -> np.ndarray:
    """Grid points (spacing Å, in a frame aligned with a→b) inside the cylinder a–b of given radius."""
    axis = b - a
    length = float(np.linalg.norm(axis))
    if length == 0.0:
        return np.zeros((0, 3))
    u = axis / length
    helper = np.array([1.0, 0.0, 0.0]) if abs(u[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    v = np.cross(u, helper)
    v /= np.linalg.norm(v)
    w = np.cross(u, v)
    ts = np.arange(spacing / 2, length, spacing)
    rs = np.arange(-radius + spacing / 2, radius, spacing)
    t, x, y = np.meshgrid(ts, rs, rs, indexing="ij")
    keep = x**2 + y**2 <= radius**2
    t, x, y = t[keep], x[keep], y[keep]
    return a + np.outer(t, u) + np.outer(x, v) + np.outer(y, w)


def _inside_any(points: np.ndarray, xyz: np.ndarray, radius: np.ndarray) -> np.ndarray:
    """Mask of points within the radius of at least one atom (atoms grouped by radius)."""
    inside = np.zeros(len(points), dtype=bool)
    if len(points) == 0 or len(xyz) == 0:
        return inside
    for r in distinct(radius):
        sel = xyz[radius == r]
        d, _ = NeighbourTree(sel).query(points, k=1, distance_upper_bound=float(r))
        inside |= d <= r
    return inside


def packing_between(
    medium_xyz: np.ndarray,
    medium_radius: np.ndarray,
    donor_xyz: np.ndarray,
    donor_radius: np.ndarray,
    acceptor_xyz: np.ndarray,
    acceptor_radius: np.ndarray,
    *,
    radius: float = 3.0,
    spacing: float = 0.35,
    min_points: int = 20,
    fallback: float = DEFAULT_PACKING_DENSITY,
) -> PackingMeasure:
    """Packing density of the medium between two redox-active atom sets.

    Parameters
    ----------
    medium_xyz : ndarray, shape=(n, 3)
        Atoms that can fill the volume (Å); the redox atoms must not be among them.
    medium_radius : ndarray, shape=(n,)
        Their van der Waals radii (Å).
    donor_xyz, acceptor_xyz : ndarray, shape=(k, 3)
        Redox-active atoms of the two cofactors (Å).
    donor_radius, acceptor_radius : ndarray, shape=(k,)
        Their radii (Å); space inside them is not part of the volume.
    radius : float, optional
        Cylinder radius around the closest-atom axis (Å), default 3.0.
    spacing : float, optional
        Grid spacing (Å), default 0.35.
    min_points : int, optional
        Fewer volume points than this give ``fallback``.
    fallback : float, optional
        ρ used when the volume is too small (default 0.76).

    Returns
    -------
    PackingMeasure

    Raises
    ------
    fescan.core.errors.ConfigError
        Radius or spacing not positive, or spacing above the radius.

    Examples
    --------
    >>> one = np.zeros((1, 3)); far = np.array([[12.0, 0, 0]]); r = np.array([1.8])
    >>> packing_between(np.zeros((0, 3)), np.zeros(0), one, r, far, r).rho
    0.0
    """
    _check(radius, spacing)
    dx = np.asarray(donor_xyz, dtype=float).reshape(-1, 3)
    ax = np.asarray(acceptor_xyz, dtype=float).reshape(-1, 3)
    d, k = NeighbourTree(ax).query(dx, k=1)
    i = int(np.argmin(d))
    a, b = dx[i], ax[int(k[i])]
    length = float(d[i])
    pts = _cylinder_points(a, b, radius, spacing)
    ends_xyz = np.concatenate([dx, ax])
    ends_r = np.concatenate([np.broadcast_to(np.asarray(donor_radius, float), len(dx)),
                             np.broadcast_to(np.asarray(acceptor_radius, float), len(ax))])
    pts = pts[~_inside_any(pts, ends_xyz, ends_r)]
    n = len(pts)
    if n < min_points:
        return PackingMeasure(float(fallback), False, n, 0, n * spacing**3, length, radius, spacing)
    mx = np.asarray(medium_xyz, dtype=float).reshape(-1, 3)
    mr = np.asarray(medium_radius, dtype=float).reshape(-1)
    if len(mx):
        near = np.linalg.norm(mx - (a + b) / 2, axis=1) <= length / 2 + radius + float(mr.max())
        mx, mr = mx[near], mr[near]
    filled = int(np.count_nonzero(_inside_any(pts, mx, mr)))
    return PackingMeasure(filled / n, True, n, filled, n * spacing**3, length, radius, spacing)


def _redox(c: Cofactor) -> tuple[np.ndarray, np.ndarray]:
    return redox_coordinates(c), np.asarray([vdw_radius(a.element) for a in c.redox_atoms], dtype=float)


def pair_packing(
    medium: PackingMedium, donor: Cofactor, acceptor: Cofactor, *, include_water: bool = False, **kwargs: Any
) -> PackingMeasure:
    """Measured packing density between two cofactors of one model.

    Parameters
    ----------
    medium : PackingMedium
        Built on the model the cofactors come from.
    donor, acceptor : Cofactor
    include_water : bool, optional
        Count water atoms as medium (default: no).
    **kwargs
        ``radius``, ``spacing``, ``min_points``, ``fallback`` of :func:`packing_between`.

    Returns
    -------
    PackingMeasure
    """
    dx, dr = _redox(donor)
    ax, ar = _redox(acceptor)
    d, k = NeighbourTree(ax).query(dx, k=1)
    i = int(np.argmin(d))
    xyz, rad, water = medium.near(dx[i], ax[int(k[i])], float(kwargs.get("radius", 3.0)) + _MAX_RADIUS)
    keep = np.ones(len(xyz), dtype=bool) if include_water else ~water
    if len(xyz):
        dd, _ = NeighbourTree(np.concatenate([dx, ax])).query(xyz, k=1)
        keep &= dd > _SAME_ATOM
    return packing_between(xyz[keep], rad[keep], dx, dr, ax, ar, **kwargs)


def measured_packing_densities(
    loaded_structure_or_model: Any,
    cofactors: Sequence[Cofactor],
    pairs: Sequence[Pair],
    *,
    include_water: bool = False,
    scale: float = 1.0,
    **kwargs: Any,
) -> dict[tuple[int, int], float]:
    """Measured ρ of every pair (the hook for a ``packing="measured"`` scan option).

    fescan's measure runs lower than the 0.76 average of Page et al. (0.50 on the 15 wire
    hops of 2FUG, 1KF6, 1YQ9, 1FDN and 7FD1; see the module docstring), so feeding it
    unchanged into the rate law makes every hop slower than with the default.
    ``scale`` multiplies each measured value (clipped to 1) to put it on the paper's
    scale if wanted, e.g. 0.76 / 0.505 ≈ 1.5 (derived from those hops).

    Parameters
    ----------
    loaded_structure_or_model : fescan.structure.reading.LoadedStructure or gemmi.Model
        The structure the cofactors were found in.
    cofactors : sequence of Cofactor
    pairs : sequence of Pair
        From :func:`fescan.transfer.distances.pair_distances`. Pairs to a symmetry mate
        (``pair.symmetry`` set) get the fallback 0.76: the mate's surroundings
        are not in the model.
    include_water : bool, optional
    scale : float, optional
        Factor applied to measured values (not to the fallback), result clipped to [0, 1].
    **kwargs
        ``radius``, ``spacing``, ``min_points``, ``fallback`` of :func:`packing_between`.

    Returns
    -------
    dict of (int, int) to float
        ``(pair.i, pair.j) → ρ`` (0-1).

    Raises
    ------
    fescan.core.errors.ConfigError
        ``scale`` not a positive number, or bad ``radius``/``spacing``.
    """
    if not isinstance(scale, (int, float)) or not math.isfinite(scale) or scale <= 0:
        raise ConfigError(f"packing scale must be a positive number, got {scale!r}")
    medium = PackingMedium(loaded_structure_or_model)
    fallback = float(kwargs.get("fallback", DEFAULT_PACKING_DENSITY))
    out: dict[tuple[int, int], float] = {}
    for p in pairs:
        if p.symmetry:
            out[(p.i, p.j)] = fallback
            continue
        m = pair_packing(medium, cofactors[p.i], cofactors[p.j], include_water=include_water, **kwargs)
        out[(p.i, p.j)] = min(1.0, m.rho * scale) if m.measured else m.rho
    return out


def hop_packing(
    result: Any, loaded: Any | None = None, *, include_water: bool = False, **kwargs: Any
) -> list[dict[str, Any]]:
    """Measured ρ of every hop of a scan result's wire, one record per hop.

    Parameters
    ----------
    result : fescan.analysis.scan.ScanResult
    loaded : fescan.structure.reading.LoadedStructure or gemmi.Model, optional
        The structure scanned; read again from ``result.path`` (same model and
        altloc options) when not given.
    include_water : bool, optional
    **kwargs
        As for :func:`packing_between`.

    Returns
    -------
    list of dict
        ``step, donor, acceptor, edge_distance`` and the fields of
        :meth:`PackingMeasure.to_dict`.
    """
    if loaded is None:
        from fescan.structure.reading import read_structure

        loaded = read_structure(result.path, model=result.options.model, altloc=result.options.altloc)
    medium = PackingMedium(loaded)
    by_uid: Mapping[str, Cofactor] = {c.uid: c for c in result.cofactors}
    out = []
    for k, h in enumerate(result.wire.hops, start=1):
        m = pair_packing(medium, by_uid[h.donor], by_uid[h.acceptor], include_water=include_water, **kwargs)
        out.append({"step": k, "donor": h.donor, "acceptor": h.acceptor, "edge_distance": h.edge, **m.to_dict()})
    return out
