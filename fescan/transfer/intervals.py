"""Intervals of any wire quantity: coordinates, λ range, the law's own scatter, potentials.

Every rate fescan reports is a model estimate from the empirical Moser–Dutton law.
The interval of a quantity (mean first-passage time, a hop rate, or any
"wire → number" function, e.g. a steady-state flux) is built from three stated
parts; potentials are reported apart, as sensitivities.

1. **Coordinates** (statistical, seeded Monte Carlo): every pair distance R is
   drawn from a normal distribution of width σ_R (clipped at 0), σ_R from the
   file's refinement statistics (:mod:`fescan.transfer.coordinate_error`: DPI
   or ML error scaled per atom by B, B alone as a stated fallback). The 2.5 and
   97.5 percentiles (95 %) or 16 and 84 (68 %) of the quantity are taken.
2. **Reorganisation energy as a range**: λ is not known per hop; the Monte Carlo
   is repeated with λ at the ends of ``reorg_range`` (default 0.5-1.0 eV; the
   usual protein range of the Dutton group, e.g. Moser et al. 2006, Biochim
   Biophys Acta 1757:1096; from memory) and at the value used, with the same
   random draws; the interval is the envelope of the three. User-set λ stay.
3. **The law's own scatter**: Page et al. 1999 (Nature 402:47) report that the
   law reproduces natural rates within about ±0.8 log units. It is applied as a
   bound: every rate × 10^±0.8 together, the quantity evaluated at those two
   points, and the interval widened by the ratio. A hop rate's log10 interval
   therefore widens by exactly 0.8 on each side; a mean first-passage time (which
   scales as 1/k) by the same 0.8 decade.
4. **Potentials as sensitivities**, not a distribution: for each cofactor of the
   group with a range (class defaults; user values have none) the quantity is
   evaluated with that potential at the low and at the high end of its range,
   the others as used. The spread each causes is reported, largest first: it
   says which potential is worth measuring. It is not folded into the interval.

The point estimate (the scan's value) always lies inside its interval (the
interval is widened to it when the sampling puts it outside). Runs with the
same seed give the same numbers.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from fescan.core.errors import ConfigError
from fescan.core.numbers import format_with_interval
from fescan.transfer.rate_samples import Component, Quantity, RateSample

__all__ = [
    "LEVELS",
    "REORG_RANGE",
    "LAW_SCATTER_DECADES",
    "MONTE_CARLO_SAMPLES",
    "hop_rate_of",
    "QuantityInterval",
    "quantity_intervals",
]

#: Coverage of the reported intervals → lower percentile.
LEVELS: dict[str, float] = {"68%": 15.865525393145708, "95%": 2.5}
#: Range of the reorganisation energy λ (eV) scanned as scenarios.
REORG_RANGE: tuple[float, float] = (0.5, 1.0)
#: The law's own scatter, ± log10 units (Page et al. 1999, Nature 402:47).
LAW_SCATTER_DECADES: float = 0.8
#: Monte Carlo samples per λ scenario: the one default of the scan, its report and compare.
MONTE_CARLO_SAMPLES: int = 1000


def hop_rate_of(donor: str, acceptor: str) -> Quantity:
    """A quantity: the rate (s⁻¹) of the hop donor → acceptor."""

    def q(sample: RateSample) -> float:
        return sample.hop_rate(donor, acceptor)

    return q


@dataclass(frozen=True)
class QuantityInterval:
    """A model estimate and its interval (see the module docstring).

    Attributes
    ----------
    name, unit : str
    value : float
        Point estimate from the scan's inputs.
    low, high : float
        Interval at ``level`` (coordinates × λ range, widened by the law's scatter).
    low_68, high_68 : float
        The same at 68 %.
    coordinates : tuple of float
        Coordinates alone, λ as used (``level``).
    reorg : tuple of float
        The quantity at λ = low and high end of the range (coordinates as deposited).
    law : tuple of float
        The quantity with every rate × 10^-0.8 and × 10^+0.8.
    potentials : tuple of dict
        Per cofactor: ``cofactor``, ``e_low``, ``e_high`` (V), ``at_low``, ``at_high``
        (the quantity), ``decades`` (|log10 ratio|), largest first.
    level : str
    """

    name: str
    unit: str
    value: float
    low: float
    high: float
    low_68: float
    high_68: float
    coordinates: tuple[float, float]
    reorg: tuple[float, float]
    law: tuple[float, float]
    potentials: tuple[dict[str, Any], ...] = ()
    level: str = "95%"

    def text(self) -> str:
        """The value with its interval, no more digits than the interval supports."""
        return format_with_interval(self.value, self.low, self.high, self.unit, level=self.level)

    def log10_interval(self) -> tuple[float, float]:
        """log10 of (low, high); NaN for non-positive ends."""
        return tuple(math.log10(x) if x > 0 and math.isfinite(x) else math.nan for x in (self.low, self.high))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record (inf/NaN become ``None`` through finite_json)."""
        from fescan.core.jsonutil import finite_json

        return finite_json({
            "name": self.name, "unit": self.unit, "value": self.value, "level": self.level,
            "low": self.low, "high": self.high, "low_68": self.low_68, "high_68": self.high_68,
            "coordinates_only": list(self.coordinates), "reorg_range_ends": list(self.reorg),
            "law_scatter_ends": list(self.law), "potential_sensitivity": [dict(p) for p in self.potentials],
            "text": self.text(),
        })


def _pct(v: np.ndarray, level: str) -> tuple[float, float]:
    v = v[~np.isnan(v)]
    if not v.size:
        return math.nan, math.nan
    t = LEVELS[level]
    lo, hi = np.percentile(v, [t, 100.0 - t])
    return float(lo), float(hi)


def _evaluate(comp: Component, quantities: Mapping[str, Quantity], distance: np.ndarray, dg: np.ndarray,
              reorg: np.ndarray, shift: float = 0.0, e_shift: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """Quantities over a batch of samples (distance shape (S, P); dg, reorg per edge)."""
    lk = comp.log10_k(distance, dg[None, :], reorg[None, :]) + shift
    out = {k: np.empty(len(distance)) for k in quantities}
    for s in range(len(distance)):
        sample = RateSample(comp, lk[s], dg, reorg, distance[s], shift, e_shift)
        for k, q in quantities.items():
            out[k][s] = float(q(sample))
    return out


def _reorg_for(comp: Component, value: float | None) -> np.ndarray:
    return comp.reorg if value is None else np.where(comp.default_reorg, value, comp.reorg)


def quantity_intervals(
    comp: Component, quantities: Mapping[str, Quantity], *, units: Mapping[str, str] | None = None,
    n_samples: int = MONTE_CARLO_SAMPLES, seed: int | None = 0, level: str = "95%",
    reorg_range: tuple[float, float] = REORG_RANGE, law_decades: float = LAW_SCATTER_DECADES,
    potentials: bool = True,
) -> dict[str, QuantityInterval]:
    """Intervals of any quantities of a wire's rate samples (module docstring).

    Parameters
    ----------
    comp : Component
        From :func:`fescan.transfer.rate_samples.build_component`.
    quantities : mapping of name to callable
        Each takes a :class:`~fescan.transfer.rate_samples.RateSample` and returns a
        number (a positive one for the law's widening to apply as a factor).
    units : mapping of name to str, optional
        Units for printing (``"s"`` gets an SI prefix).
    n_samples : int, optional
        Monte Carlo samples per λ scenario (default :data:`MONTE_CARLO_SAMPLES`, 1000).
    seed : int or None, optional
        Seed of :func:`numpy.random.default_rng` (default 0).
    level : {"95%", "68%"}, optional
    reorg_range : tuple of float, optional
        λ scenarios (eV), default (0.5, 1.0).
    law_decades : float, optional
        The law's own scatter in log10 units (default 0.8; 0 switches it off).
    potentials : bool, optional
        Also compute the potential sensitivities.

    Returns
    -------
    dict of name to QuantityInterval

    Raises
    ------
    fescan.core.errors.ConfigError
        Bad level, sample count or λ range.
    """
    if level not in LEVELS:
        raise ConfigError(f"level must be one of {sorted(LEVELS)}, got {level!r}")
    if not isinstance(n_samples, int) or n_samples < 100:
        raise ConfigError(f"n_samples must be an integer >= 100, got {n_samples!r}")
    lo_l, hi_l = (float(x) for x in reorg_range)
    if not 0 < lo_l <= hi_l:
        raise ConfigError(f"reorg_range must be two positive numbers, low <= high, got {reorg_range!r}")
    units = dict(units or {})
    rng = np.random.default_rng(seed)
    z = rng.standard_normal((n_samples, len(comp.distance)))
    r = np.clip(comp.distance[None, :] + z * comp.sigma_distance[None, :], 0.0, None)
    centre = comp.distance[None, :]
    point = {k: v[0] for k, v in _evaluate(comp, quantities, centre, comp.dg, comp.reorg).items()}
    runs = [_evaluate(comp, quantities, r, comp.dg, _reorg_for(comp, lam)) for lam in (None, lo_l, hi_l)]
    at_lam = [_evaluate(comp, quantities, centre, comp.dg, _reorg_for(comp, lam)) for lam in (lo_l, hi_l)]
    law = [_evaluate(comp, quantities, centre, comp.dg, comp.reorg, shift=s) for s in (-law_decades, law_decades)]
    sens = _sensitivities(comp, quantities) if potentials else dict.fromkeys(quantities, ())
    out = {}
    for k in quantities:
        v = float(point[k])
        ends = {}
        for lev in (level, "68%"):
            pcs = [_pct(run[k], lev) for run in runs]
            ends[lev] = (min(p[0] for p in pcs), max(p[1] for p in pcs))
        coords = _pct(runs[0][k], level)
        lw = (float(law[0][k][0]), float(law[1][k][0]))
        f_lo, f_hi = _law_factors(v, lw)
        lo95, hi95 = _widen(ends[level], v, f_lo, f_hi)
        lo68, hi68 = _widen(ends["68%"], v, f_lo, f_hi)
        out[k] = QuantityInterval(k, units.get(k, ""), v, lo95, hi95, lo68, hi68, coords,
                                  (float(at_lam[0][k][0]), float(at_lam[1][k][0])), lw, sens[k], level)
    return out


def _law_factors(v: float, law: tuple[float, float]) -> tuple[float, float]:
    if not (math.isfinite(v) and v > 0) or not all(math.isfinite(x) and x > 0 for x in law):
        return 1.0, 1.0
    ratios = [x / v for x in law]
    return min(1.0, *ratios), max(1.0, *ratios)


def _widen(pair: tuple[float, float], v: float, f_lo: float, f_hi: float) -> tuple[float, float]:
    lo, hi = pair
    if math.isnan(lo) or math.isnan(hi):
        return lo, hi
    lo, hi = min(lo, v), max(hi, v)
    return lo * f_lo, hi * f_hi


def _sensitivities(comp: Component, quantities: Mapping[str, Quantity]) -> dict[str, tuple[dict[str, Any], ...]]:
    """One potential at a time at the low and high end of its range (module docstring, point 4)."""
    rows: dict[str, list[dict[str, Any]]] = {k: [] for k in quantities}
    centre = comp.distance[None, :]
    for i, uid in enumerate(comp.nodes):
        p = comp.potentials.get(uid)
        e, lo, hi = (getattr(p, a, None) for a in ("e_v", "low_v", "high_v"))
        if p is None or lo is None or hi is None or not hi > lo:
            continue
        vals = []
        for end in (lo, hi):
            d = float(end) - float(e)  # a hop's ΔG = E_donor - E_acceptor
            dg = comp.dg + d * (comp.src == i) - d * (comp.dst == i)
            e_shift = np.zeros(len(comp.nodes))
            e_shift[i] = d
            vals.append(_evaluate(comp, quantities, centre, dg, comp.reorg, e_shift=e_shift))
        for k in quantities:
            a, b = float(vals[0][k][0]), float(vals[1][k][0])
            dec = abs(math.log10(b / a)) if a > 0 and b > 0 and math.isfinite(a) and math.isfinite(b) else math.inf
            rows[k].append({"cofactor": uid, "e_used": float(e), "e_low": float(lo), "e_high": float(hi),
                            "at_low": a, "at_high": b, "decades": dec})
    return {k: tuple(sorted(v, key=lambda r: -r["decades"])) for k, v in rows.items()}
