"""Label placement for the relay diagram, in display units (no drawing here).

Each label offers a list of candidate positions (around its glyph, or along
its hop line). A candidate costs

* 3000 for touching another label, a glyph or a mark at all, plus 50 per unit
  area shared,
* 200 per unit area outside the frame,
* per unit length of a line running under it, the line's weight,
* 6 per unit length of a leader line (glyph → far label) crossing a label or glyph,
* the candidate's own penalty (distance from the anchor, order of preference).

The total is minimised from the best of a few greedy starts, then by "kick
and repair" steps (move one label at random, re-fit its neighbours, keep the
result when better, or sometimes early on when worse) with a fixed seed, so the
same input always gives the same layout.
Costs between two labels are pre-computed as matrices with numpy.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

__all__ = ["Box", "Placement", "Segment", "overlap", "overlaps", "clip_lengths", "leader", "place_labels"]

W_OVERLAP = 50.0
W_ANY_OVERLAP = 3000.0
W_OUTSIDE = 200.0
W_LEADER = 6.0


@dataclass(frozen=True)
class Box:
    """An axis-aligned box in display units: left, bottom, right, top."""

    x0: float
    y0: float
    x1: float
    y1: float

    @property
    def width(self) -> float:
        """Width of the box."""
        return self.x1 - self.x0

    @property
    def height(self) -> float:
        """Height of the box."""
        return self.y1 - self.y0

    def as_array(self) -> np.ndarray:
        """``[x0, y0, x1, y1]``."""
        return np.array([self.x0, self.y0, self.x1, self.y1], dtype=float)


@dataclass(frozen=True)
class Segment:
    """A line segment to keep labels off: ends, cost per unit length under a label, drawn width."""

    p: tuple[float, float]
    q: tuple[float, float]
    weight: float = 3.0
    width: float = 0.0


def overlap(a: Box, b: Box) -> float:
    """Area shared by two boxes (0 when they only touch or are apart).

    Examples
    --------
    >>> overlap(Box(0, 0, 2, 2), Box(1, 1, 3, 3))
    1.0
    >>> overlap(Box(0, 0, 1, 1), Box(1, 0, 2, 1))
    0.0
    """
    return float(overlaps(a.as_array()[None], b.as_array()[None])[0, 0])


def overlaps(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Shared areas of boxes ``a`` (n, 4) with boxes ``b`` (m, 4): shape (n, m)."""
    a = np.asarray(a, dtype=float).reshape(-1, 4)[:, None, :]
    b = np.asarray(b, dtype=float).reshape(-1, 4)[None, :, :]
    w = np.minimum(a[..., 2], b[..., 2]) - np.maximum(a[..., 0], b[..., 0])
    h = np.minimum(a[..., 3], b[..., 3]) - np.maximum(a[..., 1], b[..., 1])
    return np.clip(w, 0, None) * np.clip(h, 0, None)


def clip_lengths(boxes: np.ndarray, p: np.ndarray, q: np.ndarray) -> np.ndarray:
    """Length of each segment p-q (m of them) inside each box (n): shape (n, m).

    Liang-Barsky clipping, vectorised.

    Examples
    --------
    >>> float(clip_lengths(np.array([[0, 0, 2, 2]]), np.array([[-1, 1]]), np.array([[3, 1]]))[0, 0])
    2.0
    """
    b = np.asarray(boxes, dtype=float).reshape(-1, 4)
    p = np.asarray(p, dtype=float).reshape(-1, 2)
    q = np.asarray(q, dtype=float).reshape(-1, 2)
    n, m = len(b), len(p)
    if n == 0 or m == 0:
        return np.zeros((n, m))
    d = q - p
    x0, y0, x1, y1 = (b[:, k][:, None] for k in range(4))
    px, py, dx, dy = p[:, 0][None], p[:, 1][None], d[:, 0][None], d[:, 1][None]
    t0, t1 = np.zeros((n, m)), np.ones((n, m))
    inside = np.ones((n, m), dtype=bool)
    for pk, qk in ((-dx, px - x0), (dx, x1 - px), (-dy, py - y0), (dy, y1 - py)):
        pk = np.broadcast_to(pk, (n, m))
        qk = np.broadcast_to(qk, (n, m))
        parallel = np.abs(pk) < 1e-12
        inside &= ~(parallel & (qk < 0))
        t = qk / np.where(parallel, 1.0, pk)
        t0 = np.where(~parallel & (pk < 0), np.maximum(t0, t), t0)
        t1 = np.where(~parallel & (pk > 0), np.minimum(t1, t), t1)
    return np.hypot(dx, dy) * np.clip(t1 - t0, 0, None) * inside


def leader(anchor: Sequence[float], box: Box, leader_from: float) -> tuple[np.ndarray, np.ndarray] | None:
    """Leader segment from near the anchor to the nearest point of a box; None when the box is close.

    The segment starts ``leader_from / 2`` away from the anchor (outside its glyph).
    """
    a = np.asarray(anchor, dtype=float)
    near = np.array([min(max(a[0], box.x0), box.x1), min(max(a[1], box.y0), box.y1)])
    d = near - a
    dist = float(np.hypot(*d))
    if dist <= leader_from:
        return None
    return a + d * (0.5 * leader_from / dist), near


@dataclass
class Placement:
    """One label to place.

    Attributes
    ----------
    key : str
        Identifier (the result maps it to the chosen box).
    width, height : float
        Size of the label box (display units).
    candidates : list of (float, float)
        Box centres to try.
    penalties : list of float, optional
        Extra cost of each candidate; default 0.05 per rank.
    own_segments : frozenset of int
        Segments the label belongs to (not obstacles for it).
    own_boxes : frozenset of int
        Fixed boxes the label belongs to (its glyph): its leader may start there,
        but the label itself must not cover them.
    anchor : (float, float), optional
        Point the label belongs to; a candidate farther than ``leader_from``
        gets a leader line, which is costed too.
    leader_from : float
        Distance beyond which a leader is drawn.
    """

    key: str
    width: float
    height: float
    candidates: list[tuple[float, float]]
    penalties: list[float] | None = None
    own_segments: frozenset[int] = frozenset()
    own_boxes: frozenset[int] = frozenset()
    anchor: tuple[float, float] | None = None
    leader_from: float = math.inf

    def boxes(self) -> np.ndarray:
        """Candidate boxes, shape (n, 4)."""
        c = np.asarray(self.candidates, dtype=float).reshape(-1, 2)
        hw, hh = self.width / 2, self.height / 2
        return np.column_stack([c[:, 0] - hw, c[:, 1] - hh, c[:, 0] + hw, c[:, 1] + hh])

    def box_at(self, k: int) -> Box:
        """The box of candidate ``k``."""
        return Box(*map(float, self.boxes()[k]))

    def leaders(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Leader start points, end points (n, 2) and whether each candidate has one (n,)."""
        b = self.boxes()
        n = len(b)
        if self.anchor is None:
            return np.zeros((n, 2)), np.zeros((n, 2)), np.zeros(n, dtype=bool)
        a = np.asarray(self.anchor, dtype=float)
        near = np.column_stack([np.clip(a[0], b[:, 0], b[:, 2]), np.clip(a[1], b[:, 1], b[:, 3])])
        d = near - a
        dist = np.hypot(d[:, 0], d[:, 1])
        has = dist > self.leader_from
        start = a + d * (0.5 * self.leader_from / np.where(has, dist, 1.0))[:, None]
        return start, near, has


def _unary(it: Placement, fixed: np.ndarray, segs: Sequence[Segment], frame: Box) -> np.ndarray:
    b = it.boxes()
    n = len(b)
    cost = np.asarray(it.penalties if it.penalties is not None else 0.05 * np.arange(n), dtype=float).copy()
    if len(fixed):  # a label may not cover its own glyph either
        ov = overlaps(b, fixed)
        cost += W_OVERLAP * ov.sum(axis=1) + W_ANY_OVERLAP * (ov > 0).sum(axis=1)
    keep = [k for k in range(len(fixed)) if k not in it.own_boxes]
    if keep:  # its own leader starts on its glyph
        start, end, has = it.leaders()
        if has.any():
            cost += W_LEADER * (clip_lengths(fixed[keep], start, end) * has[None]).sum(axis=0)
    others = [s for k, s in enumerate(segs) if k not in it.own_segments]
    for width in sorted({s.width for s in others}):  # a thick line reaches further
        group = [s for s in others if s.width == width]
        p = np.array([s.p for s in group], dtype=float)
        q = np.array([s.q for s in group], dtype=float)
        w = np.array([s.weight for s in group])
        grown = b + np.array([-width, -width, width, width]) / 2
        cost += (clip_lengths(grown, p, q) * w[None]).sum(axis=1)
    area = (b[:, 2] - b[:, 0]) * (b[:, 3] - b[:, 1])
    cost += W_OUTSIDE * np.clip(area - overlaps(b, frame.as_array()[None])[:, 0], 0, None)
    return cost


def _pairwise(a: Placement, b: Placement) -> np.ndarray | None:
    ba, bb = a.boxes(), b.boxes()
    sa, ea, ha = a.leaders()
    sb, eb, hb = b.leaders()
    reach_a = np.vstack([ba[:, :2], ba[:, 2:], sa[ha], ea[ha]])
    reach_b = np.vstack([bb[:, :2], bb[:, 2:], sb[hb], eb[hb]])
    lo_a, hi_a, lo_b, hi_b = reach_a.min(0), reach_a.max(0), reach_b.min(0), reach_b.max(0)
    if (hi_a < lo_b).any() or (hi_b < lo_a).any():
        return None
    ov = overlaps(ba, bb)
    m = W_OVERLAP * ov + W_ANY_OVERLAP * (ov > 0)
    if hb.any():
        m += W_LEADER * clip_lengths(ba, sb, eb) * hb[None]
    if ha.any():
        m += W_LEADER * (clip_lengths(bb, sa, ea) * ha[None]).T
    return m if m.any() else None


def place_labels(
    items: Sequence[Placement],
    *,
    fixed: Sequence[Box] = (),
    segments: Sequence[Segment] = (),
    frame: Box,
    seed: int = 0,
) -> dict[str, Box]:
    """Choose a candidate for every label so that the summed cost is low (see the module docstring).

    Parameters
    ----------
    items : sequence of Placement
    fixed : sequence of Box, optional
        Obstacles that do not move (glyphs, arrows, break marks, scale bar).
    segments : sequence of Segment, optional
        Lines to keep labels off.
    frame : Box
        Drawing area.
    seed : int, optional
        Seed of the annealing (fixed: same input, same layout).

    Returns
    -------
    dict of str to Box
        The chosen box of each label, by key.
    """
    n = len(items)
    if n == 0:
        return {}
    fx = np.array([f.as_array() for f in fixed], dtype=float).reshape(-1, 4)
    unary = [_unary(it, fx, segments, frame) for it in items]
    pair: dict[tuple[int, int], np.ndarray] = {}
    nbrs: list[list[int]] = [[] for _ in range(n)]
    for i in range(n):
        for j in range(i + 1, n):
            m = _pairwise(items[i], items[j])
            if m is not None:
                pair[(i, j)] = m
                nbrs[i].append(j)
                nbrs[j].append(i)

    def local(i: int, st: list[int]) -> np.ndarray:
        c = unary[i].copy()
        for j in nbrs[i]:
            c += pair[(i, j)][:, st[j]] if i < j else pair[(j, i)][st[j], :]
        return c

    def total(st: list[int]) -> float:
        return sum(float(unary[i][st[i]]) for i in range(n)) + sum(
            float(m[st[i], st[j]]) for (i, j), m in pair.items())

    def descend(st: list[int]) -> list[int]:
        for _ in range(20):
            moved = False
            for i in range(n):
                lc = local(i, st)
                b = int(np.argmin(lc))
                if lc[b] < lc[st[i]] - 1e-9:
                    st[i] = b
                    moved = True
            if not moved:
                break
        return st

    def greedy(order: Sequence[int]) -> list[int]:
        st = [int(np.argmin(u)) for u in unary]
        placed: set[int] = set()
        for i in order:
            c = unary[i].copy()
            for j in nbrs[i]:
                if j in placed:
                    c += pair[(i, j)][:, st[j]] if i < j else pair[(j, i)][st[j], :]
            st[i] = int(np.argmin(c))
            placed.add(i)
        return descend(st)

    # several deterministic greedy starts; keep the best
    crowd = [len(nbrs[i]) for i in range(n)]
    orders = [range(n), range(n - 1, -1, -1), sorted(range(n), key=lambda i: (-crowd[i], i)),
              sorted(range(n), key=lambda i: (items[i].anchor is None, -crowd[i], i))]
    starts = [greedy(o) for o in orders]
    best = min(starts, key=total)
    best_total = total(best)
    state, cur = list(best), best_total
    # kick and repair: move one label to a random candidate, re-fit its neighbours, keep if better
    # (or, early on, sometimes when worse)
    rng = np.random.default_rng(seed)
    steps = min(60 * n, 1500)
    for step in range(steps):
        if best_total <= 1e-9:
            break
        i = int(rng.integers(n))
        trial = list(state)
        if rng.random() < 0.7:  # one of its best spots when alone, pushing the neighbours away
            good = np.argsort(unary[i], kind="stable")[:8]
            trial[i] = int(good[rng.integers(len(good))])
        else:
            trial[i] = int(rng.integers(len(unary[i])))
        for j in sorted(nbrs[i]):
            trial[j] = int(np.argmin(local(j, trial)))
        trial[i] = int(np.argmin(local(i, trial)))
        t = total(trial)
        temp = 100.0 * (1.0 - step / steps) + 1e-6
        if t <= cur or rng.random() < math.exp(-(t - cur) / temp):
            state, cur = trial, t
            if cur < best_total - 1e-9:
                best, best_total = descend(list(state)), 0.0
                best_total = total(best)
    return {it.key: it.box_at(best[k]) for k, it in enumerate(items)}
