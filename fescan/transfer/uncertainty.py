"""Uncertainty of hop rates: coordinate error → distance spread, potential range → ΔG spread.

Every rate fescan reports is an estimate from the empirical Moser–Dutton law; the
intervals here add only the spread that comes from the *inputs* of that law (the
coordinates and the midpoint potentials). The law's own scatter (about ±0.8 decade
for natural proteins, C.C. Page's thesis) is not included.

Method and assumptions
----------------------
1. **Coordinate error of an atom.** The isotropic B-factor is B = 8π²⟨u²⟩, where
   ⟨u²⟩ is the mean-square displacement along any one direction (the Debye–Waller
   factor; textbook crystallography, common practice, no source). So the
   one-dimensional spread of an atom is σ₁ = sqrt(B / 8π²) (B = 20 Å² gives 0.50 Å).
   B measures the spread of the atom's positions (thermal motion and static
   disorder), which is larger than the precision of its mean position; it is used
   here because the tunnelling distance itself samples that spread. Anisotropic
   ADPs are not used. A B column that is not a B-factor (pLDDT of predicted models,
   0 in NMR ensembles) must not be read this way: such atoms get only the floor.
2. **Floor.** σ₁ is never taken below a floor from the whole structure:
   the deposited overall coordinate error when the file gives one (Cruickshank's
   diffraction-component precision index, Acta Cryst D 1999, 55:583, or Refmac's
   ESU, preferably from R_free; else the Luzzati estimate), read as a 3-D
   positional error so that σ₁ = value / √3 (from memory); else the rule of thumb
   σ_r ≈ d_min / 10 (from memory, no source); else 0. gemmi does not expose these
   header items for every format, so the header text is read again here.
3. **Distance.** For an edge-to-edge distance R between the two closest atoms a and
   b, only the displacement along the a–b direction changes R to first order, and
   for isotropic independent errors that component has spread σ₁ of each atom:
   σ_R² = σ_a² + σ_b².
4. **Potentials.** Each default potential carries its class's typical range
   (:class:`fescan.potentials.Potential` ``low_v``/``high_v``). With
   ``potential_model="gaussian"`` (default) the range is read as ±2σ around the value
   used, σ_E = (high − low)/4 (the range as a ~95 % interval); with ``"uniform"`` the
   potential is uniform on [low, high], σ_E = (high − low)/√12. User potentials
   (low = high) are taken as exact. Different cofactors are independent, even of
   the same class; σ_ΔG² = σ_donor² + σ_acceptor². λ and ρ are held fixed.
5. **Linear propagation.** log10 k = 13 − (1.2 − 0.8ρ)(R − 3.6) − 3.1(ΔG + λ)²/λ
   (downhill), so ∂log10k/∂R = −(1.2 − 0.8ρ) (0 below the 3.6 Å contact) and
   ∂log10k/∂ΔG = −6.2(ΔG + λ)/λ; uphill (detailed balance) ∂/∂ΔG =
   6.2(λ − ΔG)/λ − 1/(k_BT ln10). The law has a kink at ΔG = 0; there the RMS of the
   two one-sided slopes is used. σ² = (∂/∂R)²σ_R² + (∂/∂ΔG)²σ_ΔG². Intervals are
   log10k ± zσ (z = 1 for 68 %, 1.96 for 95 %); rates and hop times follow by
   10^x, so they are log-symmetric.
6. **Monte Carlo** (seeded :class:`numpy.random.Generator`): samples R (Gaussian,
   clipped at 0) per hop and one potential per cofactor, so hops that share a
   cofactor are correlated as they should be; intervals are the sample
   percentiles. It agrees with the linear result when the spreads are small and
   shows the parabola's curvature (and the kink) when they are not. With
   ``distance_model="all-atoms"`` every redox atom is moved and R recomputed as
   the minimum, which also shows that the minimum of noisy distances is biased low.
7. **Wire.** The summed hop time T = Σ 1/k_i gets an interval from the same
   samples (Monte Carlo) or from ∂log10T/∂log10k_i = −t_i/T (linear, with the
   shared-cofactor correlations). The mean first-passage time gets none.
"""

from __future__ import annotations

import gzip
import math
import re
import zlib
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.spatial import cKDTree

from fescan.core.constants import DEFAULT_TEMPERATURE_K
from fescan.core.errors import ConfigError
from fescan.core.records import AtomRef
from fescan.transfer.potentials import Potential
from fescan.transfer.rate_law import (
    DEFAULT_PACKING_DENSITY,
    DEFAULT_REORG,
    log10_hop_rate,
    log10_rate_slopes,
)

__all__ = [
    "LEVELS",
    "sigma_from_b",
    "deposited_coordinate_error",
    "coordinate_floor",
    "atom_sigmas",
    "potential_sigma",
    "log10_rate_slopes",
    "linear_log10_rate",
    "monte_carlo_log10_rate",
    "HopUncertainty",
    "WireUncertainty",
    "wire_uncertainty",
]

#: Coverage of the reported intervals → z of a normal distribution.
LEVELS: dict[str, float] = {"68%": 1.0, "95%": 1.959963984540054}
_EIGHT_PI2 = 8.0 * math.pi**2


def sigma_from_b(b_iso: float | np.ndarray) -> float | np.ndarray:
    """One-dimensional positional spread σ₁ = sqrt(B / 8π²) in Å (B in Å², ≤ 0 → 0).

    Examples
    --------
    >>> round(sigma_from_b(8 * 3.141592653589793**2), 6)
    1.0
    """
    b = np.clip(np.asarray(b_iso, dtype=float), 0.0, None)
    out = np.sqrt(b / _EIGHT_PI2)
    return float(out) if out.ndim == 0 else out


#: Deposited overall coordinate errors, most preferred first (PDB REMARK 3 wording, mmCIF tags).
_DEPOSITED = tuple(re.compile(p, re.MULTILINE | re.IGNORECASE) for p in (
    r"^_refine\.pdbx_overall_SU_R_free_Cruickshank_DPI\s+([0-9.]+)\s*$",
    r"^_refine\.pdbx_overall_ESU_R_Free\s+([0-9.]+)\s*$",
    r"^REMARK   3\s+ESU BASED ON FREE R VALUE\s*\(A\)\s*:\s*([0-9.]+)",
    r"^_refine\.overall_SU_R_Cruickshank_DPI\s+([0-9.]+)\s*$",
    r"^_refine\.pdbx_overall_ESU_R\s+([0-9.]+)\s*$",
    r"^REMARK   3\s+ESU BASED ON R VALUE\s*\(A\)\s*:\s*([0-9.]+)",
    r"^_refine_analyze\.Luzzati_coordinate_error_free\s+([0-9.]+)\s*$",
    r"^REMARK   3\s+ESD FROM C-V LUZZATI PLOT\s*\(A\)\s*:\s*([0-9.]+)",
    r"^_refine_analyze\.Luzzati_coordinate_error_obs\s+([0-9.]+)\s*$",
    r"^REMARK   3\s+ESD FROM LUZZATI PLOT\s*\(A\)\s*:\s*([0-9.]+)",
))


def deposited_coordinate_error(text: str) -> float | None:
    """Overall coordinate error (Å, 3-D) deposited in a file's header text, or ``None``.

    Looks, in this order, for Cruickshank's DPI or Refmac's ESU from R_free, then from
    R, then the cross-validated and plain Luzzati estimates (PDB ``REMARK 3`` lines or
    mmCIF ``_refine`` / ``_refine_analyze`` items); ``NULL`` and ``?`` are skipped.

    Parameters
    ----------
    text : str
        The file's text (the header is enough).

    Examples
    --------
    >>> deposited_coordinate_error("REMARK   3   ESD FROM LUZZATI PLOT        (A) : 0.30")
    0.3
    """
    for rx in _DEPOSITED:
        for m in rx.finditer(text):
            try:
                v = float(m.group(1))
            except ValueError:
                continue
            if math.isfinite(v) and v > 0:
                return v
    return None


def _header_text(path: str, limit: int = 4_000_000) -> str:
    """The first ``limit`` bytes of a (possibly gzipped) structure file, as text; '' when unreadable."""
    try:
        with open(path, "rb") as fh:
            raw = fh.read(2)
        opener = gzip.open if raw == b"\x1f\x8b" else open
        with opener(path, "rb") as fh:
            return fh.read(limit).decode("latin-1")
    except (OSError, EOFError, zlib.error):  # the scan read the file already; stay lenient here
        return ""


def coordinate_floor(resolution: float | None = None, deposited_error: float | None = None) -> tuple[float, str]:
    """The floor of σ₁ (Å) and where it comes from (see the module docstring, point 2).

    Examples
    --------
    >>> round(coordinate_floor(resolution=2.0)[0], 4)
    0.1155
    >>> coordinate_floor()
    (0.0, 'none (no deposited error, no resolution)')
    """
    if deposited_error is not None and deposited_error > 0:
        return deposited_error / math.sqrt(3.0), f"deposited overall coordinate error {deposited_error:g} Å / sqrt(3)"
    if resolution is not None and resolution > 0:
        return 0.1 * resolution / math.sqrt(3.0), f"rule of thumb d_min/10 = {0.1 * resolution:.3g} Å, / sqrt(3)"
    return 0.0, "none (no deposited error, no resolution)"


def atom_sigmas(atoms: Sequence[AtomRef], floor: float = 0.0) -> np.ndarray:
    """σ₁ of each atom (Å): sqrt(B/8π²), never below ``floor``."""
    b = np.asarray([a.b_iso for a in atoms], dtype=float)
    return np.maximum(sigma_from_b(b) if len(b) else np.zeros(0), floor)


def potential_sigma(p: Potential, model: str = "gaussian") -> float:
    """Spread of a midpoint potential (V) from its range (module docstring, point 4).

    Examples
    --------
    >>> round(potential_sigma(Potential(-0.4, -0.7, -0.2, "", "default")), 6)
    0.125
    """
    width = max(0.0, float(p.high_v) - float(p.low_v))
    if model == "gaussian":
        return width / 4.0
    if model == "uniform":
        return width / math.sqrt(12.0)
    raise ConfigError(f"potential_model must be 'gaussian' or 'uniform', got {model!r}")


def linear_log10_rate(
    distance: float, sigma_distance: float, dg: float, sigma_dg: float, *, reorg: float = DEFAULT_REORG,
    packing_density: float = DEFAULT_PACKING_DENSITY, temperature: float = DEFAULT_TEMPERATURE_K,
) -> tuple[float, float]:
    """log10 k of one hop and its standard deviation by linear propagation.

    Parameters
    ----------
    distance, sigma_distance : float
        Edge-to-edge distance and its σ (Å).
    dg, sigma_dg : float
        Driving force and its σ (eV).
    reorg, packing_density, temperature :
        As for :func:`fescan.kinetics.log10_hop_rate`.

    Returns
    -------
    log10_k, sigma : float

    Examples
    --------
    >>> lk, s = linear_log10_rate(10.0, 0.5, -0.7, 0.0)
    >>> round(s, 3)
    0.296
    """
    lk = float(log10_hop_rate(distance, dg, reorg, packing_density, temperature=temperature))
    d_r, d_g = log10_rate_slopes(distance, dg, reorg, packing_density, temperature)
    return lk, math.hypot(d_r * sigma_distance, d_g * sigma_dg)


def monte_carlo_log10_rate(
    distance: float, sigma_distance: float, dg: float, sigma_dg: float, *, reorg: float = DEFAULT_REORG,
    packing_density: float = DEFAULT_PACKING_DENSITY, temperature: float = DEFAULT_TEMPERATURE_K,
    n_samples: int = 20000, seed: int | None = 0,
) -> np.ndarray:
    """Samples of log10 k of one hop with Gaussian R (clipped at 0) and ΔG.

    Returns
    -------
    ndarray, shape=(n_samples,)
    """
    rng = np.random.default_rng(seed)
    r = np.clip(rng.normal(distance, sigma_distance, n_samples), 0.0, None)
    g = rng.normal(dg, sigma_dg, n_samples)
    return np.asarray(log10_hop_rate(r, g, reorg, packing_density, temperature=temperature))


def _interval(center: float, sigma: float, level: str) -> tuple[float, float]:
    z = LEVELS[level]
    return center - z * sigma, center + z * sigma


def _percentiles(samples: np.ndarray, level: str) -> tuple[float, float]:
    tail = 50.0 * (1.0 - float(level.rstrip("%")) / 100.0)
    lo, hi = np.percentile(samples, [tail, 100.0 - tail])
    return float(lo), float(hi)


def _fmt_pair(p: tuple[float, float]) -> list[float]:
    return [float(p[0]), float(p[1])]


@dataclass(frozen=True, slots=True)
class HopUncertainty:
    """Spread of one hop's inputs and the resulting log10 k intervals.

    Attributes
    ----------
    donor, acceptor : str
        Cofactor uids.
    closest_atoms : str
        The two atoms defining R (``"FE1-S3"``).
    edge, sigma_edge : float
        R and σ_R (Å).
    sigma_atoms : tuple of float
        σ₁ of the two closest atoms (Å).
    dg, sigma_dg : float
        ΔG and σ_ΔG (eV).
    log10_k : float
        Central estimate (as in the scan).
    sigma_log10_k : float
        Linear σ, or the sample standard deviation for Monte Carlo.
    log10_k_68, log10_k_95 : tuple of float
        Intervals of log10 k (s⁻¹).
    method : str
        ``"linear"`` or ``"monte-carlo"``.
    """

    donor: str
    acceptor: str
    closest_atoms: str
    edge: float
    sigma_edge: float
    sigma_atoms: tuple[float, float]
    dg: float
    sigma_dg: float
    log10_k: float
    sigma_log10_k: float
    log10_k_68: tuple[float, float]
    log10_k_95: tuple[float, float]
    method: str

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
            "sigma_dg_ev": round(self.sigma_dg, 4), "log10_k_forward": round(self.log10_k, 3),
            "sigma_log10_k": round(self.sigma_log10_k, 4),
            "log10_k_68": _fmt_pair(self.log10_k_68), "log10_k_95": _fmt_pair(self.log10_k_95),
            "k_forward_95": _fmt_pair(self.rate_interval("95%")),
            "hop_time_s_68": _fmt_pair(self.hop_time_interval("68%")),
            "hop_time_s_95": _fmt_pair(self.hop_time_interval("95%")), "method": self.method,
        }


@dataclass
class WireUncertainty:
    """Intervals of every hop of a wire and of its summed hop time (model estimates).

    Attributes
    ----------
    hops : list of HopUncertainty
    summed_hop_time : float or None
        Central Σ 1/k (s).
    summed_hop_time_68, summed_hop_time_95 : tuple of float or None
    method, potential_model, distance_model : str
    floor : float
        σ₁ floor used (Å), with ``floor_source``.
    n_samples : int
        Monte Carlo samples (0 for linear).
    seed : int or None
    notes : list of str
    """

    hops: list[HopUncertainty]
    summed_hop_time: float | None
    summed_hop_time_68: tuple[float, float] | None
    summed_hop_time_95: tuple[float, float] | None
    method: str
    potential_model: str
    distance_model: str
    floor: float
    floor_source: str
    n_samples: int = 0
    seed: int | None = None
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record (undefined times are ``None``, never inf)."""
        from fescan.core.jsonutil import finite_json

        return finite_json({
            "method": self.method, "potential_model": self.potential_model, "distance_model": self.distance_model,
            "coordinate_floor": round(self.floor, 4), "coordinate_floor_source": self.floor_source,
            "n_samples": self.n_samples, "seed": self.seed, "hops": [h.to_dict() for h in self.hops],
            "summed_hop_time_s": self.summed_hop_time,
            "summed_hop_time_s_68": _fmt_pair(self.summed_hop_time_68) if self.summed_hop_time_68 else None,
            "summed_hop_time_s_95": _fmt_pair(self.summed_hop_time_95) if self.summed_hop_time_95 else None,
            "caution": "intervals cover coordinate and potential spread only; the rates are estimates "
                       "from the empirical Moser-Dutton law (about +/-0.8 decade by itself)",
            "notes": list(self.notes),
        })


def _closest(da: np.ndarray, aa: np.ndarray) -> tuple[int, int, float]:
    d, k = cKDTree(aa).query(da, k=1)
    i = int(np.argmin(d))
    return i, int(k[i]), float(d[i])


def _read_floor(result: Any) -> tuple[float, str]:
    return coordinate_floor(result.info.resolution, deposited_coordinate_error(_header_text(str(result.path))))


def wire_uncertainty(
    result: Any,
    *,
    method: str = "linear",
    n_samples: int = 20000,
    seed: int | None = 0,
    potential_model: str = "gaussian",
    distance_model: str = "closest-pair",
    floor: float | None = None,
) -> WireUncertainty:
    """Intervals of the hop rates and summed hop time of a scan result's wire.

    Parameters
    ----------
    result : fescan.scan.ScanResult
    method : {"linear", "monte-carlo"}, optional
    n_samples : int, optional
        Monte Carlo samples (default 20000).
    seed : int or None, optional
        Seed of the Monte Carlo generator (default 0: reproducible).
    potential_model : {"gaussian", "uniform"}, optional
        How a potential range is read (module docstring, point 4).
    distance_model : {"closest-pair", "all-atoms"}, optional
        Monte Carlo only: move the two closest atoms, or every redox atom.
    floor : float, optional
        σ₁ floor (Å); by default from the file (deposited error, else resolution).

    Returns
    -------
    WireUncertainty

    Raises
    ------
    fescan.errors.ConfigError
        Unknown method or model, or ``n_samples`` < 100.
    """
    if method not in ("linear", "monte-carlo"):
        raise ConfigError(f"method must be 'linear' or 'monte-carlo', got {method!r}")
    if distance_model not in ("closest-pair", "all-atoms"):
        raise ConfigError(f"distance_model must be 'closest-pair' or 'all-atoms', got {distance_model!r}")
    if method == "monte-carlo" and (not isinstance(n_samples, int) or n_samples < 100):
        raise ConfigError(f"n_samples must be an integer >= 100, got {n_samples!r}")
    potential_sigma(Potential(0, 0, 0, "", ""), potential_model)  # validates the name
    floor_v, floor_src = (float(floor), "given") if floor is not None else _read_floor(result)
    opts, wire = result.options, result.wire
    by = {c.uid: c for c in result.cofactors}
    notes = []
    if any(a.b_iso <= 0 for c in result.cofactors for a in c.redox_atoms):
        notes.append("some redox atoms have no B-factor: only the floor is used for them")
        if floor is None and _read_floor(result)[0] <= 0:
            notes.append("no B-factors and no resolution or deposited error: the coordinate error is unknown "
                         "and taken as zero, so distance intervals are zero (only the potentials spread)")
    rows = []
    for h in wire.hops:
        d, a = by[h.donor], by[h.acceptor]
        dx = np.asarray([x.xyz for x in d.redox_atoms], dtype=float)
        ax = np.asarray([x.xyz for x in a.redox_atoms], dtype=float)
        sd, sa = atom_sigmas(d.redox_atoms, floor_v), atom_sigmas(a.redox_atoms, floor_v)
        i, j, _ = _closest(dx, ax)
        if h.symmetry:  # the partner is a crystal mate: its closest atom is not the one found here
            i, j = int(np.argsort(sd)[len(sd) // 2]), int(np.argsort(sa)[len(sa) // 2])
            notes.append(f"hop {h.donor} > {h.acceptor} is to a symmetry mate: median atom spreads used")
        sg = math.hypot(potential_sigma(result.potentials[h.donor], potential_model),
                        potential_sigma(result.potentials[h.acceptor], potential_model))
        rows.append((h, dx, ax, sd, sa, i, j, math.hypot(sd[i], sa[j]), sg))
    kw = {"packing_density": opts.packing_density, "temperature": opts.temperature}
    if method == "linear":
        hops, t68, t95 = _linear(rows, result, potential_model, kw)
        ns = 0
    else:
        hops, t68, t95 = _monte_carlo(rows, result, potential_model, distance_model, kw, n_samples, seed)
        ns = n_samples
    return WireUncertainty(hops, wire.summed_hop_time, t68, t95, method, potential_model, distance_model,
                           floor_v, floor_src, ns, seed if method == "monte-carlo" else None, notes)


def _record(h, d, a, i, j, atoms_sigma, sr, sg, lk, s, i68, i95, method) -> HopUncertainty:
    names = f"{d.redox_atoms[i].name}-{a.redox_atoms[j].name}"
    sig = (float(atoms_sigma[0]), float(atoms_sigma[1]))
    return HopUncertainty(h.donor, h.acceptor, names, h.edge, sr, sig, h.dg, sg, lk, s, i68, i95, method)


def _linear(rows, result, pmodel, kw):
    by = {c.uid: c for c in result.cofactors}
    hops, grads, times = [], [], []
    for h, _dx, _ax, sd, sa, i, j, sr, sg in rows:
        hk = _hop_kw(h, kw)
        lk, s = linear_log10_rate(h.edge, sr, h.dg, sg, reorg=h.reorg, **hk)
        hops.append(_record(h, by[h.donor], by[h.acceptor], i, j, (sd[i], sa[j]), sr, sg, lk, s,
                            _interval(lk, s, "68%"), _interval(lk, s, "95%"), "linear"))
        grads.append(log10_rate_slopes(h.edge, h.dg, h.reorg, hk["packing_density"], hk["temperature"]))
        times.append(10.0 ** -lk)
    if not hops:
        return hops, None, None
    total = float(sum(times))
    # log10 T = log10 Σ 10^(-L_i): ∂/∂L_i = -t_i / T; distances independent, potentials shared
    var = sum((t / total * gr * h.sigma_edge) ** 2 for t, (gr, _g), h in zip(times, grads, hops))
    per_cof: dict[str, float] = {}
    for t, (_r, gg), h in zip(times, grads, hops):
        w = -t / total * gg  # ∂log10T/∂ΔG_i; ΔG_i = E_donor - E_acceptor
        per_cof[h.donor] = per_cof.get(h.donor, 0.0) + w
        per_cof[h.acceptor] = per_cof.get(h.acceptor, 0.0) - w
    var += sum((w * potential_sigma(result.potentials[u], pmodel)) ** 2 for u, w in per_cof.items())
    lt, st = math.log10(total), math.sqrt(var)
    return hops, _pow(_interval(lt, st, "68%")), _pow(_interval(lt, st, "95%"))


def _hop_kw(h: Any, kw: dict[str, float]) -> dict[str, float]:
    """ρ of this hop when the hop records one (a measured ρ), else the scan's option."""
    rho = getattr(h, "packing_density", None)
    return kw if rho is None else {**kw, "packing_density": float(rho)}


def _pow(p: tuple[float, float]) -> tuple[float, float]:
    return 10.0 ** p[0], 10.0 ** p[1]


def _sample_potential(rng, p: Potential, pmodel: str, n: int) -> np.ndarray:
    if pmodel == "uniform" and p.high_v > p.low_v:
        return rng.uniform(p.low_v, p.high_v, n)
    return rng.normal(p.e_v, potential_sigma(p, "gaussian"), n)


def _monte_carlo(rows, result, pmodel, dmodel, kw, n, seed):
    rng = np.random.default_rng(seed)
    by = {c.uid: c for c in result.cofactors}
    uids = sorted({u for r in rows for u in (r[0].donor, r[0].acceptor)})
    pot = {u: _sample_potential(rng, result.potentials[u], pmodel, n) for u in uids}
    hops, total = [], np.zeros(n)
    for h, dx, ax, sd, sa, i, j, sr, sg in rows:
        if dmodel == "closest-pair":
            r = np.clip(rng.normal(h.edge, sr, n), 0.0, None)
        else:
            r = _all_atom_distances(rng, dx, ax, sd, sa, n)
        g = pot[h.donor] - pot[h.acceptor]  # ΔG = -(E_acc - E_don), eV
        if getattr(h, "dg_assumed", False):  # an undetermined potential: ΔG = 0 as in the hop builder
            g = np.zeros(n)
        lk = np.asarray(log10_hop_rate(r, g, h.reorg, **_hop_kw(h, kw)))
        total += 10.0 ** -lk
        hops.append(_record(h, by[h.donor], by[h.acceptor], i, j, (sd[i], sa[j]), float(np.std(r)),
                            float(np.std(g)), h.log10_k_forward, float(np.std(lk)), _percentiles(lk, "68%"),
                            _percentiles(lk, "95%"), "monte-carlo"))
    if not hops:
        return hops, None, None
    return hops, _percentiles(total, "68%"), _percentiles(total, "95%")


def _all_atom_distances(rng, dx, ax, sd, sa, n: int, chunk: int = 2000) -> np.ndarray:
    out = np.empty(n)
    for s in range(0, n, chunk):
        m = min(chunk, n - s)
        pd_ = dx[None] + rng.normal(size=(m, *dx.shape)) * sd[None, :, None]
        pa = ax[None] + rng.normal(size=(m, *ax.shape)) * sa[None, :, None]
        diff = pd_[:, :, None, :] - pa[:, None, :, :]
        out[s:s + m] = np.sqrt((diff**2).sum(-1)).min(axis=(1, 2))
    return out
