"""Disjoint sets over 0..n-1 (union by smallest root, path halving).

The one union-find of the project: orbits of facets and points under a
group's moves, classes of equal model columns, orbits of a scenario's forest.
R. E. Tarjan, J. ACM 22, 215 (1975).
"""

from __future__ import annotations


class DisjointSets:
    """``find(i)`` is the smallest element of i's set once unions are done with :meth:`union`."""

    def __init__(self, n: int) -> None:
        self.parent = list(range(n))

    def find(self, i: int) -> int:
        parent = self.parent
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    def union(self, i: int, j: int) -> None:
        ri, rj = self.find(i), self.find(j)
        if ri != rj:
            self.parent[max(ri, rj)] = min(ri, rj)
