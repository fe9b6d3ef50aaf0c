"""Connected groups of items joined pair by pair (shared by the metal-site and alternative-state passes)."""

from __future__ import annotations

from collections.abc import Iterable

__all__ = ["Components"]


class Components:
    """Items joined into connected groups (union-find with path compression).

    Parameters
    ----------
    nodes : iterable of int, optional
        Items that start as groups of their own.

    Examples
    --------
    >>> c = Components([1, 2, 3])
    >>> c.join(1, 3)
    >>> sorted(sorted(g) for g in c.components())
    [[1, 3], [2]]
    """

    __slots__ = ("parent",)

    def __init__(self, nodes: Iterable[int] = ()) -> None:
        self.parent: dict[int, int] = {n: n for n in nodes}

    def add(self, n: int) -> None:
        """A group of its own for ``n`` (nothing when ``n`` is known)."""
        self.parent.setdefault(n, n)

    def _root(self, n: int) -> int:
        parent = self.parent
        root = n
        while parent[root] != root:
            root = parent[root]
        while parent[n] != root:  # path compression
            parent[n], n = root, parent[n]
        return root

    def join(self, a: int, b: int) -> None:
        """Put ``a`` and ``b`` (added if new) in one group."""
        self.add(a)
        self.add(b)
        ra, rb = self._root(a), self._root(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)

    def components(self) -> list[set[int]]:
        """Every group, as a set, in the order its first item was added."""
        groups: dict[int, set[int]] = {}
        for n in self.parent:
            groups.setdefault(self._root(n), set()).add(n)
        return list(groups.values())
