"""Intervals on a wire's first-passage time and hop rates (fescan.transfer.intervals / uncertainty).

Sources: the rate law of Page, Moser, Chen & Dutton 1999 (Nature 402:47; MD-1/MD-3 of
REFERENCES.md s1a) with its stated scatter of about ±0.8 log units; λ range 0.5-1.0 eV (Moser et al.
2006, Biochim Biophys Acta 1757:1096; from memory); the mean first-passage time of a Markov chain scales
as 1/k when every rate is multiplied by k (property of the linear system, common practice); a normal
variable's 2.5/97.5 percentiles lie at ±1.96σ (common practice); entries per SOURCES.md.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

import fescan
from fescan.core.errors import ConfigError
from fescan.transfer.intervals import quantity_intervals
from fescan.transfer.rate_law import log10_hop_rate
from fescan.transfer.rate_samples import build_component, mfpt_of
from fescan.transfer.uncertainty import (
    log10_rate_slopes,
    monte_carlo_log10_rate,
    structure_coordinate_error,
    wire_uncertainty,
)
from tests.datafiles import entry_path, requires_shared

N = 400  # samples per λ scenario: enough for the checks below, quick to run


@pytest.fixture(scope="module")
def kf6():
    return fescan.scan(entry_path("1KF6"))


@pytest.fixture(scope="module")
def kf6_u(kf6):
    return wire_uncertainty(kf6, n_samples=N, seed=0)


@requires_shared
def test_point_estimates_are_the_scans(kf6, kf6_u):
    # the central sample reproduces the scan: its MFPT and every path hop's log10 k
    assert kf6_u.mean_first_passage_time.value == pytest.approx(kf6.wire.mean_first_passage_time, rel=1e-9)
    for h, hop in zip(kf6_u.hops, kf6.wire.hops):
        assert h.interval.value == pytest.approx(hop.k_forward, rel=1e-9)
        assert h.edge == pytest.approx(hop.edge)


@requires_shared
def test_intervals_contain_the_point_estimate(kf6_u):
    for iv in kf6_u.quantities.values():
        assert iv.low <= iv.value <= iv.high
        assert iv.low <= iv.low_68 <= iv.value <= iv.high_68 <= iv.high
    for h in kf6_u.hops:
        assert h.log10_k_95[0] <= h.log10_k <= h.log10_k_95[1]
        t_lo, t_hi = h.hop_time_interval()
        assert t_lo <= 1.0 / h.interval.value <= t_hi


@requires_shared
def test_law_scatter_widens_log10_k_by_its_amount(kf6):
    # Page et al. 1999: the law's own ±0.8 decade. With λ held at the value used (no λ scenarios), the
    # log10 interval of every hop rate widens by exactly 0.8 on each side, and the MFPT (∝ 1/k) by 0.8 decade
    lam = kf6.options.reorg
    with_law = wire_uncertainty(kf6, n_samples=N, seed=4, reorg_range=(lam, lam))
    without = wire_uncertainty(kf6, n_samples=N, seed=4, reorg_range=(lam, lam), law_decades=0.0)
    for a, b in zip(with_law.hops, without.hops):
        assert a.log10_k_95[0] == pytest.approx(b.log10_k_95[0] - 0.8, abs=1e-9)
        assert a.log10_k_95[1] == pytest.approx(b.log10_k_95[1] + 0.8, abs=1e-9)
    m1, m0 = with_law.mean_first_passage_time, without.mean_first_passage_time
    assert math.log10(m1.low) == pytest.approx(math.log10(m0.low) - 0.8, abs=1e-6)
    assert math.log10(m1.high) == pytest.approx(math.log10(m0.high) + 0.8, abs=1e-6)
    assert m1.law[0] == pytest.approx(m1.value * 10**0.8, rel=1e-6)  # every k × 10^-0.8 → time × 10^0.8


@requires_shared
def test_reorganisation_range_ends(kf6, kf6_u):
    # the λ ends are the law evaluated at λ = 0.5 and 1.0 eV with the scan's R and ΔG
    for h, hop in zip(kf6_u.hops, kf6.wire.hops):
        lo, hi = h.interval.reorg
        assert math.log10(lo) == pytest.approx(log10_hop_rate(hop.edge, hop.dg, 0.5, hop.packing_density), abs=1e-9)
        assert math.log10(hi) == pytest.approx(log10_hop_rate(hop.edge, hop.dg, 1.0, hop.packing_density), abs=1e-9)
        # the combined interval covers both λ ends
        assert h.log10_k_95[0] <= min(math.log10(lo), math.log10(hi)) <= max(math.log10(lo), math.log10(hi)) \
            <= h.log10_k_95[1]


@requires_shared
def test_coordinate_interval_of_a_hop_is_the_normal_one(kf6):
    # log10 k is linear in R above 3.6 Å with slope -(1.2 - 0.8ρ) (MD-1), so R ~ N(R0, σ_R) gives a 95 %
    # interval of log10 k of half-width 1.96 · (1.2 - 0.8ρ) · σ_R
    u = wire_uncertainty(kf6, n_samples=8000, seed=2)
    for h, hop in zip(u.hops, kf6.wire.hops):
        lo, hi = h.log10_k_coordinates
        half = 1.959964 * (1.2 - 0.8 * hop.packing_density) * h.sigma_edge
        assert (hi - lo) / 2 == pytest.approx(half, rel=0.06)


@requires_shared
def test_seeded_runs_repeat(kf6):
    # deterministic with a seed (compared with a tolerance, not bytes); another seed moves the ends a little
    a = wire_uncertainty(kf6, n_samples=N, seed=11)
    b = wire_uncertainty(kf6, n_samples=N, seed=11)
    c = wire_uncertainty(kf6, n_samples=N, seed=12)
    for k in a.quantities:
        assert a.quantities[k].low == pytest.approx(b.quantities[k].low, rel=1e-12)
        assert a.quantities[k].high == pytest.approx(b.quantities[k].high, rel=1e-12)
    assert a.quantities["mean_first_passage_time"].coordinates != c.quantities["mean_first_passage_time"].coordinates
    assert a.to_dict()["seed"] == 11


@requires_shared
def test_any_quantity_plugs_in(kf6):
    # a "wire → number" callable (here the reciprocal of the MFPT, as a flux would be) gets its interval
    # from the same samples: the reciprocal's interval is the MFPT's, inverted
    u = wire_uncertainty(kf6, n_samples=N, seed=5, extra={"inverse": lambda s: 1.0 / mfpt_of(s)})
    m, inv = u.quantities["mean_first_passage_time"], u.quantities["inverse"]
    assert inv.value == pytest.approx(1.0 / m.value)
    # (percentiles interpolate between neighbouring samples, so equal up to that interpolation)
    assert inv.low == pytest.approx(1.0 / m.high, rel=1e-4) and inv.high == pytest.approx(1.0 / m.low, rel=1e-4)


@requires_shared
def test_potentials_are_sensitivities(kf6, kf6_u):
    # each default potential moved to the ends of its class range, one at a time; largest spread first
    rows = kf6_u.mean_first_passage_time.potentials
    assert rows and [r["decades"] for r in rows] == sorted((r["decades"] for r in rows), reverse=True)
    p = kf6.potentials[rows[0]["cofactor"]]
    assert (rows[0]["e_low"], rows[0]["e_high"]) == (p.low_v, p.high_v)
    # a hop rate's sensitivity to its donor's potential is the law at ΔG shifted by that much
    h, hop = kf6_u.hops[0], kf6.wire.hops[0]
    row = next(r for r in h.interval.potentials if r["cofactor"] == hop.donor)
    expect = log10_hop_rate(hop.edge, hop.dg + (row["e_low"] - row["e_used"]), hop.reorg, hop.packing_density)
    assert math.log10(row["at_low"]) == pytest.approx(expect, abs=1e-9)
    # user values have no range: no sensitivity rows, and the interval is unchanged (not in it)
    exact = {u: replace(q, low_v=q.e_v, high_v=q.e_v) for u, q in kf6.potentials.items()}
    u2 = wire_uncertainty(replace(kf6, potentials=exact), n_samples=N, seed=0)
    assert u2.mean_first_passage_time.potentials == ()
    assert u2.mean_first_passage_time.low == pytest.approx(kf6_u.mean_first_passage_time.low, rel=1e-12)


@requires_shared
def test_sample_graph_carries_the_sample(kf6):
    comp, _ = build_component(kf6, structure_coordinate_error(kf6))
    lk = comp.log10_k(comp.distance[None, :], comp.dg[None, :], comp.reorg[None, :])[0]
    from fescan.transfer.rate_samples import RateSample

    g = RateSample(comp, lk + 1.0, comp.dg, comp.reorg, comp.distance).graph()
    for a, b, hop in g.edges(data="hop"):
        assert hop.log10_k_forward == pytest.approx(kf6.graph.edges[a, b]["hop"].log10_k_forward + 1.0)


@requires_shared
def test_measured_packing_is_not_in_default_rates(kf6):
    # the default scan puts ρ = 0.76 (Page et al. 1999's average) on every hop; the intervals use each
    # hop's own ρ, so a measured ρ never enters unless the user asked for packing="measured"
    assert kf6.options.packing == "default"
    assert {round(h.packing_density, 6) for _, _, h in kf6.graph.edges(data="hop")} == {0.76}
    comp, _ = build_component(kf6, structure_coordinate_error(kf6))
    assert np.allclose(comp.rho, 0.76)


@requires_shared
def test_no_wire_and_bad_options(kf6):
    res = fescan.scan(entry_path("2NIP"))  # a single [4Fe-4S] cluster: no wire
    u = wire_uncertainty(res, n_samples=N)
    assert u.hops == [] and u.mean_first_passage_time is None and u.mfpt_text() == "undetermined"
    for kw in ({"method": "linear"}, {"n_samples": 10}, {"level": "90%"}, {"reorg_range": (1.0, 0.5)}):
        with pytest.raises(ConfigError):
            wire_uncertainty(kf6, **kw)
    comp, _ = build_component(kf6, structure_coordinate_error(kf6))
    with pytest.raises(ConfigError):
        quantity_intervals(comp, {"m": mfpt_of}, n_samples=50)


@pytest.mark.parametrize("dg", [-0.9, -0.5, -0.1, 0.15, 0.4])
def test_slopes_match_finite_differences(dg):
    # derivatives of MD-1 / MD-3 against central differences of the rate law itself
    h = 1e-6
    d_r, d_g = log10_rate_slopes(11.0, dg, 0.7, 0.76)
    assert d_r == pytest.approx((log10_hop_rate(11.0 + h, dg) - log10_hop_rate(11.0 - h, dg)) / (2 * h), rel=1e-6)
    assert d_g == pytest.approx((log10_hop_rate(11.0, dg + h) - log10_hop_rate(11.0, dg - h)) / (2 * h), rel=1e-5)


def test_single_hop_monte_carlo_is_seeded_and_normal():
    s = monte_carlo_log10_rate(10.0, 0.5, -0.3, n_samples=20000, seed=7)
    assert np.array_equal(s, monte_carlo_log10_rate(10.0, 0.5, -0.3, n_samples=20000, seed=7))
    assert float(np.std(s)) == pytest.approx(0.592 * 0.5, rel=0.03)  # slope 1.2 - 0.8·0.76 = 0.592 per Å


@requires_shared
def test_samples_carry_the_shifts_a_rebuilt_model_needs(kf6):
    # a quantity that rebuilds its own kinetic model (a steady-state flux from potentials and
    # distances) sees the law's shift and each potential's shift explicitly
    seen = {"law": set(), "pot": set()}

    def probe(s):
        seen["law"].add(round(s.law_shift, 9))
        shifts = [s.potential_shift_of(u) for u in s.component.nodes]
        seen["pot"].add(round(sum(shifts), 9))
        a, b = s.component.path[:2]
        assert s.distance_of(a, b) >= 0 and s.reorg_of(a, b) > 0
        return 1.0

    wire_uncertainty(kf6, n_samples=100, seed=0, extra={"probe": probe})
    assert seen["law"] == {0.0, -0.8, 0.8}
    p = kf6.potentials[kf6.wire.entry]
    assert round(p.low_v - p.e_v, 9) in seen["pot"] and round(p.high_v - p.e_v, 9) in seen["pot"]
