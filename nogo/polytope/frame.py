"""Coordinates of the affine hull of a set of behaviours.

An affine coordinate system of aff(P) is taken greedily from a preferred
list of functionals: Collins–Gisin marginals and joints (D. Collins and
N. Gisin, J. Phys. A 37, 1775 (2004)) when the bundle implies
no-signalling (an exact check on aff(P)), correlators on request, plain
probabilities p(a|s) otherwise.  In these coordinates P is
full-dimensional, and every inequality valid on aff(P) has one primitive
integer form a·y <= b (exact rational linear algebra with python-flint).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from fractions import Fraction
from typing import Sequence

import numpy as np

from ..scenario import Scenario
from .ints import Point, PolytopeError, _frac, _integer_rows, _lcm, _qmat, _zmat, primitive

@dataclass
class Functional:
    """One coordinate: a linear functional of the behaviour, with its written name."""

    text: str  # in the trade's notation, parseable by nogo.inequality.parse_inequality
    latex: str
    vector: tuple[Fraction, ...]  # over scenario.coordinates()


def candidate_functionals(scenario: Scenario, kind: str) -> list[Functional]:
    """Preferred coordinates, in order.

    * ``collins-gisin``: for every non-empty set of parties, every choice of
      their settings and of their outcomes other than the last one, the
      marginal p_S(a|x) (expanded at the other parties' first settings);
      D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004).
    * ``correlators``: <A_x>, <A_x B_y>, ... for two-outcome parties.
    * ``probabilities``: every p(a|s).
    """
    coords = scenario.coordinates()
    index = {c: i for i, c in enumerate(coords)}
    d = len(coords)
    names = scenario.party_names
    out: list[Functional] = []
    if kind == "probabilities":
        for i, (s, a) in enumerate(coords):
            vec = [Fraction(0)] * d
            vec[i] = Fraction(1)
            out.append(Functional(f"p({' '.join(a)}|{' '.join(s)})",
                                  f"p({','.join(a)}|{','.join(s)})", tuple(vec)))
        return out
    n = len(scenario.parties)
    for size in range(1, n + 1):
        for subset in itertools.combinations(range(n), size):
            ps = [scenario.parties[i] for i in subset]
            for xs in itertools.product(*(p.settings for p in ps)):
                if kind == "correlators":
                    outs_iter = [None]
                else:
                    outs_iter = list(itertools.product(*(p.outcomes[:-1] for p in ps)))
                for outs in outs_iter:
                    vec = [Fraction(0)] * d
                    s_full = [p.settings[0] for p in scenario.parties]
                    for i, x in zip(subset, xs):
                        s_full[i] = x
                    for a in scenario.outcome_tuples():
                        if kind == "correlators":
                            w = Fraction(1)
                            for i in subset:
                                w *= 1 if a[i] == scenario.parties[i].outcomes[0] else -1
                        else:
                            w = Fraction(1) if all(a[i] == o for i, o in zip(subset, outs)) else Fraction(0)
                        if w:
                            vec[index[(tuple(s_full), a)]] += w
                    sub = "".join(names[i] for i in subset)
                    if kind == "correlators":
                        text = "<" + " ".join(f"{names[i]}{x}" for i, x in zip(subset, xs)) + ">"
                        latex = r"\langle " + " ".join(f"{names[i]}_{{{x}}}" for i, x in zip(subset, xs)) + r" \rangle"
                    elif size == n:
                        text = f"p({' '.join(outs)}|{' '.join(xs)})"
                        latex = f"p({','.join(outs)}|{','.join(xs)})"
                    else:
                        text = f"p_{sub}({' '.join(outs)}|{' '.join(xs)})"
                        latex = f"p_{{{sub}}}({','.join(outs)}|{','.join(xs)})"
                    out.append(Functional(text, latex, tuple(vec)))
    return out


def no_signalling_functionals(scenario: Scenario) -> list[tuple[Fraction, ...]]:
    """p_S(a|x, others at y) - p_S(a|x, others at their first settings), for all S, x, y, a."""
    coords = scenario.coordinates()
    index = {c: i for i, c in enumerate(coords)}
    d = len(coords)
    n = len(scenario.parties)
    out = []
    for size in range(1, n):
        for subset in itertools.combinations(range(n), size):
            others = [i for i in range(n) if i not in subset]
            for s in scenario.setting_tuples():
                base = list(s)
                for i in others:
                    base[i] = scenario.parties[i].settings[0]
                base = tuple(base)
                if base == s:
                    continue
                for outs in itertools.product(*(scenario.parties[i].outcomes for i in subset)):
                    vec = [Fraction(0)] * d
                    for a in scenario.outcome_tuples():
                        if all(a[i] == o for i, o in zip(subset, outs)):
                            vec[index[(s, a)]] += 1
                            vec[index[(base, a)]] -= 1
                    out.append(tuple(vec))
    return out



def affine_basis(points: list[Point]) -> tuple[list[list[Fraction]], list[list[int]]]:
    """(direction basis N as rows, annihilator basis H as integer rows) of aff(points)."""
    v0 = points[0]
    d = len(v0)
    diffs = [[Fraction(a) - Fraction(b) for a, b in zip(p, v0)] for p in points[1:]]
    if diffs:
        Z = _zmat(_integer_rows(diffs), d)
        R, _den, rank = Z.rref()
        basis = [[Fraction(int(R[i, j])) for j in range(d)] for i in range(rank)]
        X, nullity = Z.nullspace()
        ann = [primitive([int(X[i, j]) for i in range(d)]) for j in range(nullity)]
    else:
        basis = []
        ann = [tuple(1 if i == j else 0 for i in range(d)) for j in range(d)]
    return basis, [list(h) for h in ann]


@dataclass
class Frame:
    """Affine coordinates y = G p on aff(P), and the reduction of any functional to them."""

    kind: str  # "collins-gisin" | "correlators" | "probabilities"
    functionals: list[Functional]  # the k chosen coordinates
    base: Point  # a point of P
    T: list[list[Fraction]]  # d × k: λ = c T
    g0: list[Fraction]  # G · base

    @property
    def dim(self) -> int:
        return len(self.functionals)

    def coords_of(self, p: Sequence[Fraction]) -> list[Fraction]:
        return [sum((Fraction(g) * Fraction(x) for g, x in zip(f.vector, p) if g and x), Fraction(0))
                for f in self.functionals]

    def reduce(self, c: Sequence[Fraction], beta: Fraction) -> tuple[tuple[int, ...], int]:
        """c·p <= beta on aff(P) as a·y <= b with coprime integers (a, b)."""
        lam, b = self.reduce_raw(c, beta)
        vec = lam + [b]
        L = _lcm(v.denominator for v in vec)
        ints = primitive([int(v * L) for v in vec])
        return ints[:-1], ints[-1]

    def reduce_many(self, C: Sequence[Sequence], B: Sequence) -> list[tuple[tuple[int, ...], int]]:
        """:meth:`reduce` for many inequalities at once (exact, Python integers in numpy)."""
        if not len(C):
            return []
        if not hasattr(self, "_ints"):
            tden = _lcm(v.denominator for r in self.T for v in r)
            Ti = np.array([[int(v * tden) for v in r] for r in self.T], dtype=object).reshape(len(self.T), self.dim)
            xden = _lcm(Fraction(v).denominator for v in self.base)
            X0 = np.array([int(Fraction(v) * xden) for v in self.base], dtype=object)
            gden = _lcm(v.denominator for v in self.g0)
            G0 = np.array([int(v * gden) for v in self.g0], dtype=object)
            self._ints = (Ti, tden, X0, xden, G0, gden)
        Ti, tden, X0, xden, G0, gden = self._ints
        if isinstance(C, np.ndarray) and C.dtype.kind == "i" and all(Fraction(b).denominator == 1 for b in B):
            Ci = C.astype(object)
            Bi = np.array([int(b) for b in B], dtype=object)
        else:
            cden = [_lcm(Fraction(v).denominator for v in c) * Fraction(b).denominator for c, b in zip(C, B)]
            Ci = np.array([[int(Fraction(v) * m) for v in c] for c, m in zip(C, cden)], dtype=object)
            Bi = np.array([int(Fraction(b) * m) for b, m in zip(B, cden)], dtype=object)
        L = tden * xden * gden
        lam = Ci.dot(Ti)  # × 1/tden
        lamL = lam * (xden * gden)
        bL = Bi * L - Ci.dot(X0) * (tden * gden) + (lam.dot(G0) if self.dim else 0) * xden
        out = []
        for row, b in zip(lamL, bL):
            ints = primitive(list(row) + [b])
            out.append((tuple(ints[:-1]), ints[-1]))
        return out

    def reduce_raw(self, c: Sequence[Fraction], beta: Fraction) -> tuple[list[Fraction], Fraction]:
        """The unique (λ, b) with c·p - beta = λ·(G p) - b for every p in aff(P)."""
        k = self.dim
        lam = [Fraction(0)] * k
        for i, ci in enumerate(c):
            if ci:
                row = self.T[i]
                for j in range(k):
                    if row[j]:
                        lam[j] += Fraction(ci) * row[j]
        b = Fraction(beta) - sum((Fraction(ci) * x for ci, x in zip(c, self.base) if ci), Fraction(0)) \
            + sum((l * g for l, g in zip(lam, self.g0)), Fraction(0))
        return lam, b

    def full(self, a: Sequence[int]) -> list[Fraction]:
        """The full-coordinate functional Σ a_i g_i."""
        gint = getattr(self, "_gint", None)
        if gint is None:
            vecs = [f.vector for f in self.functionals]
            if all(Fraction(g).denominator == 1 for v in vecs for g in v):
                gint = np.array([[int(g) for g in v] for v in vecs], dtype=np.int64).reshape(self.dim, len(self.base))
            else:
                gint = False
            self._gint = gint
        if gint is not False and max((abs(int(v)) for v in a), default=0) < 2**40:
            return [Fraction(int(v)) for v in np.array([int(v) for v in a], dtype=np.int64) @ gint]
        d = len(self.base)
        out = [Fraction(0)] * d
        for ai, f in zip(a, self.functionals):
            if ai:
                for i, g in enumerate(f.vector):
                    if g:
                        out[i] += ai * g
        return out

    def text(self, a: Sequence[int], b: int, latex: bool = False, flip: bool = True) -> str:
        """The inequality a·y <= b written out (as '... >= ...' when that has fewer minus signs, if *flip*)."""
        neg = sum(1 for v in a if v < 0)
        if flip and 2 * neg > sum(1 for v in a if v):
            body = self._terms([-v for v in a], latex)
            op = r"\geq" if latex else ">="
            return f"{body} {op} {-b}"
        op = r"\leq" if latex else "<="
        return f"{self._terms(a, latex)} {op} {b}"

    def _terms(self, a: Sequence[int], latex: bool) -> str:
        parts = []
        for ai, f in zip(a, self.functionals):
            if not ai:
                continue
            sign = "-" if ai < 0 else "+"
            mag = "" if abs(ai) == 1 else f"{abs(ai)} "
            parts.append(f"{sign} {mag}{f.latex if latex else f.text}")
        s = " ".join(parts)
        if s.startswith("+ "):
            s = s[2:]
        elif s.startswith("- "):
            s = "-" + s[2:]
        return s or "0"


def choose_frame(scenario: Scenario, points: list[Point], kind: str) -> Frame:
    """Greedy affine coordinates for aff(points) from the preferred functionals of *kind*."""
    N, _ = affine_basis(points)
    k = len(N)
    d = len(points[0])
    cands = candidate_functionals(scenario, kind)
    chosen: list[Functional] = []
    rows: list[list[Fraction]] = []  # G N rows
    rank = 0
    for f in cands:
        gn = [sum((g * x for g, x in zip(f.vector, col) if g and x), Fraction(0)) for col in N]
        trial = rows + [gn]
        r = _qmat(trial, k).rank() if k else 0
        if r > rank:
            rows, rank = trial, r
            chosen.append(f)
            if rank == k:
                break
    if rank < k:
        raise PolytopeError(f"the {kind} coordinates do not span the affine hull (rank {rank} < {k})")
    if k:
        GN = _qmat(rows, k)  # k × k, rows = chosen functionals, cols = basis directions
        inv = GN.inv()
        Nm = _qmat(N, d)  # k × d
        Tm = Nm.transpose() * inv  # d × k: T = Nᵀ (G Nᵀ)^{-1}
        T = [[_frac(Tm[i, j]) for j in range(k)] for i in range(d)]
    else:
        T = [[] for _ in range(d)]
    base = points[0]
    g0 = [sum((Fraction(g) * Fraction(x) for g, x in zip(f.vector, base) if g and x), Fraction(0)) for f in chosen]
    return Frame(kind, chosen, base, T, g0)


