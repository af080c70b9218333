"""Facet classes under a large relabelling group without listing the group: a canonical coloured graph.

When the group of relabellings is too large to list element by element
(two parties with four binary settings: 4!·4!·2^8·2 = 294,912), two facets
are compared by a canonical form of a coloured graph whose automorphism
group is exactly the scenario's group, computed by nauty (B. D. McKay and
A. Piperno, "Practical graph isomorphism, II", J. Symbolic Comput. 60, 94
(2014); through pynauty).  The graph has

* one node per party, per (party, setting) and per (party, setting, outcome),
  joined as a forest: party – setting – outcome, each node coloured by its
  orbit under the verified moves (so a read-out setting that no move exchanges
  with the others is coloured apart);
* one node per probability coordinate p(a|s), joined to the outcome node of
  each party (its setting and its outcome there).

The automorphisms of this forest that respect the level colours are the
relabellings of outcomes per setting, of the free settings per party and the
exchanges of parties that play the same role, and each one moves the
coordinate nodes as the relabelling moves the coordinates.  Whether the
graph's group equals the group the *verified* model symmetries generate is
checked, not assumed: every verified generator must be an automorphism of the
graph, and nauty's group order must equal the order of the generated group
(Schreier–Sims, :mod:`sympy.combinatorics`).

A facet a·p <= b is drawn on the graph by colouring each coordinate node with
its coefficient in a canonical coefficient vector: the orthogonal projection
of a onto the direction space of aff(P) (a unique representative of the
facet up to a positive factor; the projection commutes with every coordinate
permutation that maps P onto itself, since such a permutation is orthogonal
and preserves the direction space), scaled to coprime integers.  Two facets
are in one class exactly when the two coloured graphs are isomorphic with the
colours in the same order, i.e. when their canonical certificates (and their
lists of coefficient values with multiplicities) agree.  Everything is
integer or combinatorial: no floating point decides a class.  The
automorphism group of a facet's coloured graph is its stabiliser; the orbit
size is |G| / |stabiliser|, with the stabiliser listed on the points (exact
order) for each class representative.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from .ints import PolytopeError, _lcm, primitive
from ..unionfind import DisjointSets


def has_nauty() -> bool:
    try:
        import pynauty  # noqa: F401
    except ImportError:
        return False
    return True


def permutation_group_order(perms: list[list[int]], degree: int) -> int:
    """The order of the group the permutations generate (Schreier–Sims, sympy), exactly."""
    from sympy.combinatorics import Permutation, PermutationGroup

    if not perms:
        return 1
    return int(PermutationGroup([Permutation(list(p), size=degree) for p in perms]).order())


@dataclass
class _Structure:
    n: int  # nodes
    adjacency: dict[int, list[int]]
    cells: list[set[int]]  # colours of the forest's nodes in a fixed order (levels, then orbits within a level)
    coord0: int  # the node of coordinate 0; coordinate i is node coord0 + i
    d: int


def scenario_graph(scenario) -> _Structure:
    """The forest party – setting – outcome with one node per probability coordinate (see the module docstring).

    The level colours here are party / setting / outcome; :class:`GraphClasses`
    refines them to the orbits of the verified group on the forest's nodes (so a
    read-out setting that no verified move exchanges is coloured apart).
    """
    parties, settings, outs = set(), set(), set()
    adj: dict[int, list[int]] = {}
    outcome_node: dict[tuple[int, str, str], int] = {}

    def node(kind: set, parent: int | None = None) -> int:
        """A new forest node of one kind, joined to its parent."""
        n = len(adj)
        kind.add(n)
        adj[n] = []
        if parent is not None:
            adj[parent].append(n)
        return n

    for i, p in enumerate(scenario.parties):
        pn = node(parties)
        for x in p.settings:
            sn = node(settings, pn)
            for a in p.outcomes:
                outcome_node[(i, x, a)] = node(outs, sn)
    coords = scenario.coordinates()
    nid = coord0 = len(adj)
    for s, a in coords:
        cn = nid
        nid += 1
        adj[cn] = [outcome_node[(i, s[i], a[i])] for i in range(len(s))]
    cells = [c for c in (parties, settings, outs) if c]
    return _Structure(nid, adj, cells, coord0, len(coords))


class GraphClasses:
    """Class keys, orbit sizes and stabilisers of facets under a relabelling group given by generators.

    *X*: the points in full probability coordinates (integers over one
    denominator, rows); *Gfull*: integer matrix k × d with the full-coordinate
    functional of a frame inequality a equal to a @ Gfull (up to a positive
    factor); *perms*: the verified generators as coordinate permutations
    (coordinate i goes to perms[g][i]).
    """

    def __init__(self, scenario, perms: list[list[int]], X: np.ndarray, Gfull: np.ndarray):
        import flint
        import pynauty

        self._nauty = pynauty
        self.st = scenario_graph(scenario)
        d = self.st.d
        self.perms = [list(map(int, p)) for p in perms]
        self._colour_by_orbits()
        g = pynauty.Graph(self.st.n, adjacency_dict=self.st.adjacency,
                          vertex_coloring=self.st.cells + [set(range(self.st.coord0, self.st.n))])
        gens, s1, s2, _, _ = pynauty.autgrp(g)
        graph_order = _order(s1, s2)
        self.order = permutation_group_order(self.perms, d)
        for p in self.perms:
            if not self._is_automorphism(p):
                raise PolytopeError("a verified symmetry is not an automorphism of the scenario's graph")
        if graph_order != self.order:
            raise PolytopeError(f"the scenario's graph has {graph_order} automorphisms, the verified symmetries "
                                f"generate {self.order}: the graph cannot decide the classes")
        self.graph_order = graph_order
        # the points, for stabilisers as permutations of the points
        self.X = np.asarray(X)
        self._row = {self._key(r): i for i, r in enumerate(self.X)}
        if len(self._row) != len(self.X):
            raise PolytopeError("repeated points")
        # orthogonal projection onto the direction space of aff(P), as an integer matrix over one denominator
        D0 = self.X[1:] - self.X[0]
        A = flint.fmpq_mat(flint.fmpz_mat(len(D0), d, [int(v) for r in D0 for v in r]))
        R, rank = A.rref()
        B = flint.fmpq_mat(rank, d, [R[i, j] for i in range(rank) for j in range(d)])
        Pq = B.transpose() * (B * B.transpose()).inv() * B
        den = _lcm(int(Pq[i, j].q) for i in range(d) for j in range(d))
        self.proj = np.array([[int(Pq[i, j] * den) for j in range(d)] for i in range(d)], dtype=object)
        self.Gfull = np.asarray(Gfull, dtype=object)

    def _forest_image(self, perm: list[int]) -> dict[int, int] | None:
        """The map of forest nodes a coordinate permutation induces, or None when it induces none."""
        st = self.st
        around: dict[int, set[int]] = {}
        for i in range(st.d):
            for u in st.adjacency[st.coord0 + i]:
                around.setdefault(u, set()).add(i)
        by_set = {frozenset(v): u for u, v in around.items()}
        image = {u: by_set.get(frozenset(perm[i] for i in v)) for u, v in around.items()}
        if None in image.values() or len(set(image.values())) != len(image):
            return None
        parent = {c: u for u in range(st.coord0) for c in st.adjacency[u]}
        level = image
        for _ in range(2):  # outcome -> setting, then setting -> party
            up: dict[int, int] = {}
            for u, v in level.items():
                if up.setdefault(parent[u], parent[v]) != parent[v]:
                    return None
            if len(set(up.values())) != len(up):
                return None
            image.update(up)
            level = up
        return image

    def _colour_by_orbits(self) -> None:
        """Refine the level colours to the orbits of the verified moves on the forest's nodes."""
        st = self.st
        sets = DisjointSets(st.coord0)
        for p in self.perms:
            image = self._forest_image(p)
            if image is None:
                raise PolytopeError("a verified symmetry does not move the scenario's forest")
            for u, v in image.items():
                sets.union(u, v)
        cells = []
        for cell in st.cells:
            orbits: dict[int, set[int]] = {}
            for u in cell:
                orbits.setdefault(sets.find(u), set()).add(u)
            cells += sorted(orbits.values(), key=min)
        st.cells = cells

    @staticmethod
    def _key(row) -> tuple:
        return tuple(int(v) for v in row)

    def _is_automorphism(self, perm: list[int]) -> bool:
        """The coordinate permutation extends to an automorphism of the coloured forest."""
        image = self._forest_image(perm)
        if image is None:
            return False
        colour = {v: i for i, cell in enumerate(self.st.cells) for v in cell}
        return all(colour[u] == colour[v] for u, v in image.items())

    def canonical_vector(self, a) -> tuple[int, ...]:
        """The facet's coefficients in full coordinates, projected onto the direction space, coprime integers."""
        return self.canonical_full(np.array([int(v) for v in a], dtype=object).dot(self.Gfull))

    def canonical_full(self, c) -> tuple[int, ...]:
        """:meth:`canonical_vector` for integer coefficients c over the probability coordinates."""
        v = self.proj.dot(np.array([int(x) for x in c], dtype=object))
        return primitive([int(x) for x in v])

    def key_full(self, c) -> tuple[bytes, int]:
        """:meth:`key` for integer coefficients c over the probability coordinates (c·p <= bound)."""
        return self._key_of(self.canonical_full(c))

    def _graph(self, vec):
        st = self.st
        cells: dict[int, set[int]] = {}
        for i, x in enumerate(vec):
            cells.setdefault(x, set()).add(st.coord0 + i)
        values = sorted(cells)
        g = self._nauty.Graph(st.n, adjacency_dict=st.adjacency,
                              vertex_coloring=st.cells + [cells[x] for x in values])
        return g, tuple((x, len(cells[x])) for x in values)

    def key(self, a) -> tuple[bytes, int]:
        """(class key, orbit size from nauty's stabiliser order) of the facet with frame coefficients *a*."""
        return self._key_of(self.canonical_vector(a))

    def _key_of(self, vec) -> tuple[bytes, int]:
        g, values = self._graph(vec)
        cert = self._nauty.certificate(g)
        _, s1, s2, _, _ = self._nauty.autgrp(g)
        stab = _order(s1, s2)
        if self.order % stab:
            raise PolytopeError("a stabiliser order does not divide the group order")
        return cert + repr(values).encode(), self.order // stab

    def stabiliser_points(self, a, limit: int = 200_000) -> np.ndarray:
        """The stabiliser of the facet as permutations of the points (listed by closure; exact order)."""
        return self._stabiliser(self.canonical_vector(a), limit)

    def stabiliser_points_full(self, c, limit: int = 200_000) -> np.ndarray:
        """:meth:`stabiliser_points` for integer coefficients c over the probability coordinates."""
        return self._stabiliser(self.canonical_full(c), limit)

    def _stabiliser(self, vec, limit: int) -> np.ndarray:
        g, _ = self._graph(vec)
        gens = self._nauty.autgrp(g)[0]
        st = self.st
        pp = []
        for gen in gens:
            perm = [gen[st.coord0 + i] - st.coord0 for i in range(st.d)]
            moved = np.empty_like(self.X)
            moved[:, np.array(perm, dtype=np.int64)] = self.X
            img = np.array([self._row.get(self._key(r), -1) for r in moved], dtype=np.int64)
            if np.any(img < 0):
                raise PolytopeError("a graph automorphism does not map the points onto themselves")
            pp.append(img)
        return closure(pp, len(self.X), limit)


def _order(s1: float, s2: int) -> int:
    """nauty's group size s1·10^s2 as an integer (exact for the sizes met here; checked by the callers)."""
    v = Fraction(s1) * 10**int(s2)
    r = round(v)
    if abs(v - r) > Fraction(1, 1000) * max(1, r):
        raise PolytopeError("nauty's group size is not an integer")
    return int(r)


def closure(gens: list[np.ndarray], n: int, limit: int = 200_000) -> np.ndarray:
    """Every element of the group the point permutations generate, breadth first (rows)."""
    ident = np.arange(n, dtype=np.int64)
    out = [ident]
    seen = {ident.tobytes()}
    frontier = [ident]
    while frontier:
        nxt = []
        for e in frontier:
            for s in gens:
                p = s[e]
                k = p.tobytes()
                if k not in seen:
                    seen.add(k)
                    if len(seen) > limit:
                        raise PolytopeError(f"stabiliser larger than {limit} elements")
                    out.append(p)
                    nxt.append(p)
        frontier = nxt
    return np.stack(out)
