"""Coordinate error of each atom from the file's refinement statistics.

Rule (every choice is stated in :attr:`CoordinateError.description`):

1. **Overall error σ(r, B_avg)** — the positional (3-D) standard uncertainty of an
   atom whose B equals the mean B, which is what Cruickshank's diffraction-component
   precision index (DPI) estimates (Cruickshank DWJ 1999, Acta Cryst D 55:583-601).
   Taken, in this order, from

   a. the deposited Cruickshank DPI or Refmac ESU based on R_free;
   b. the deposited Cruickshank DPI or ESU based on R;
   c. the deposited maximum-likelihood coordinate error (Refmac ``overall_SU_ML``,
      Phenix "coordinate error (maximum-likelihood based)");
   d. the DPI computed from the file's statistics with R_free::

          σ(r, B_avg) = sqrt(N_i / n_obs) · C^(-1/3) · R_free · d_min

   e. the DPI computed with R::

          σ(r, B_avg) = sqrt(N_i / (n_obs - n_params)) · C^(-1/3) · R · d_min,  n_params = 4 N_i

      (N_i non-hydrogen atoms refined, n_obs reflections used in refinement as
      deposited, C completeness as a fraction, d_min in Å; the form of both
      equations follows Cruickshank 1999, the constants and n_params = 4 N_i for an
      isotropic refinement are from memory; C = 1 is assumed when the file gives
      none, which makes σ slightly small);
   f. the deposited Luzzati estimate (cross-validated first).

2. **Per atom**: σ(r, B_i) = σ(r, B_avg) · sqrt(B_i / B_avg), B_avg the mean B of
   the model's atoms (the deposited mean B when the model's is not known). The
   square-root rule is the one commonly applied to DPI values (Gurusaran M et al.
   2014, IUCrJ 1:74; from memory). Cruickshank 1999 finds σ(r) rising *more
   steeply* with B in full-matrix inversions, so for high-B atoms this is a lower
   bound. Atoms without a positive B get ratio 1.
3. **Along one axis** (what changes a distance to first order): σ(x) = σ(r)/sqrt(3),
   isotropic errors (common practice, no source).
4. **Fallback, B alone**: when the file gives none of the above (no REMARK 3, an
   NMR or EM model, mmJSON), σ(x) = sqrt(B / 8π²), the rms displacement that B
   describes (B = 8π²⟨u²⟩; common practice, no source). This is the atom's
   spread, not the precision of its mean position: usually 2-5 times larger than
   the DPI-based value, so intervals come out wider. Predicted models (B = pLDDT)
   and NMR models (B = 0) have no coordinate error here at all: it is reported
   as unknown.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fescan.structure.refinement import RefinementStats

__all__ = [
    "PARAMS_PER_ATOM",
    "CoordinateError",
    "cruickshank_dpi",
    "cruickshank_dpi_free",
    "coordinate_error",
    "sigma_from_b",
]

#: Refined parameters per atom in an isotropic refinement (x, y, z, B; from memory).
PARAMS_PER_ATOM: int = 4
_EIGHT_PI2 = 8.0 * math.pi**2
_SQRT3 = math.sqrt(3.0)


def sigma_from_b(b_iso: float | np.ndarray) -> float | np.ndarray:
    """One-dimensional rms displacement sqrt(B / 8π²) in Å (B in Å², ≤ 0 → 0).

    Examples
    --------
    >>> round(sigma_from_b(8 * 3.141592653589793**2), 6)
    1.0
    """
    b = np.clip(np.asarray(b_iso, dtype=float), 0.0, None)
    out = np.sqrt(b / _EIGHT_PI2)
    return float(out) if out.ndim == 0 else out


def _positive(*values: float | None) -> bool:
    return all(v is not None and math.isfinite(v) and v > 0 for v in values)


def cruickshank_dpi_free(n_atoms: int, n_reflections: int, r_free: float, resolution: float,
                         completeness: float = 1.0) -> float | None:
    """Cruickshank's DPI from R_free, σ(r, B_avg) in Å (module docstring, rule 1d).

    Parameters
    ----------
    n_atoms : int
        Non-hydrogen atoms refined (N_i).
    n_reflections : int
        Reflections used in refinement (n_obs).
    r_free : float
        Free R as a fraction.
    resolution : float
        d_min (Å).
    completeness : float, optional
        Completeness as a fraction (default 1).

    Returns
    -------
    float or None
        ``None`` when an input is missing or not positive.

    Examples
    --------
    >>> round(cruickshank_dpi_free(4000, 40000, 0.25, 2.0), 4)
    0.1581
    """
    if not _positive(n_atoms, n_reflections, r_free, resolution, completeness):
        return None
    return math.sqrt(n_atoms / n_reflections) * completeness ** (-1.0 / 3.0) * r_free * resolution


def cruickshank_dpi(n_atoms: int, n_reflections: int, r_work: float, resolution: float,
                    completeness: float = 1.0, n_params: int | None = None) -> float | None:
    """Cruickshank's DPI from R, σ(r, B_avg) in Å (module docstring, rule 1e).

    ``n_params`` defaults to 4 N_i; ``None`` is returned when n_obs - n_params ≤ 0
    (then only the R_free form applies).

    Examples
    --------
    >>> round(cruickshank_dpi(1000, 20000, 0.20, 2.0), 4)
    0.1
    >>> cruickshank_dpi(1000, 3000, 0.20, 2.0) is None
    True
    """
    if not _positive(n_atoms, n_reflections, r_work, resolution, completeness):
        return None
    p = n_reflections - (PARAMS_PER_ATOM * n_atoms if n_params is None else n_params)
    if p <= 0:
        return None
    return math.sqrt(n_atoms / p) * completeness ** (-1.0 / 3.0) * r_work * resolution


@dataclass(frozen=True)
class CoordinateError:
    """Coordinate error model of one structure.

    Attributes
    ----------
    sigma_r : float or None
        σ(r, B_avg), positional error (Å) of an atom of mean B; ``None`` when B alone
        (or nothing) is used.
    source : str
        Machine key: ``deposited-dpi-rfree``, ``deposited-dpi-r``, ``deposited-ml``,
        ``computed-dpi-rfree``, ``computed-dpi-r``, ``deposited-luzzati``,
        ``b-factor-only`` or ``unknown``.
    description : str
        Plain words: which estimate, its value and the per-atom rule.
    mean_b : float or None
        B_avg used for the per-atom scaling (Å²).
    candidates : dict
        Every overall estimate the file allowed (key → Å), for the record.
    notes : tuple of str
    """

    sigma_r: float | None
    source: str
    description: str
    mean_b: float | None = None
    candidates: dict[str, float] = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    @property
    def known(self) -> bool:
        """Whether any coordinate error is available."""
        return self.source != "unknown"

    def sigma_x(self, b_iso: Iterable[float] | float) -> np.ndarray:
        """Per-axis error σ(x) (Å) of atoms with the given B values (module docstring, rules 2-4)."""
        b = np.atleast_1d(np.asarray(b_iso, dtype=float))
        if self.source == "unknown":
            return np.zeros_like(b)
        if self.sigma_r is None:
            return np.asarray(sigma_from_b(b), dtype=float).reshape(b.shape)
        ratio = np.ones_like(b)
        if self.mean_b is not None and self.mean_b > 0:
            ok = b > 0
            ratio[ok] = b[ok] / self.mean_b
        return self.sigma_r / _SQRT3 * np.sqrt(ratio)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready record (Å, Å²)."""
        return {"sigma_r_mean_b": self.sigma_r, "source": self.source, "description": self.description,
                "mean_b": self.mean_b, "candidates": dict(self.candidates), "notes": list(self.notes),
                "per_atom_rule": ("sigma(r, B) = sigma(r, B_mean) * sqrt(B / B_mean); sigma(x) = sigma(r) / sqrt(3)"
                                  if self.sigma_r is not None else
                                  "sigma(x) = sqrt(B / 8 pi^2)" if self.source == "b-factor-only" else "none")}


_WORDS = {
    "deposited-dpi-rfree": "deposited Cruickshank DPI / ESU based on R_free",
    "deposited-dpi-r": "deposited Cruickshank DPI / ESU based on R",
    "deposited-ml": "deposited maximum-likelihood coordinate error",
    "computed-dpi-rfree": "Cruickshank DPI computed from the file's R_free, atoms, reflections, completeness "
                          "and resolution (Cruickshank 1999, Acta Cryst D 55:583)",
    "computed-dpi-r": "Cruickshank DPI computed from the file's R, atoms, reflections, completeness "
                      "and resolution (Cruickshank 1999, Acta Cryst D 55:583)",
    "deposited-luzzati": "deposited Luzzati coordinate error",
}


def _candidates(stats: RefinementStats) -> tuple[dict[str, float], list[str]]:
    notes: list[str] = []
    out: dict[str, float] = {}
    for key, val in (("deposited-dpi-rfree", stats.dpi_rfree), ("deposited-dpi-r", stats.dpi_r),
                     ("deposited-ml", stats.ml_error)):
        if val is not None:
            out[key] = float(val)
    comp = stats.completeness
    if stats.n_atoms and stats.n_reflections and stats.resolution and (stats.r_free or stats.r_work):
        if comp is None:
            notes.append("completeness not given: C = 1 assumed in the DPI (slightly small)")
            comp = 1.0
        if stats.r_free is not None:
            v = cruickshank_dpi_free(stats.n_atoms, stats.n_reflections, stats.r_free, stats.resolution, comp)
            if v is not None:
                out["computed-dpi-rfree"] = v
        if stats.r_work is not None:
            v = cruickshank_dpi(stats.n_atoms, stats.n_reflections, stats.r_work, stats.resolution, comp)
            if v is not None:
                out["computed-dpi-r"] = v
            elif stats.r_free is None:
                notes.append("R-based DPI undefined: fewer reflections than 4 parameters per atom")
    luz = stats.luzzati_free or stats.luzzati
    if luz is not None:
        out["deposited-luzzati"] = float(luz)
    return out, notes


_ORDER = ("deposited-dpi-rfree", "deposited-dpi-r", "deposited-ml", "computed-dpi-rfree", "computed-dpi-r",
          "deposited-luzzati")


def coordinate_error(stats: RefinementStats, model_mean_b: float | None = None, *,
                     method: str | None = None, has_b: bool = True) -> CoordinateError:
    """Choose the coordinate error of a structure (module docstring).

    Parameters
    ----------
    stats : RefinementStats
        From :func:`fescan.structure.refinement.read_refinement_stats`.
    model_mean_b : float, optional
        Mean B of the model's atoms (Å²); else the deposited mean B is used.
    method : str, optional
        Experimental method as written in the file; DPI-type estimates are used only
        for diffraction methods (X-ray, neutron, electron crystallography) or when
        unknown.
    has_b : bool, optional
        Whether the atoms carry real B-factors (``False`` for NMR models with B = 0
        or predicted models).

    Returns
    -------
    CoordinateError

    Examples
    --------
    >>> from fescan.structure.refinement import RefinementStats
    >>> coordinate_error(RefinementStats(dpi_rfree=0.2), 30.0).source
    'deposited-dpi-rfree'
    >>> coordinate_error(RefinementStats(), 30.0).source
    'b-factor-only'
    """
    diffraction = method is None or "DIFFRACTION" in method.upper() or "CRYSTALLOGRAPHY" in method.upper()
    cands, notes = _candidates(stats) if diffraction else ({}, [])
    mean_b = model_mean_b if model_mean_b is not None and model_mean_b > 0 else stats.mean_b
    for key in _ORDER:
        if key in cands:
            if mean_b is None:
                notes.append("no mean B: every atom gets the overall error")
            desc = (f"{_WORDS[key]}: sigma(r) = {cands[key]:.3g} Å for an atom of mean B"
                    + (f" ({mean_b:.3g} Å²)" if mean_b else "")
                    + ", scaled per atom by sqrt(B / B_mean) (Gurusaran et al. 2014, IUCrJ 1:74; from memory),"
                      " per axis / sqrt(3)")
            return CoordinateError(cands[key], key, desc, mean_b, cands, tuple(notes))
    if not has_b:
        why = "no refinement statistics and no B-factors (NMR or predicted model?)"
        return CoordinateError(None, "unknown", f"coordinate error unknown: {why}; distances taken as exact",
                               mean_b, cands, (*notes, why))
    why = ("the file gives no refinement statistics to estimate a coordinate error from" if diffraction
           else f"refinement statistics do not apply to {method}")
    desc = (f"B-factors alone (fallback: {why}): sigma(x) = sqrt(B / 8 pi^2), the atom's rms displacement, "
            "which is larger than the error of its mean position")
    return CoordinateError(None, "b-factor-only", desc, mean_b, cands, (*notes, why))
