"""Disjoint sets (union-find) over hashable keys, shared by connectivity and DC analysis.

``find`` compresses paths, so a long chain of unions costs close to constant time per call.
``union(a, b)`` hangs a's set below b's root; callers never depend on which key is the root.
"""

from __future__ import annotations

from collections.abc import Hashable

__all__ = ["DisjointSets"]


class DisjointSets:
    __slots__ = ("parent",)

    def __init__(self) -> None:
        self.parent: dict = {}

    def find(self, x: Hashable) -> Hashable:
        """The root of x's set (x itself when x was never seen; it becomes a set of one)."""
        p = self.parent
        if x not in p:
            p[x] = x
            return x
        root = x
        while p[root] != root:
            root = p[root]
        while p[x] != root:
            p[x], x = root, p[x]
        return root

    def union(self, a: Hashable, b: Hashable) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[ra] = rb

    def flatten(self) -> dict:
        """Key -> the root of its set, for every key seen (a key never seen is a set of one,
        its own root). Compresses every path, so the answer is one dict lookup per key; it
        stays right until the next union."""
        p = self.parent
        for x in list(p):
            root = p[x]
            if p[root] != root:
                while p[root] != root:
                    root = p[root]
                while p[x] != root:
                    p[x], x = root, p[x]
        return p
