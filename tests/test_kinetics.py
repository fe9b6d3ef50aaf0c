"""Tests of fescan.transfer.rate_law (Moser–Dutton hop rates, first-passage times) and fescan.core.constants.

Check values come from reference/REFERENCES.md; the source of each is written beside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from fescan.core.constants import (
    BOLTZMANN_EV_PER_K,
    FARADAY_C_PER_MOL,
    GAS_CONSTANT_J_PER_MOL_K,
    kt_ln10_ev,
)
from fescan.core.errors import ConfigError
from fescan.transfer.rate_law import (
    dg_from_potentials,
    hop_rates,
    hop_reorganisation,
    log10_hop_rate,
    mean_first_passage_time,
    reaction_gibbs_kj,
    summed_hop_time,
)

#: ρ with 1.2 - 0.8ρ = 0.6 exactly: the simplified MD-2 form (REFERENCES.md §1a MD-2).
RHO_MD2 = 0.75
#: kT ln10 as printed in the published endergonic form (REFERENCES.md §1a MD-3).
PUBLISHED_KT_LN10 = 0.06
KT10 = kt_ln10_ev(298.15)


# --------------------------------------------------------------------------- constants


def test_faraday_codata():
    # REFERENCES.md §5: F = 96 485.332 12 C/mol, exact = N_A e (CODATA 2018 / SI-2019)
    assert FARADAY_C_PER_MOL == pytest.approx(96485.33212, abs=1e-5)


def test_boltzmann_ev_and_gas_constant():
    # REFERENCES.md §5: k_B = 8.617 333 262e-5 eV/K (DERIVED k_B/e); R = 8.314 462 618 J/(mol K)
    assert BOLTZMANN_EV_PER_K == pytest.approx(8.617333262e-5, rel=1e-10)
    assert GAS_CONSTANT_J_PER_MOL_K == pytest.approx(8.314462618, rel=1e-10)


@pytest.mark.parametrize(
    ("temperature", "expected"),
    [
        (298.15, 0.05916),  # REFERENCES.md §1c "Other derived facts"
        (295.0, 0.05853),  # REFERENCES.md §1c
        (310.15, 0.06154),  # REFERENCES.md §1c
    ],
)
def test_kt_ln10(temperature, expected):
    assert kt_ln10_ev(temperature) == pytest.approx(expected, abs=5e-6)


@pytest.mark.parametrize("bad", [0.0, -5.0, math.nan, math.inf, "warm", None])
def test_kt_ln10_rejects_bad_temperature(bad):
    with pytest.raises(ConfigError, match="temperature"):
        kt_ln10_ev(bad)


# --------------------------------------------------------------------------- rate law

# REFERENCES.md §1c, DERIVED check values D-1..D-9 (arithmetic on MD-1/MD-2 of Page,
# Moser, Chen & Dutton 1999, Nature 402:47). id, R (Å), ΔG (eV), λ (eV), ρ, log10 k, k (s⁻¹)
CHECK_VALUES = [
    ("D-1", 3.6, -0.7, 0.7, RHO_MD2, 13.000, 1.0e13),
    ("D-1 other lambda", 3.6, -0.4, 0.4, RHO_MD2, 13.000, 1.0e13),  # "any λ"
    ("D-2", 14.0, -0.7, 0.7, RHO_MD2, 6.760, 5.75e6),
    ("D-3", 14.0, -0.7, 0.7, 0.76, 6.843, 6.97e6),
    ("D-4", 14.0, 0.0, 0.7, RHO_MD2, 4.590, 3.89e4),
    ("D-5", 10.0, -0.1, 0.7, RHO_MD2, 7.5657, 3.68e7),
    ("D-8", 7.0, -0.7, 0.7, RHO_MD2, 10.96, 9.1e10),
    ("D-9", 20.0, 0.0, 0.7, RHO_MD2, 0.99, 9.8),
]


@pytest.mark.parametrize(
    ("distance", "dg", "reorg", "rho", "log_k", "k"),
    [row[1:] for row in CHECK_VALUES],
    ids=[row[0] for row in CHECK_VALUES],
)
def test_check_values_exergonic(distance, dg, reorg, rho, log_k, k):
    got = log10_hop_rate(distance, dg, reorg=reorg, packing_density=rho)
    assert got == pytest.approx(log_k, abs=6e-4)
    kf, _ = hop_rates(distance, dg, reorg=reorg, packing_density=rho)
    assert kf == pytest.approx(k, rel=0.01)


def test_check_value_d6_endergonic():
    # REFERENCES.md §1c D-6: R = 10, ΔG = +0.1, λ = 0.7 (MD-3 with 0.06) → log10 k = 5.8990.
    # We use the exact kT ln10 (0.05916 eV at 298.15 K), which lowers the uphill rate by
    # 0.1 (1/0.05916 - 1/0.06) = 0.0237 decades (DERIVED).
    published = 5.8990
    shift = 0.1 / KT10 - 0.1 / PUBLISHED_KT_LN10
    assert shift == pytest.approx(0.02368, abs=1e-5)
    got = log10_hop_rate(10.0, 0.1, reorg=0.7, packing_density=RHO_MD2)
    assert got == pytest.approx(published - shift, abs=1e-4)
    assert abs(got - published) <= shift + 1e-4


def test_check_value_d7_detailed_balance():
    # REFERENCES.md §1c D-7: D-5 - D-6 = 0.1/0.06 = 1.6667 with the published 0.06;
    # with the exact kT ln10 at 298.15 K the difference is 0.1/0.05916 = 1.6903 (DERIVED).
    d5 = log10_hop_rate(10.0, -0.1, reorg=0.7, packing_density=RHO_MD2)
    d6 = log10_hop_rate(10.0, 0.1, reorg=0.7, packing_density=RHO_MD2)
    assert d5 - d6 == pytest.approx(0.1 / KT10, abs=1e-12)
    assert d5 - d6 == pytest.approx(1.6667, abs=0.03)  # published value, 0.06 in place of kT ln10
    kf, kb = hop_rates(10.0, -0.1, reorg=0.7, packing_density=RHO_MD2)
    assert kf / kb == pytest.approx(10 ** (0.1 / KT10), rel=1e-12)


def test_default_packing_density_is_076():
    # REFERENCES.md §1a MD-1/MD-2: ρ = 0.76 typical (Kaila, arXiv:1911.11178), λ = 0.7 eV (MD-7)
    assert log10_hop_rate(14.0, -0.7) == pytest.approx(6.8432, abs=1e-4)


def test_distance_decade_is_about_1_7_angstrom():
    # REFERENCES.md §1a MD-6: about 1.6-1.7 Å per decade of rate (C.C. Page thesis abstract)
    slope = log10_hop_rate(10.0, -0.7) - log10_hop_rate(11.0, -0.7)
    assert 1.0 / slope == pytest.approx(1.69, abs=0.05)


def test_clamped_below_contact():
    # Below 3.6 Å van der Waals contact the distance is clamped (REFERENCES.md §1a MD-4).
    at_contact = log10_hop_rate(3.6, -0.5, reorg=0.7)
    for d in (0.0, 1.0, 3.0, 3.59):
        assert log10_hop_rate(d, -0.5, reorg=0.7) == at_contact
    assert log10_hop_rate(0.0, -0.7, reorg=0.7) == pytest.approx(13.0)


def test_temperature_only_changes_uphill_term():
    down_cold = log10_hop_rate(10.0, -0.2, temperature=280.0)
    down_warm = log10_hop_rate(10.0, -0.2, temperature=320.0)
    assert down_cold == down_warm
    up_cold = log10_hop_rate(10.0, 0.2, temperature=280.0)
    up_warm = log10_hop_rate(10.0, 0.2, temperature=320.0)
    assert up_cold < up_warm


def test_continuous_at_zero_driving_force():
    eps = 1e-9
    assert log10_hop_rate(9.0, eps) == pytest.approx(log10_hop_rate(9.0, -eps), abs=1e-6)
    assert log10_hop_rate(9.0, 0.0) == log10_hop_rate(9.0, -0.0)


def test_vectorised_shapes_and_types():
    out = log10_hop_rate(np.array([[5.0], [10.0]]), np.array([-0.1, 0.0, 0.1]))
    assert isinstance(out, np.ndarray)
    assert out.shape == (2, 3)
    assert isinstance(log10_hop_rate(5, 0), float)
    kf, kb = hop_rates([5.0, 10.0], [-0.1, 0.1], reorg=np.array([0.6, 0.8]))
    assert kf.shape == kb.shape == (2,)
    assert isinstance(hop_rates(5.0, 0.1)[0], float)


@settings(max_examples=300, deadline=None)
@given(st.floats(0, 40), st.floats(-2, 2), st.floats(0.05, 2.5), st.floats(0, 1), st.floats(150, 400))
def test_plain_numbers_give_what_arrays_give(distance, dg, reorg, rho, temperature):
    """Plain numbers take a path of their own (no arrays); it must give the array path's value to the bit."""
    plain = log10_hop_rate(distance, dg, reorg, rho, temperature=temperature)
    array = log10_hop_rate(np.asarray([distance]), dg, reorg, rho, temperature=temperature)[0]
    assert plain == float(array)


def test_infinite_distance_gives_zero_rate():
    assert log10_hop_rate(math.inf, -0.5) == -math.inf
    assert hop_rates(math.inf, 0.2) == (0.0, 0.0)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"distance": -1.0, "dg": 0.0}, "distance"),
        ({"distance": [5.0, -0.1], "dg": 0.0}, "distance"),
        ({"distance": math.nan, "dg": 0.0}, "distance.*NaN"),
        ({"distance": 5.0, "dg": math.nan}, "dg.*NaN"),
        ({"distance": 5.0, "dg": 0.0, "reorg": 0.0}, "reorg"),
        ({"distance": 5.0, "dg": 0.0, "reorg": -0.3}, "reorg"),
        ({"distance": 5.0, "dg": 0.0, "reorg": math.inf}, "reorg"),
        ({"distance": 5.0, "dg": 0.0, "reorg": math.nan}, "reorg"),
        ({"distance": 5.0, "dg": 0.0, "packing_density": 1.2}, "packing_density"),
        ({"distance": 5.0, "dg": 0.0, "packing_density": -0.1}, "packing_density"),
        ({"distance": 5.0, "dg": 0.0, "packing_density": math.nan}, "packing_density"),
        ({"distance": "far", "dg": 0.0}, "distance"),
        ({"distance": [5.0, 6.0], "dg": [0.0, 0.1, 0.2]}, "broadcast"),
        ({"distance": 5.0, "dg": 0.0, "temperature": -1.0}, "temperature"),
    ],
)
def test_rate_law_rejects_bad_input(kwargs, match):
    with pytest.raises(ConfigError, match=match):
        log10_hop_rate(**kwargs)
    with pytest.raises(ValueError):  # ConfigError is also a ValueError
        hop_rates(**kwargs)


def test_hop_reorganisation():
    # Marcus cross relation λ_DA = (λ_D + λ_A)/2 (common practice, no source)
    assert hop_reorganisation(0.6, 0.8) == pytest.approx(0.7)
    with pytest.raises(ConfigError):
        hop_reorganisation(0.0, 0.7)
    with pytest.raises(ConfigError):
        hop_reorganisation("a", 0.7)


# --------------------------------------------------------------------------- driving force


def test_dg_from_potentials_sign():
    # ΔG[eV] = -(E_acc - E_don) for one electron (REFERENCES.md §5)
    # towards the more positive potential: downhill
    assert dg_from_potentials(-0.40, -0.25) == pytest.approx(-0.15)
    assert dg_from_potentials(0.10, -0.30) == pytest.approx(0.40)
    np.testing.assert_allclose(dg_from_potentials([0.0, 0.1], [0.1, 0.0]), [-0.1, 0.1])
    with pytest.raises(ConfigError):
        dg_from_potentials(math.nan, 0.0)


@pytest.mark.parametrize(
    ("n", "delta_e", "expected_kj"),
    [
        # ΔG = -nFΔE (common practice, no source; CODATA F from REFERENCES.md §5)
        (2, 0.36, -69.5),
        (4, 1.13, -436.0),
    ],
)
def test_reaction_gibbs_kj(n, delta_e, expected_kj):
    assert reaction_gibbs_kj(n, delta_e) == pytest.approx(expected_kj, abs=0.15)


def test_reaction_gibbs_one_electron_volt():
    # 1 eV per particle = 96.485 332 12 kJ/mol (REFERENCES.md §5, DERIVED from F)
    assert reaction_gibbs_kj(1, -1.0) == pytest.approx(96.48533212, rel=1e-10)


@pytest.mark.parametrize(
    ("n", "de"), [(0, 0.1), (-1, 0.1), (1.5, 0.1), (True, 0.1), (1, math.nan), (1, "x")]
)
def test_reaction_gibbs_rejects_bad_input(n, de):
    with pytest.raises(ConfigError):
        reaction_gibbs_kj(n, de)


# --------------------------------------------------------------------------- first passage


def gillespie_first_passage(
    rates: np.ndarray, start: int, absorbing: list[int], n_runs: int, seed: int
) -> np.ndarray:
    """Simulate first-passage times of a continuous-time Markov chain (Gillespie).

    All runs advance together, one jump per loop pass, with a seeded numpy Generator.
    Returns one first-passage time (s) per run.
    """
    w = np.array(rates, dtype=float)
    np.fill_diagonal(w, 0.0)
    n = w.shape[0]
    is_abs = np.zeros(n, dtype=bool)
    is_abs[absorbing] = True
    out = w.sum(axis=1)
    cum = np.cumsum(w, axis=1) / np.where(out > 0, out, 1.0)[:, None]
    cum[cum >= 1.0 - 1e-12] = 1.0  # the last possible target closes the row exactly
    rng = np.random.default_rng(seed)
    state = np.full(n_runs, start)
    t = np.zeros(n_runs)
    active = ~is_abs[state]
    while active.any():
        idx = np.flatnonzero(active)
        s = state[idx]
        t[idx] += rng.exponential(1.0 / out[s])
        u = 1.0 - rng.random(idx.size)  # in (0, 1]
        nxt = (u[:, None] > cum[s]).sum(axis=1)
        state[idx] = nxt
        active[idx] = ~is_abs[nxt]
    return t


def test_two_state_chain():
    # closed form: one irreversible hop, τ = 1/k_f (common practice, no source)
    kf, kb = 3.0e6, 1.0e5
    assert mean_first_passage_time(np.array([[0.0, kf], [kb, 0.0]]), 0, 1) == pytest.approx(1 / kf)
    assert mean_first_passage_time([[0.0, kf], [kb, 0.0]], 0, [1]) == pytest.approx(1 / kf)


def test_three_state_chain_with_back_hop():
    """States 0 → 1 → 2 with 2 absorbing, rates k01, k10, k12 (common practice, no source).

    Let τ_i be the mean time to reach 2 from i. From 0 the only hop is to 1:
    τ0 = 1/k01 + τ1. From 1 the dwell is 1/(k10 + k12), then it goes back with
    probability k10/(k10 + k12): τ1 = 1/(k10 + k12) + k10/(k10 + k12) τ0.
    Substituting, τ0 k12/(k10 + k12) = 1/k01 + 1/(k10 + k12), so
    τ0 = (k10 + k12 + k01) / (k01 k12).
    """
    k01, k10, k12 = 2.0e6, 5.0e7, 1.0e6
    q = np.array([[0.0, k01, 0.0], [k10, 0.0, k12], [0.0, 123.0, 0.0]])  # row 2 is ignored
    expected = (k10 + k12 + k01) / (k01 * k12)
    assert mean_first_passage_time(q, 0, 2) == pytest.approx(expected, rel=1e-12)
    tau1 = 1 / (k10 + k12) + k10 / (k10 + k12) * expected
    assert mean_first_passage_time(q, 1, 2) == pytest.approx(tau1, rel=1e-12)


def test_generator_matrix_diagonal_ignored():
    q = np.array([[-2.0, 2.0, 0.0], [1.0, -4.0, 3.0], [0.0, 0.0, 0.0]])
    w = q.copy()
    np.fill_diagonal(w, 0.0)
    assert mean_first_passage_time(q, 0, 2) == mean_first_passage_time(w, 0, 2)


def _branched_chain() -> np.ndarray:
    """6-site branched wire 0-1-{2,3}-4-5 with Moser–Dutton rates and two uphill hops."""
    e_mid = [-0.30, -0.25, -0.35, -0.20, -0.28, -0.10]  # V; 1→2 and 3→4 are uphill
    edges = {(0, 1): 8.0, (1, 2): 9.0, (1, 3): 11.0, (2, 4): 10.0, (3, 4): 8.0, (4, 5): 9.0}
    w = np.zeros((6, 6))
    for (i, j), r in edges.items():
        kf, kb = hop_rates(r, dg_from_potentials(e_mid[i], e_mid[j]), reorg=0.7)
        w[i, j], w[j, i] = kf, kb
    assert dg_from_potentials(e_mid[1], e_mid[2]) > 0 and dg_from_potentials(e_mid[3], e_mid[4]) > 0
    return w


def test_gillespie_agrees_with_linear_solve():
    w = _branched_chain()
    tau = mean_first_passage_time(w, 0, 5)
    times = gillespie_first_passage(w, 0, [5], n_runs=40_000, seed=20240611)
    assert times.mean() == pytest.approx(tau, rel=0.02)
    # and the solve is far from the irreversible shortcut Σ 1/k along either branch
    assert tau > summed_hop_time([w[0, 1], w[1, 3], w[3, 4], w[4, 5]])


def _birth_death(n: int, seed: int) -> tuple[np.ndarray, float]:
    """Chain 0..n-1 with forward f_i and back b_i, n-1 absorbing, and its exact MFPT.

    The mean time to go from i to i+1 is T_i = 1/f_i + (b_i/f_i) T_{i-1}, T_0 = 1/f_0
    (one step back costs T_{i-1} before the next try); τ_0 = Σ T_i (common practice, no source).
    """
    rng = np.random.default_rng(seed)
    f = 10.0 ** rng.uniform(5.0, 8.0, n - 1)
    b = 10.0 ** rng.uniform(4.0, 7.0, n - 1)
    b[0] = 0.0
    w = np.zeros((n, n))
    w[np.arange(n - 1), np.arange(1, n)] = f
    w[np.arange(1, n - 1), np.arange(0, n - 2)] = b[1:]
    total, t_prev = 0.0, 0.0
    for i in range(n - 1):
        t_prev = 1.0 / f[i] + (b[i] / f[i]) * t_prev
        total += t_prev
    return w, total


def test_sparse_and_dense_agree_small():
    w, exact = _birth_death(40, seed=1)
    dense = mean_first_passage_time(w, 0, 39)
    assert dense == pytest.approx(exact, rel=1e-9)
    assert mean_first_passage_time(sp.csr_matrix(w), 0, 39) == pytest.approx(dense, rel=1e-10)
    assert mean_first_passage_time(sp.coo_array(w), 0, 39) == pytest.approx(dense, rel=1e-10)


def test_large_chain_uses_sparse_path():
    w, exact = _birth_death(300, seed=2)  # n > 200: solved with spsolve even from a dense array
    assert mean_first_passage_time(w, 0, 299) == pytest.approx(exact, rel=1e-8)
    assert mean_first_passage_time(sp.csr_matrix(w), 0, 299) == pytest.approx(exact, rel=1e-8)


def test_irreversible_chain_equals_summed_hop_time():
    k = [1e6, 3e7, 2e5, 8e8]
    w = np.zeros((5, 5))
    for i, ki in enumerate(k):
        w[i, i + 1] = ki
    assert mean_first_passage_time(w, 0, 4) == pytest.approx(summed_hop_time(k), rel=1e-12)


def test_start_absorbing_is_zero():
    assert mean_first_passage_time(np.zeros((3, 3)), 1, [0, 1]) == 0.0


def test_unreachable_absorbing_is_infinite():
    w = np.array([[0.0, 1e6, 0.0], [1e6, 0.0, 0.0], [0.0, 0.0, 0.0]])
    assert mean_first_passage_time(w, 0, 2) == math.inf
    assert mean_first_passage_time(sp.csr_matrix(w), 0, 2) == math.inf


def test_reachable_trap_is_infinite():
    # 0 → 1 → 2 (exit), but 0 → 3 is a dead end: some electrons never arrive
    w = np.zeros((4, 4))
    w[0, 1], w[1, 2], w[0, 3] = 1e6, 1e6, 1.0
    assert mean_first_passage_time(w, 0, 2) == math.inf


def test_unvisited_dead_end_does_not_matter():
    # state 3 cannot reach the exit but cannot be reached from the start either
    w = np.zeros((4, 4))
    w[0, 1], w[1, 2], w[3, 0] = 1e6, 2e6, 5.0
    assert mean_first_passage_time(w, 0, 2) == pytest.approx(1e-6 + 0.5e-6)


def test_multiple_absorbing_states():
    # competing exits: τ = 1/(k1 + k2)
    w = np.zeros((3, 3))
    w[0, 1], w[0, 2] = 2e6, 3e6
    assert mean_first_passage_time(w, 0, [1, 2]) == pytest.approx(1 / 5e6)
    assert mean_first_passage_time(w, 0, np.array([1, 2])) == pytest.approx(1 / 5e6)


@pytest.mark.parametrize(
    ("rates", "start", "absorbing", "match"),
    [
        (np.zeros((2, 3)), 0, 1, "square"),
        (np.zeros(4), 0, 1, "square"),
        (np.zeros((2, 2, 2)), 0, 1, "square"),
        (np.zeros((0, 0)), 0, 0, "at least one"),
        (np.array([[0.0, -1.0], [0.0, 0.0]]), 0, 1, ">= 0"),
        (sp.csr_matrix(np.array([[0.0, -1.0], [0.0, 0.0]])), 0, 1, ">= 0"),
        (np.array([[0.0, math.nan], [0.0, 0.0]]), 0, 1, "finite"),
        (np.array([[0.0, math.inf], [0.0, 0.0]]), 0, 1, "finite"),
        ([["a", 1], [0, 0]], 0, 1, "numbers"),
        (np.zeros((2, 2)), 2, 1, "outside"),
        (np.zeros((2, 2)), 0, 5, "outside"),
        (np.zeros((2, 2)), 0, [], "at least one"),
        (np.zeros((2, 2)), True, 1, "integer"),
        (np.zeros((2, 2)), 0.0, 1, "start"),
        (np.zeros((2, 2)), [0, 1], 1, "single"),
    ],
)
def test_first_passage_rejects_bad_input(rates, start, absorbing, match):
    with pytest.raises(ConfigError, match=match):
        mean_first_passage_time(rates, start, absorbing)


def test_summed_hop_time():
    # τ ≈ Σ 1/k for an irreversible chain (REFERENCES.md §1c, standard kinetics, MEMORY)
    assert summed_hop_time([1e3, 1e3, 2e3]) == pytest.approx(2.5e-3)
    assert summed_hop_time(np.array([1e6])) == pytest.approx(1e-6)
    assert summed_hop_time([]) == 0.0
    assert summed_hop_time([1e6, 0.0]) == math.inf
    with pytest.raises(ConfigError):
        summed_hop_time([1e6, -1.0])
    with pytest.raises(ConfigError):
        summed_hop_time([math.nan])


# --------------------------------------------------------------------------- properties

distances = st.floats(min_value=0.0, max_value=60.0, allow_nan=False)
driving = st.floats(min_value=-2.0, max_value=2.0, allow_nan=False)
reorgs = st.floats(min_value=0.05, max_value=2.0, allow_nan=False)
densities = st.floats(min_value=0.0, max_value=1.0, allow_nan=False)
temperatures = st.floats(min_value=200.0, max_value=400.0, allow_nan=False)


@settings(max_examples=200, deadline=None)
@given(d1=distances, d2=distances, dg=driving, lam=reorgs, rho=densities)
def test_rate_never_rises_with_distance(d1, d2, dg, lam, rho):
    near, far = sorted((d1, d2))
    assert log10_hop_rate(near, dg, lam, rho) >= log10_hop_rate(far, dg, lam, rho)


@settings(max_examples=200, deadline=None)
@given(d=distances, dg=driving, lam=reorgs, rho=densities, t=temperatures)
def test_detailed_balance_any_driving_force(d, dg, lam, rho, t):
    fwd = log10_hop_rate(d, dg, lam, rho, temperature=t)
    back = log10_hop_rate(d, -dg, lam, rho, temperature=t)
    assert fwd - back == pytest.approx(-dg / kt_ln10_ev(t), abs=1e-9)


@settings(max_examples=300, deadline=None)
@given(
    d=st.floats(min_value=0.0, max_value=1e3, allow_nan=False),
    dg=st.floats(min_value=-10.0, max_value=10.0, allow_nan=False),
    lam=st.floats(min_value=1e-3, max_value=10.0, allow_nan=False),
    rho=densities,
    t=temperatures,
)
def test_no_rate_above_contact_ceiling(d, dg, lam, rho, t):
    log_k = log10_hop_rate(d, dg, lam, rho, temperature=t)
    assert log_k <= 13.0
    kf, kb = hop_rates(d, dg, lam, rho, temperature=t)
    assert kf <= 1e13 and kb <= 1e13


@settings(max_examples=100, deadline=None)
@given(
    rows=st.lists(st.tuples(distances, driving, reorgs, densities), min_size=1, max_size=20),
    t=temperatures,
)
def test_vectorised_equals_scalar(rows, t):
    d, dg, lam, rho = (np.array(col) for col in zip(*rows))
    vec = log10_hop_rate(d, dg, lam, rho, temperature=t)
    scalar = [log10_hop_rate(*row, temperature=t) for row in rows]
    np.testing.assert_allclose(vec, scalar, rtol=1e-13, atol=1e-12)
