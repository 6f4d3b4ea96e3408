"""DisjointSets.flatten gives, for every key, the root find gives."""

from __future__ import annotations

import random

from frontcheck.disjoint_sets import DisjointSets


def test_flatten_gives_the_root_find_gives():
    rnd = random.Random(3)
    for _ in range(100):
        keys = [("k", i) for i in range(30)] + list(range(30))
        pairs = [(rnd.choice(keys), rnd.choice(keys)) for _ in range(rnd.randint(0, 50))]
        a, b = DisjointSets(), DisjointSets()
        for x, y in pairs:
            a.union(x, y)
            b.union(x, y)
        flat = b.flatten()                 # straight after the unions, before any find
        assert set(flat) == set(a.parent)
        for k in a.parent:
            assert flat[k] == a.find(k)
        assert all(flat[r] == r for r in flat.values())
