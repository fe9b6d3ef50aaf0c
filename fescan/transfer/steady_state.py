"""Steady-state electron flux through a redox wire between two reservoirs (a model estimate).

Pure: a :class:`~fescan.transfer.kinetic_model.WireModel` (or numbers) in, a frozen
:class:`SteadyState` out; no I/O, no logging. The model (sites, couples, reservoirs, rates)
is described in :mod:`fescan.transfer.kinetic_model`.

Solution
--------
Up to ``max_exact_states`` occupancy states (default :data:`MAX_EXACT_STATES` = 2048, e.g.
11 one-electron sites, or a flavin and 9 clusters = 1536) the master equation is solved
exactly (:func:`fescan.transfer.occupancy.solve_exact`: sparse generator, one LU
factorisation, dense below 128 states). The limit is set by the LU fill-in of the
hypercube-like state graph: 4096 states take 0.5–5 s on a shared 2-core machine, 16 384 took
30 s. Beyond the limit the cluster mean-field approximation is used
(``method = "cluster-mean-field"``, :mod:`fescan.transfer.cluster_mean_field`): blocks of at
most ``block_states`` states (default :data:`BLOCK_STATES` = 64) solved exactly, cut at the
slowest hops, coupled through one-site distributions; its derivatives are central
differences over re-solves on the same block partition (2 × (steps + couples) solves: a
20-site chain takes about 10 s with derivatives on a loaded 2-core machine; pass
``derivatives=False`` when only flux and occupancy are needed). If its iteration does not
settle, the independent-site mean-field is reported instead (``method = "mean-field"``).
Both are exact at equilibrium. Agreement measured against the exact solution (scripts run
while building this module; tests/test_steady_state.py keeps four such chains):

* chains whose potentials rise towards the sink (60 random chains of 5–8 sites, one
  two-electron entry in half of them, edges 5–14 Å, reservoirs 0.2–0.5 V apart), blocks of
  16 states: flux within 0.018 decades (4 %), occupancies within 0.08 electron; the
  independent-site mean-field: flux within 0.15 decades (factor 1.4), occupancies 0.26;
* arbitrary chains (150 random chains of 4–7 sites, potentials anywhere in −0.3…+0.1 V,
  reservoirs 0.1–0.4 V apart), blocks of 32 states: flux within 0.085 decades for 90 % of
  them, worst 0.59 decades (factor 4), occupancies within 0.16; the independent-site
  mean-field is poor there (90 % within 1 decade; it can even miss the direction near
  equilibrium), so it is only a fallback.

Outputs: ``flux_per_s`` (net electrons s⁻¹ source → sink; negative if they run back),
mean ``occupancy`` per site, the flux-control coefficient of every step
``C_i = ∂ln J / ∂ln k_i`` (both directions of step i scaled together, so its equilibrium
constant is kept; they sum to 1 — the summation theorem of Kacser & Burns 1973, Symp Soc Exp
Biol 27:65, and Heinrich & Rapoport 1974, Eur J Biochem 42:89), and the sensitivity
``∂log10 J / ∂E`` (V⁻¹) of the flux to every potential. The exact method gets the derivatives
analytically from one adjoint solve; the mean-field method by central differences. ΔG
derivatives of the rate law are central differences (at ΔG = 0 exactly the Moser–Dutton law
has a kink; the mean of its two slopes is used). All rates, fluxes and times are model
estimates, not measurements.
"""


from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from fescan.core.errors import ConfigError
from fescan.transfer.cluster_mean_field import block_currents, solve_cluster_mean_field
from fescan.transfer.kinetic_model import WireModel, wire_model
from fescan.transfer.occupancy import (
    KineticNetwork,
    site_distributions,
    solve_exact,
    solve_mean_field,
    state_space,
    step_currents_mean_field,
)
from fescan.transfer.rate_law import mean_first_passage_time

__all__ = ["MAX_EXACT_STATES", "BLOCK_STATES", "FIRST_PASSAGE_LABEL", "SteadyState", "solve_steady_state",
           "steady_state", "first_passage_time"]

#: Largest occupancy state space solved exactly (beyond it: mean-field).
MAX_EXACT_STATES: int = 2**11
#: Largest block of the cluster mean-field approximation, in occupancy states.
BLOCK_STATES: int = 2**6
#: What :func:`first_passage_time` measures, in user words.
FIRST_PASSAGE_LABEL: str = "one electron entering an oxidised chain"
_METHODS = ("auto", "exact", "cluster-mean-field", "mean-field")
_MF_LOG_STEP = 1e-4  # central differences of the mean-field solution, in ln k
_MF_E_STEP = 1e-4    # and in V
_ZERO_FLUX = 1e-9    # |J| up to this fraction of the one-way currents: no direction, no control


@dataclass(frozen=True)
class SteadyState:
    """Steady state of a wire between a source and a sink reservoir (model estimates).

    Attributes
    ----------
    flux_per_s : float
        Net electrons per second from source to sink (negative: they run sink → source).
    occupancy : tuple of float
        Mean electrons on each site (0–1, or 0–2 for a two-electron site).
    distribution : tuple of tuple of float
        Per site, the probability of holding 0, 1 (, 2) electrons.
    steps : tuple of (str, str)
        Each step (forward direction): source → entry, every hop, exit → sink.
    control : tuple of float
        Flux-control coefficient ∂ln J/∂ln k of each step (sums to 1); NaN at zero flux.
    sensitivity : tuple of float
        ∂log10 |J| / ∂E (V⁻¹) of each site, all its couples shifted together; NaN at zero flux.
    sensitivity_couples : tuple of tuple of float
        The same per couple (E, or E_ox/sq and E_sq/red).
    sensitivity_source, sensitivity_sink : float
        ∂log10 |J| / ∂E of the reservoir potentials (V⁻¹).
    method : str
        "exact" (master equation over all occupancy states) or "mean-field".
    n_states : int
        Number of occupancy states of the full master equation, Π(capacity + 1).
    first_passage_time_s : float
        Mean time (s) for one electron entering an oxidised chain at the entry site to reach
        the exit site (:func:`first_passage_time`).
    sites : tuple of str
    source_potential, sink_potential, temperature : float
        V, V, K.
    """

    flux_per_s: float
    occupancy: tuple[float, ...]
    distribution: tuple[tuple[float, ...], ...]
    steps: tuple[tuple[str, str], ...]
    control: tuple[float, ...]
    sensitivity: tuple[float, ...]
    sensitivity_couples: tuple[tuple[float, ...], ...]
    sensitivity_source: float
    sensitivity_sink: float
    method: str
    n_states: int
    first_passage_time_s: float
    sites: tuple[str, ...]
    source_potential: float
    sink_potential: float
    temperature: float

    @property
    def bottleneck(self) -> tuple[str, str] | None:
        """The step with the largest flux-control coefficient (None at zero flux)."""
        c = np.asarray(self.control, dtype=float)
        if not np.isfinite(c).any():
            return None
        return self.steps[int(np.nanargmax(c))]

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary (NaN and inf become None)."""
        def f(x: float) -> float | None:
            return float(x) if math.isfinite(x) else None

        neck = self.bottleneck
        return {
            "flux_per_s": f(self.flux_per_s),
            "sites": list(self.sites),
            "occupancy": [f(x) for x in self.occupancy],
            "distribution": [[f(x) for x in d] for d in self.distribution],
            "steps": [list(s) for s in self.steps],
            "control": [f(x) for x in self.control],
            "bottleneck": list(neck) if neck else None,
            "sensitivity": [f(x) for x in self.sensitivity],
            "sensitivity_couples": [[f(x) for x in s] for s in self.sensitivity_couples],
            "sensitivity_source": f(self.sensitivity_source),
            "sensitivity_sink": f(self.sensitivity_sink),
            "method": self.method,
            "n_states": self.n_states,
            "first_passage_time_s": f(self.first_passage_time_s),
            "first_passage": FIRST_PASSAGE_LABEL,
            "source_potential_v": self.source_potential,
            "sink_potential_v": self.sink_potential,
            "temperature_k": self.temperature,
            "units": {"flux_per_s": "electrons s⁻¹", "sensitivity": "V⁻¹ (d log10 flux / dE)",
                      "first_passage_time_s": "s"},
            "note": "model estimate from the rate law, not a measurement",
        }


def _start_distributions(model: WireModel) -> list[np.ndarray]:
    """Nernst distributions of every site at the mean of the two reservoir potentials."""
    from fescan.core.constants import BOLTZMANN_EV_PER_K

    e = 0.5 * (model.source_potential + model.sink_potential)
    kt = BOLTZMANN_EV_PER_K * model.temperature
    out = []
    for couples in model.potentials:
        log_w = np.concatenate(([0.0], np.cumsum([(c - e) / kt for c in couples])))
        w = np.exp(log_w - log_w.max())
        out.append(w / w.sum())
    return out


def _exact(model: WireModel) -> tuple[float, list[np.ndarray], np.ndarray, np.ndarray, float]:
    """Flux, site distributions, dJ/dln k per step and dJ/dE per parameter (adjoint)."""
    net = model.network
    space = state_space(net)
    start = _start_distributions(model)
    caps = np.asarray(net.capacity)
    strides = np.cumprod(np.concatenate(([1], caps[:-1] + 1)))
    ref = int(sum(int(np.argmax(d)) * int(st) for d, st in zip(start, strides)))
    cuts = list(range(len(net.ends))) if model.is_chain else [0, len(net.ends) - 1]
    sol = solve_exact(net, space, cuts, ref)
    best = int(np.argmax(sol.probability))
    if sol.probability[ref] < 1e-6 * sol.probability[best]:  # re-anchor on a probable state
        sol = solve_exact(net, space, cuts, best)
    p, y, flux = sol.probability, sol.adjoint, sol.flux
    base = space.rate * p[space.src]
    w = base * (y[space.src] - y[space.dst])
    d_step = np.bincount(space.step, weights=w, minlength=len(net.ends))
    d_step[sol.measured_step] += flux
    w_e = (w + np.where(space.step == sol.measured_step, base * space.sign, 0.0)) * math.log(10) * space.dlog10
    n_par = int(sum(net.capacity)) + 2
    d_par = (np.bincount(space.donor_param, weights=w_e, minlength=n_par)[:n_par]
             - np.bincount(space.acceptor_param, weights=w_e, minlength=n_par)[:n_par])
    gross = float(np.sum(base[space.step == sol.measured_step]))
    return flux, site_distributions(space.occupancy, p, net.capacity), d_step, d_par, gross


def _approximate_flux(model: WireModel, net: KineticNetwork, start: list[np.ndarray],
                      method: str, block_states: int, blocks: list[list[int]] | None = None,
                      ) -> tuple[float, list[np.ndarray], str, list[list[int]] | None, float]:
    """Flux, one-site distributions, method used (cluster falls back to one-site), blocks, gross.

    Given *blocks* (the partition of the unperturbed network), *start* is taken to be a
    cluster solution of a nearby network and the one-site solve that otherwise starts the
    cluster iteration is skipped.
    """
    warm = blocks is not None and method == "cluster-mean-field"
    dist = start if warm else solve_mean_field(net, start)
    used = "mean-field"
    if method == "cluster-mean-field":
        try:
            dist, blocks, joint = solve_cluster_mean_field(net, dist, block_states, blocks=blocks)
        except ConfigError:  # the block iteration did not settle: keep the one-site solution
            if warm:
                raise
        else:
            net_cur, gross = block_currents(net, dist, blocks, joint)
            used = method
    if used == "mean-field":
        net_cur, gross = step_currents_mean_field(net, dist)
    cuts = list(range(len(net.ends))) if model.is_chain else [0, len(net.ends) - 1]
    best = min(cuts, key=lambda s: gross[s])
    return float(net_cur[best]), dist, used, blocks, float(gross[best])


def _approximate(model: WireModel, method: str, block_states: int, derivatives: bool
                 ) -> tuple[float, list[np.ndarray], np.ndarray, np.ndarray, str, float]:
    """Flux, distributions, central-difference derivatives, the method used, gross current."""
    net = model.network
    flux, dist, method, blocks, gross = _approximate_flux(model, net, _start_distributions(model),
                                                   method, block_states)
    n_steps, n_par = len(net.ends), int(sum(net.capacity)) + 2
    d_step, d_par = np.full(n_steps, np.nan), np.full(n_par, np.nan)
    if derivatives:
        def solve(perturbed: KineticNetwork) -> float:
            if method == "mean-field":
                return _approximate_flux(model, perturbed, dist, method, block_states)[0]
            return _approximate_flux(model, perturbed, dist, method, block_states, blocks)[0]

        for s in range(n_steps):
            fac = np.ones(n_steps)
            fac[s] = math.exp(_MF_LOG_STEP)
            hi = solve(net.scaled(step_factor=fac))
            fac[s] = math.exp(-_MF_LOG_STEP)
            d_step[s] = (hi - solve(net.scaled(step_factor=fac))) / (2 * _MF_LOG_STEP)
        for j in range(n_par):
            shift = np.zeros(n_par)
            shift[j] = _MF_E_STEP
            hi = solve(net.scaled(param_shift=shift))
            d_par[j] = (hi - solve(net.scaled(param_shift=-shift))) / (2 * _MF_E_STEP)
    return flux, dist, d_step, d_par, method, gross


def solve_steady_state(model: WireModel, *, method: str = "auto",
                       max_exact_states: int = MAX_EXACT_STATES,
                       block_states: int = BLOCK_STATES,
                       derivatives: bool = True) -> SteadyState:
    """Solve the steady state of a :class:`~fescan.transfer.kinetic_model.WireModel`.

    Parameters
    ----------
    model : WireModel
        From :func:`fescan.transfer.kinetic_model.wire_model`.
    method : {"auto", "exact", "mean-field"}, optional
        "auto" (default) solves exactly up to *max_exact_states* states, else mean-field.
    max_exact_states : int, optional
        Size limit of the exact solution (default :data:`MAX_EXACT_STATES` = 65 536).
    derivatives : bool, optional
        Compute control coefficients and sensitivities (default True; else NaN).

    Returns
    -------
    SteadyState

    Raises
    ------
    fescan.core.errors.ConfigError
        On an unknown method, an exact request above the limit, a disconnected network or a
        mean-field iteration that does not converge.
    """
    if method not in _METHODS:
        raise ConfigError(f"method must be one of {', '.join(_METHODS)}; got {method!r}")
    n_states = model.network.n_states
    if method == "auto":
        method = "exact" if n_states <= max_exact_states else "cluster-mean-field"
    if method == "exact":
        if n_states > max_exact_states:
            raise ConfigError(f"{n_states} occupancy states exceed the exact limit {max_exact_states}")
        flux, dist, d_step, d_par, gross = _exact(model)
    else:
        flux, dist, d_step, d_par, method, gross = _approximate(model, method, block_states,
                                                                derivatives)
    zero = abs(flux) <= _ZERO_FLUX * gross  # net current lost in the one-way currents
    if not derivatives or zero:
        d_step = np.full_like(d_step, np.nan)
        d_par = np.full_like(d_par, np.nan)
    control = d_step / flux if flux else d_step * np.nan
    sens_par = d_par / (flux * math.log(10)) if flux else d_par * np.nan
    caps = model.network.capacity
    offs = np.concatenate(([0], np.cumsum(caps))).astype(int)
    couples = tuple(tuple(float(x) for x in sens_par[offs[i]:offs[i + 1]]) for i in range(len(caps)))
    return SteadyState(
        flux_per_s=float(flux),
        occupancy=tuple(float(np.dot(np.arange(d.size), d)) for d in dist),
        distribution=tuple(tuple(float(x) for x in d) for d in dist),
        steps=model.step_labels,
        control=tuple(float(c) for c in control),
        sensitivity=tuple(float(sum(c)) for c in couples),
        sensitivity_couples=couples,
        sensitivity_source=float(sens_par[-2]),
        sensitivity_sink=float(sens_par[-1]),
        method=method,
        n_states=n_states,
        first_passage_time_s=first_passage_time(model),
        sites=model.names,
        source_potential=model.source_potential,
        sink_potential=model.sink_potential,
        temperature=model.temperature,
    )


def steady_state(potentials, distances, source_potential: float, sink_potential: float, *,
                 method: str = "auto", max_exact_states: int = MAX_EXACT_STATES,
                 block_states: int = BLOCK_STATES, derivatives: bool = True,
                 **model_options: Any) -> SteadyState:
    """Build a wire model and solve its steady state in one call.

    Parameters
    ----------
    potentials, distances, source_potential, sink_potential, **model_options :
        As for :func:`fescan.transfer.kinetic_model.wire_model` (``edges``, ``entry``,
        ``exit``, ``reorg``, ``packing_density``, ``source_rate``, ``sink_rate``,
        ``reservoir_reorg``, ``temperature``, ``rate_function``, ``names``).
    method, max_exact_states, derivatives :
        As for :func:`solve_steady_state`.

    Returns
    -------
    SteadyState

    Examples
    --------
    >>> ss = steady_state([-0.30, -0.25, -0.10], [8.0, 9.0], -0.32, 0.09)
    >>> ss.method, ss.n_states, round(sum(ss.control), 6)
    ('exact', 8, 1.0)
    """
    model = wire_model(potentials, distances, source_potential, sink_potential, **model_options)
    return solve_steady_state(model, method=method, max_exact_states=max_exact_states,
                              block_states=block_states, derivatives=derivatives)


def first_passage_time(model: WireModel, *, entry_couple: int = 0) -> float:
    """Mean time (s) for one electron entering an oxidised chain to reach the exit site.

    The electron starts on the entry site with every other site oxidised and hops in both
    directions (reservoirs play no part) until it first arrives on the exit site; solved by
    :func:`fescan.transfer.rate_law.mean_first_passage_time`. A two-electron site handles
    the lone electron at its ox/sq couple, except that ``entry_couple=1`` lets the entry site
    keep one electron of its own and exchange the moving one at sq/red (the first electron
    leaving a fully reduced flavin). A model estimate.

    Parameters
    ----------
    model : WireModel
    entry_couple : int, optional
        0 (default) or, for a two-electron entry site, 1.

    Returns
    -------
    float
        Seconds; 0.0 when entry and exit coincide; ``inf`` if the exit cannot be reached.
    """
    net = model.network
    if entry_couple not in (0, 1) or entry_couple >= net.capacity[model.entry]:
        raise ConfigError(f"entry_couple must be 0 or, for a two-electron entry site, 1; got {entry_couple!r}")
    n = len(net.capacity)
    base = [0] * n
    base[model.entry] = entry_couple
    rates = np.zeros((n, n))
    for s, (u, v) in enumerate(net.ends[1:-1], start=1):
        rates[u, v] += net.forward[s][base[u] + 1, base[v]]
        rates[v, u] += net.backward[s][base[u], base[v] + 1]
    return float(mean_first_passage_time(rates, model.entry, model.exit))
