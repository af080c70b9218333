"""Facet classes by recursive adjacency decomposition on point sets, with a bank of faces up to the group.

For polytopes whose group is too large to list (two parties with four binary
settings: order 294,912), and whose facets hold most of the points (the
lifted positivity face has 192 of 256), the ridges of a class
representative are found by the same decomposition one level down, under
the stabiliser of that face, and so on (D. Bremner, M. Dutour Sikirić,
A. Schürmann, "Polyhedral representation conversion up to symmetries", CRM
Proceedings & LN 48, 45 (2009), arXiv:math/0702239, §3–4; T. Christof and
G. Reinelt, Int. J. Comput. Geom. Appl. 11, 423 (2001)).  What makes it
finish:

* **Faces as point sets, told apart by nauty.**  Every face is the set of
  points on it.  The points are drawn on the scenario's coloured forest
  (:mod:`.canon`) as nodes joined to the probability coordinates where they
  are 1; the automorphisms of that graph are the group (its order is
  checked against the verified one).  A face Φ, or a pair (Φ, R) of a face
  and one of its facets, is a colouring of the point nodes, and nauty
  (B. D. McKay, A. Piperno, J. Symbolic Comput. 60, 94 (2014)) gives the
  canonical form (equal exactly when some group element maps one onto the
  other) and the stabiliser (generators and exact order).
* **A bank of faces** keyed by the canonical form under the whole group: the
  facet list of a face is computed once per orbit of faces and mapped by the
  canonical labelling to every equivalent face met later (Bremner et al. §4.2).
* **Direct hulls for small faces**: a face with few points beyond a simplex
  (or a trivial stabiliser) takes one exact hull (cddlib, rationals).
* **Proven stopping rules** in every decomposition of a face of dimension e
  (Bremner et al. §3.2, from M. Balinski, Pacific J. Math. 11, 431 (1961)):
  the classes still unexpanded may be left when (a) their facets number
  fewer than e in all (the ridge graph is e-connected), or (b) all of their
  facets contain one common point v (the facets not containing v induce a
  connected subgraph of the ridge graph, and every facet containing v is
  adjacent to one that does not; proof in :func:`_skippable`).  At least one
  class must have been expanded.
* **Cheapest first**: classes are expanded in increasing number of points.

**Exploration** (opt-in, ``sample_above``): a face with more points beyond a
simplex than that is not decomposed; some of its facets are found by random
rays from its centroid (:func:`.adjacency.ray_facet`, an LP and exact checks)
and only those are rotated.  Every class found is still an exact facet, but
classes may be missing, so a run that sampled any face is not complete.  On
two parties with four binary settings, started from I4422 (Collins & Gisin,
J. Phys. A 37, 1775 (2004)), it meets all 175 classes of Zambrini Cruzeiro &
Gisin (Phys. Rev. A 99, 022104 (2019)) with three faces sampled.

Work is in the probability coordinates, where the points are 0/1 and every
group element is a permutation of the coordinates: a facet of a face is kept
as its point set with an integer inequality c·x <= β valid on the face and
tight exactly there, and a group element moves both.  Everything that
decides is exact: inequalities are integers (cddlib's rationals scaled, or
the exact gift wrap of :mod:`.adjacency`), classes are nauty's combinatorial
canonical forms.
"""

from __future__ import annotations

import time

import numpy as np

from .adjacency import OutOfTime, _hull_ints, _wrap_many, first_facet, ray_facet
from .ints import PolytopeError, _zmat, primitive

_LEAF_EXCESS = 14  # points beyond a simplex up to which a face takes one direct hull
_VERTEX_RULE_LIMIT = 20_000  # facets up to which the unexpanded orbits are listed to look for a common point


class PointGraph:
    """The scenario's coloured graph with one node per point; colourings of the points give faces' forms.

    The points X are rows of 0/1 over the probability coordinates; point i is
    joined to coordinate node j when X[i, j] = 1.  An automorphism of this graph
    permutes the coordinates and the points alike (a symmetry of conv(X)); the
    number of automorphisms must equal the verified group's order.
    """

    def __init__(self, structure, X: np.ndarray, order: int):
        import pynauty

        self._nauty = pynauty
        X = np.asarray(X)
        if np.any((X != 0) & (X != 1)):
            raise PolytopeError("the points are not 0/1 in probability coordinates: no point graph")
        self.X = X.astype(np.int64)
        self.N, self.d = X.shape
        self.c0, self.n0 = structure.coord0, structure.n
        adj = {u: list(v) for u, v in structure.adjacency.items()}
        for i, row in enumerate(self.X):
            adj[self.n0 + i] = [self.c0 + int(c) for c in np.flatnonzero(row)]
        self.base_cells = list(structure.cells) + [set(range(self.c0, self.n0))]
        self._graph = pynauty.Graph(self.n0 + self.N, adjacency_dict=adj,
                                    vertex_coloring=self.base_cells + [set(range(self.n0, self.n0 + self.N))])
        gens, order_ = self.stabiliser([np.ones(self.N, dtype=bool)])
        if order_ != order:
            raise PolytopeError(f"the point graph has {order_} automorphisms, the group {order}")
        self.order = order
        self.gens = gens

    def _g(self, masks: list[np.ndarray]):
        """The graph with the points coloured by the nested masks (first mask, then the rest of each next)."""
        cells = list(self.base_cells)
        rest = np.ones(self.N, dtype=bool)
        sizes = []
        for m in masks:
            part = m & rest
            rest &= ~m
            sizes.append(int(part.sum()))
            if sizes[-1]:
                cells.append(set((self.n0 + np.flatnonzero(part)).tolist()))
        if rest.any():
            cells.append(set((self.n0 + np.flatnonzero(rest)).tolist()))
        self._graph.set_vertex_coloring(cells)
        return self._graph, repr(sizes).encode()

    def _split(self, perm) -> tuple[np.ndarray, np.ndarray]:
        perm = np.asarray(perm, dtype=np.int64)
        return perm[self.n0:] - self.n0, perm[self.c0:self.n0] - self.c0

    def stabiliser(self, masks) -> tuple[list[tuple[np.ndarray, np.ndarray]], int]:
        """Generators (point permutation, coordinate permutation) and exact order of the elements fixing the masks."""
        from .canon import _order

        g, _ = self._g(masks)
        gens, s1, s2, _, _ = self._nauty.autgrp(g)
        return [self._split(gen) for gen in gens], _order(s1, s2)

    def canon(self, masks: list[np.ndarray]) -> tuple[bytes, np.ndarray, np.ndarray]:
        """(canonical key, point at each canonical position, coordinate at each canonical position)."""
        g, sizes = self._g(masks)
        lab = self._nauty.canon_label(g)
        pts, crd = self._split(lab)
        return self._nauty.certificate(g) + sizes, pts, crd

    def key(self, masks: list[np.ndarray]) -> bytes:
        g, sizes = self._g(masks)
        return self._nauty.certificate(g) + sizes


Facet = tuple  # (mask over all points, c over the coordinates, beta): c·x <= beta on the face, tight on the mask


def _image(f: Facet, pp: np.ndarray, cp: np.ndarray) -> Facet:
    """A facet moved by a group element (point i goes to pp[i], coordinate j to cp[j])."""
    m, c, beta = f
    img = np.zeros_like(m)
    img[pp[m]] = True
    c2 = np.empty_like(c)
    c2[cp] = c
    return img, c2, beta


def orbit(f: Facet, gens) -> list[Facet]:
    """Every image of a facet under the group the generators generate (breadth first, told apart by points)."""
    seen = {np.packbits(f[0]).tobytes()}
    out = [f]
    frontier = [f]
    while frontier:
        nxt = []
        for x in frontier:
            for pp, cp in gens:
                y = _image(x, pp, cp)
                k = np.packbits(y[0]).tobytes()
                if k not in seen:
                    seen.add(k)
                    out.append(y)
                    nxt.append(y)
        frontier = nxt
    return out


def _local(X: np.ndarray, idx: np.ndarray) -> tuple[np.ndarray, list[int]]:
    """The points idx in coordinates of their affine hull: pivot columns of the differences (injective there)."""
    import flint

    P = X[idx]
    D = P[1:] - P[0]
    if not len(D):
        return np.zeros((len(idx), 0), dtype=np.int64), []
    R, _, rank = flint.fmpz_mat(len(D), P.shape[1], [int(v) for v in D.ravel()]).rref()
    cols, r = [], 0
    for j in range(P.shape[1]):
        if r < rank and R[r, j] != 0:
            cols.append(j)
            r += 1
    return np.ascontiguousarray(P[:, cols]).astype(np.int64), cols


def plane(Z: np.ndarray, on: np.ndarray) -> tuple[list[int], int]:
    """An integer (a, b) with a·z = b on the rows *on* and a·z <= b on all of Z (rows *on* span a hyperplane)."""
    k = Z.shape[1]
    X, nullity = _zmat([[int(v) for v in t] + [-1] for t in Z[on]], k + 1).nullspace()
    if nullity != 1:
        raise PolytopeError("the points given do not span a hyperplane")
    v = primitive([int(X[i, 0]) for i in range(k + 1)])
    a, b = list(v[:-1]), v[-1]
    vals = Z @ np.array(a, dtype=np.int64) - b
    if np.all(vals <= 0):
        return a, b
    if np.all(vals >= 0):
        return [-x for x in a], -b
    raise PolytopeError("the hyperplane through the given points cuts the point set")


class FaceBank:
    """Facets of faces of conv(X), each face's list computed once per orbit of faces (see the module docstring)."""

    def __init__(self, graph: PointGraph, *, deadline: float | None = None,
                 leaf_excess: int = _LEAF_EXCESS, seed: int = 1, progress=None,
                 sample_above: int | None = None, rays: int = 60):
        self.graph = graph
        self.X = graph.X
        self.deadline = deadline
        self.leaf_excess = leaf_excess
        self.sample_above = sample_above  # exploration: faces with more points beyond a simplex are sampled
        self.rays = rays
        self.rng = np.random.default_rng(seed)
        self.progress = progress
        self.bank: dict[bytes, list[Facet]] = {}  # key -> facets over canonical positions
        self.stats = {"ridge hulls": 0, "recursive faces": 0, "wraps": 0, "bank hits": 0, "skipped orbits": 0,
                      "sampled faces": 0}
        self.sampled: set[bytes] = set()  # bank keys of the faces whose facets were sampled, not all found
        self.expansions: list[list[tuple[np.ndarray, np.ndarray]]] = []  # top level: (ridge, facet across it)
        self.unexpanded: list[np.ndarray] = []  # top level: classes whose face was sampled

    def _check_time(self) -> None:
        if self.deadline is not None and time.perf_counter() > self.deadline:
            raise OutOfTime()

    def facets(self, phi: np.ndarray) -> list[Facet]:
        """Every facet of conv(points in phi), with an inequality over the coordinates valid on phi."""
        key, pp, cp = self.graph.canon([phi])
        got = self.bank.get(key)
        if got is not None:
            self.stats["bank hits"] += 1
        else:
            self._check_time()
            # canonical position i holds point pp[i]: store the facets as seen from there
            n_sampled = self.stats["sampled faces"]
            got = [(m[pp], c[cp], beta) for m, c, beta in self._compute(phi)]
            self.bank[key] = got
            if self.stats["sampled faces"] > n_sampled:
                self.sampled.add(key)
        return [_image(f, pp, cp) for f in got]

    def _lift(self, a, cols) -> np.ndarray:
        c = np.zeros(self.graph.d, dtype=np.int64)
        c[cols] = np.asarray(a, dtype=np.int64)
        return c

    def _compute(self, phi: np.ndarray) -> list[Facet]:
        idx = np.flatnonzero(phi)
        Z, cols = _local(self.X, idx)
        e = Z.shape[1]
        if self.sample_above is not None and len(idx) - e > self.sample_above:
            self.stats["sampled faces"] += 1
            return self._sampled(idx, Z, cols)
        gens, order = self.graph.stabiliser([phi])
        if len(idx) - e <= max(1, self.leaf_excess) or order <= 2:  # simplices and small faces: one hull
            self.stats["ridge hulls"] += 1
            out = []
            for a, b in _hull_ints(Z):
                m = np.zeros(self.graph.N, dtype=bool)
                m[idx[Z @ np.array(a, dtype=np.int64) == b]] = True
                out.append((m, self._lift(a, cols), int(b)))
            return out
        self.stats["recursive faces"] += 1
        out = []
        for f, _ in self.decompose(phi, gens, order):
            out += orbit(f, gens)
        return out

    def _record(self, R, got, across) -> None:
        """Top level: the ridges of class R with the facets across them (masks, for :mod:`.closure`), or R as
        unexpanded when its face was sampled."""
        if self.graph.key([R]) in self.sampled:
            self.unexpanded.append(R)
            return
        self.expansions.append([(S, m) for (S, _, _), m in zip(got, across)])

    def _sampled(self, idx: np.ndarray, Z: np.ndarray, cols) -> list[Facet]:
        """Some facets of a large face: those that random rays from its centroid leave it through."""
        out: dict[bytes, Facet] = {}
        for _ in range(self.rays):
            self._check_time()
            a, b = ray_facet(Z, self.rng)
            m = np.zeros(self.graph.N, dtype=bool)
            m[idx[Z @ np.array(a, dtype=np.int64) == b]] = True
            out.setdefault(np.packbits(m).tobytes(), (m, self._lift(a, cols), int(b)))
        return list(out.values())

    def decompose(self, phi: np.ndarray, gens=None, order=None, start=None) -> list[tuple[Facet, int]]:
        """One facet of conv(phi) per orbit of its stabiliser, with the orbit's size.

        *start*: inequalities (c, beta) over the coordinates of facets to begin with.
        """
        g = self.graph
        idx = np.flatnonzero(phi)
        XP = self.X[idx]
        Z, cols = _local(self.X, idx)
        e = Z.shape[1]
        if gens is None:
            gens, order = g.stabiliser([phi])
        reps: dict[bytes, tuple[Facet, int]] = {}
        member: set[bytes] = set()
        open_: list[bytes] = []

        def add(c, beta) -> np.ndarray:
            """Keep the facet c·x <= beta of phi (a new class when its form is new); its point mask."""
            c = np.asarray(c, dtype=np.int64)
            vals = XP @ c
            if np.any(vals > beta):
                raise PolytopeError("gift wrapping gave an inequality that a point of the face violates")
            m = np.zeros(g.N, dtype=bool)
            m[idx[vals == beta]] = True
            packed = np.packbits(m).tobytes()
            if packed in member:
                return m
            member.add(packed)
            key = g.key([m, phi])
            if key not in reps:
                _, st = g.stabiliser([m, phi])
                if order % st:
                    raise PolytopeError("a stabiliser order does not divide the face's")
                reps[key] = ((m, c, int(beta)), order // st)
                open_.append(key)
            return m

        if start:
            for c, beta in start:
                add(c, beta)
        else:
            a, b = first_facet(Z, self.rng)
            add(self._lift(a, cols), b)
        if phi.all():
            self.reps = reps  # the top level's classes so far, kept for a partial result
        done = 0
        while open_:
            if done and _skippable([reps[q] for q in open_], e, gens):
                self.stats["skipped orbits"] += len(open_)
                break
            open_.sort(key=lambda q: -int(reps[q][0][0].sum()))
            q = open_.pop()  # fewest points first
            (R, h, B), _ = reps[q]
            self._check_time()
            got = self.facets(R)
            ridges = [(S_c, S_b) for _, S_c, S_b in got]
            self.stats["wraps"] += len(ridges)
            across = [add(c, beta) for c, beta in _wrap_many(XP, h, B, ridges, R[idx])]
            if phi.all():
                self._record(R, got, across)
            done += 1
            if self.progress is not None and phi.all():
                self.progress("classes closed", done, len(reps))
        return list(reps.values())


def _skippable(open_reps: list[tuple[Facet, int]], e: int, gens) -> bool:
    """Whether the classes not yet expanded may be left (a proven rule; at least one class is expanded).

    (a) Fewer than e facets in all: the ridge graph of an e-polytope is e-connected
    (Balinski 1961, applied to the polar), so the expanded facets, whose neighbours
    are all known, reach every facet without passing through the unexpanded ones.
    (b) All unexpanded facets contain a point v: let S be the facets not containing v.
    S induces a connected subgraph (polar: the vertices off a facet of a polytope
    induce a connected graph, by a linear functional that is smallest on that facet),
    and every facet containing v is adjacent to one in S (polar: a vertex of a facet
    has a neighbour off it).  An expanded facet has a neighbour in S, which is known
    and not unexpanded, so expanded; walking in S, every member of S is known and
    expanded; every facet containing v is adjacent to one of them, so known.
    Bremner, Dutour Sikirić, Schürmann (arXiv:math/0702239), §3.2.
    """
    total = sum(o for _, o in open_reps)
    if total < e:
        return True
    if total > _VERTEX_RULE_LIMIT:
        return False
    common = np.logical_and.reduce([f[0] for f, _ in open_reps])
    if not common.any():  # the representatives alone share no point
        return False
    for f, _ in open_reps:
        for m, _, _ in orbit(f, gens):
            common &= m
            if not common.any():
                return False
    return True
