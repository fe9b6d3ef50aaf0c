"""Steady-state flux of a redox wire between two reservoirs (fescan.transfer.steady_state).

Every check compares the engine with something computed another way: closed forms derived
by hand in this file, the stationary distribution from the matrix-tree theorem on a state
list written out here, equilibrium (Nernst) populations, finite differences of independent
re-solves, and the theorems of metabolic control analysis.
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fescan.core.constants import BOLTZMANN_EV_PER_K, DEFAULT_TEMPERATURE_K
from fescan.core.errors import ConfigError
from fescan.transfer.cluster_mean_field import blocks_by_rate
from fescan.transfer.kinetic_model import wire_model
from fescan.transfer.rate_law import CONTACT_DISTANCE, DEFAULT_REORG, log10_hop_rate
from fescan.transfer.steady_state import (
    first_passage_time,
    solve_steady_state,
    steady_state,
)

KT = BOLTZMANN_EV_PER_K * DEFAULT_TEMPERATURE_K


def _k(distance: float, dg: float, reorg: float = DEFAULT_REORG) -> float:
    """Moser–Dutton rate (s⁻¹) straight from the rate law, for hand-built generators."""
    return 10.0 ** log10_hop_rate(distance, dg, reorg)


def _matrix_tree_stationary(n_states: int, transitions: list[tuple[int, int, float]]) -> np.ndarray:
    """Stationary distribution by the matrix-tree theorem: p_i ∝ the i-th principal minor of -Q.

    King EL, Altman C, J Phys Chem 1956, 60:1375 (schematic method); Hill TL, J Theor Biol
    1966, 10:442 (diagram method): the weight of state i is the sum over spanning trees
    directed into i, i.e. the determinant of -Q with row and column i removed (Kirchhoff).
    """
    q = np.zeros((n_states, n_states))
    for a, b, k in transitions:
        q[a, b] += k
        q[a, a] -= k
    lap = -q.T  # columns: outflow; the stationary p solves q.T p = 0
    w = np.array([np.linalg.det(np.delete(np.delete(lap, i, 0), i, 1)) for i in range(n_states)])
    return w / w.sum()


# --- closed forms derived by hand -------------------------------------------------------------

def test_single_site_between_reservoirs_closed_form():
    # Two states (empty 0, reduced 1). a = source→site, b = site→source, c = site→sink,
    # d = sink→site. Balance a p0 + d p0 = (b + c) p1 gives p1 = (a + d)/(a + b + c + d) and
    # the net flux J = c p1 - d p0 = (a c - b d)/(a + b + c + d). Derived by hand (two-state
    # Markov chain, common practice, no source).
    e_src, e_site, e_snk = -0.32, -0.25, 0.05
    k0_src, k0_snk = 2.0e4, 5.0e3
    ss = steady_state([e_site], [], e_src, e_snk, source_rate=k0_src, sink_rate=k0_snk)
    # fixed exchange constant: downhill at k0, uphill at k0 exp(-ΔG/kT) (module docstring)
    a = k0_src                                   # ΔG = e_src - e_site < 0, downhill
    b = k0_src * math.exp(-(e_site - e_src) / KT)
    c = k0_snk                                   # ΔG = e_site - e_snk < 0
    d = k0_snk * math.exp(-(e_snk - e_site) / KT)
    assert ss.flux_per_s == pytest.approx((a * c - b * d) / (a + b + c + d), rel=1e-9)
    assert ss.occupancy[0] == pytest.approx((a + d) / (a + b + c + d), rel=1e-9)
    assert ss.method == "exact" and ss.n_states == 2


def test_irreversible_two_site_chain_closed_form():
    # Irreversible chain src →a site1 →k site2 →c sink (no back steps). States 00, 10, 01, 11.
    # By hand: p11 = a p01 / c, p00 = c p01 / a, p10 = (a + c) p01 / k, J = (a + c) p01, so
    # J = (a + c) / (c/a + 1 + a/c + (a + c)/k). Derived by hand (common practice, no source).
    def downhill_only(distance, dg, reorg, packing_density, *, temperature):
        return math.log10(1.0e5 * -dg) if dg < 0 else -math.inf

    e = [-0.30, -0.10]
    src, snk = -0.36, 0.10
    ss = steady_state(e, [10.0], src, snk, rate_function=downhill_only)
    a, k, c = 1e5 * (e[0] - src), 1e5 * (e[1] - e[0]), 1e5 * (snk - e[1])
    expected = (a + c) / (c / a + 1 + a / c + (a + c) / k)
    assert ss.flux_per_s == pytest.approx(expected, rel=1e-9)
    p01 = expected / (a + c)
    assert ss.occupancy[1] == pytest.approx(p01 * (1 + a / c), rel=1e-9)


def _chain_transitions(pots, dists, e_src, e_snk):
    """Occupancy states and transitions of a one-electron chain, written out independently."""
    n = len(pots)
    states = list(itertools.product((0, 1), repeat=n))
    index = {s: i for i, s in enumerate(states)}
    out, hops = [], []  # hops: (state, rate, hop index, +1 forward / -1 back)

    def move(s, i, delta):
        t = list(s)
        t[i] += delta
        return tuple(t)

    for s in states:
        if s[0] == 0:
            out.append((index[s], index[move(s, 0, 1)], _k(CONTACT_DISTANCE, e_src - pots[0])))
        else:
            out.append((index[s], index[move(s, 0, -1)], _k(CONTACT_DISTANCE, pots[0] - e_src)))
        if s[-1] == 1:
            out.append((index[s], index[move(s, n - 1, -1)], _k(CONTACT_DISTANCE, pots[-1] - e_snk)))
        else:
            out.append((index[s], index[move(s, n - 1, 1)], _k(CONTACT_DISTANCE, e_snk - pots[-1])))
        for i in range(n - 1):
            if s[i] == 1 and s[i + 1] == 0:
                out.append((index[s], index[move(move(s, i, -1), i + 1, 1)], _k(dists[i], pots[i] - pots[i + 1])))
                hops.append((index[s], out[-1][2], i, +1))
            if s[i] == 0 and s[i + 1] == 1:
                out.append((index[s], index[move(move(s, i + 1, -1), i, 1)], _k(dists[i], pots[i + 1] - pots[i])))
                hops.append((index[s], out[-1][2], i, -1))
    return states, out, hops


@pytest.mark.parametrize("pots, dists", [
    ([-0.28, -0.20], [9.5]),                       # two sites, downhill
    ([-0.25, -0.30, -0.05], [7.0, 11.0]),          # three sites, an uphill first hop
])
def test_chain_matches_matrix_tree_theorem(pots, dists):
    # Stationary state from the matrix-tree theorem (King & Altman 1956; Hill 1966) on a state
    # list and default rates (rate law at contact for the reservoirs) built by hand above.
    e_src, e_snk = -0.32, 0.09
    states, trans, hops = _chain_transitions(pots, dists, e_src, e_snk)
    p = _matrix_tree_stationary(len(states), trans)
    # net current over the last hop (in steady state every hop of a chain carries the flux)
    last = len(pots) - 2
    flux = sum(p[a] * k * sign for a, k, i, sign in hops if i == last)
    occ = [sum(p[i] * s[j] for i, s in enumerate(states)) for j in range(len(pots))]
    ss = steady_state(pots, dists, e_src, e_snk)
    assert ss.flux_per_s == pytest.approx(flux, rel=1e-6)
    assert ss.occupancy == pytest.approx(occ, abs=1e-9)


# --- detailed balance -------------------------------------------------------------------------

site_potential = st.floats(-0.45, 0.35)
two_electron = st.tuples(site_potential, site_potential)
site = st.one_of(site_potential, two_electron)


@settings(max_examples=25, deadline=None)
@given(pots=st.lists(site, min_size=1, max_size=4),
       dists=st.lists(st.floats(4.0, 14.0), min_size=3, max_size=3),
       e_res=st.floats(-0.45, 0.35))
def test_equal_reservoirs_give_zero_flux_and_nernst_occupancy(pots, dists, e_res):
    # Detailed balance: with both reservoirs at one potential the stationary state is
    # equilibrium, a product of Nernst populations p(n) ∝ exp(Σ_{m≤n} (E_m - E)/kT), and the
    # net flux vanishes for any site potentials (Nernst equation; common practice, no source).
    ss = steady_state(pots, dists[:len(pots) - 1], e_res, e_res, derivatives=False)
    gross = max(_k(CONTACT_DISTANCE, 0.0), 1.0)
    assert abs(ss.flux_per_s) <= 1e-9 * gross
    for p, dist in zip(pots, ss.distribution):
        couples = (p,) if isinstance(p, float) else p
        log_w = np.concatenate(([0.0], np.cumsum([(c - e_res) / KT for c in couples])))
        w = np.exp(log_w - log_w.max())
        assert dist == pytest.approx(w / w.sum(), abs=1e-8)


def test_flux_reverses_with_the_reservoirs():
    # Swapping the reservoir potentials of a symmetric chain reverses the flux exactly
    # (mirror symmetry of the model; common practice, no source).
    fwd = steady_state([-0.2, -0.2, -0.2], [8.0, 8.0], -0.30, -0.10)
    back = steady_state([-0.2, -0.2, -0.2], [8.0, 8.0], -0.10, -0.30)
    assert fwd.flux_per_s > 0
    assert back.flux_per_s == pytest.approx(-fwd.flux_per_s, rel=1e-8)


# --- metabolic control analysis ---------------------------------------------------------------

@settings(max_examples=20, deadline=None)
@given(pots=st.lists(site, min_size=1, max_size=4),
       dists=st.lists(st.floats(4.0, 16.0), min_size=3, max_size=3),
       e_src=st.floats(-0.45, -0.15), drive=st.floats(0.05, 0.5))
def test_control_coefficients_sum_to_one(pots, dists, e_src, drive):
    # Summation theorem: Σ C_i = 1 (Kacser & Burns 1973, Symp Soc Exp Biol 27:65;
    # Heinrich & Rapoport 1974, Eur J Biochem 42:89).
    ss = steady_state(pots, dists[:len(pots) - 1], e_src, e_src + drive)
    assert math.fsum(ss.control) == pytest.approx(1.0, abs=1e-6)
    # shifting every potential together changes no ΔG, so the sensitivities sum to zero
    total = math.fsum(ss.sensitivity) + ss.sensitivity_source + ss.sensitivity_sink
    assert total == pytest.approx(0.0, abs=1e-5 * max(1.0, max(abs(x) for x in ss.sensitivity)))


def test_slow_hop_takes_the_control():
    # One long hop (20 Å, ~10^-8 of the others) limits the flux: its control coefficient → 1
    # (Kacser & Burns 1973: a rate-limiting step has C = 1).
    ss = steady_state([-0.30, -0.25, -0.20, -0.15], [6.0, 20.0, 6.0], -0.32, 0.09)
    assert ss.control[2] == pytest.approx(1.0, abs=1e-3)
    assert ss.bottleneck == ("1", "2")
    assert ss.to_dict()["bottleneck"] == ["1", "2"]


def _rescaled(step_factor: dict[float, float]):
    """Rate law whose rates at given distances are multiplied by a factor (both directions)."""
    def law(distance, dg, reorg, packing_density, *, temperature):
        base = log10_hop_rate(distance, dg, reorg, packing_density, temperature=temperature)
        return base + math.log10(step_factor.get(distance, 1.0))
    return law


def test_control_and_sensitivity_match_finite_differences():
    # The adjoint derivatives equal central differences of independent re-solves
    # (step rates scaled through the rate function; potentials shifted in the input).
    pots = [-0.30, (-0.35, -0.15), -0.22, -0.05]
    dists = [7.0, 9.0, 12.0]
    kw = {"source_rate": 3.0e6, "sink_rate": 1.0e7}
    base = steady_state(pots, dists, -0.32, 0.09, **kw)
    h = 1e-4
    for s, dist in enumerate(dists, start=1):
        up = steady_state(pots, dists, -0.32, 0.09, rate_function=_rescaled({dist: math.exp(h)}), **kw)
        lo = steady_state(pots, dists, -0.32, 0.09, rate_function=_rescaled({dist: math.exp(-h)}), **kw)
        fd = (math.log(up.flux_per_s) - math.log(lo.flux_per_s)) / (2 * h)
        assert base.control[s] == pytest.approx(fd, abs=1e-5)
    for i in range(len(pots)):
        dv = 1e-5

        def shift(p, d):
            return p + d if isinstance(p, float) else (p[0] + d, p[1] + d)

        up = steady_state([shift(p, dv if j == i else 0.0) for j, p in enumerate(pots)], dists, -0.32, 0.09, **kw)
        lo = steady_state([shift(p, -dv if j == i else 0.0) for j, p in enumerate(pots)], dists, -0.32, 0.09, **kw)
        fd = (math.log10(up.flux_per_s) - math.log10(lo.flux_per_s)) / (2 * dv)
        assert base.sensitivity[i] == pytest.approx(fd, rel=1e-4, abs=1e-4)


# --- two-electron sites -----------------------------------------------------------------------

def test_two_electron_site_uses_the_couple_of_the_moving_electron():
    # A doubly reduced flavin donates at sq/red, a semiquinone at ox/sq; an acceptor holding
    # one electron accepts at sq/red (issue 10; the one-electron couple rule, common practice).
    e_ox_sq, e_sq_red, e_next = -0.36, -0.20, -0.25
    model = wire_model([(e_ox_sq, e_sq_red), e_next], [8.0], -0.40, 0.0)
    hop = model.network.forward[1]   # flavin → cluster, indexed [n_flavin, n_cluster]
    back = model.network.backward[1]  # cluster → flavin
    assert hop[2, 0] == pytest.approx(_k(8.0, e_sq_red - e_next), rel=1e-9)
    assert hop[1, 0] == pytest.approx(_k(8.0, e_ox_sq - e_next), rel=1e-9)
    assert back[0, 1] == pytest.approx(_k(8.0, e_next - e_ox_sq), rel=1e-9)
    assert back[1, 1] == pytest.approx(_k(8.0, e_next - e_sq_red), rel=1e-9)
    assert hop[0, 0] == 0.0 and back[2, 1] == 0.0  # empty donor, full acceptor


def test_crossed_flavin_couples_suppress_the_semiquinone():
    # E_ox/sq < E_sq/red (unstable semiquinone): at equilibrium with E = the two-electron
    # midpoint the flavin is half FMN, half FMNH2 and the semiquinone fraction is
    # 1/(1 + 2 exp((E_sq/red - E_ox/sq)/2kT)) (Nernst, Clark 1960 "Oxidation-reduction
    # potentials of organic systems", from memory).
    e1, e2 = -0.35, -0.15
    em = 0.5 * (e1 + e2)
    ss = steady_state([(e1, e2)], [], em, em, derivatives=False)
    sq = 1.0 / (1.0 + 2.0 * math.exp((e2 - e1) / (2 * KT)))
    assert ss.distribution[0][1] == pytest.approx(sq, rel=1e-8)
    assert ss.occupancy[0] == pytest.approx(1.0, abs=1e-9)


@settings(max_examples=20, deadline=None)
@given(pots=st.lists(site, min_size=1, max_size=4),
       dists=st.lists(st.floats(4.0, 14.0), min_size=3, max_size=3),
       e_src=st.floats(-0.5, 0.0), e_snk=st.floats(-0.3, 0.4))
def test_occupancies_stay_within_capacity(pots, dists, e_src, e_snk):
    # Probabilities are a distribution; a site holds 0..1 or 0..2 electrons (definition).
    ss = steady_state(pots, dists[:len(pots) - 1], e_src, e_snk, derivatives=False)
    for p, occ, dist in zip(pots, ss.occupancy, ss.distribution):
        cap = 1 if isinstance(p, float) else 2
        assert -1e-12 <= occ <= cap + 1e-12
        assert len(dist) == cap + 1 and sum(dist) == pytest.approx(1.0) and min(dist) >= 0.0


# --- the approximation against the exact solution ---------------------------------------------

DOWNHILL_CHAINS = [
    # (potentials, distances, source, sink): potentials rising towards the sink, as in wires
    ([(-0.40, -0.30), -0.33, -0.30, -0.25, -0.22, -0.10], [6.0, 10.0, 8.0, 12.0, 7.0], -0.32, 0.09),
    ([-0.30, -0.28, -0.25, -0.20, -0.15, -0.05, 0.02], [9.0, 11.0, 6.5, 9.0, 13.0, 8.0], -0.32, 0.09),
    ([-0.42, -0.38, -0.40, -0.30, -0.31, -0.20], [7.0, 7.0, 14.0, 7.0, 7.0], -0.41, -0.15),
    # equal hops: ties in hop speed must not let finite differences jump between partitions
    ([-0.30, -0.28, -0.26, -0.24, -0.22, -0.20, -0.18], [9.0] * 6, -0.32, 0.09),
]


@pytest.mark.parametrize("pots, dists, e_src, e_snk", DOWNHILL_CHAINS)
def test_cluster_mean_field_agrees_with_exact(pots, dists, e_src, e_snk):
    # Tolerance measured on 60 random downhill chains of 5-8 sites with 16-state blocks: flux
    # within 0.018 decades (4 %), occupancies within 0.08 electron; asserted with margin
    # (the exact solution is the reference: the matrix-tree tests above check it).
    model = wire_model(pots, dists, e_src, e_snk)
    exact = solve_steady_state(model, method="exact")
    approx = solve_steady_state(model, method="cluster-mean-field", block_states=16)
    assert approx.method == "cluster-mean-field"
    assert len(blocks_by_rate(model.network, 16)) > 1  # really an approximation here
    assert approx.flux_per_s == pytest.approx(exact.flux_per_s, rel=0.10)
    assert approx.occupancy == pytest.approx(exact.occupancy, abs=0.1)
    # derivatives by central differences: the summation theorem holds, the bottleneck agrees
    assert math.fsum(approx.control) == pytest.approx(1.0, abs=1e-3)
    neck = exact.steps.index(exact.bottleneck)  # near-ties allowed: within 0.05 of the top
    assert approx.control[neck] >= max(approx.control) - 0.05
    assert approx.control == pytest.approx(exact.control, abs=0.1)
    # the one-site mean-field is cruder: within a factor 1.5 on these chains
    one_site = solve_steady_state(model, method="mean-field", derivatives=False)
    assert 1 / 1.5 < one_site.flux_per_s / exact.flux_per_s < 1.5


def test_mean_field_is_exact_at_equilibrium():
    # With equal reservoirs the exact stationary state is a product of one-site Nernst
    # distributions, which is what the mean-field assumes (see test above for the source).
    pots = [-0.3, (-0.35, -0.1), -0.2, 0.0]
    exact = steady_state(pots, [8.0, 9.0, 10.0], -0.2, -0.2, method="exact", derivatives=False)
    mf = steady_state(pots, [8.0, 9.0, 10.0], -0.2, -0.2, method="mean-field", derivatives=False)
    assert mf.occupancy == pytest.approx(exact.occupancy, abs=1e-9)


def test_auto_switches_to_the_approximation_above_the_limit():
    pots = [-0.30, -0.25, -0.20, -0.15, -0.10]
    ss = steady_state(pots, [8.0] * 4, -0.32, 0.09, max_exact_states=16, block_states=8,
                      derivatives=False)
    assert ss.method in ("cluster-mean-field", "mean-field") and ss.n_states == 32
    with pytest.raises(ConfigError, match="exceed"):
        steady_state(pots, [8.0] * 4, -0.32, 0.09, method="exact", max_exact_states=16)


# --- graphs, first passage, output, errors ----------------------------------------------------

def test_general_graph_branch_matches_matrix_tree_theorem():
    # A branch: entry 0 feeds 1 and 2, both hop to exit 3 (a square). States written out
    # here; stationary state by the matrix-tree theorem (King & Altman 1956).
    pots = [-0.30, -0.22, -0.26, -0.15]
    edges = [(0, 1), (0, 2), (1, 3), (2, 3)]
    dists = [8.0, 10.0, 9.0, 12.0]
    e_src, e_snk = -0.32, 0.09
    states = list(itertools.product((0, 1), repeat=4))
    index = {s: i for i, s in enumerate(states)}
    trans = []
    for s in states:
        def to(t):
            return index[tuple(t)]
        t = list(s)
        t[0] = 1 - s[0]
        trans.append((index[s], to(t), _k(CONTACT_DISTANCE, (e_src - pots[0]) if s[0] == 0 else (pots[0] - e_src))))
        t = list(s)
        t[3] = 1 - s[3]
        trans.append((index[s], to(t), _k(CONTACT_DISTANCE, (pots[3] - e_snk) if s[3] == 1 else (e_snk - pots[3]))))
        for (i, j), d in zip(edges, dists):
            if s[i] != s[j]:
                t = list(s)
                t[i], t[j] = s[j], s[i]
                donor, acceptor = (i, j) if s[i] == 1 else (j, i)
                trans.append((index[s], to(t), _k(d, pots[donor] - pots[acceptor])))
    p = _matrix_tree_stationary(len(states), trans)
    flux = sum(p[i] * _k(CONTACT_DISTANCE, pots[3] - e_snk) for i, s in enumerate(states) if s[3] == 1) - \
        sum(p[i] * _k(CONTACT_DISTANCE, e_snk - pots[3]) for i, s in enumerate(states) if s[3] == 0)
    ss = steady_state(pots, dists, e_src, e_snk, edges=edges, entry=0, exit=3)
    assert ss.flux_per_s == pytest.approx(flux, rel=1e-6)
    assert math.fsum(ss.control) == pytest.approx(1.0, abs=1e-6)


def test_first_passage_time_of_one_electron():
    # One hop: the mean first-passage time is 1/k (exponential waiting time; common practice).
    model = wire_model([-0.30, -0.20], [10.0], -0.32, 0.09)
    assert first_passage_time(model) == pytest.approx(1.0 / _k(10.0, -0.10), rel=1e-9)
    # a reduced flavin at the entry donates its first electron at sq/red
    flavin = wire_model([(-0.40, -0.25), -0.20], [10.0], -0.32, 0.09)
    assert first_passage_time(flavin, entry_couple=1) == pytest.approx(1.0 / _k(10.0, -0.05), rel=1e-9)
    ss = solve_steady_state(model)
    assert ss.first_passage_time_s == pytest.approx(first_passage_time(model))
    assert ss.to_dict()["first_passage"] == "one electron entering an oxidised chain"


def test_to_dict_is_json_ready():
    ss = steady_state([-0.3, (-0.35, -0.15), -0.1], [8.0, 9.0], -0.32, 0.09,
                      names=["FMN", "N3", "N2"])
    d = json.loads(json.dumps(ss.to_dict()))
    for key in ("flux_per_s", "occupancy", "control", "sensitivity", "method", "n_states",
                "steps", "sites", "bottleneck", "first_passage_time_s"):
        assert key in d
    assert d["steps"][0] == ["source", "FMN"] and d["steps"][-1] == ["N2", "sink"]
    assert len(d["control"]) == 4 and len(d["occupancy"]) == 3
    zero = steady_state([-0.3], [], -0.2, -0.2).to_dict()
    assert zero["control"] == [None, None] and zero["bottleneck"] is None


@pytest.mark.parametrize("kwargs, match", [
    ({"potentials": [], "distances": []}, "at least one site"),
    ({"potentials": [-0.3, -0.2], "distances": [8.0, 9.0]}, "distances"),
    ({"potentials": [(-0.3, -0.2, -0.1)], "distances": []}, "one potential"),
    ({"potentials": [-0.3, -0.2], "distances": [-1.0]}, ">= 0"),
    ({"potentials": [-0.3, -0.2, -0.1], "distances": [8.0], "edges": [(0, 1)]}, "not connected"),
    ({"potentials": [-0.3], "distances": [], "source_rate": 0.0}, "source_rate"),
    ({"potentials": [-0.3], "distances": [], "method": "guess"}, "method"),
])
def test_bad_input_is_a_config_error(kwargs, match):
    kwargs = {"source_potential": -0.32, "sink_potential": 0.09, **kwargs}
    with pytest.raises(ConfigError, match=match):
        steady_state(**kwargs)
