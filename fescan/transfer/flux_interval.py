"""Interval of the steady-state flux of a wire between two reservoirs (a model estimate).

:func:`flux_quantity` turns the steady-state engine (:mod:`fescan.transfer.steady_state`)
into a "rate sample → number" quantity, so the flux gets its interval the same way as
the first-passage time (:mod:`fescan.transfer.intervals`): distances of the path hops
from the sample (coordinate error), λ from the sample (the 0.5-1.0 eV scenarios), the
law's ±0.8 decade added to every log10 rate (reservoir exchange included; a common
factor on every rate scales the flux by the same factor), and each potential's
shift in its sensitivity run (both couples of a two-electron site move together).

Sites are the cofactors of the wire's path, as the steady state of the scan uses
(side branches left out); a two-electron cofactor whose graph node carries its two
couples (``parameters``) is a 0/1/2-electron site, every other a 0/1 site at its
potential. Reservoir potentials are the wire's own (``wire.steady_state``) unless given.
"""

from __future__ import annotations

import math
from typing import Any

from fescan.core.errors import ConfigError
from fescan.transfer.intervals import (
    LAW_SCATTER_DECADES,
    REORG_RANGE,
    QuantityInterval,
    quantity_intervals,
)
from fescan.transfer.rate_law import log10_hop_rate
from fescan.transfer.rate_samples import Quantity, RateSample, build_component

__all__ = ["flux_quantity", "flux_interval", "reservoir_potentials"]


def reservoir_potentials(result: Any) -> tuple[float, float] | None:
    """Source and sink potentials (V) of the wire's steady state, when the scan solved one."""
    ss = getattr(result.wire, "steady_state", None)
    if not isinstance(ss, dict):
        return None
    try:
        return float(ss["source"]["e_v"]), float(ss["sink"]["e_v"])
    except (KeyError, TypeError, ValueError):
        return None


def _site(result: Any, uid: str) -> tuple[float, ...]:
    """Couples (V) of one path site, as the scan's steady state takes them.

    Two for a two-electron cofactor whose node carries its couples (``parameters``)
    and is not a one-electron carrier; else one: the node's working couple as an
    acceptor when it has ``parameters``, else its potential.
    """
    node = result.graph.nodes[uid]
    p = node.get("parameters")
    try:
        if p is not None and p.two_electron and not p.one_electron_carrier:
            return tuple(float(p.couple(s).e_v) for s in ("ox/sq", "sq/red"))
        e = float((p.working(entry=False) if p is not None else node.get("potential", result.potentials[uid])).e_v)
    except (AttributeError, KeyError, TypeError, ValueError):
        e = float(result.potentials[uid].e_v)
    return (e if math.isfinite(e) else 0.0,)


def flux_quantity(result: Any, source_potential: float | None = None, sink_potential: float | None = None,
                  **model_options: Any) -> Quantity:
    """A quantity: the net steady-state flux (electrons s⁻¹) source → sink along the wire's path.

    Parameters
    ----------
    result : fescan.analysis.scan.ScanResult
    source_potential, sink_potential : float, optional
        Reservoir potentials (V); default the wire's own steady-state reservoirs.
    **model_options
        Passed to :func:`fescan.transfer.steady_state.steady_state` (e.g. ``source_rate``).

    Raises
    ------
    fescan.core.errors.ConfigError
        No path, or no reservoir potentials.
    """
    from fescan.transfer.steady_state import steady_state

    path = list(result.wire.path)
    if len(path) < 2:
        raise ConfigError("no wire path: no steady-state flux to put an interval on")
    own = reservoir_potentials(result)
    if source_potential is None or sink_potential is None:
        if own is None:
            raise ConfigError("give the source and sink reservoir potentials (V) for the flux")
        source_potential = own[0] if source_potential is None else source_potential
        sink_potential = own[1] if sink_potential is None else sink_potential
    base = [_site(result, u) for u in path]
    hops = list(zip(path, path[1:]))
    e_src, e_snk = float(source_potential), float(sink_potential)

    def flux(sample: RateSample) -> float:
        sites = [tuple(e + sample.potential_shift_of(u) for e in couples) for u, couples in zip(path, base)]
        shift = sample.law_shift
        comp = sample.component

        def law(distance, dg, reorg, rho, *, temperature):
            return log10_hop_rate(distance, dg, reorg, rho, temperature=temperature) + shift

        rho = [float(comp.rho[comp.edge(a, b)]) for a, b in hops]
        ss = steady_state(sites, [sample.distance_of(a, b) for a, b in hops], e_src, e_snk,
                          reorg=[sample.reorg_of(a, b) for a, b in hops], packing_density=rho,
                          temperature=comp.temperature, rate_function=law, names=path, derivatives=False,
                          **model_options)
        return float(ss.flux_per_s)

    return flux


def flux_interval(result: Any, source_potential: float | None = None, sink_potential: float | None = None, *,
                  n_samples: int = 100, seed: int | None = 0, level: str = "95%",
                  reorg_range: tuple[float, float] = REORG_RANGE, law_decades: float = LAW_SCATTER_DECADES,
                  coordinate_error: Any = None, **model_options: Any) -> QuantityInterval:
    """Interval of the wire's steady-state flux (electrons s⁻¹); see the module docstring.

    ``n_samples`` defaults to 100 per λ scenario (the least allowed): each sample solves the master
    equation (about 0.1 s for an 8-site path with a two-electron flavin), so 95 % ends come from few samples.

    Returns
    -------
    QuantityInterval
        ``value`` is the flux with the scan's inputs.
    """
    from fescan.transfer.uncertainty import structure_coordinate_error

    err = coordinate_error if coordinate_error is not None else structure_coordinate_error(result)
    comp, _ = build_component(result, err)
    if comp is None:
        raise ConfigError("no wire: no steady-state flux to put an interval on")
    q = flux_quantity(result, source_potential, sink_potential, **model_options)
    return quantity_intervals(comp, {"flux": q}, units={"flux": "s⁻¹"}, n_samples=n_samples, seed=seed,
                              level=level, reorg_range=reorg_range, law_decades=law_decades)["flux"]
