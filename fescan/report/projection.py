"""The view plane of the relay diagram (no drawing here).

The view plane is spanned by the two principal components of the cofactor
centres, the plane in which the cofactors spread most, so the drawing keeps as
much of the 3D arrangement as one flat view can. Signs are fixed so that the
same structure always gives the same picture: the first axis points from the
entry towards the exit (the wire reads left to right), or, without a wire,
towards the side of its largest loading; the second axis points towards its
largest loading. The axes are orthonormal, so distances in the plane are true Å,
and the picture is the molecule seen from the side ``axis1 × axis2`` points to:
a real view, never a mirror image.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

__all__ = ["Projection", "principal_projection", "stress_layout"]


@dataclass(frozen=True)
class Projection:
    """A view plane: ``xy = (xyz - origin) @ axes.T``.

    Attributes
    ----------
    origin : ndarray, shape=(3,)
        Mean of the cofactor centres (Å).
    axes : ndarray, shape=(2, 3)
        Orthonormal in-plane axes (first = horizontal, second = vertical).
    """

    origin: np.ndarray
    axes: np.ndarray

    def apply(self, xyz: Sequence[Sequence[float]] | np.ndarray) -> np.ndarray:
        """Project points (shape (n, 3), Å) onto the plane; returns shape (n, 2), Å."""
        p = np.asarray(xyz, dtype=float).reshape(-1, 3)
        return (p - self.origin) @ self.axes.T

    @property
    def view_direction(self) -> np.ndarray:
        """Unit vector from the viewer into the page (``axis1 × axis2`` points to the viewer)."""
        return -np.cross(self.axes[0], self.axes[1])


def _toward_largest(v: np.ndarray) -> np.ndarray:
    k = int(np.argmax(np.abs(v) - 1e-9 * np.arange(3)))  # first of near-ties
    return v if v[k] >= 0 else -v


def _perpendicular(u: np.ndarray) -> np.ndarray:
    ref = np.eye(3)[int(np.argmin(np.abs(u)))]
    v = ref - u * float(ref @ u)
    return v / np.linalg.norm(v)


def principal_projection(
    centres: Sequence[Sequence[float]] | np.ndarray,
    *,
    entry: int | None = None,
    exit: int | None = None,  # noqa: A002
) -> Projection:
    """The plane of the two principal components of the cofactor centres.

    Parameters
    ----------
    centres : array_like, shape=(n, 3)
        Cofactor centres (Å). Any n ≥ 0; with fewer than three points or
        collinear points the missing axes are completed deterministically.
    entry, exit : int, optional
        Indices of the entry and exit cofactors: when both are given and differ,
        the first axis is turned so that the exit lies to the right of the entry.

    Returns
    -------
    Projection

    Examples
    --------
    >>> p = principal_projection([[0, 0, 0], [0, 0, 10], [0, 0, 20]], entry=2, exit=0)
    >>> [round(float(x), 6) for x in p.apply([[0, 0, 0], [0, 0, 20]])[:, 0]]
    [10.0, -10.0]
    """
    pts = np.asarray(centres, dtype=float).reshape(-1, 3)
    if len(pts) == 0:
        return Projection(np.zeros(3), np.eye(3)[:2].copy())
    origin = pts.mean(axis=0)
    x = pts - origin
    # eigenvectors of the 3x3 scatter matrix (symmetric, so eigh; ascending order)
    vals, vecs = np.linalg.eigh(x.T @ x)
    order = np.argsort(-vals, kind="stable")
    vals, vecs = vals[order], vecs[:, order].T
    scale = max(float(vals[0]), 1e-12)
    if float(vals[0]) < 1e-10:  # one point, or all at the same place
        a1 = np.array([1.0, 0.0, 0.0])
    else:
        a1 = _toward_largest(vecs[0])
    if entry is not None and exit is not None and entry != exit:
        if float((pts[exit] - pts[entry]) @ a1) < 0:
            a1 = -a1
    if float(vals[1]) / scale < 1e-8:  # collinear: any perpendicular will do, take a fixed one
        a2 = _perpendicular(a1)
    else:
        a2 = vecs[1] - a1 * float(vecs[1] @ a1)
        a2 = _toward_largest(a2 / np.linalg.norm(a2))
    return Projection(origin, np.vstack([a1, a2]))


def stress_layout(
    centres: Sequence[Sequence[float]] | np.ndarray,
    start: np.ndarray,
    *,
    weights: dict[tuple[int, int], float] | None = None,
    iterations: int = 300,
) -> np.ndarray:
    """A flat layout whose distances follow the 3-D ones, most of all along the wire.

    Weighted stress majorisation (SMACOF; de Leeuw 1977, in *Recent Developments in
    Statistics*, 133-146; Gansner, Koren & North 2004, *Graph Drawing*, LNCS 3383:239):
    minimises Σ w_ij (|x_i − x_j| − d_ij)² with d_ij the 3-D distance of the centres and
    w_ij = d_ij⁻² (every pair) times the factor given in ``weights`` (the wire's hops get a
    large one, so a chain of hops, which can always be drawn flat at its true lengths,
    is). Started from ``start`` (the principal-component view), so the picture stays
    the molecule seen from one side, only unfolded where a projection would shorten a hop.

    Parameters
    ----------
    centres : array_like, shape=(n, 3)
        Cofactor centres (Å).
    start : ndarray, shape=(n, 2)
        Starting positions (Å), e.g. :meth:`Projection.apply` of the centres.
    weights : dict of (int, int) to float, optional
        Extra weight of some pairs (``i < j``).
    iterations : int, optional
        Guttman transforms applied at most.

    Returns
    -------
    ndarray, shape=(n, 2)
        Positions (Å), centred like ``start``.

    Examples
    --------
    >>> pts = np.array([[0, 0, 0], [10, 0, 0], [10, 0, 10]], dtype=float)
    >>> xy = stress_layout(pts, np.array([[0, 0], [10, 0], [10, 0.1]]), weights={(0, 1): 50, (1, 2): 50})
    >>> [round(float(np.linalg.norm(xy[i] - xy[j])), 2) for i, j in ((0, 1), (1, 2))]
    [10.0, 10.0]
    """
    p = np.asarray(centres, dtype=float).reshape(-1, 3)
    x = np.asarray(start, dtype=float).reshape(-1, 2).copy()
    n = len(p)
    if n < 3:
        return x
    d = np.linalg.norm(p[:, None, :] - p[None, :, :], axis=2)
    with np.errstate(divide="ignore"):
        w = np.where(d > 1e-6, 1.0 / np.maximum(d, 1e-6) ** 2, 0.0)
    for (i, j), f in (weights or {}).items():
        w[i, j] *= f
        w[j, i] *= f
    np.fill_diagonal(w, 0.0)
    v = -w.copy()
    np.fill_diagonal(v, w.sum(axis=1))
    v_pinv = np.linalg.pinv(v)
    centre = x.mean(axis=0)

    def stress(z: np.ndarray) -> float:
        dz = np.linalg.norm(z[:, None, :] - z[None, :, :], axis=2)
        return float((w * (dz - d) ** 2).sum())

    last = stress(x)
    for _ in range(iterations):
        dz = np.linalg.norm(x[:, None, :] - x[None, :, :], axis=2)
        with np.errstate(divide="ignore", invalid="ignore"):
            b = np.where(dz > 1e-9, -w * d / dz, 0.0)
        np.fill_diagonal(b, 0.0)
        np.fill_diagonal(b, -b.sum(axis=1))
        x = v_pinv @ (b @ x)
        s = stress(x)
        if last - s < 1e-7 * max(last, 1e-12):
            break
        last = s
    return x - x.mean(axis=0) + centre
