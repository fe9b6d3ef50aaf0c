"""Coordinate and potential uncertainty → distance, log10 k and time intervals (fescan.uncertainty).

Sources: the rate law MD-1/MD-3 of REFERENCES.md s1a (Page, Moser, Chen & Dutton 1999; detailed
balance for uphill hops); B = 8π²⟨u²⟩ (Debye–Waller factor; common practice, no source);
entries and their files per SOURCES.md (shared/structures).
"""

from __future__ import annotations

import math
from dataclasses import replace

import gemmi
import numpy as np
import pytest

import fescan
from fescan.core.errors import ConfigError
from fescan.transfer.potentials import Potential
from fescan.transfer.rate_law import log10_hop_rate
from fescan.transfer.uncertainty import (
    _header_text,
    coordinate_floor,
    deposited_coordinate_error,
    linear_log10_rate,
    log10_rate_slopes,
    monte_carlo_log10_rate,
    potential_sigma,
    sigma_from_b,
    wire_uncertainty,
)
from tests.datafiles import entry_path, requires_shared


def test_sigma_from_b():
    # B = 8π²⟨u²⟩ (common practice, no source): ⟨u²⟩ = 0.25 Å² gives σ = 0.5 Å; B = 20 Å² gives 0.503 Å
    assert sigma_from_b(8 * math.pi**2 * 0.25) == pytest.approx(0.5)
    assert sigma_from_b(20.0) == pytest.approx(0.50329, abs=1e-5)
    assert sigma_from_b(-3.0) == 0.0
    assert sigma_from_b(np.array([0.0, 8 * math.pi**2])).tolist() == [0.0, 1.0]


def test_floor():
    # deposited 3-D error / sqrt(3) per direction (isotropic); else the d_min/10 rule (from memory)
    assert coordinate_floor(2.0, 0.30)[0] == pytest.approx(0.30 / math.sqrt(3))
    assert coordinate_floor(2.0)[0] == pytest.approx(0.2 / math.sqrt(3))
    assert coordinate_floor(None)[0] == 0.0


def test_deposited_error_preference():
    text = ("REMARK   3   ESD FROM LUZZATI PLOT        (A) : 0.30\n"
            "REMARK   3   ESD FROM C-V LUZZATI PLOT    (A) : 0.45\n")
    assert deposited_coordinate_error(text) == 0.45  # the cross-validated estimate first
    assert deposited_coordinate_error("_refine.pdbx_overall_ESU_R_Free  ?\n_refine.pdbx_overall_ESU_R 0.12\n") == 0.12
    assert deposited_coordinate_error("REMARK   3   ESD FROM LUZZATI PLOT        (A) : NULL") is None


@requires_shared
@pytest.mark.parametrize("entry, value", [
    ("2NIP", 0.45),  # the file's REMARK 3: "ESD FROM C-V LUZZATI PLOT (A) : 0.45" (plain Luzzati 0.30)
    ("3EK3", 0.093),  # the file's _refine.pdbx_overall_ESU_R_Free 0.093
    ("1FDN", None),  # the file's REMARK 3 Luzzati items are NULL
])
def test_deposited_error_read_from_file(entry, value):
    text = _header_text(str(entry_path(entry)))
    got = deposited_coordinate_error(text)
    assert got == (pytest.approx(value) if value is not None else None)


def test_potential_sigma():
    # the class range read as ±2σ (gaussian) or as a uniform interval: σ = width/4 or width/sqrt(12)
    p = Potential(-0.40, -0.70, -0.20, "", "default")
    assert potential_sigma(p) == pytest.approx(0.125)
    assert potential_sigma(p, "uniform") == pytest.approx(0.5 / math.sqrt(12))
    assert potential_sigma(Potential(0.1, 0.1, 0.1, "", "user")) == 0.0
    with pytest.raises(ConfigError):
        potential_sigma(p, "triangle")


@pytest.mark.parametrize("dg", [-0.9, -0.5, -0.1, 0.15, 0.4])
def test_slopes_match_finite_differences(dg):
    # derivatives of MD-1 / MD-3 (REFERENCES.md s1a) against central differences of the rate law itself
    h = 1e-6
    d_r, d_g = log10_rate_slopes(11.0, dg, 0.7, 0.76)
    assert d_r == pytest.approx((log10_hop_rate(11.0 + h, dg) - log10_hop_rate(11.0 - h, dg)) / (2 * h), rel=1e-6)
    assert d_g == pytest.approx((log10_hop_rate(11.0, dg + h) - log10_hop_rate(11.0, dg - h)) / (2 * h), rel=1e-5)


def test_slope_is_zero_at_contact():
    # below the 3.6 Å contact distance the law is clamped (MD-4): R has no effect there
    assert log10_rate_slopes(3.0, -0.7)[0] == 0.0


def test_linear_interval_of_a_synthetic_hop_is_analytic():
    # MD-1 with ρ = 0.76, λ = 0.7 eV: ∂/∂R = -(1.2 - 0.8·0.76) = -0.592 per Å and
    # ∂/∂ΔG = -6.2 (ΔG + λ)/λ = -3.542857 per eV at ΔG = -0.3 eV (hand derivation, DERIVED)
    sigma_analytic = math.hypot(0.592 * 0.5, 6.2 * 0.4 / 0.7 * 0.05)
    lk, s = linear_log10_rate(10.0, 0.5, -0.3, 0.05, reorg=0.7, packing_density=0.76)
    assert lk == pytest.approx(13 - 0.592 * 6.4 - 3.1 * 0.16 / 0.7)
    assert s == pytest.approx(sigma_analytic, rel=1e-12)
    assert s == pytest.approx(0.344958, abs=1e-6)


def test_monte_carlo_agrees_with_linear():
    # a seeded Monte Carlo of the same hop: mean and spread agree with the linear result
    # (the parabola's curvature adds only 3.1 σ_ΔG²/λ = 0.011 decade at σ_ΔG = 0.05 eV)
    lk, s = linear_log10_rate(10.0, 0.5, -0.3, 0.05)
    samples = monte_carlo_log10_rate(10.0, 0.5, -0.3, 0.05, n_samples=50000, seed=7)
    assert float(np.mean(samples)) == pytest.approx(lk, abs=0.02)
    assert float(np.std(samples)) == pytest.approx(s, rel=0.02)
    lo, hi = np.percentile(samples, [2.5, 97.5])
    assert lo == pytest.approx(lk - 1.96 * s, abs=0.03) and hi == pytest.approx(lk + 1.96 * s, abs=0.03)
    # seeded: the same seed gives the same samples
    assert np.array_equal(samples, monte_carlo_log10_rate(10.0, 0.5, -0.3, 0.05, n_samples=50000, seed=7))


@pytest.fixture(scope="module")
def kf6():
    return fescan.scan(entry_path("1KF6"))


@requires_shared
def test_sigma_edge_from_the_closest_atoms_b(kf6):
    # σ_R² = σ_a² + σ_b² from the B-factors of the two closest atoms as read by gemmi from the file;
    # 1KF6 is at 2.70 Å (SOURCES.md), so the d_min/10 floor is 0.156 Å per direction
    u = wire_uncertainty(kf6)
    st = gemmi.read_structure(str(entry_path("1KF6")))
    floor = 0.27 / math.sqrt(3)
    for h in u.hops:
        names = h.closest_atoms.split("-")
        bs = []
        for uid, name in zip((h.donor, h.acceptor), names):
            c = kf6.cofactor(uid)
            res = st[0][c.chain][str(c.seqnum)][0]
            bs.append(res[name][0].b_iso)
        expect = math.hypot(*(max(math.sqrt(b / (8 * math.pi**2)), floor) for b in bs))
        assert h.sigma_edge == pytest.approx(expect, rel=1e-6)
        assert h.log10_k == pytest.approx(kf6.graph.edges[h.donor, h.acceptor]["hop"].log10_k_forward)


@requires_shared
def test_real_wire_linear_and_monte_carlo_agree(kf6):
    # with exact potentials (zero ranges) only R varies, and log10 k is linear in R above 3.6 Å,
    # so the Monte Carlo percentiles must reproduce the linear intervals
    exact = {u: replace(p, low_v=p.e_v, high_v=p.e_v) for u, p in kf6.potentials.items()}
    res = replace(kf6, potentials=exact)
    lin = wire_uncertainty(res, method="linear")
    mc = wire_uncertainty(res, method="monte-carlo", n_samples=40000, seed=3)
    for a, b in zip(lin.hops, mc.hops):
        assert a.sigma_dg == 0.0
        assert b.log10_k_95[0] == pytest.approx(a.log10_k_95[0], abs=0.05)
        assert b.log10_k_95[1] == pytest.approx(a.log10_k_95[1], abs=0.05)
        assert b.sigma_log10_k == pytest.approx(a.sigma_log10_k, rel=0.03)
    t_lo, t_hi = mc.summed_hop_time_95
    assert t_lo < kf6.wire.summed_hop_time < t_hi


@requires_shared
def test_intervals_nest_and_times_invert(kf6):
    u = wire_uncertainty(kf6, method="monte-carlo", n_samples=5000, seed=0)
    for h in u.hops:
        assert h.log10_k_95[0] < h.log10_k_68[0] < h.log10_k_68[1] < h.log10_k_95[1]
        k_lo, k_hi = h.rate_interval("95%")
        t_lo, t_hi = h.hop_time_interval("95%")
        assert t_lo == pytest.approx(1 / k_hi) and t_hi == pytest.approx(1 / k_lo)
    d = u.to_dict()
    assert d["method"] == "monte-carlo" and d["seed"] == 0 and "estimates" in d["caution"]


@requires_shared
def test_all_atom_minimum_is_biased_short(kf6):
    # moving every redox atom and taking the minimum distance shortens R on average (a minimum of
    # noisy values is biased low): the median log10 k rises above the scan's value
    u = wire_uncertainty(kf6, method="monte-carlo", distance_model="all-atoms", n_samples=2000, seed=1)
    exact = {x: replace(p, low_v=p.e_v, high_v=p.e_v) for x, p in kf6.potentials.items()}
    u = wire_uncertainty(replace(kf6, potentials=exact), method="monte-carlo", distance_model="all-atoms",
                         n_samples=2000, seed=1)
    for h in u.hops:
        assert (h.log10_k_68[0] + h.log10_k_68[1]) / 2 > h.log10_k


@requires_shared
def test_nmr_without_b_factors():
    # 1CLF is an NMR ensemble (SOURCES.md): no B-factors, no resolution, so no coordinate spread
    res = fescan.scan(entry_path("1CLF"))
    u = wire_uncertainty(res)
    assert u.floor == 0.0 and all(h.sigma_edge == 0.0 for h in u.hops)
    assert any("B-factor" in n for n in u.notes)


@pytest.mark.parametrize("kw", [{"method": "bootstrap"}, {"distance_model": "nearest"},
                                {"method": "monte-carlo", "n_samples": 10}, {"potential_model": "flat"}])
@requires_shared
def test_bad_options(kf6, kw):
    with pytest.raises(ConfigError):
        wire_uncertainty(kf6, **kw)
