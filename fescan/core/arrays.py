"""Small array helpers shared by the stages.

:func:`distinct` stands for ``np.unique(values)``: numpy 2 looks, in that plain
call only, whether the array is masked, which imports ``numpy.ma`` at first use
(about 15 ms, a tenth of a one-file scan's start-up). Asking for the counts takes
the same sort without that check.
"""

from __future__ import annotations

import numpy as np

__all__ = ["distinct"]


def distinct(values) -> np.ndarray:
    """Sorted distinct values of an array, as ``np.unique(values)`` gives them.

    Parameters
    ----------
    values : array_like

    Returns
    -------
    ndarray
        One-dimensional, sorted.

    Examples
    --------
    >>> distinct([3, 1, 3, 2]).tolist()
    [1, 2, 3]
    """
    return np.unique(values, return_counts=True)[0]
