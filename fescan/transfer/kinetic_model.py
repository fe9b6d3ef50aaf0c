"""Kinetic model of a redox wire between two reservoirs: sites, couples, reservoirs, rates.

Pure: numbers in, a frozen :class:`WireModel` (rate tables) out; no I/O, no logging.
Solved by :mod:`fescan.transfer.steady_state`. Rates are model estimates.

The model
---------
A SOURCE reservoir at potential E_source exchanges electrons with the entry site, a SINK
reservoir at E_sink with the exit site; between them a chain (or any connected graph) of
redox sites. A one-electron site holds 0 or 1 electron (one couple, E); a two-electron site
(flavin, quinone) holds 0, 1 or 2 with two couples, E_ox/sq for 0 ↔ 1 and E_sq/red for
1 ↔ 2. Every step runs in both directions. The driving force of moving one electron is
``ΔG = E_donor - E_acceptor`` (eV) with the couple *of the electron that moves*: a site
holding n electrons donates at the couple (n-1 ↔ n) and accepts at the couple (n ↔ n+1),
so a doubly reduced flavin donates at sq/red first and a semiquinone accepts at sq/red.
Reservoirs hold no state: E_source and E_sink stand for the donor and acceptor pools
(e.g. NADH/NAD⁺, the ubiquinone pool).

Rates (s⁻¹) of hops come from ``rate_function(distance, ΔG, reorg, packing_density,
temperature=T)`` returning log10 k (default :func:`fescan.transfer.rate_law.log10_hop_rate`,
Moser–Dutton with exact detailed balance). Reservoir exchange, by default, is the same law
at van der Waals contact (3.6 Å) with λ = ``reservoir_reorg``: the substrate pool is taken to
bind in contact with the entry or exit cofactor; at contact the law gives 10^10.8 s⁻¹ at
ΔG = 0 (λ = 0.7 eV), so substrate supply and product removal do not limit the flux and the
flux and the control coefficients describe the wire itself. A slower substrate step can be given as ``source_rate`` /
``sink_rate`` k₀ (s⁻¹): then a downhill exchange runs at k₀ and an uphill one at
``k₀·10^(-ΔG/(k_B T ln10))``. Either way every pair of opposite rates obeys detailed balance,
so with E_source = E_sink the stationary state is equilibrium and the net flux is zero for any
site potentials.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from fescan.core.constants import DEFAULT_TEMPERATURE_K, kt_ln10_ev
from fescan.core.errors import ConfigError
from fescan.transfer.occupancy import RESERVOIR, KineticNetwork
from fescan.transfer.rate_law import (
    CONTACT_DISTANCE,
    DEFAULT_PACKING_DENSITY,
    DEFAULT_REORG,
    log10_hop_rate,
)

__all__ = ["RateFunction", "WireModel", "wire_model"]

#: log10 k(distance Å, ΔG eV, λ eV, ρ, *, temperature K), like :func:`log10_hop_rate`.
RateFunction = Callable[..., float]
_DG_STEP = 1e-5      # eV, central difference of the rate law in ΔG


@dataclass(frozen=True)
class WireModel:
    """A wire ready to solve: the rate tables plus what the tables were built from."""

    network: KineticNetwork
    names: tuple[str, ...]
    potentials: tuple[tuple[float, ...], ...]
    source_potential: float
    sink_potential: float
    entry: int
    exit: int
    is_chain: bool
    temperature: float

    @property
    def step_labels(self) -> tuple[tuple[str, str], ...]:
        """(from, to) of each step, forward direction; 'source' and 'sink' for reservoirs."""
        out = []
        for u, v in self.network.ends:
            out.append(("source" if u == RESERVOIR else self.names[u],
                        "sink" if v == RESERVOIR else self.names[v]))
        return tuple(out)


def _site_potentials(potentials: Sequence[float | Sequence[float]]) -> list[tuple[float, ...]]:
    out = []
    for i, p in enumerate(potentials):
        vals = (p,) if np.ndim(p) == 0 else tuple(p)  # type: ignore[arg-type]
        try:
            vals = tuple(float(x) for x in vals)
        except (TypeError, ValueError):
            raise ConfigError(f"site {i}: potentials must be numbers in V; got {p!r}") from None
        if len(vals) not in (1, 2) or not all(math.isfinite(x) for x in vals):
            raise ConfigError(f"site {i}: give one potential (V) or two (E_ox/sq, E_sq/red); got {p!r}")
        out.append(vals)
    if not out:
        raise ConfigError("a wire needs at least one site")
    return out


def _per_edge(value: float | Sequence[float], n: int, name: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.shape != (n,) or not np.isfinite(arr).all():
        raise ConfigError(f"{name} must be one finite number or one per hop ({n}); got {value!r}")
    return arr


def _law(rate_function: RateFunction, distance: float, reorg: float, rho: float,
         k0: float | None, temperature: float) -> Callable[[float], float]:
    """log10 k as a function of ΔG for one step."""
    if k0 is not None:
        kt10 = kt_ln10_ev(temperature)
        return lambda dg: math.log10(k0) + min(0.0, -dg / kt10)
    return lambda dg: float(rate_function(distance, dg, reorg, rho, temperature=temperature))


def _tables(law: Callable[[float], float], caps: tuple[int, int], don_par, acc_par, params):
    """Rate, d log10 k/dΔG and parameter-index tables of one direction of one step."""
    shape = (caps[0] + 1, caps[1] + 1)
    k, dl = np.zeros(shape), np.zeros(shape)
    dp, ap = np.full(shape, -1, dtype=np.int64), np.full(shape, -1, dtype=np.int64)
    for nu in range(shape[0]):
        for nv in range(shape[1]):
            d, a = don_par(nu, nv), acc_par(nu, nv)
            if d is None or a is None:
                continue
            dg = params[d] - params[a]
            log_k = law(dg)
            if not math.isfinite(log_k) and log_k != -math.inf:
                raise ConfigError(f"the rate function returned {log_k!r} at ΔG = {dg:.3f} eV")
            k[nu, nv] = 10.0**log_k
            hi, lo = law(dg + _DG_STEP), law(dg - _DG_STEP)
            dl[nu, nv] = (hi - lo) / (2 * _DG_STEP) if math.isfinite(hi - lo) else 0.0
            dp[nu, nv], ap[nu, nv] = d, a
    return k, dl, dp, ap


def wire_model(
    potentials: Sequence[float | Sequence[float]],
    distances: Sequence[float] | np.ndarray,
    source_potential: float,
    sink_potential: float,
    *,
    edges: Sequence[tuple[int, int]] | None = None,
    entry: int = 0,
    exit: int | None = None,
    reorg: float | Sequence[float] = DEFAULT_REORG,
    packing_density: float | Sequence[float] = DEFAULT_PACKING_DENSITY,
    source_rate: float | None = None,
    sink_rate: float | None = None,
    reservoir_reorg: float = DEFAULT_REORG,
    temperature: float = DEFAULT_TEMPERATURE_K,
    rate_function: RateFunction = log10_hop_rate,
    names: Sequence[str] | None = None,
) -> WireModel:
    """Build the rate tables of a wire between a source and a sink reservoir.

    Parameters
    ----------
    potentials : sequence
        Per site, one midpoint potential in V (one-electron site) or a pair
        ``(E_ox/sq, E_sq/red)`` in V (two-electron site).
    distances : sequence of float
        Edge-to-edge distance (Å) of each hop: ``n - 1`` values for the chain
        0 – 1 – … – n-1, or one per entry of *edges*.
    source_potential, sink_potential : float
        Reservoir potentials in V; the source feeds *entry*, the sink drains *exit*.
    edges : sequence of (int, int), optional
        Hops of a general connected graph (forward = first → second site). Default: a chain.
    entry, exit : int, optional
        Sites in contact with the source and the sink (default 0 and the last site).
    reorg, packing_density : float or sequence of float, optional
        λ (eV) and ρ of every hop, or one value per hop (defaults 0.7 eV and 0.76).
    source_rate, sink_rate : float, optional
        Exchange rate constant k₀ (s⁻¹) of a reservoir step; default ``None`` = the rate law
        at contact distance 3.6 Å with λ = *reservoir_reorg* (see the module docstring).
    reservoir_reorg : float, optional
        λ (eV) of the reservoir steps under the default law (0.7 eV).
    temperature : float, optional
        K (298.15 K).
    rate_function : callable, optional
        ``f(distance, dg, reorg, packing_density, *, temperature) -> log10 k``; must obey
        detailed balance itself. Default :func:`log10_hop_rate`.
    names : sequence of str, optional
        Site labels used in the output (default "0", "1", …).

    Returns
    -------
    WireModel

    Raises
    ------
    fescan.core.errors.ConfigError
        On inconsistent lengths, bad numbers, unknown sites or a disconnected graph.
    """
    sites = _site_potentials(potentials)
    n = len(sites)
    is_chain = edges is None
    edge_list = [(i, i + 1) for i in range(n - 1)] if edges is None else [tuple(e) for e in edges]
    exit_ = n - 1 if exit is None else exit
    for e in edge_list:
        if len(e) != 2 or not all(isinstance(x, (int, np.integer)) and 0 <= x < n for x in e) or e[0] == e[1]:
            raise ConfigError(f"edge {e!r} must join two different sites among 0..{n - 1}")
    for label, s in (("entry", entry), ("exit", exit_)):
        if not isinstance(s, (int, np.integer)) or not 0 <= s < n:
            raise ConfigError(f"{label} must be a site index in 0..{n - 1}; got {s!r}")
    m = len(edge_list)
    dist = _per_edge(distances, m, "distances") if m else np.zeros(0)
    if (dist < 0).any():
        raise ConfigError(f"distances must be >= 0 Å; got {distances!r}")
    lam = _per_edge(reorg, m, "reorg") if m else np.zeros(0)
    rho = _per_edge(packing_density, m, "packing_density") if m else np.zeros(0)
    e_src, e_snk = float(source_potential), float(sink_potential)
    if not (math.isfinite(e_src) and math.isfinite(e_snk)):
        raise ConfigError("source and sink potentials must be finite numbers in V")
    for label, k0 in (("source_rate", source_rate), ("sink_rate", sink_rate)):
        if k0 is not None and not (math.isfinite(k0) and k0 > 0):
            raise ConfigError(f"{label} must be a finite rate > 0 s⁻¹; got {k0!r}")
    kt_ln10_ev(temperature)  # validates
    reach = {entry}
    grow = True
    while grow:
        new = {b for a, b in edge_list if a in reach} | {a for a, b in edge_list if b in reach}
        grow = not new <= reach
        reach |= new
    if len(reach) != n:
        raise ConfigError(f"sites {sorted(set(range(n)) - reach)} are not connected to the entry site")

    caps = tuple(len(s) for s in sites)
    offset = np.concatenate(([0], np.cumsum(caps)))
    params = np.concatenate([np.asarray(s) for s in sites] + [[e_src, e_snk]])
    src_par, snk_par = int(offset[-1]), int(offset[-1]) + 1

    def don(site: int, cap: int):  # couple index of the electron leaving a site holding n
        return lambda n_: int(offset[site] + n_ - 1) if n_ >= 1 else None

    def acc(site: int, cap: int):  # couple index of the electron arriving at a site holding n
        return lambda n_: int(offset[site] + n_) if n_ < cap else None

    ends, tabs = [], []
    ce, cx = caps[entry], caps[exit_]
    law_src = _law(rate_function, CONTACT_DISTANCE, reservoir_reorg,
                   DEFAULT_PACKING_DENSITY, source_rate, temperature)
    law_snk = _law(rate_function, CONTACT_DISTANCE, reservoir_reorg,
                   DEFAULT_PACKING_DENSITY, sink_rate, temperature)
    ends.append((RESERVOIR, entry))
    tabs.append((_tables(law_src, (0, ce), lambda nu, nv: src_par, lambda nu, nv: acc(entry, ce)(nv), params),
                 _tables(law_src, (0, ce), lambda nu, nv: don(entry, ce)(nv), lambda nu, nv: src_par, params)))
    for k, (i, j) in enumerate(edge_list):
        law = _law(rate_function, float(dist[k]), float(lam[k]), float(rho[k]), None, temperature)
        ci, cj = caps[i], caps[j]
        tabs.append((
            _tables(law, (ci, cj), lambda nu, nv, i=i, ci=ci: don(i, ci)(nu),
                    lambda nu, nv, j=j, cj=cj: acc(j, cj)(nv), params),
            _tables(law, (ci, cj), lambda nu, nv, j=j, cj=cj: don(j, cj)(nv),
                    lambda nu, nv, i=i, ci=ci: acc(i, ci)(nu), params),
        ))
        ends.append((i, j))
    ends.append((exit_, RESERVOIR))
    tabs.append((_tables(law_snk, (cx, 0), lambda nu, nv: don(exit_, cx)(nu), lambda nu, nv: snk_par, params),
                 _tables(law_snk, (cx, 0), lambda nu, nv: snk_par, lambda nu, nv: acc(exit_, cx)(nu), params)))
    net = KineticNetwork(
        caps, tuple(ends),
        tuple(f[0] for f, b in tabs), tuple(b[0] for f, b in tabs),
        tuple(f[1] for f, b in tabs), tuple(b[1] for f, b in tabs),
        tuple(f[2] for f, b in tabs), tuple(f[3] for f, b in tabs),
        tuple(b[2] for f, b in tabs), tuple(b[3] for f, b in tabs),
    )
    labels = tuple(str(x) for x in names) if names is not None else tuple(str(i) for i in range(n))
    if len(labels) != n:
        raise ConfigError(f"names must give one label per site ({n}); got {len(labels)}")
    return WireModel(net, labels, tuple(sites), e_src, e_snk, int(entry), int(exit_),
                     is_chain and entry == 0 and exit_ == n - 1, float(temperature))
