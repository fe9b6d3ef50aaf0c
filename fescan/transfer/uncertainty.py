"""Honest precision of a wire: coordinate error, λ range, the law's scatter, potential sensitivities.

:func:`wire_uncertainty` puts intervals on what a scan says about its wire — the
mean first-passage time of one electron entering an oxidised chain, every path
hop's rate, and any extra "wire → number" quantity (a steady-state flux) — and
says which potentials drive them. How the intervals are built is in
:mod:`fescan.transfer.intervals`; where the coordinate error comes from is in
:mod:`fescan.transfer.coordinate_error` (Cruickshank's DPI or the deposited
maximum-likelihood error, scaled per atom by B; B alone as a stated fallback).
Rates and times are model estimates from the empirical Moser–Dutton law.

The measured packing density is never put into these numbers by this module: the
rates use the ρ each hop was scanned with (the default 0.76 unless the user asked
for ``packing="measured"``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fescan.core.errors import ConfigError, FescanError
from fescan.core.numbers import format_with_interval
from fescan.transfer.coordinate_error import CoordinateError, sigma_from_b
from fescan.transfer.intervals import (
    LAW_SCATTER_DECADES,
    LEVELS,
    MONTE_CARLO_SAMPLES,
    REORG_RANGE,
    QuantityInterval,
    hop_rate_of,
    quantity_intervals,
)
from fescan.transfer.rate_law import (
    CONTACT_DISTANCE,
    DEFAULT_PACKING_DENSITY,
    DEFAULT_REORG,
    log10_hop_rate,
)
from fescan.transfer.rate_samples import Quantity, build_component, mfpt_of, summed_path_time_of

__all__ = [
    "LEVELS",
    "REORG_RANGE",
    "LAW_SCATTER_DECADES",
    "sigma_from_b",
    "log10_rate_slopes",
    "monte_carlo_log10_rate",
    "structure_coordinate_error",
    "wire_quantities",
    "HopUncertainty",
    "WireUncertainty",
    "wire_uncertainty",
    "deposited_coordinate_error",
]


try:  # the rate-law module carries the slopes once the energetics work lands there
    from fescan.transfer.rate_law import log10_rate_slopes  # type: ignore[attr-defined]
except ImportError:  # until then, the same derivatives here

    def log10_rate_slopes(
        distance: float, dg: float, reorg: float = DEFAULT_REORG, packing_density: float = DEFAULT_PACKING_DENSITY,
        temperature: float = 298.15,
    ) -> tuple[float, float]:
        """∂log10k/∂R (per Å) and ∂log10k/∂ΔG (per eV) of the Moser–Dutton law.

        Kept here until the rate-law module carries its own slopes. At ΔG = 0 (the
        law's kink) the RMS of the two one-sided slopes is returned.

        Examples
        --------
        >>> [round(s, 4) for s in log10_rate_slopes(10.0, -0.35, reorg=0.7)]
        [-0.592, -3.1]
        """
        from fescan.core.constants import kt_ln10_ev

        d_r = -(1.2 - 0.8 * packing_density) if distance > CONTACT_DISTANCE else 0.0
        down = -6.2 * (dg + reorg) / reorg
        up = 6.2 * (reorg - dg) / reorg - 1.0 / kt_ln10_ev(temperature)
        if dg < 0:
            return d_r, down
        if dg > 0:
            return d_r, up
        return d_r, -math.sqrt(0.5 * (down**2 + up**2))


def monte_carlo_log10_rate(
    distance: float, sigma_distance: float, dg: float, *, reorg: float = DEFAULT_REORG,
    packing_density: float = DEFAULT_PACKING_DENSITY, temperature: float = 298.15,
    n_samples: int = 20000, seed: int | None = 0,
) -> np.ndarray:
    """Samples of log10 k of one hop with a normal R (clipped at 0); seeded.

    Returns
    -------
    ndarray, shape=(n_samples,)
    """
    rng = np.random.default_rng(seed)
    r = np.clip(rng.normal(distance, sigma_distance, n_samples), 0.0, None)
    return np.asarray(log10_hop_rate(r, dg, reorg, packing_density, temperature=temperature))


def structure_coordinate_error(result: Any) -> CoordinateError:
    """Coordinate error model of a scanned file: its refinement statistics and its atoms' mean B.

    The header is read again from ``result.path``; the mean B is that of the
    chosen model's atoms (re-read with the scan's model and altloc options).
    """
    from fescan.structure.reading import read_structure
    from fescan.structure.refinement import read_refinement_stats
    from fescan.transfer.coordinate_error import coordinate_error

    stats = read_refinement_stats(str(result.path))
    mean_b, has_b = None, any(a.b_iso > 0 for c in result.cofactors for a in c.redox_atoms)
    try:
        loaded = read_structure(result.path, model=result.options.model, altloc=result.options.altloc)
        b = np.fromiter((a.b_iso for ch in loaded.model for res in ch for a in res), dtype=float)
        if b.size and (b > 0).any():
            mean_b = float(b[b > 0].mean())
    except FescanError:  # the scan read the file already; the deposited mean B stands in
        pass
    method = getattr(result.info, "method", None)
    return coordinate_error(stats, mean_b, method=method, has_b=has_b)


def wire_quantities(result: Any, extra: Mapping[str, Quantity] | None = None) -> tuple[dict[str, Quantity],
                                                                                     dict[str, str]]:
    """The standard quantities of a wire and their units, plus ``extra``.

    ``mean_first_passage_time`` (s), ``summed_hop_time`` (s, forward steps along the
    path only) and ``hop <donor> > <acceptor>`` (s⁻¹) for each hop of the path.
    """
    q: dict[str, Quantity] = {"mean_first_passage_time": mfpt_of, "summed_hop_time": summed_path_time_of}
    units = {"mean_first_passage_time": "s", "summed_hop_time": "s"}
    path = list(result.wire.path)
    for a, b in zip(path, path[1:]):
        q[f"hop {a} > {b}"] = hop_rate_of(a, b)
        units[f"hop {a} > {b}"] = "s⁻¹"
    for k, f in (extra or {}).items():
        q[k] = f
        units.setdefault(k, "")
    return q, units


@dataclass(frozen=True, slots=True)
class HopUncertainty:
    """Interval of one path hop's rate.

    Attributes
    ----------
    donor, acceptor : str
        Cofactor uids.
    closest_atoms : str
        The two atoms defining R (``"FE1-S3"``).
    edge, sigma_edge : float
        R and σ_R (Å).
    sigma_atoms : tuple of float
        σ(x) of the two closest atoms (Å).
    dg : float
        ΔG (eV) as scanned.
    log10_k : float
        Point estimate (as in the scan).
    log10_k_68, log10_k_95 : tuple of float
        Intervals of log10 k (s⁻¹): coordinates × λ range, ± the law's 0.8 decade.
    log10_k_coordinates : tuple of float
        Coordinates alone (95 %), λ as used.
    interval : QuantityInterval
        The full record (λ ends, law ends, potential sensitivities).
    method : str
    """

    donor: str
    acceptor: str
    closest_atoms: str
    edge: float
    sigma_edge: float
    sigma_atoms: tuple[float, float]
    dg: float
    log10_k: float
    log10_k_68: tuple[float, float]
    log10_k_95: tuple[float, float]
    log10_k_coordinates: tuple[float, float]
    interval: QuantityInterval
    method: str = "monte-carlo"

    def rate_interval(self, level: str = "95%") -> tuple[float, float]:
        """Rate interval (s⁻¹)."""
        lo, hi = self.log10_k_68 if level == "68%" else self.log10_k_95
        return 10.0**lo, 10.0**hi

    def hop_time_interval(self, level: str = "95%") -> tuple[float, float]:
        """Hop-time interval (s), 1/k of the rate interval."""
        lo, hi = self.rate_interval(level)
        return 1.0 / hi if hi > 0 else math.inf, 1.0 / lo if lo > 0 else math.inf

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record (Å, eV, log10 s⁻¹, s⁻¹, s)."""
        return {
            "donor": self.donor, "acceptor": self.acceptor, "closest_atoms": self.closest_atoms,
            "edge_distance": self.edge, "sigma_edge": round(self.sigma_edge, 4),
            "sigma_atoms": [round(s, 4) for s in self.sigma_atoms], "dg_ev": round(self.dg, 4),
            "log10_k_forward": round(self.log10_k, 3),
            "log10_k_68": [round(x, 3) for x in self.log10_k_68], "log10_k_95": [round(x, 3) for x in self.log10_k_95],
            "log10_k_coordinates_only_95": [round(x, 3) for x in self.log10_k_coordinates],
            "hop_time_s_95": list(self.hop_time_interval("95%")),
            "k_forward": self.interval.to_dict(), "method": self.method,
        }


def _log_pair(a: float, b: float) -> tuple[float, float]:
    return (math.log10(a) if a > 0 else -math.inf, math.log10(b) if b > 0 else -math.inf)


@dataclass
class WireUncertainty:
    """Intervals of a wire's times and hop rates (model estimates).

    Attributes
    ----------
    hops : list of HopUncertainty
        One per hop of the path.
    mean_first_passage_time : QuantityInterval or None
        One electron entering an oxidised chain, entry → exit.
    quantities : dict of str to QuantityInterval
        Every quantity evaluated (the above, the summed hop time, extras such as a flux).
    coordinate_error : CoordinateError
        Where the coordinate error came from (say it in outputs).
    summed_hop_time, summed_hop_time_68, summed_hop_time_95 :
        Σ 1/k along the path (s) and its intervals (kept for older views).
    method, n_samples, seed, level, reorg_range, law_decades :
        How the intervals were made.
    notes : list of str
    """

    hops: list[HopUncertainty]
    mean_first_passage_time: QuantityInterval | None
    quantities: dict[str, QuantityInterval]
    coordinate_error: CoordinateError
    summed_hop_time: float | None
    summed_hop_time_68: tuple[float, float] | None
    summed_hop_time_95: tuple[float, float] | None
    method: str
    n_samples: int
    seed: int | None
    level: str = "95%"
    reorg_range: tuple[float, float] = REORG_RANGE
    law_decades: float = LAW_SCATTER_DECADES
    notes: list[str] = field(default_factory=list)

    def basis(self) -> str:
        """One sentence: what the intervals cover (for every output that shows them)."""
        return (f"{self.level} intervals: coordinate error ({self.coordinate_error.description}); "
                f"λ {self.reorg_range[0]:.1f}-{self.reorg_range[1]:.1f} eV; the law's own ±{self.law_decades:g} decade "
                "(Page et al. 1999, Nature 402:47); potentials reported as sensitivities, not in the interval; "
                f"seeded Monte Carlo ({self.n_samples} samples, seed {self.seed}). Rates and times are model "
                "estimates")

    def mfpt_text(self) -> str:
        """The mean first-passage time with its interval, digits as the interval supports."""
        m = self.mean_first_passage_time
        return m.text() if m is not None else "undetermined"

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record (undefined numbers are ``None``, never inf/NaN)."""
        from fescan.core.jsonutil import finite_json

        return finite_json({
            "method": self.method, "n_samples": self.n_samples, "seed": self.seed, "level": self.level,
            "reorg_range_ev": list(self.reorg_range), "law_scatter_decades": self.law_decades,
            "coordinate_error": self.coordinate_error.to_dict(),
            "mean_first_passage_time": (self.mean_first_passage_time.to_dict()
                                        if self.mean_first_passage_time else None),
            "hops": [h.to_dict() for h in self.hops],
            "quantities": {k: v.to_dict() for k, v in self.quantities.items()},
            "summed_hop_time_s": self.summed_hop_time,
            "summed_hop_time_s_95": list(self.summed_hop_time_95) if self.summed_hop_time_95 else None,
            "basis": self.basis(), "notes": list(self.notes),
        })


def wire_uncertainty(
    result: Any,
    *,
    method: str = "monte-carlo",
    n_samples: int = MONTE_CARLO_SAMPLES,
    seed: int | None = 0,
    level: str = "95%",
    reorg_range: tuple[float, float] = REORG_RANGE,
    law_decades: float = LAW_SCATTER_DECADES,
    extra: Mapping[str, Quantity] | None = None,
    coordinate_error: CoordinateError | None = None,
) -> WireUncertainty:
    """Intervals of a scan result's wire (see :mod:`fescan.transfer.intervals`).

    Parameters
    ----------
    result : fescan.analysis.scan.ScanResult
    method : {"monte-carlo"}, optional
        The only method (seeded Monte Carlo over coordinates, λ scenarios, law bound).
    n_samples : int, optional
        Samples per λ scenario (default :data:`~fescan.transfer.intervals.MONTE_CARLO_SAMPLES`,
        1000; at least 100).
    seed : int or None, optional
        Seed (default 0: the same numbers on every run).
    level : {"95%", "68%"}, optional
    reorg_range : tuple of float, optional
        λ scenarios in eV (default 0.5-1.0).
    law_decades : float, optional
        The law's own scatter (default 0.8 decade).
    extra : mapping of name to callable, optional
        More "rate sample → number" quantities, e.g. a steady-state flux.
    coordinate_error : CoordinateError, optional
        Override; by default read from the file (:func:`structure_coordinate_error`).

    Returns
    -------
    WireUncertainty

    Raises
    ------
    fescan.core.errors.ConfigError
        Unknown method, too few samples, bad λ range or level.
    """
    if method != "monte-carlo":
        raise ConfigError(f"method must be 'monte-carlo', got {method!r}")
    err = coordinate_error if coordinate_error is not None else structure_coordinate_error(result)
    comp, notes = build_component(result, err)
    notes = list(err.notes) + notes
    if comp is None:
        return WireUncertainty([], None, {}, err, None, None, None, method, n_samples, seed, level,
                               tuple(reorg_range), law_decades, notes)
    qs, units = wire_quantities(result, extra)
    ivs = quantity_intervals(comp, qs, units=units, n_samples=n_samples, seed=seed, level=level,
                             reorg_range=reorg_range, law_decades=law_decades)
    hops = []
    path = list(result.wire.path)
    for h, (a, b) in zip(result.wire.hops, zip(path, path[1:])):
        iv = ivs[f"hop {a} > {b}"]
        p = int(comp.pair[comp.edge(a, b)])
        l68 = _log_pair(iv.low_68, iv.high_68)
        hops.append(HopUncertainty(a, b, comp.closest_atoms[p], float(comp.distance[p]),
                                   float(comp.sigma_distance[p]), tuple(float(x) for x in comp.sigma_atoms[p]),
                                   float(h.dg), float(h.log10_k_forward), l68, _log_pair(iv.low, iv.high),
                                   _log_pair(*iv.coordinates), iv))
    mf = ivs.get("mean_first_passage_time")
    st = ivs.get("summed_hop_time")
    has_st = st is not None and math.isfinite(st.value)
    if mf is not None and not math.isfinite(mf.value):
        notes.append("the exit is not reached with certainty: no first-passage time")
    return WireUncertainty(hops, mf, ivs, err, st.value if has_st else None,
                           (st.low_68, st.high_68) if has_st else None, (st.low, st.high) if has_st else None,
                           method, n_samples, seed, level, tuple(reorg_range), law_decades, notes)


def format_interval(iv: QuantityInterval) -> str:
    """Alias of :meth:`QuantityInterval.text` for renderers."""
    return format_with_interval(iv.value, iv.low, iv.high, iv.unit, level=iv.level)


def deposited_coordinate_error(text: str) -> float | None:
    """The overall coordinate error (Å) a header states, or ``None`` (kept for older callers).

    Order: DPI / ESU from R_free, from R, the maximum-likelihood error, cross-validated
    then plain Luzzati (:func:`fescan.structure.refinement.refinement_stats_from_text`).

    Examples
    --------
    >>> deposited_coordinate_error("REMARK   3   ESD FROM LUZZATI PLOT        (A) : 0.30")
    0.3
    """
    from fescan.structure.refinement import refinement_stats_from_text

    st = refinement_stats_from_text(text)
    for v in (st.dpi_rfree, st.dpi_r, st.ml_error, st.luzzati_free, st.luzzati):
        if v is not None:
            return float(v)
    return None


def _header_text(path: str, limit: int = 4_000_000) -> str:
    """The first ``limit`` characters of a (possibly gzipped) file; '' when unreadable (kept for older callers)."""
    import gzip
    import zlib

    try:
        with open(path, "rb") as fh:
            raw = fh.read(2)
        opener = gzip.open if raw == b"\x1f\x8b" else open
        with opener(path, "rb") as fh:
            return fh.read(limit).decode("latin-1")
    except (OSError, EOFError, zlib.error):
        return ""
