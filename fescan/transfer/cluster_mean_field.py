"""Cluster mean-field steady state of a redox network too large to solve exactly.

Pure numerics for :mod:`fescan.transfer.steady_state`; no I/O.

The sites are grouped into blocks of at most ``block_states`` occupancy states, joined
along the fastest hops first (Kruskal-like: hops in decreasing order of their one-electron
rate merge two blocks when the merged block stays within the limit), so the cuts fall on
the slowest hops. The joint probability is approximated by a product of block
distributions: each block's master equation is solved exactly, with every hop to another
block replaced by a reservoir step whose rates are averaged over the other site's current
one-site distribution. Blocks are updated in turn (Gauss–Seidel) until the one-site
distributions stop changing. With one site per block this is the independent-site
mean-field; the start is the independent-site solution
(:func:`fescan.transfer.occupancy.solve_mean_field`). Exact at equilibrium.
"""

from __future__ import annotations

import numpy as np

from fescan.core.errors import ConfigError
from fescan.transfer.occupancy import (
    RESERVOIR,
    KineticNetwork,
    site_distributions,
    state_space,
    stationary,
)

__all__ = ["blocks_by_rate", "solve_cluster_mean_field", "block_currents"]


def _hop_speed(net: KineticNetwork, s: int) -> float:
    """One-electron rate scale of step *s*: max over occupancies of forward + backward."""
    return float(np.max(net.forward[s]) + np.max(net.backward[s]))


def blocks_by_rate(net: KineticNetwork, block_states: int) -> list[list[int]]:
    """Group sites into blocks of ≤ *block_states* states, cutting the slowest hops.

    Returns
    -------
    list of list of int
        Site indices of each block, sorted; blocks ordered by their smallest site.
    """
    caps = net.capacity
    parent = list(range(len(caps)))
    size = [c + 1 for c in caps]

    def root(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    hops = [s for s, (u, v) in enumerate(net.ends) if RESERVOIR not in (u, v)]
    for s in sorted(hops, key=lambda s: -_hop_speed(net, s)):
        a, b = (root(x) for x in net.ends[s])
        if a != b and size[a] * size[b] <= block_states:
            parent[b] = a
            size[a] *= size[b]
    groups: dict[int, list[int]] = {}
    for i in range(len(caps)):
        groups.setdefault(root(i), []).append(i)
    return sorted(groups.values(), key=min)


def _block_network(net: KineticNetwork, block: list[int], dist: list[np.ndarray]) -> KineticNetwork:
    """The master equation of one block; hops leaving it become averaged reservoir steps."""
    local = {site: k for k, site in enumerate(block)}
    ends, fwd, bwd = [], [], []
    for s, (u, v) in enumerate(net.ends):
        iu, iv = u in local, v in local
        if not (iu or iv):
            continue
        f, b = net.forward[s], net.backward[s]
        if iu and not iv and v != RESERVOIR:  # v outside: average over its distribution
            f, b = (f @ dist[v])[:, None], (b @ dist[v])[:, None]
        elif iv and not iu and u != RESERVOIR:
            f, b = (dist[u] @ f)[None, :], (dist[u] @ b)[None, :]
        ends.append((local.get(u, RESERVOIR), local.get(v, RESERVOIR)))
        fwd.append(f)
        bwd.append(b)
    zeros = tuple(np.zeros_like(t) for t in fwd)
    unused = tuple(np.full(t.shape, -1, dtype=np.int64) for t in fwd)
    return KineticNetwork(tuple(net.capacity[i] for i in block), tuple(ends), tuple(fwd),
                          tuple(bwd), zeros, zeros, unused, unused, unused, unused)


def _log_ratios(dist: list[np.ndarray]) -> np.ndarray:
    """Coordinates of one-site distributions: ln(P[n+1] / P[n]) (relative precision)."""
    return np.concatenate([np.diff(np.log(np.clip(d, 1e-300, None))) for d in dist])


def _from_log_ratios(x: np.ndarray, capacity: tuple[int, ...]) -> list[np.ndarray]:
    out, k = [], 0
    for c in capacity:
        log_w = np.concatenate(([0.0], np.cumsum(x[k:k + c])))
        w = np.exp(log_w - log_w.max())
        out.append(w / w.sum())
        k += c
    return out


def _sweep(net: KineticNetwork, blocks: list[list[int]], dist: list[np.ndarray]
           ) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """One Gauss–Seidel pass: each block solved exactly given the others' one-site marginals."""
    dist = [d.copy() for d in dist]
    joint = []
    for block in blocks:
        sub = _block_network(net, block, dist)
        space = state_space(sub)
        caps = np.asarray(sub.capacity)
        strides = np.cumprod(np.concatenate(([1], caps[:-1] + 1)))
        ref = int(sum(int(np.argmax(dist[i])) * int(st) for i, st in zip(block, strides)))
        p = stationary(sub, space, ref)
        joint.append(p)
        for i, marg in zip(block, site_distributions(space.occupancy, p, sub.capacity)):
            dist[i] = marg
    return dist, joint


def solve_cluster_mean_field(net: KineticNetwork, start: list[np.ndarray], block_states: int,
                             *, blocks: list[list[int]] | None = None, tol: float = 1e-10, max_sweeps: int = 40, memory: int = 6
                             ) -> tuple[list[np.ndarray], list[list[int]], list[np.ndarray]]:
    """Self-consistent block distributions (see the module docstring).

    The Gauss–Seidel sweep is a fixed-point map of the one-site distributions, written in
    log ratios ln(P[n+1]/P[n]); Anderson mixing of the last *memory* iterates (Walker & Ni
    2011, SIAM J Numer Anal 49:1715) speeds up its slow modes (blocks joined by fast hops
    across a cut).

    Parameters
    ----------
    net : KineticNetwork
    start : list of ndarray
        Initial one-site distributions (the independent-site solution is a good start).
    block_states : int
        Largest number of occupancy states of one block.
    blocks : list of list of int, optional
        A fixed partition (e.g. the one of an unperturbed network, so that finite
        differences do not jump between partitions); default :func:`blocks_by_rate`.
    tol : float
        Convergence: largest change of a log ratio over a sweep.
    max_sweeps : int
        Anderson-mixed sweeps before switching to a Newton-type solve
        (:func:`scipy.optimize.root`, MINPACK hybrid) of the same fixed point.
    memory : int
        Anderson depth.

    Returns
    -------
    distributions : list of ndarray
        One-site distributions P_i(n).
    blocks : list of list of int
        The sites of each block.
    block_probabilities : list of ndarray
        The stationary joint distribution of each block (mixed-radix order of its sites).
    """
    if blocks is None:
        blocks = blocks_by_rate(net, block_states)
    caps = net.capacity
    x = _log_ratios(start)
    xs, gs = [], []
    for _ in range(max_sweeps):
        dist, joint = _sweep(net, blocks, _from_log_ratios(x, caps))
        g = _log_ratios(dist)
        f = g - x
        if np.max(np.abs(f)) < tol:
            return dist, blocks, joint
        xs.append(x)
        gs.append(g)
        xs, gs = xs[-(memory + 1):], gs[-(memory + 1):]
        if len(xs) > 1:
            fs = np.array([b - a for a, b in zip(xs, gs)])
            d_f = np.diff(fs, axis=0).T
            d_g = np.diff(np.array(gs), axis=0).T
            gamma = np.linalg.lstsq(d_f, f, rcond=None)[0]
            x = g - d_g @ gamma
            if not np.isfinite(x).all():
                x, xs, gs = g, [], []
        else:
            x = g
    # slow modes left: a Newton-type solve of G(x) - x = 0 (MINPACK hybrid, finite-difference
    # Jacobian) from the last iterate
    from scipy import optimize  # the fallback solver: loaded only when the sweep does not settle

    sol = optimize.root(lambda z: _log_ratios(_sweep(net, blocks, _from_log_ratios(z, caps))[0]) - z,
                        x, method="hybr", options={"xtol": 1e-13})
    dist, joint = _sweep(net, blocks, _from_log_ratios(sol.x, caps))
    if np.max(np.abs(_log_ratios(dist) - sol.x)) < 1e-9:
        return dist, blocks, joint
    raise ConfigError(f"the cluster mean-field steady state was not found ({sol.message})")


def block_currents(net: KineticNetwork, dist: list[np.ndarray], blocks: list[list[int]],
                   joint: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Net (u → v) and gross current of every step under the product of block distributions."""
    n_steps = len(net.ends)
    net_cur, gross = np.zeros(n_steps), np.zeros(n_steps)
    done = np.zeros(n_steps, dtype=bool)
    for block, p in zip(blocks, joint):
        sub = _block_network(net, block, dist)
        space = state_space(sub)
        cur = space.rate * p[space.src]
        local_net = np.bincount(space.step, weights=cur * space.sign, minlength=len(sub.ends))
        local_gross = np.bincount(space.step, weights=cur, minlength=len(sub.ends))
        members = set(block)
        k = 0
        for s, (u, v) in enumerate(net.ends):
            if u in members or v in members:
                if not done[s]:
                    net_cur[s], gross[s] = local_net[k], local_gross[k]
                    done[s] = True
                k += 1
    return net_cur, gross
