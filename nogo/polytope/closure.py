"""Proof that a facet list is complete although some classes were never expanded: closure under adjacency.

An adjacency decomposition that leaves a class unexpanded (an exploration
that sampled its face, :mod:`.faces`) cannot conclude by Balinski's rules.
This module proves completeness from what was found, by the following
statement, one dimension lower at each step.

**Theorem.**  Let Φ be a polytope, C a set of facets of Φ closed under a group
K of symmetries of Φ, and E ⊆ C such that for every F in E every ridge of F
is known with the facet across it, and that facet is in C.  If every F in
U = C \\ E satisfies

    (★) the facets of F are exactly the sets F ∩ G, G in C, of dimension dim F - 1,

then C holds every facet of Φ.

*Proof.*  Suppose a facet M of Φ is not in C.  The ridge graph of Φ is
connected (Balinski 1961, on the polar), so some missing M is adjacent to
some F in C across a ridge R = F ∩ M.  F is not in E: the facet across R
would be known and in C.  So F is in U and by (★) R = F ∩ G with G in C;
but the two facets of Φ through a ridge are F and M, so G = M, which is not
in C.  ∎

Condition (★) is the theorem itself for Φ := F, C := {F ∩ G} and the group of
elements of K that fix F (under which that set is closed): a facet of F whose
face is small is expanded by one exact hull (every facet of it, rotated
inside F by exact gift wrapping, must land in the set), a large one is
checked one level down again.  At the top, K is the whole verified group, so
C_F may be closed under all of Stab(F): an image g·(F ∩ G) is F ∩ g·G.

Everything that decides is exact: point sets, exact affine ranks (FLINT),
integer gift wrapping, nauty's canonical forms for classes.  The method is
the adjacency decomposition read backwards (D. Bremner, M. Dutour Sikirić,
A. Schürmann, arXiv:math/0702239, §3): instead of finding the facets of a
large face, it checks that the facets already met close up.
"""

from __future__ import annotations

import numpy as np

from .adjacency import _wrap_many, affine_rank
from .faces import _local, orbit, plane


class NotClosed(Exception):
    """A facet was met that the candidate set lacks: the list found is not complete.

    ``facet``: (mask, c, β) of that facet, over the coordinates; raised from a face it is a facet of that
    face, and each level up rotates it to the facet of the parent across it (the other facet of the parent
    through it, also missing), so that :meth:`ClosureProof.prove` raises it as a new facet of the polytope.
    """

    def __init__(self, message: str, facet=None):
        super().__init__(message)
        self.facet = facet


def _packed(m: np.ndarray) -> bytes:
    return np.packbits(m).tobytes()


def _orbit_masks(m: np.ndarray, gens) -> list[np.ndarray]:
    """Every image of a point set under the group the generators generate (:func:`.faces.orbit` on masks)."""
    return [f[0] for f in orbit((m, np.zeros(len(gens[0][1]) if gens else 0, dtype=np.int64), 0), gens)]


def _on_face(X, idx, Z, cols, R) -> tuple[np.ndarray, int]:
    """An integer c·x <= b over the coordinates, valid on the face's points idx and tight exactly on R."""
    a, b = plane(Z, R[idx])
    c = np.zeros(X.shape[1], dtype=np.int64)
    c[cols] = np.asarray(a, dtype=np.int64)
    return c, int(b)


class ClosureProof:
    """Checks condition (★) for the unexpanded classes of a :class:`.faces.FaceBank` exploration.

    ``expansions``: for each expanded class, pairs (ridge, facet across it) as point masks.
    ``leaf_excess``: faces with at most this many points beyond a simplex are expanded by one hull.
    """

    def __init__(self, bank, expansions: list[list[tuple[np.ndarray, np.ndarray]]], leaf_excess: int):
        self.bank = bank
        self.graph = bank.graph
        self.X = bank.X
        self.expansions = expansions
        self.leaf_excess = leaf_excess
        self.stats = {"faces checked": 0, "faces expanded": 0, "deepest level": 0}

    # -- the top level --------------------------------------------------------
    def prove(self, unexpanded: list[np.ndarray], full_gens) -> None:
        """Raise :class:`NotClosed` unless every unexpanded class satisfies (★)."""
        every = np.ones(len(self.X), dtype=bool)
        for F in unexpanded:
            C = self._top_candidates(F, unexpanded, full_gens)
            try:
                self._check(F, C, [F], 1)
            except NotClosed as err:
                raise NotClosed(str(err), self._up(every, F, err.facet)) from None

    def _top_candidates(self, F, unexpanded, full_gens) -> dict[bytes, np.ndarray]:
        g = self.graph
        e = affine_rank(self.X[F])  # dim F
        keyF = g.key([F])
        _, ppF, _ = g.canon([F])
        C: dict[bytes, np.ndarray] = {}
        keys: dict[bytes, bytes] = {}
        for pairs in self.expansions:  # ridges that expanded classes share with a member of F's class
            for R, N in pairs:
                kN = _packed(N)
                if kN not in keys:
                    keys[kN] = g.key([N])
                if keys[kN] != keyF:
                    continue
                _, ppN, _ = g.canon([N])
                img = np.zeros_like(R)
                img[ppF] = R[ppN]
                C.setdefault(_packed(img), img)
        for F2 in unexpanded:  # ridges between two unexpanded classes: intersect with every member
            for M in _orbit_masks(F2, full_gens):
                self._add_if_facet(C, F & M, e - 1)
        gens, _ = g.stabiliser([F])
        return self._closed(C, gens)

    # -- one face -------------------------------------------------------------
    def _add_if_facet(self, C: dict, inter: np.ndarray, dim: int) -> None:
        if int(inter.sum()) > dim and _packed(inter) not in C and affine_rank(self.X[inter]) == dim:
            C[_packed(inter)] = inter

    def _closed(self, C: dict, gens) -> dict[bytes, np.ndarray]:
        out = dict(C)
        for m in list(C.values()):
            for y in _orbit_masks(m, gens):
                out.setdefault(_packed(y), y)
        return out

    def _check(self, phi: np.ndarray, C: dict[bytes, np.ndarray], chain: list[np.ndarray], level: int) -> None:
        """(★) for face *phi*: *C* (closed under the chain's stabiliser) is every facet of phi."""
        self.bank._check_time()
        self.stats["faces checked"] += 1
        self.stats["deepest level"] = max(self.stats["deepest level"], level)
        g = self.graph
        idx = np.flatnonzero(phi)
        Z, cols = _local(self.X, idx)
        e = Z.shape[1]
        masks = list(reversed(chain))  # innermost first: the stabiliser fixes every face of the chain
        gens, _ = g.stabiliser(masks)
        pool = dict(C)
        Cmat = np.array(list(C.values()))
        while pool:
            _, R = pool.popitem()
            for y in _orbit_masks(R, gens):
                pool.pop(_packed(y), None)
            c, b = _on_face(self.X, idx, Z, cols, R)
            if int(R.sum()) - (e - 1) <= self.leaf_excess:
                self._expand(phi, idx, R, c, b, C)
            else:
                sub: dict[bytes, np.ndarray] = {}
                for inter in np.unique(Cmat & R, axis=0):
                    self._add_if_facet(sub, inter, e - 2)
                sub.pop(_packed(R), None)
                try:
                    self._check(R, sub, chain + [R], level + 1)
                except NotClosed as err:
                    raise NotClosed(str(err), self._up(phi, R, err.facet)) from None

    def _up(self, phi: np.ndarray, R: np.ndarray, facet):
        """The facet of phi across a facet of its facet R (gift wrapping inside phi), as (mask, c, β)."""
        idx = np.flatnonzero(phi)
        Z, cols = _local(self.X, idx)
        c, b = _on_face(self.X, idx, Z, cols, R)
        XP = self.X[idx]
        (c2, b2), = _wrap_many(XP, c, b, [(facet[1], facet[2])], R[idx])
        m = np.zeros(len(self.X), dtype=bool)
        m[idx[XP @ np.asarray(c2, dtype=np.int64) == b2]] = True
        return m, np.asarray(c2, dtype=np.int64), int(b2)

    def _expand(self, phi, idx, R, c, b, C) -> None:
        """Every facet of the small face R, rotated inside phi, must be a member of C."""
        self.bank._check_time()
        self.stats["faces expanded"] += 1
        XP = self.X[idx]
        ridges = [(S_c, S_b) for _, S_c, S_b in self.bank.facets(R)]
        for c2, b2 in _wrap_many(XP, c, b, ridges, R[idx]):
            m = np.zeros(len(self.X), dtype=bool)
            m[idx[XP @ np.asarray(c2, dtype=np.int64) == b2]] = True
            if _packed(m) not in C:
                raise NotClosed(f"a facet of a face with {int(phi.sum())} points is not among the candidates",
                                (m, np.asarray(c2, dtype=np.int64), int(b2)))
