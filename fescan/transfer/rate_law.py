"""Electron-tunnelling hop rates (Moser–Dutton) and transfer times over cofactor chains.

Pure functions: numbers or numpy arrays in, numbers or arrays out, no I/O.

The rate law is the empirical expression of Page, Moser, Chen & Dutton (1999)::

    log10 k = 13 - (1.2 - 0.8 rho) (R - 3.6) - 3.1 (dG + lambda)^2 / lambda      (dG <= 0)

with k in s⁻¹, R the edge-to-edge distance in Å, dG the driving force and lambda the
reorganisation energy in eV, rho the protein packing density between the centres.
An uphill hop (dG > 0) is given by detailed balance: the rate of the downhill reverse
hop times the Boltzmann factor 10^(-dG / (k_B T ln 10)). Rates are estimates from an
empirical law (C.C. Page's thesis quotes agreement within about 0.8 log units), not
measurements.

References
----------
* Page CC, Moser CC, Chen X, Dutton PL. Natural engineering principles of electron
  tunnelling in biological oxidation-reduction. Nature 1999, 402:47-52. PMID 10573417
  (doi:10.1038/46972, DOI from memory).
* Moser CC, Farid TA, Chobot SE, Dutton PL. Electron tunneling chains of mitochondria.
  Biochim Biophys Acta 2006, 1757:1096-1109. doi:10.1016/j.bbabio.2006.04.015
"""

from __future__ import annotations

import math
import sys
from collections import deque
from collections.abc import Callable, Iterable
from typing import TYPE_CHECKING

import numpy as np

from fescan.core.constants import DEFAULT_TEMPERATURE_K, FARADAY_C_PER_MOL, kt_ln10_ev
from fescan.core.errors import ConfigError

if TYPE_CHECKING:
    import scipy.sparse as sp

__all__ = [
    "CONTACT_DISTANCE",
    "MAX_LOG10_RATE",
    "DEFAULT_REORG",
    "DEFAULT_PACKING_DENSITY",
    "RateLaw",
    "log10_hop_rate",
    "log10_rate_slopes",
    "hop_rates",
    "hop_reorganisation",
    "dg_from_potentials",
    "reaction_gibbs_kj",
    "mean_first_passage_time",
    "summed_hop_time",
]

#: Van der Waals contact distance (Å) of the rate law; shorter distances are clamped to it.
CONTACT_DISTANCE: float = 3.6
#: log10 of the nuclear-frequency ceiling, 10^13 s⁻¹ (reached at contact when ΔG = -λ).
MAX_LOG10_RATE: float = 13.0
#: Default reorganisation energy λ (eV), the usual Moser–Dutton choice.
DEFAULT_REORG: float = 0.7
#: Default protein packing density ρ (Kaila, arXiv:1911.11178, after Page et al. 1999).
DEFAULT_PACKING_DENSITY: float = 0.76
#: Empirical coefficient of the free-energy parabola (quantum-broadened, not 1/(4kT ln10)).
_PARABOLA_COEFF: float = 3.1
#: Above this many states the first-passage solve uses a sparse factorisation.
_SPARSE_THRESHOLD: int = 200


def _as_float_array(value: object, name: str) -> np.ndarray:
    """Return *value* as a float array, or raise ConfigError naming *name*."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ConfigError(
            f"{name} must be a number or an array of numbers; got {value!r}"
        ) from None
    if np.isnan(arr).any():
        raise ConfigError(f"{name} must not be NaN")
    return arr


def _first_bad(arr: np.ndarray, bad: np.ndarray) -> str:
    """Describe the first offending value of *arr* where the mask *bad* is true."""
    n_bad = int(np.count_nonzero(bad))
    first = float(arr[bad].flat[0])
    return f"{first!r}" if n_bad == 1 else f"{first!r} (and {n_bad - 1} more)"


def _validated(
    distance: object, dg: object, reorg: object, packing_density: object
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Convert and check the rate-law inputs (see :func:`log10_hop_rate`)."""
    r = _as_float_array(distance, "distance")
    g = _as_float_array(dg, "dg")
    lam = _as_float_array(reorg, "reorg")
    rho = _as_float_array(packing_density, "packing_density")
    if (bad := r < 0).any():
        raise ConfigError(f"distance must be >= 0 Å; got {_first_bad(r, bad)}")
    if (bad := ~np.isfinite(lam) | (lam <= 0)).any():
        raise ConfigError(
            f"reorg (reorganisation energy) must be a finite number > 0 eV; got {_first_bad(lam, bad)}"
        )
    if (bad := (rho < 0) | (rho > 1)).any():
        raise ConfigError(f"packing_density must lie in [0, 1]; got {_first_bad(rho, bad)}")
    return r, g, lam, rho


def log10_hop_rate(
    distance: float | np.ndarray,
    dg: float | np.ndarray,
    reorg: float | np.ndarray = DEFAULT_REORG,
    packing_density: float | np.ndarray = DEFAULT_PACKING_DENSITY,
    *,
    temperature: float = DEFAULT_TEMPERATURE_K,
) -> float | np.ndarray:
    """Return log10 of the Moser–Dutton tunnelling rate (k in s⁻¹) of one hop.

    For a downhill or level hop (ΔG ≤ 0) this is the expression of Page et al. [1]_::

        log10 k = 13 - (1.2 - 0.8 ρ)(R - 3.6) - 3.1 (ΔG + λ)² / λ

    For an uphill hop (ΔG > 0) it is built by detailed balance from the reverse,
    downhill hop::

        log10 k(ΔG) = log10 k(-ΔG) - ΔG / (k_B T ln 10)

    so that ``k(ΔG) / k(-ΔG) = 10**(-ΔG / (k_B T ln 10))`` holds exactly for every ΔG.
    The published form [2]_ writes 0.06 eV for k_B T ln 10; this function uses the exact
    value at ``temperature`` instead (0.059 16 eV at 298.15 K), so uphill rates are
    lower than the 0.06 form by ``ΔG (1/0.05916 - 1/0.06)`` decades (0.024 at ΔG = 0.1 eV).

    Distances below the van der Waals contact of 3.6 Å are clamped to 3.6 Å, where the
    law was calibrated, so no rate exceeds 10^13 s⁻¹ (the maximum is reached at contact
    when ΔG = -λ). The temperature enters only the detailed-balance term; the empirical
    3.1 coefficient is not rescaled.

    Parameters
    ----------
    distance : float or ndarray
        Edge-to-edge distance R between the redox-active atoms, in Å (≥ 0; +inf gives
        -inf).
    dg : float or ndarray
        Driving force ΔG of the hop in eV (negative = downhill).
    reorg : float or ndarray, optional
        Reorganisation energy λ in eV (> 0, finite). Default 0.7 eV.
    packing_density : float or ndarray, optional
        Protein packing density ρ between the centres, in [0, 1]. Default 0.76, which
        gives the 0.592 ≈ 0.6 decades per Å slope.
    temperature : float, optional
        Temperature in K for the detailed-balance term. Default 298.15 K.

    Returns
    -------
    float or ndarray
        log10 of the rate in s⁻¹; a float when every input is a scalar, otherwise an
        array of the broadcast shape.

    Raises
    ------
    fescan.core.errors.ConfigError
        If an input is NaN or not a number, a distance is negative, λ ≤ 0 or not
        finite, ρ lies outside [0, 1], the temperature is not positive, or the input
        shapes do not broadcast.

    References
    ----------
    .. [1] Page CC, Moser CC, Chen X, Dutton PL, Nature 1999, 402:47-52.
       PMID 10573417 (doi:10.1038/46972, DOI from memory).
    .. [2] Moser CC, Farid TA, Chobot SE, Dutton PL, Biochim Biophys Acta 2006,
       1757:1096-1109. doi:10.1016/j.bbabio.2006.04.015

    Examples
    --------
    >>> round(log10_hop_rate(3.6, -0.7, reorg=0.7), 6)
    13.0
    >>> round(log10_hop_rate(14.0, -0.7, reorg=0.7, packing_density=0.76), 4)
    6.8432
    >>> log10_hop_rate([5.0, 10.0], -0.3).shape
    (2,)
    """
    if all(isinstance(v, _SCALARS) for v in (distance, dg, reorg, packing_density)):
        return _scalar_log10_rate(float(distance), float(dg), float(reorg), float(packing_density), temperature)
    r, g, lam, rho = _validated(distance, dg, reorg, packing_density)
    kt10 = kt_ln10_ev(temperature)
    try:
        r, g, lam, rho = np.broadcast_arrays(r, g, lam, rho)
    except ValueError as exc:
        raise ConfigError(
            f"distance, dg, reorg and packing_density do not broadcast: {exc}"
        ) from None
    r_eff = np.maximum(r, CONTACT_DISTANCE)
    downhill = g <= 0
    g_down = np.where(downhill, g, -g)  # driving force of the downhill direction (≤ 0)
    with np.errstate(invalid="ignore", over="ignore"):
        log_k = (
            MAX_LOG10_RATE
            - (1.2 - 0.8 * rho) * (r_eff - CONTACT_DISTANCE)
            - _PARABOLA_COEFF * (g_down + lam) ** 2 / lam
        )
        log_k = np.where(downhill, log_k, log_k - g / kt10)
    if log_k.ndim == 0:
        return float(log_k)
    return log_k


_SCALARS = (float, int)  # numpy float64 is a float; bool an int (1.0 on both paths)


def _scalar_log10_rate(r: float, g: float, lam: float, rho: float, temperature: float) -> float:
    """:func:`log10_hop_rate` for plain numbers, with the same checks and the same operations in the same order."""
    for name, v in (("distance", r), ("dg", g), ("reorg", lam), ("packing_density", rho)):
        if math.isnan(v):
            raise ConfigError(f"{name} must not be NaN")
    if r < 0:
        raise ConfigError(f"distance must be >= 0 Å; got {r!r}")
    if not math.isfinite(lam) or lam <= 0:
        raise ConfigError(f"reorg (reorganisation energy) must be a finite number > 0 eV; got {lam!r}")
    if rho < 0 or rho > 1:
        raise ConfigError(f"packing_density must lie in [0, 1]; got {rho!r}")
    kt10 = kt_ln10_ev(temperature)
    r_eff = max(r, CONTACT_DISTANCE)
    downhill = g <= 0
    g_down = g if downhill else -g
    t = g_down + lam
    log_k = MAX_LOG10_RATE - (1.2 - 0.8 * rho) * (r_eff - CONTACT_DISTANCE) - _PARABOLA_COEFF * (t * t) / lam
    return log_k if downhill else log_k - g / kt10


#: A rate law: ``law(distance, dg, reorg, packing_density, *, temperature) -> log10 k``
#: (s⁻¹), vectorised over numpy arrays. :func:`log10_hop_rate` (Moser–Dutton) is the
#: one fescan uses; another law is passed where a ``law=`` parameter is taken
#: (:func:`fescan.transfer.graph.build_hops`).
RateLaw = Callable[..., "float | np.ndarray"]


def log10_rate_slopes(
    distance: float, dg: float, reorg: float = DEFAULT_REORG, packing_density: float = DEFAULT_PACKING_DENSITY,
    temperature: float = DEFAULT_TEMPERATURE_K,
) -> tuple[float, float]:
    """∂log10k/∂R (per Å) and ∂log10k/∂ΔG (per eV) of :func:`log10_hop_rate`.

    The distance slope is the law's ``-(1.2 - 0.8 ρ)`` (0 inside the contact
    distance, where R is clamped); the ΔG slope is ``-6.2 (ΔG + λ)/λ`` downhill and
    ``6.2 (λ - ΔG)/λ - 1/(k_B T ln 10)`` uphill (detailed balance); at ΔG = 0 the
    law has a kink and the root mean square of the two sides is returned.

    Examples
    --------
    >>> [round(s, 4) for s in log10_rate_slopes(10.0, -0.35, reorg=0.7)]
    [-0.592, -3.1]
    """
    d_r = -(1.2 - 0.8 * packing_density) if distance > CONTACT_DISTANCE else 0.0
    down = -2.0 * _PARABOLA_COEFF * (dg + reorg) / reorg
    up = 2.0 * _PARABOLA_COEFF * (reorg - dg) / reorg - 1.0 / kt_ln10_ev(temperature)
    if dg < 0:
        d_g = down
    elif dg > 0:
        d_g = up
    else:
        d_g = -math.sqrt(0.5 * (down**2 + up**2))
    return d_r, d_g


def hop_rates(
    distance: float | np.ndarray,
    dg: float | np.ndarray,
    reorg: float | np.ndarray = DEFAULT_REORG,
    packing_density: float | np.ndarray = DEFAULT_PACKING_DENSITY,
    *,
    temperature: float = DEFAULT_TEMPERATURE_K,
) -> tuple[float | np.ndarray, float | np.ndarray]:
    """Return the forward and back rates (s⁻¹) of one hop donor → acceptor.

    Parameters
    ----------
    distance : float or ndarray
        Edge-to-edge distance in Å.
    dg : float or ndarray
        Driving force of the forward hop in eV; the back hop has ``-dg``.
    reorg, packing_density, temperature :
        As for :func:`log10_hop_rate`.

    Returns
    -------
    k_forward, k_back : float or ndarray
        Rates in s⁻¹, with ``k_forward / k_back = 10**(-dg / (k_B T ln 10))``.
        Very slow rates underflow to 0.0.

    Raises
    ------
    fescan.core.errors.ConfigError
        As for :func:`log10_hop_rate`.

    Examples
    --------
    >>> kf, kb = hop_rates(10.0, -0.1, reorg=0.7)
    >>> kf > kb
    True
    """
    kw = {"reorg": reorg, "packing_density": packing_density, "temperature": temperature}
    log_f = log10_hop_rate(distance, dg, **kw)
    log_b = log10_hop_rate(distance, -np.asarray(dg, dtype=float), **kw)
    if isinstance(log_f, float):
        return 10.0**log_f, 10.0 ** float(log_b)
    return np.power(10.0, log_f), np.power(10.0, log_b)


def hop_reorganisation(reorg_donor: float, reorg_acceptor: float) -> float:
    """Return the reorganisation energy of a hop from those of its two cofactors.

    Uses the Marcus cross relation λ_DA = (λ_D + λ_A) / 2 (common practice).

    Parameters
    ----------
    reorg_donor, reorg_acceptor : float
        Reorganisation energies of the donor and acceptor cofactors in eV (> 0).

    Returns
    -------
    float
        λ of the hop in eV.

    Raises
    ------
    fescan.core.errors.ConfigError
        If either value is not a finite number > 0.

    Examples
    --------
    >>> round(hop_reorganisation(0.6, 0.8), 6)
    0.7
    """
    values = []
    for name, val in (("reorg_donor", reorg_donor), ("reorg_acceptor", reorg_acceptor)):
        try:
            v = float(val)
        except (TypeError, ValueError):
            raise ConfigError(f"{name} must be a number in eV; got {val!r}") from None
        if not math.isfinite(v) or v <= 0:
            raise ConfigError(f"{name} must be a finite number > 0 eV; got {val!r}")
        values.append(v)
    return 0.5 * (values[0] + values[1])


def dg_from_potentials(
    e_donor: float | np.ndarray, e_acceptor: float | np.ndarray
) -> float | np.ndarray:
    """Return the driving force (eV) of moving one electron from donor to acceptor.

    ΔG = -(E_acceptor - E_donor): a hop towards a more positive midpoint potential is
    downhill (ΔG < 0).

    Parameters
    ----------
    e_donor, e_acceptor : float or ndarray
        Midpoint potentials in V (vs SHE).

    Returns
    -------
    float or ndarray
        ΔG in eV per electron.

    Raises
    ------
    fescan.core.errors.ConfigError
        If a potential is NaN or not a number.

    Examples
    --------
    >>> round(dg_from_potentials(-0.40, -0.25), 6)
    -0.15
    """
    ed = _as_float_array(e_donor, "e_donor")
    ea = _as_float_array(e_acceptor, "e_acceptor")
    out = -(ea - ed)
    return float(out) if out.ndim == 0 else out


def reaction_gibbs_kj(n_electrons: int, delta_e_volts: float) -> float:
    """Return ΔG = -n F ΔE of a redox reaction in kJ mol⁻¹.

    Parameters
    ----------
    n_electrons : int
        Number of electrons transferred (≥ 1).
    delta_e_volts : float
        ΔE = E(acceptor) - E(donor) in V.

    Returns
    -------
    float
        Gibbs energy in kJ mol⁻¹ (negative when ΔE > 0), with the exact Faraday
        constant 96 485.332 12 C mol⁻¹.

    Raises
    ------
    fescan.core.errors.ConfigError
        If ``n_electrons`` is not a positive integer or ΔE is not a finite number.

    Examples
    --------
    >>> round(reaction_gibbs_kj(2, 0.36), 1)
    -69.5
    """
    if isinstance(n_electrons, bool) or not isinstance(n_electrons, (int, np.integer)):
        raise ConfigError(f"n_electrons must be a positive integer; got {n_electrons!r}")
    if n_electrons < 1:
        raise ConfigError(f"n_electrons must be a positive integer; got {n_electrons!r}")
    try:
        de = float(delta_e_volts)
    except (TypeError, ValueError):
        raise ConfigError(f"delta_e_volts must be a number in V; got {delta_e_volts!r}") from None
    if not math.isfinite(de):
        raise ConfigError(f"delta_e_volts must be finite; got {delta_e_volts!r}")
    return -int(n_electrons) * FARADAY_C_PER_MOL * de / 1000.0


def _state_set(value: int | Iterable[int], n: int, name: str) -> list[int]:
    """Validate one state index or an iterable of them against ``range(n)``."""
    items = [value] if isinstance(value, (int, np.integer)) else value
    try:
        items = list(items)  # type: ignore[arg-type]
    except TypeError:
        raise ConfigError(
            f"{name} must be a state index or an iterable of them; got {value!r}"
        ) from None
    out = []
    for item in items:
        if isinstance(item, bool) or not isinstance(item, (int, np.integer)):
            raise ConfigError(f"{name} must hold integer state indices; got {item!r}")
        if not 0 <= item < n:
            raise ConfigError(f"{name} index {item} is outside 0..{n - 1}")
        out.append(int(item))
    if not out:
        raise ConfigError(f"{name} must name at least one state")
    return out


def _is_sparse(x: object) -> bool:
    """A scipy sparse matrix or array (scipy is never loaded just to ask)."""
    mod = sys.modules.get("scipy.sparse")
    return mod is not None and bool(mod.issparse(x))


def _offdiagonal_rates(rates: object) -> sp.csr_matrix | np.ndarray:
    """Return the off-diagonal rate matrix (diagonal set to 0), checked, sparse or dense."""
    if _is_sparse(rates):
        import scipy.sparse as sp

        mat = sp.coo_matrix(rates, dtype=float)
        if mat.ndim != 2 or mat.shape[0] != mat.shape[1]:
            raise ConfigError(f"rates must be a square matrix; got shape {mat.shape}")
        keep = mat.row != mat.col
        data, row, col = mat.data[keep], mat.row[keep], mat.col[keep]
        if not np.isfinite(data).all():
            raise ConfigError("rates must be finite numbers (found NaN or inf)")
        if (data < 0).any():
            raise ConfigError(f"rates must be >= 0 s⁻¹; got {float(data[data < 0][0])!r}")
        return sp.csr_matrix((data, (row, col)), shape=mat.shape)
    try:
        arr = np.array(rates, dtype=float)
    except (TypeError, ValueError):
        raise ConfigError("rates must be a square matrix of numbers") from None
    if arr.ndim != 2 or arr.shape[0] != arr.shape[1]:
        raise ConfigError(f"rates must be a square matrix; got shape {arr.shape}")
    np.fill_diagonal(arr, 0.0)
    if not np.isfinite(arr).all():
        raise ConfigError("rates must be finite numbers (found NaN or inf)")
    if (arr < 0).any():
        raise ConfigError(f"rates must be >= 0 s⁻¹; got {float(arr[arr < 0][0])!r}")
    return arr


def _reach(
    indptr: np.ndarray, indices: np.ndarray, sources: Iterable[int], blocked: set[int]
) -> set[int]:
    """Breadth-first set of states reachable from *sources* in a CSR graph, not entering *blocked*."""
    seen = set(sources)
    queue = deque(seen)
    while queue:
        i = queue.popleft()
        for j in indices[indptr[i] : indptr[i + 1]].tolist():
            if j not in seen and j not in blocked:
                seen.add(j)
                queue.append(j)
    return seen


def _dense_graph(w: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """CSR-style (indptr, indices) of the non-zero entries of a dense matrix."""
    rows, cols = np.nonzero(w)
    return np.searchsorted(rows, np.arange(w.shape[0] + 1)), cols


def mean_first_passage_time(
    rates: np.ndarray | sp.spmatrix | sp.sparray,
    start: int,
    absorbing: int | Iterable[int],
) -> float:
    """Return the mean time (s) for an electron at *start* to first reach *absorbing*.

    The electron hops as a continuous-time Markov chain with ``rates[i, j]`` the rate
    of the hop i → j. Over the transient states T (those reachable from *start*
    without passing the absorbing set) the mean first-passage times τ solve the linear
    system ``(-Q_TT) τ = 1``, where Q is the generator (off-diagonal rates, diagonal
    minus the total rate out); the system is solved with each row divided by its
    total exit rate, which leaves τ unchanged and helps when rates span many decades.
    A sparse LU factorisation (:func:`scipy.sparse.linalg.spsolve`) is used when the
    input is sparse or has more than 200 states, a dense solve otherwise.

    If the electron can reach a state from which the absorbing set cannot be reached
    (a dead end or trap), the mean time is infinite; this is detected from the graph
    of non-zero rates, not from a singular solve, and ``math.inf`` is returned.

    Parameters
    ----------
    rates : ndarray or scipy.sparse matrix, shape (n, n)
        Rates in s⁻¹, ``rates[i, j]`` for i → j; off-diagonal entries must be finite
        and ≥ 0. The diagonal is ignored (so a generator matrix may be passed), and so
        are the rows of absorbing states.
    start : int
        Index of the starting state.
    absorbing : int or iterable of int
        Index or indices of the absorbing (exit) state(s).

    Returns
    -------
    float
        Mean first-passage time in s; 0.0 if *start* is absorbing; ``math.inf`` if
        the absorbing set is not reached with certainty.

    Raises
    ------
    fescan.core.errors.ConfigError
        If the matrix is not square, holds negative, NaN or infinite rates, or a state
        index is out of range.

    Examples
    --------
    >>> mean_first_passage_time([[0.0, 2.0], [0.0, 0.0]], 0, 1)
    0.5
    >>> mean_first_passage_time([[0.0, 1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]], 0, 2)
    inf
    """
    use_sparse = _is_sparse(rates)
    w = _offdiagonal_rates(rates)
    n = w.shape[0]
    if n == 0:
        raise ConfigError("rates must hold at least one state")
    start_i = _state_set(start, n, "start")
    if len(start_i) != 1:
        raise ConfigError(f"start must be a single state index; got {start!r}")
    s = start_i[0]
    absorb = set(_state_set(absorbing, n, "absorbing"))
    if s in absorb:
        return 0.0

    if not use_sparse and n > _SPARSE_THRESHOLD:
        import scipy.sparse as sp

        w = sp.csr_matrix(w)
        use_sparse = True
    if use_sparse:
        csr = w
        csr.eliminate_zeros()
        back = csr.T.tocsr()
        forward_graph = (csr.indptr, csr.indices)
        backward_graph = (back.indptr, back.indices)
    else:  # a small dense matrix: the same graphs and solve in numpy
        forward_graph = _dense_graph(w)
        backward_graph = _dense_graph(w.T)
    transient = _reach(*forward_graph, [s], absorb) - absorb
    can_exit = _reach(*backward_graph, absorb, set())
    if not transient <= can_exit:
        return math.inf

    idx = np.fromiter(sorted(transient), dtype=np.intp)
    pos = int(np.searchsorted(idx, s))
    if use_sparse:
        import scipy.sparse as sp
        import scipy.sparse.linalg as spla  # large networks only: loaded on use

        sub = csr[idx][:, idx]
        exit_rate = np.asarray(csr[idx].sum(axis=1)).ravel()  # all hops out, incl. to absorbing
        a = (sp.identity(idx.size, format="csr") - sp.diags(1.0 / exit_rate) @ sub).tocsc()
        tau = spla.spsolve(a, 1.0 / exit_rate)
    else:
        sub = w[np.ix_(idx, idx)]
        exit_rate = w[idx].sum(axis=1)  # all hops out, incl. to absorbing
        tau = np.linalg.solve(np.eye(idx.size) - sub / exit_rate[:, None], 1.0 / exit_rate)
    return float(np.atleast_1d(tau)[pos])


def summed_hop_time(rates_forward: Iterable[float] | np.ndarray) -> float:
    """Return Σ 1/k, the transit time (s) of an irreversible chain of hops.

    This ignores back hops; with uphill steps use :func:`mean_first_passage_time`.

    Parameters
    ----------
    rates_forward : iterable of float
        Forward rates of the hops in s⁻¹ (≥ 0; a zero rate gives ``math.inf``).

    Returns
    -------
    float
        Sum of the mean hop times in s (0.0 for no hops).

    Raises
    ------
    fescan.core.errors.ConfigError
        If a rate is negative, NaN or not a number.

    Examples
    --------
    >>> summed_hop_time([1e3, 1e3, 2e3])
    0.0025
    """
    if not isinstance(rates_forward, np.ndarray):
        rates_forward = list(rates_forward)
    k = _as_float_array(rates_forward, "rates_forward").ravel()
    if (bad := k < 0).any():
        raise ConfigError(f"rates_forward must be >= 0 s⁻¹; got {_first_bad(k, bad)}")
    if (k == 0).any():
        return math.inf
    return math.fsum((1.0 / k).tolist())
