"""Disjoint sets (union–find) of names: loops of voltage sources, groups of coupled inductors."""

from __future__ import annotations

__all__ = ["DisjointSets"]


class DisjointSets:
    def __init__(self):
        self.parent: dict[str, str] = {}

    def find(self, x: str) -> str:
        self.parent.setdefault(x, x)
        while self.parent[x] != x:
            self.parent[x] = self.parent[self.parent[x]]
            x = self.parent[x]
        return x

    def union(self, a: str, b: str) -> bool:
        """Join the sets of a and b; False if they were joined already."""
        ra, rb = self.find(a), self.find(b)
        self.parent[ra] = rb
        return ra != rb
