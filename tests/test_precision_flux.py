"""Interval of the steady-state flux of a wire (fescan.transfer.flux_interval).

Sources: the steady-state engine of fescan.transfer.steady_state (tested against closed forms in
tests/test_steady_state.py); multiplying every rate of a master equation by one factor leaves its
stationary distribution unchanged and multiplies every current by that factor (property of the linear
system, common practice); the law's ±0.8 decade (Page et al. 1999, Nature 402:47); reservoir potentials
NADH/NAD+ -0.32 V and ubiquinone pool +0.09 V as named in issue 10 (textbook values, from memory).
"""

from __future__ import annotations

import pytest

import fescan
from fescan.core.errors import ConfigError
from fescan.transfer.flux_interval import flux_interval, flux_quantity
from fescan.transfer.rate_samples import build_component
from fescan.transfer.steady_state import steady_state
from fescan.transfer.uncertainty import structure_coordinate_error
from tests.datafiles import entry_path, requires_shared

SOURCE, SINK = -0.32, 0.09


@pytest.fixture(scope="module")
def kf6():
    return fescan.scan(entry_path("1KF6"))


@pytest.fixture(scope="module")
def kf6_flux(kf6):
    lam = kf6.options.reorg
    return flux_interval(kf6, SOURCE, SINK, n_samples=100, seed=0, reorg_range=(lam, lam))


@requires_shared
def test_point_flux_is_the_engines(kf6, kf6_flux):
    # the point estimate is the engine's flux for the scan's path, distances, λ and potentials
    path, hops = kf6.wire.path, kf6.wire.hops
    ss = steady_state([(kf6.potentials[u].e_v,) for u in path], [h.edge for h in hops], SOURCE, SINK,
                      reorg=[h.reorg for h in hops], packing_density=[h.packing_density for h in hops],
                      temperature=kf6.options.temperature, derivatives=False)
    own = getattr(kf6.wire, "steady_state", None)
    if own is None:  # one couple per site: the engine called directly with the scan's numbers
        assert kf6_flux.value == pytest.approx(ss.flux_per_s, rel=1e-9)
    else:  # the scan solved its own steady state (couples per site): the same flux with its reservoirs
        iv = flux_interval(kf6, n_samples=100, seed=0)
        assert iv.value == pytest.approx(own["flux_per_s"], rel=1e-9)
    assert kf6_flux.low <= kf6_flux.value <= kf6_flux.high


@requires_shared
def test_law_scatter_scales_the_flux_by_its_factor(kf6_flux):
    # every rate × 10^±0.8 (reservoir exchange included) → the flux × 10^±0.8 exactly
    lo, hi = kf6_flux.law
    assert lo == pytest.approx(kf6_flux.value * 10**-0.8, rel=1e-6)
    assert hi == pytest.approx(kf6_flux.value * 10**0.8, rel=1e-6)
    assert kf6_flux.low <= lo and kf6_flux.high >= hi


@requires_shared
def test_flux_sensitivities_and_reservoirs_needed(kf6, kf6_flux):
    assert kf6_flux.potentials and kf6_flux.potentials[0]["decades"] >= kf6_flux.potentials[-1]["decades"]
    if getattr(kf6.wire, "steady_state", None) is None:  # this scan solved no steady state: say which pools
        with pytest.raises(ConfigError):
            flux_quantity(kf6)
    comp, _ = build_component(kf6, structure_coordinate_error(kf6))
    assert comp is not None
