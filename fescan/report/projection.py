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

__all__ = ["Projection", "principal_projection"]


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
