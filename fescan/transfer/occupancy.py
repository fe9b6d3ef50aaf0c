"""Occupancy master equation of a redox network between two reservoirs: exact and mean-field.

Pure numerics for :mod:`fescan.transfer.steady_state`: a :class:`KineticNetwork` (rate
tables, no chemistry) in, stationary occupancy probabilities and step currents out. No I/O.

A network has sites holding 0..capacity electrons (capacity 1 or 2) and *steps*. A step
joins two ends, each a site or a reservoir; the reservoir end has no occupancy. For step s,
``forward[s][nu, nv]`` is the rate (s⁻¹) of one electron moving from end u to end v when
u holds ``nu`` and v holds ``nv`` electrons (a reservoir end always has index 0), and
``backward[s][nu, nv]`` the rate of v → u in the same occupancy. Entries that are not
allowed (an empty donor, a full acceptor) are zero.

Exact solution
    The generator over all Π(capacity + 1) occupancy states is built as a sparse matrix
    and the stationary vector found by one sparse LU factorisation with one reference
    state's probability fixed (then normalised); the same factorisation solves the
    adjoint system that gives exact derivatives of the flux (see ``adjoint``).

Mean-field (independent-site) approximation
    The joint probability is replaced by a product of one-site distributions; each site's
    distribution is the stationary state of its own birth–death chain with rates averaged
    over its neighbours' distributions, iterated to self-consistency (Gauss–Seidel sweeps).
    It is exact at equilibrium (equal reservoir potentials: the stationary state is a product
    of Nernst distributions) and loses the correlation between neighbouring sites away from
    it; the agreement measured against the exact solution is stated in
    :mod:`fescan.transfer.steady_state`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fescan.core.errors import ConfigError

__all__ = ["RESERVOIR", "KineticNetwork", "StateSpace", "ExactSolution", "state_space",
           "solve_exact", "stationary", "solve_mean_field", "step_currents_mean_field"]

#: End index used for a reservoir in :attr:`KineticNetwork.ends`.
RESERVOIR: int = -1
#: Below this many states the stationary state is found by a dense LU (faster for tiny blocks).
_DENSE_BELOW: int = 128


@dataclass(frozen=True)
class KineticNetwork:
    """Rate tables of sites and steps (see the module docstring for the layout).

    Attributes
    ----------
    capacity : tuple of int
        Maximum electrons per site (1 or 2).
    ends : tuple of (int, int)
        Per step, the site indices (u, v) of its two ends; :data:`RESERVOIR` for a reservoir.
    forward, backward : tuple of ndarray
        Per step, rates in s⁻¹ of u → v and v → u, indexed ``[nu, nv]``.
    dlog10_forward, dlog10_backward : tuple of ndarray
        Per step, d log10 k / dΔG (eV⁻¹) of each rate, same layout.
    donor_param_f, acceptor_param_f, donor_param_b, acceptor_param_b : tuple of ndarray
        Per step, index of the potential parameter (a couple or a reservoir potential) of the
        donating and the accepting electron of each rate, same layout (-1 where unused).
    """

    capacity: tuple[int, ...]
    ends: tuple[tuple[int, int], ...]
    forward: tuple[np.ndarray, ...]
    backward: tuple[np.ndarray, ...]
    dlog10_forward: tuple[np.ndarray, ...]
    dlog10_backward: tuple[np.ndarray, ...]
    donor_param_f: tuple[np.ndarray, ...]
    acceptor_param_f: tuple[np.ndarray, ...]
    donor_param_b: tuple[np.ndarray, ...]
    acceptor_param_b: tuple[np.ndarray, ...]

    @property
    def n_states(self) -> int:
        """Number of occupancy states, Π(capacity + 1)."""
        return int(np.prod([c + 1 for c in self.capacity], dtype=np.int64))

    def scaled(self, step_factor: np.ndarray | None = None,
               param_shift: np.ndarray | None = None) -> KineticNetwork:
        """Return a copy with step rates scaled and potentials shifted (rates linearised in ΔG).

        Parameters
        ----------
        step_factor : ndarray, optional
            Factor applied to both directions of each step.
        param_shift : ndarray, optional
            Shift (V) of each potential parameter; each rate changes by
            ``10**(dlog10 · dΔG)`` with ``dΔG = shift(donor) - shift(acceptor)``.
        """
        fwd, bwd = [], []
        for s in range(len(self.ends)):
            f, b = self.forward[s].copy(), self.backward[s].copy()
            if param_shift is not None:
                f *= 10.0 ** (self.dlog10_forward[s] * _dg_shift(
                    param_shift, self.donor_param_f[s], self.acceptor_param_f[s]))
                b *= 10.0 ** (self.dlog10_backward[s] * _dg_shift(
                    param_shift, self.donor_param_b[s], self.acceptor_param_b[s]))
            if step_factor is not None:
                f *= step_factor[s]
                b *= step_factor[s]
            fwd.append(f)
            bwd.append(b)
        return KineticNetwork(self.capacity, self.ends, tuple(fwd), tuple(bwd),
                              self.dlog10_forward, self.dlog10_backward, self.donor_param_f,
                              self.acceptor_param_f, self.donor_param_b, self.acceptor_param_b)


def _dg_shift(shift: np.ndarray, donor: np.ndarray, acceptor: np.ndarray) -> np.ndarray:
    """ΔG change of each rate when the potentials move by *shift* (ΔG = E_donor - E_acceptor)."""
    padded = np.append(shift, 0.0)  # index -1 → 0 shift
    return padded[donor] - padded[acceptor]


@dataclass(frozen=True)
class StateSpace:
    """All occupancy states (mixed-radix order) and their transitions."""

    occupancy: np.ndarray   # (n_states, n_sites) int8
    src: np.ndarray         # transition source state
    dst: np.ndarray         # transition target state
    rate: np.ndarray        # s⁻¹
    step: np.ndarray        # step index of the transition
    sign: np.ndarray        # +1 forward (u → v), -1 backward
    dlog10: np.ndarray      # d log10 k / dΔG
    donor_param: np.ndarray
    acceptor_param: np.ndarray


def state_space(net: KineticNetwork) -> StateSpace:
    """Enumerate the occupancy states of *net* and every allowed transition between them."""
    caps = np.asarray(net.capacity, dtype=np.int64)
    n_states = net.n_states
    strides = np.cumprod(np.concatenate(([1], caps[:-1] + 1)))
    idx = np.arange(n_states, dtype=np.int64)
    occ = ((idx[:, None] // strides[None, :]) % (caps + 1)[None, :]).astype(np.int8)
    parts: dict[str, list[np.ndarray]] = {k: [] for k in
                                          ("src", "dst", "rate", "step", "sign", "dl", "dp", "ap")}
    for s, (u, v) in enumerate(net.ends):
        for sign, table, dl, dp, ap in (
            (1, net.forward[s], net.dlog10_forward[s], net.donor_param_f[s], net.acceptor_param_f[s]),
            (-1, net.backward[s], net.dlog10_backward[s], net.donor_param_b[s], net.acceptor_param_b[s]),
        ):
            for nu, nv in zip(*np.nonzero(table)):
                mask = np.ones(n_states, dtype=bool)
                if u != RESERVOIR:
                    mask &= occ[:, u] == nu
                if v != RESERVOIR:
                    mask &= occ[:, v] == nv
                src = idx[mask]
                move = 0
                if u != RESERVOIR:
                    move -= sign * strides[u]
                if v != RESERVOIR:
                    move += sign * strides[v]
                k = src.size
                parts["src"].append(src)
                parts["dst"].append(src + move)
                parts["rate"].append(np.full(k, table[nu, nv]))
                parts["step"].append(np.full(k, s, dtype=np.int64))
                parts["sign"].append(np.full(k, sign, dtype=np.int8))
                parts["dl"].append(np.full(k, dl[nu, nv]))
                parts["dp"].append(np.full(k, dp[nu, nv], dtype=np.int64))
                parts["ap"].append(np.full(k, ap[nu, nv], dtype=np.int64))
    cat = {k: (np.concatenate(v) if v else np.zeros(0)) for k, v in parts.items()}
    return StateSpace(occ, cat["src"].astype(np.int64), cat["dst"].astype(np.int64), cat["rate"],
                      cat["step"].astype(np.int64), cat["sign"].astype(np.int8), cat["dl"],
                      cat["dp"].astype(np.int64), cat["ap"].astype(np.int64))


@dataclass(frozen=True)
class ExactSolution:
    """Stationary probabilities of every state, the flux and the adjoint vector."""

    probability: np.ndarray   # (n_states,)
    flux: float               # net electrons s⁻¹ through the network (u → v of the reservoir steps)
    measured_step: int        # the step whose net current gave ``flux``
    adjoint: np.ndarray       # y with Q y = c - J 1, y_ref = 0 (for derivatives)


def _measured_step(net: KineticNetwork, space: StateSpace, p: np.ndarray,
                   candidates: list[int]) -> tuple[int, float, float]:
    """Among *candidates* (steps that are cuts), the one with the least gross current."""
    cur = space.rate * p[space.src]
    n_steps = len(net.ends)
    gross = np.bincount(space.step, weights=cur, minlength=n_steps)
    net_cur = np.bincount(space.step, weights=cur * space.sign, minlength=n_steps)
    best = min(candidates, key=lambda s: gross[s])
    return best, float(net_cur[best]), float(gross[best])


def _stationary(net: KineticNetwork, space: StateSpace, reference: int):
    """Stationary probabilities with one state's weight fixed, a solver for the same matrix
    (``solve(rhs, trans)``) and the mask of the other states. Dense below 128 states (small
    blocks of the cluster approximation), sparse LU above."""
    n = net.n_states
    if n == 1:
        raise ConfigError("the network has a single occupancy state; nothing can move")
    keep = np.ones(n, dtype=bool)
    keep[reference] = False
    if n < _DENSE_BELOW:
        mt = np.zeros((n, n))  # transpose of the generator: mt[target, source]
        np.add.at(mt, (space.dst, space.src), space.rate)
        np.add.at(mt, (space.src, space.src), -space.rate)
        a = mt[keep][:, keep]
        rhs = -mt[keep, reference]
        if not np.all(np.isfinite(a)):
            raise ConfigError("the kinetic network is not connected (singular master equation)")
        at = np.ascontiguousarray(a.T)

        def solve(b: np.ndarray, trans: str = "N") -> np.ndarray:
            # LU with partial pivoting (numpy's LAPACK gesv), as a dense block is small
            try:
                return np.linalg.solve(a if trans == "N" else at, b)
            except np.linalg.LinAlgError:
                raise ConfigError("the kinetic network is not connected (singular master equation)") from None
    else:
        import scipy.sparse as sp  # large networks only: loaded on use

        gen = sp.csr_matrix((space.rate, (space.src, space.dst)), shape=(n, n))
        out = np.asarray(gen.sum(axis=1)).ravel()
        mts = (gen - sp.diags(out)).T.tocsc()
        a = mts[keep][:, keep].tocsc()
        rhs = -np.asarray(mts[keep][:, [reference]].todense()).ravel()
        try:
            import scipy.sparse.linalg as spla  # large networks only: loaded on use

            lu = spla.splu(a)
        except RuntimeError as exc:  # singular: some states cannot reach the others
            raise ConfigError(f"the kinetic network is not connected (singular master equation: {exc})") from None

        def solve(b: np.ndarray, trans: str = "N") -> np.ndarray:
            return lu.solve(b, trans=trans)
    p = np.empty(n)
    with np.errstate(all="ignore"):
        p[keep] = solve(rhs)
    p[reference] = 1.0
    if not np.isfinite(p).all():
        raise ConfigError("the kinetic network is not connected (non-finite stationary state)")
    p = np.clip(p, 0.0, None)
    p /= p.sum()
    return p, solve, keep


def stationary(net: KineticNetwork, space: StateSpace, reference: int) -> np.ndarray:
    """Stationary probability of every state of *net* (sparse LU; *reference* a probable state)."""
    return _stationary(net, space, reference)[0]


def solve_exact(net: KineticNetwork, space: StateSpace, cut_steps: list[int],
                reference: int) -> ExactSolution:
    """Solve the master equation of *net* exactly (sparse LU) and the flux adjoint.

    Parameters
    ----------
    net, space :
        The network and its :func:`state_space`.
    cut_steps : list of int
        Steps each of which carries the whole flux in steady state (the reservoir steps, and
        for a chain every step); the flux is read from the one with the least gross current,
        where the net current loses the fewest digits to cancellation.
    reference : int
        State whose probability is fixed before normalising (best a probable one).
    """
    n = net.n_states
    p, solve, keep = _stationary(net, space, reference)
    step, flux, _ = _measured_step(net, space, p, cut_steps)
    in_step = space.step == step
    c = np.bincount(space.src[in_step], weights=space.rate[in_step] * space.sign[in_step], minlength=n)
    y = np.zeros(n)
    y[keep] = solve((c - flux)[keep], trans="T")
    return ExactSolution(p, flux, step, y)


def site_distributions(occupancy: np.ndarray, probability: np.ndarray,
                       capacity: tuple[int, ...]) -> list[np.ndarray]:
    """Marginal distribution P_i(n) of each site from the joint probabilities."""
    return [np.bincount(occupancy[:, i], weights=probability, minlength=c + 1)
            for i, c in enumerate(capacity)]


def _mf_rhs(net: KineticNetwork, dist: list[np.ndarray], offs: np.ndarray,
            jacobian: bool) -> tuple[np.ndarray, np.ndarray | None]:
    """dP/dt of the product-form master equation and its Jacobian (flat layout *offs*)."""
    n_var = int(offs[-1])
    f = np.zeros(n_var)
    jac = np.zeros((n_var, n_var)) if jacobian else None
    for s, (u, v) in enumerate(net.ends):
        for sign, table in ((1, net.forward[s]), (-1, net.backward[s])):
            for nu, nv in zip(*np.nonzero(table)):
                k = table[nu, nv]
                pu = dist[u][nu] if u != RESERVOIR else 1.0
                pv = dist[v][nv] if v != RESERVOIR else 1.0
                r = k * pu * pv
                moves = []  # (flat index of the state left, of the state entered)
                if u != RESERVOIR:
                    moves.append((offs[u] + nu, offs[u] + nu - sign))
                if v != RESERVOIR:
                    moves.append((offs[v] + nv, offs[v] + nv + sign))
                for left, entered in moves:
                    f[left] -= r
                    f[entered] += r
                    if jac is not None:
                        if u != RESERVOIR:
                            jac[left, offs[u] + nu] -= k * pv
                            jac[entered, offs[u] + nu] += k * pv
                        if v != RESERVOIR:
                            jac[left, offs[v] + nv] -= k * pu
                            jac[entered, offs[v] + nv] += k * pu
    return f, jac


def solve_mean_field(net: KineticNetwork, start: list[np.ndarray], *,
                     max_steps: int = 400) -> list[np.ndarray]:
    """Self-consistent independent-site distributions of *net*.

    The product-form (mean-field) master equation ``dP_i/dt = F_i(P)`` is driven to its
    steady state by pseudo-transient continuation: implicit Euler steps
    ``(I/Δt - ∂F/∂P) δ = F`` with Δt growing as the residual falls (switched evolution
    relaxation), so that the iteration becomes Newton's method near the solution. Each site's
    P_i(0) is eliminated through normalisation. Rates that span many decades (a stiff
    network) are handled because every step is an exact linear solve with the analytic
    Jacobian.

    Parameters
    ----------
    net : KineticNetwork
    start : list of ndarray
        Initial site distributions (e.g. Nernst at the mean reservoir potential).
    max_steps : int
        Give up after this many steps.

    Returns
    -------
    list of ndarray
        P_i(n) of every site.

    Raises
    ------
    fescan.core.errors.ConfigError
        If the iteration does not settle.
    """
    caps = net.capacity
    offs = np.concatenate(([0], np.cumsum([c + 1 for c in caps]))).astype(np.int64)
    keep = np.ones(int(offs[-1]), dtype=bool)
    keep[offs[:-1]] = False  # P_i(0) = 1 - sum of the others
    dist = [np.clip(d, 0.0, None) / np.sum(d) for d in start]
    f, jac = _mf_rhs(net, dist, offs, True)
    norm = float(np.max(np.abs(f)))
    rate_scale = max(float(np.max(t)) for t in net.forward + net.backward if t.size)
    dt = 1.0 / rate_scale
    polish = -1  # Newton steps left once a step moves no probability by 1e-8
    for _ in range(max_steps):
        red = jac[keep][:, keep]
        for i in range(len(caps)):  # chain rule through P_i(0)
            zero = offs[i]
            red[:, offs[i] - i: offs[i + 1] - i - 1] -= jac[keep][:, [zero]]
        try:
            delta = np.linalg.solve(np.eye(red.shape[0]) / dt - red, f[keep])
        except np.linalg.LinAlgError:
            delta = f[keep] * dt
        step = 0.0
        for i in range(len(caps)):
            tail = np.clip(dist[i][1:] + delta[offs[i] - i: offs[i + 1] - i - 1], 0.0, 1.0)
            if tail.sum() > 1.0:
                tail /= tail.sum()
            new = np.concatenate(([1.0 - tail.sum()], tail))
            step = max(step, float(np.max(np.abs(new - dist[i]))))
            dist[i] = new
        f, jac = _mf_rhs(net, dist, offs, True)
        new_norm = float(np.max(np.abs(f)))
        dt = min(dt * max(norm / max(new_norm, 1e-300), 0.1) * 2.0, 1e30)
        norm = new_norm
        if polish < 0 and step < 1e-8:
            polish = 3
        elif polish > 0:
            polish -= 1
        if polish == 0 or new_norm == 0.0:
            return dist
    raise ConfigError(f"the mean-field steady state did not settle in {max_steps} steps")


def step_currents_mean_field(net: KineticNetwork, dist: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Net (u → v) and gross current of every step under the product distribution."""
    n_steps = len(net.ends)
    net_cur, gross = np.zeros(n_steps), np.zeros(n_steps)
    for s, (u, v) in enumerate(net.ends):
        pu = dist[u] if u != RESERVOIR else np.ones(1)
        pv = dist[v] if v != RESERVOIR else np.ones(1)
        f = float(pu @ net.forward[s] @ pv)
        b = float(pu @ net.backward[s] @ pv)
        net_cur[s], gross[s] = f - b, f + b
    return net_cur, gross
