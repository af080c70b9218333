"""The exact polytope of behaviours a bundle allows: vertices, affine hull, facets.

The set of observed behaviours of a bundle is the image P = O(Q) of the
model polytope Q = {q >= 0 : rows·q = rhs} under the observation map O
(:class:`nogo.model.LinearModel`).  P is described exactly, from the
compiled model alone, by an LP-oracle method:

1. **Points**: maximise directions over Q with HiGHS; the optimum's image is a
   point of P (a vertex for a generic direction).  Each point is made exact
   (rounded to small denominators) and *certified*: a rational q >= 0 with
   rows·q = rhs exactly and O q = the point.
2. **Affine hull**: the points span an affine space; every linear functional h
   vanishing on their differences is checked in both directions with the
   oracle.  A certified Farkas bound max h <= h·v0 and max -h <= -h·v0 proves
   the equation h·p = h·v0 on all of P; a point beyond it enlarges the span.
3. **Coordinates** (:class:`Frame`): an affine coordinate system of aff(P)
   taken greedily from a preferred list of functionals: Collins–Gisin
   marginals and joints when the bundle implies no-signalling (an exact
   check on aff(P)), correlators on request, plain probabilities p(a|s)
   otherwise.  In these coordinates P is full-dimensional.
4. **Vertices** from random directions, then the orbit of every vertex under
   the scenario's relabelling group (each image is tested for membership by
   the oracle and certified like any point; an image outside P means that
   move is no symmetry, and it is simply not added).
5. **Hull and oracle loop**: the exact convex hull of the points (cddlib
   through pycddlib 2.1, rational arithmetic; K. Fukuda and A. Prodon,
   "Double description method revisited", LNCS 1120, 91–111 (1996)).  Every
   hull facet a·y <= b is then asked of the oracle: a rational dual vector
   with rowsᵀy >= Oᵀa and rhs·y <= b (checked in exact integer arithmetic) shows
   the facet valid for P; otherwise the oracle returns a point of P beyond
   it, which is added, and the hull is recomputed.  When every facet is
   valid, hull = P.
6. **Facet check**: each facet is tight on a set of vertices of affine rank
   dim P - 1 (exact integer rank), so it is a facet and not a lower face.

The final description therefore rests only on exact checks: points with
rational witnesses in Q, facets with rational Farkas multipliers.  The LP
oracle and cddlib's hull only *find* them.

The oracle method is the classical "vertex discovery by optimisation"
approach to projections (e.g. C. N. Jones, E. C. Kerrigan, J. M. Maciejowski,
"Equality set projection", CUED/F-INFENG/TR.463 (2004); and the
"convex hull by oracle" of D. Avis and co.), here with exact certificates.

Every oracle call is a pure function of picklable inputs (the model and the
direction) and batches go through :func:`nogo.fanout.fan_out`.
"""

from __future__ import annotations

import hashlib
import itertools
import math
import time
from dataclasses import dataclass, field
from fractions import Fraction
from functools import reduce
from typing import Callable, Sequence

import flint
import numpy as np
import scipy.sparse as sp

from .fanout import fan_out
from .inequality import Coord, Inequality
from .model import LinearModel
from .scenario import Scenario

Point = tuple[Fraction, ...]  # a behaviour in full probability coordinates
Progress = Callable[[str, int, int | None], None]  # (stage, done, total)


class PolytopeError(RuntimeError):
    """An exact check failed where the method needs it to hold (a bug, not bad input)."""


# ---------------------------------------------------------------------------
# exact integer helpers
# ---------------------------------------------------------------------------
def _lcm(values) -> int:
    return reduce(lambda x, y: x * y // math.gcd(x, y), values, 1)


def primitive(ints: Sequence[int]) -> tuple[int, ...]:
    """Divide by the gcd (keeps the sign: a positive scaling of an inequality)."""
    g = reduce(math.gcd, (abs(int(v)) for v in ints), 0) or 1
    return tuple(int(v) // g for v in ints)


def _round_vector(x: np.ndarray, dens=(1, 2, 3, 4, 6, 8, 12, 24, 60, 120, 840, 2520, 27720)) -> tuple[np.ndarray, int] | None:
    """Integers X and a denominator D with X/D close to x (a guess, checked later)."""
    scale = max(1.0, float(np.max(np.abs(x))) if x.size else 1.0)
    for den in dens:
        y = x * den
        r = np.rint(y)
        if np.max(np.abs(y - r), initial=0.0) <= 1e-7 * scale * den:
            return r.astype(np.int64), den
    fr = [Fraction(float(v)).limit_denominator(10**6) if abs(v) > 1e-11 else Fraction(0) for v in x]
    den = _lcm(f.denominator for f in fr)
    if den > 10**12:
        return None
    return np.array([int(f * den) for f in fr], dtype=object), den


_SAFE = 2**62


def _int_matvec(M: sp.csr_matrix, absmax: int, v: np.ndarray) -> np.ndarray:
    """Exact M @ v for an integer sparse M and integer v (int64 when it cannot overflow)."""
    vmax = int(np.max(np.abs(v))) if v.size else 0
    width = int(np.max(np.diff(M.indptr))) if M.shape[0] else 0
    if v.dtype != object and absmax * vmax * max(width, 1) < _SAFE:
        return M @ v.astype(np.int64)
    out = np.zeros(M.shape[0], dtype=object)
    indptr, indices, data = M.indptr, M.indices, M.data
    for i in range(M.shape[0]):
        s = 0
        for k in range(indptr[i], indptr[i + 1]):
            s += int(data[k]) * int(v[indices[k]])
        out[i] = s
    return out


# ---------------------------------------------------------------------------
# the model as exact integer data, and a per-process LP oracle
# ---------------------------------------------------------------------------
def fingerprint(model: LinearModel) -> str:
    """A hash of everything that determines the model's set (rows, rhs, observation map)."""
    fp = model.extra.get("_fingerprint")
    if fp:
        return fp
    h = hashlib.sha256()
    h.update(repr(model.scenario.coordinates()).encode())
    for row, b in zip(model.rows, model.rhs):
        h.update(repr(sorted(row.items())).encode())
        h.update(repr(b).encode())
    for obs in model.observe:
        h.update(repr(sorted(obs.items())).encode())
    fp = h.hexdigest()
    model.extra["_fingerprint"] = fp
    return fp


@dataclass
class _Data:
    """Rows scaled to integers; O as integers over one denominator."""

    m: int
    n: int
    d: int
    A: sp.csr_matrix  # int64, m × n
    AT: sp.csr_matrix  # n × m
    amax: int
    b: np.ndarray  # int64 (object if large)
    O: sp.csr_matrix  # int64, d × n
    OT: sp.csr_matrix
    omax: int
    oden: int
    Of: sp.csr_matrix  # float O / oden


def _data_of(model: LinearModel) -> _Data:
    m, n = len(model.rows), len(model.columns)
    d = len(model.scenario.coordinates())
    ri, ci, vals, b = [], [], [], []
    for i, (row, rhs) in enumerate(zip(model.rows, model.rhs)):
        L = _lcm([v.denominator for v in row.values()] + [Fraction(rhs).denominator])
        for j, v in row.items():
            ri.append(i)
            ci.append(j)
            vals.append(int(v * L))
        b.append(int(Fraction(rhs) * L))
    A = sp.csr_matrix((np.array(vals, dtype=np.int64), (ri, ci)), shape=(m, n))
    oden = _lcm(w.denominator for obs in model.observe for w in obs.values())
    oi, oj, ov = [], [], []
    for j, obs in enumerate(model.observe):
        for i, w in obs.items():
            oi.append(i)
            oj.append(j)
            ov.append(int(w * oden))
    O = sp.csr_matrix((np.array(ov, dtype=np.int64), (oi, oj)), shape=(d, n))
    amax = int(np.max(np.abs(A.data))) if A.nnz else 1
    omax = int(np.max(np.abs(O.data))) if O.nnz else 1
    return _Data(m, n, d, A, A.T.tocsr(), amax, np.array(b, dtype=np.int64), O, O.T.tocsr(), omax, oden,
                 (O.astype(float) / oden).tocsr())


class _Oracle:
    """One HiGHS instance per model and process, re-used with new objectives (warm starts)."""

    def __init__(self, model: LinearModel):
        import highspy

        from .lp import new_highs

        self.model = model
        self.data = D = _data_of(model)
        self.hs = highspy
        self.h = self._build(D.A, D.b.astype(float))
        self.member = None  # built on first use: rows plus O q = p
        self.calls = 0

    def _build(self, A: sp.csr_matrix, rhs: np.ndarray):
        from .lp import new_highs

        hs = self.hs
        h = new_highs()
        lp = hs.HighsLp()
        m, n = A.shape
        lp.num_col_, lp.num_row_ = n, m
        lp.col_cost_ = np.zeros(n)
        lp.col_lower_ = np.zeros(n)
        lp.col_upper_ = np.full(n, hs.kHighsInf)
        lp.row_lower_, lp.row_upper_ = rhs.copy(), rhs.copy()
        Af = A.astype(float).tocsr()
        lp.a_matrix_.format_ = hs.MatrixFormat.kRowwise
        lp.a_matrix_.start_ = Af.indptr.astype(np.int32)
        lp.a_matrix_.index_ = Af.indices.astype(np.int32)
        lp.a_matrix_.value_ = Af.data
        lp.a_matrix_.num_col_, lp.a_matrix_.num_row_ = n, m
        lp.sense_ = hs.ObjSense.kMaximize
        h.passModel(lp)
        return h

    def maximise(self, cost: np.ndarray):
        """Float max cost·q: (status, value, x, row duals)."""
        self.calls += 1
        h = self.h
        n = self.data.n
        h.changeColsCost(n, np.arange(n, dtype=np.int32), np.asarray(cost, dtype=float))
        h.run()
        st = h.getModelStatus()
        if st != self.hs.HighsModelStatus.kOptimal:
            # a warm start can stall on a degenerate basis: retry from scratch once
            h.clearSolver()
            h.run()
            st = h.getModelStatus()
            if st != self.hs.HighsModelStatus.kOptimal:
                return h.modelStatusToString(st), None, None, None
        sol = h.getSolution()
        return "optimal", h.getInfo().objective_function_value, np.array(sol.col_value), np.array(sol.row_dual)

    def find_preimage(self, p: np.ndarray):
        """Float q >= 0 with rows·q = rhs and O q = p, or None."""
        self.calls += 1
        D = self.data
        if self.member is None:
            A2 = sp.vstack([D.A.astype(float), D.Of]).tocsr()
            rhs = np.concatenate([D.b.astype(float), np.zeros(D.d)])
            self.member = self._build(A2, rhs)
        h = self.member
        idx = np.arange(D.m, D.m + D.d, dtype=np.int32)
        h.changeRowsBounds(D.d, idx, p, p)
        h.run()
        if h.getModelStatus() != self.hs.HighsModelStatus.kOptimal:
            return None
        return np.array(h.getSolution().col_value)


_ORACLES: dict[str, _Oracle] = {}


def _oracle(model: LinearModel) -> _Oracle:
    key = fingerprint(model)
    o = _ORACLES.get(key)
    if o is None:
        if len(_ORACLES) > 8:
            _ORACLES.clear()
        o = _ORACLES[key] = _Oracle(model)
    return o


# ---------------------------------------------------------------------------
# exact answers from float ones
# ---------------------------------------------------------------------------
def _certify_point(o: _Oracle, x: np.ndarray) -> Point | None:
    """The exact behaviour of a rounded model point, if the rounding is a true point of Q."""
    D = o.data
    got = _round_vector(np.where(x > 1e-12, x, 0.0))
    if got is None:
        return None
    X, den = got
    if any(int(v) < 0 for v in X):
        return None
    lhs = _int_matvec(D.A, D.amax, X)
    if not all(int(l) == int(bi) * den for l, bi in zip(lhs, D.b)):
        return None
    p = _int_matvec(D.O, D.omax, X)
    scale = den * D.oden
    return tuple(Fraction(int(v), scale) for v in p)


def _exact_fallback(model: LinearModel, cost: list[Fraction]):
    from .exact import exact_optimum

    return exact_optimum(model, cost)


def _model_cost(o: _Oracle, c: Sequence[Fraction]) -> tuple[np.ndarray, int]:
    """Oᵀc as integers over one denominator: (vector, denominator)."""
    D = o.data
    cden = _lcm(Fraction(v).denominator for v in c)
    ci = np.array([int(Fraction(v) * cden) for v in c], dtype=object)
    if max((abs(int(v)) for v in ci), default=0) < 2**40:
        ci = ci.astype(np.int64)
    mc = _int_matvec(D.OT, D.omax, ci)
    return mc, cden * D.oden


def _certify_bound(o: _Oracle, c: Sequence[Fraction], beta: Fraction, duals: np.ndarray) -> Fraction | None:
    """Exact check of rounded duals: max c·O q <= rhs·y <= beta.  Returns rhs·y or None."""
    D = o.data
    mc, mden = _model_cost(o, c)
    for sign in (1, -1):
        got = _round_vector(sign * duals)
        if got is None:
            continue
        Y, yden = got
        # rows scaled to integers: A_int q = b_int; need A_intᵀ (Y/yden) >= mc/mden
        lhs = _int_matvec(D.AT, D.amax, Y)
        ok = True
        for l, r in zip(lhs, mc):
            if int(l) * mden < int(r) * yden:
                ok = False
                break
        if not ok:
            continue
        bound = Fraction(sum(int(y) * int(bi) for y, bi in zip(Y, D.b)), yden)
        if bound <= beta:
            return bound
    return None


@dataclass
class Answer:
    """One oracle answer, already exact."""

    valid: bool | None  # for bound questions: True (certified), False (a point beyond), None (not asked)
    point: Point | None  # a certified point of P (the optimum, or the preimage found)
    bound: Fraction | None  # certified upper bound when valid
    method: str = ""


def _ask_max(model: LinearModel, c: Sequence[Fraction], beta: Fraction | None, perturb: np.ndarray | None) -> Answer:
    """max c·p over P compared with beta, exactly.

    With ``beta`` None only a certified optimal point is wanted (vertex search).
    With ``perturb`` and a violated bound, a second solve along c + perturb
    returns a vertex beyond the bound rather than any optimal point.
    """
    o = _oracle(model)
    D = o.data
    cf = np.array([float(v) for v in c])
    mcost = D.Of.T @ cf
    status, value, x, duals = o.maximise(mcost)
    if status != "optimal":
        raise PolytopeError(f"the oracle LP ended with status '{status}'")
    if beta is not None and value <= float(beta) + 1e-7:
        bnd = _certify_bound(o, c, Fraction(beta), duals)
        if bnd is not None:
            return Answer(True, None, bnd, "rounded duals, checked exactly")
        cost = [sum((w * Fraction(c[i]) for i, w in obs.items()), Fraction(0)) for obs in model.observe]
        opt = _exact_fallback(model, cost)
        if opt.value <= beta:
            return Answer(True, None, opt.value, opt.method)
        pt = tuple(model.behaviour(opt.point).values())
        return Answer(False, pt, None, opt.method)
    if beta is not None and perturb is not None:
        status2, _, x2, _ = o.maximise(D.Of.T @ (cf + perturb))
        if status2 == "optimal":
            pt = _certify_point(o, x2)
            if pt is not None and sum((Fraction(ci) * pi for ci, pi in zip(c, pt)), Fraction(0)) > beta:
                return Answer(False, pt, None, "perturbed optimum, certified")
    pt = _certify_point(o, x)
    if pt is None:
        cost = [sum((w * Fraction(c[i]) for i, w in obs.items()), Fraction(0)) for obs in model.observe]
        opt = _exact_fallback(model, cost)
        pt = tuple(model.behaviour(opt.point).values())
    if beta is None:
        return Answer(None, pt, None, "optimum, certified")
    val = sum((Fraction(ci) * pi for ci, pi in zip(c, pt)), Fraction(0))
    if val > beta:
        return Answer(False, pt, None, "optimum, certified")
    # the float said "beyond" but the exact point is not: decide exactly
    cost = [sum((w * Fraction(c[i]) for i, w in obs.items()), Fraction(0)) for obs in model.observe]
    opt = _exact_fallback(model, cost)
    if opt.value <= beta:
        return Answer(True, None, opt.value, opt.method)
    return Answer(False, tuple(model.behaviour(opt.point).values()), None, opt.method)


def _ask_member(model: LinearModel, p: Point) -> Answer:
    o = _oracle(model)
    x = o.find_preimage(np.array([float(v) for v in p]))
    if x is None:
        return Answer(None, None, None, "no preimage found (float)")
    pt = _certify_point(o, x)
    if pt is None or pt != tuple(p):
        return Answer(None, None, None, "preimage not certified")
    return Answer(None, pt, None, "preimage, certified")


def oracle_batch(task: tuple) -> list[Answer]:
    """A pure batch of oracle questions, for :func:`nogo.fanout.fan_out`.

    ``task = (model, kind, items)``; kind "max": items are (c, beta, perturb);
    kind "member": items are points.
    """
    model, kind, items = task
    if kind == "max":
        return [_ask_max(model, c, beta, pert) for c, beta, pert in items]
    if kind == "member":
        return [_ask_member(model, p) for p in items]
    raise ValueError(kind)


# ---------------------------------------------------------------------------
# coordinates of the affine hull
# ---------------------------------------------------------------------------
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


def _qmat(rows: list[Sequence[Fraction]], ncols: int) -> flint.fmpq_mat:
    M = flint.fmpq_mat(len(rows), ncols)
    for i, r in enumerate(rows):
        for j, v in enumerate(r):
            if v:
                v = Fraction(v)
                M[i, j] = flint.fmpq(v.numerator, v.denominator)
    return M


def _zmat(rows: list[Sequence[int]], ncols: int) -> flint.fmpz_mat:
    return flint.fmpz_mat(len(rows), ncols, [int(v) for r in rows for v in r]) if rows else flint.fmpz_mat(0, ncols)


def _frac(q) -> Fraction:
    return Fraction(int(q.p), int(q.q))


def _integer_rows(points: list[Point]) -> list[list[int]]:
    """Each row scaled by its own positive denominator (same span, integers)."""
    out = []
    for r in points:
        L = _lcm(Fraction(v).denominator for v in r)
        out.append([int(Fraction(v) * L) for v in r])
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


# ---------------------------------------------------------------------------
# the result
# ---------------------------------------------------------------------------
@dataclass
class HullFacet:
    a: tuple[int, ...]  # coefficients over the frame's coordinates
    b: int
    verified: bool | None  # True: Farkas bound checked exactly; None: not yet asked (partial result)
    tight: int = 0  # number of vertices on it
    bound: Fraction | None = None  # the certified maximum (== b for a facet)
    method: str = ""


@dataclass
class Polytope:
    """The exact description of the behaviours a bundle allows."""

    scenario: Scenario
    label: str
    assumptions: tuple[str, ...]
    frame: Frame
    vertices: list[Point]  # full coordinates, each with a certified preimage in the model
    equations: list[tuple[tuple[int, ...], Fraction]]  # h·p = value on all of P (certified both ways)
    facets: list[HullFacet]
    status: str  # "complete" | "partial"
    stats: dict = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    fingerprint: str = ""

    @property
    def dim(self) -> int:
        return self.frame.dim

    def inequality(self, f: HullFacet, name: str = "") -> Inequality:
        from .inequality import Marginal

        coeffs = {c: v for c, v in zip(self.scenario.coordinates(), self.frame.full(f.a)) if v}
        marg = frozenset()
        if self.frame.kind != "probabilities":
            n = len(self.scenario.parties)
            marg = frozenset(Marginal(tuple(self.scenario.party_names[i] for i in sub))
                             for k in range(1, n) for sub in itertools.combinations(range(n), k))
        return Inequality(self.scenario, coeffs, Fraction(f.b), name, self.frame.text(f.a, f.b), "", marg)


def _coords_matrix(frame: Frame, points: list[Point]) -> tuple[np.ndarray, int]:
    """Frame coordinates of the points as integers over one denominator (object dtype)."""
    ys = [frame.coords_of(p) for p in points]
    den = _lcm(v.denominator for y in ys for v in y) if ys else 1
    Y = np.array([[int(v * den) for v in y] for y in ys], dtype=object).reshape(len(ys), frame.dim)
    return Y, den


def int_matmul(rows: list[Sequence[int]], Y: np.ndarray, k: int) -> np.ndarray:
    """Exact rows @ Yᵀ for integer data: int64 when no overflow is possible, else Python integers."""
    A = np.array(rows, dtype=object).reshape(len(rows), k)
    if not len(rows) or not len(Y):
        return np.zeros((len(rows), len(Y)), dtype=object)
    amax = max(abs(int(v)) for v in A.flat) if A.size else 0
    ymax = max(abs(int(v)) for v in Y.flat) if Y.size else 0
    if amax * ymax * max(k, 1) < _SAFE:
        return A.astype(np.int64) @ Y.astype(np.int64).T
    return A.dot(Y.T)


def _exact_hull(frame: Frame, points: list[Point]) -> list[tuple[tuple[int, ...], int]]:
    """Facets a·y <= b of conv(points) in frame coordinates, exactly (cddlib, rationals)."""
    import cdd

    rows = [[1] + frame.coords_of(p) for p in points]
    mat = cdd.Matrix(rows, number_type="fraction")
    mat.rep_type = cdd.RepType.GENERATOR
    poly = cdd.Polyhedron(mat)
    H = poly.get_inequalities()
    if len(H.lin_set):
        raise PolytopeError("the hull has equations in frame coordinates: the affine hull was not found")
    out = []
    for i in range(H.row_size):
        r = [Fraction(v) for v in H[i]]
        # row means r0 + r[1:]·y >= 0, i.e. -r[1:]·y <= r0
        vec = [-v for v in r[1:]] + [r[0]]
        L = _lcm(v.denominator for v in vec)
        ints = primitive([int(v * L) for v in vec])
        out.append((tuple(ints[:-1]), ints[-1]))
    return out


def hull_estimate(n_points: int, dim: int) -> str:
    """A rough word on how long the exact hull may take, from measured cases (one core).

    Measured here: 64 points in dimension 15, under a second; 96 points in
    dimension 15, about ten seconds; 64 points in dimension 26 (the
    three-party Bell polytope), about eight minutes.
    """
    if dim <= 12 or n_points <= dim + 20:
        return "seconds at most"
    if dim <= 16 and n_points <= 80:
        return "about a second"
    if dim <= 18 and n_points <= 150:
        return "seconds to a minute"
    return "minutes or more (64 points in dimension 26 took about 8 minutes on one core)"


def _hull_in(frame: Frame, hull_frame: Frame, points: list[Point]) -> list[tuple[tuple[int, ...], int]]:
    """Facets of conv(points) in *frame*, computed by cddlib in *hull_frame* (the same affine hull)."""
    if hull_frame is frame:
        return _exact_hull(frame, points)
    got = _exact_hull(hull_frame, points)
    return frame.reduce_many([hull_frame.full(a) for a, _ in got], [b for _, b in got])


def _apply_move(scenario: Scenario, move, p: Point) -> Point:
    coords = scenario.coordinates()
    index = {c: i for i, c in enumerate(coords)}
    out = [Fraction(0)] * len(coords)
    for c, v in zip(coords, p):
        out[index[move(c)]] = v
    return tuple(out)


def _perm_of(scenario: Scenario, move) -> list[int]:
    coords = scenario.coordinates()
    index = {c: i for i, c in enumerate(coords)}
    return [index[move(c)] for c in coords]


def derive_polytope(model: LinearModel, frame: str = "auto", *, moves: list | None = None, seed: int = 1,
                    time_limit: float | None = None, workers: int | None = None,
                    progress: Progress | None = None, chunk: int = 64) -> Polytope:
    """Derive the exact vertices and facets of the behaviours the model allows.

    Parameters
    ----------
    model : the compiled bundle (:func:`nogo.compile.compile_bundle`).
    frame : "auto" (Collins–Gisin when no-signalling holds on the set, else
        probabilities), "collins-gisin", "correlators" or "probabilities".
    moves : relabelling moves (coordinate maps, :func:`nogo.symmetry.generators`)
        used to propose vertices; each proposed point is certified before use.
    seed : seed of the random directions (the result does not depend on it).
    time_limit : seconds; when exceeded, a result with ``status="partial"``.
    workers : processes for the oracle batches (through :func:`fan_out`).
    progress : callback ``(stage, done, total)``.

    Returns
    -------
    :class:`Polytope`; with status "complete" every facet carries a verified
    Farkas bound and every vertex a certified preimage.

    Example
    -------
    >>> from nogo.theory import load_theory; from nogo.compile import compile_bundle
    >>> P = derive_polytope(compile_bundle(load_theory("theories/bell-2x2.yaml"), "Bell-local"))
    >>> len(P.facets), len(P.vertices)
    (24, 16)

    References: see the module docstring.
    """
    t_start = time.perf_counter()
    deadline = None if time_limit is None else t_start + time_limit
    sc = model.scenario
    d = len(sc.coordinates())
    rng = np.random.default_rng(seed)
    fp = fingerprint(model)
    stats: dict = {"oracle_calls": 0, "hull_rounds": 0, "times": {}}
    notes: list[str] = []
    report = progress or (lambda stage, done, total: None)

    def out_of_time() -> bool:
        return deadline is not None and time.perf_counter() > deadline

    def ask(kind: str, items: list) -> list[Answer]:
        if not items:
            return []
        stats["oracle_calls"] += len(items)
        chunks = [(model, kind, items[i:i + chunk]) for i in range(0, len(items), chunk)]
        res = fan_out(oracle_batch, chunks, workers)
        return [a for r in res for a in r]

    points: dict[Point, None] = {}

    def add(pts) -> int:
        new = 0
        for p in pts:
            if p is not None and p not in points:
                points[p] = None
                new += 1
        return new

    # 1. first points, from random directions in full coordinates
    t0 = time.perf_counter()
    first = [tuple(Fraction(int(v)) for v in rng.integers(-1000, 1001, size=d)) for _ in range(d + 8)]
    add(a.point for a in ask("max", [(c, None, None) for c in first]))
    report("points", len(points), None)

    # 2. the affine hull, proven by certified bounds in both directions on every equation
    while True:
        _, ann = affine_basis(list(points))
        v0 = next(iter(points))
        qs = []
        for h in ann:
            val = sum((Fraction(x) * y for x, y in zip(h, v0)), Fraction(0))
            qs.append((tuple(Fraction(x) for x in h), val, None))
            qs.append((tuple(Fraction(-x) for x in h), -val, None))
        answers = ask("max", qs)
        new = add(a.point for a in answers if a.valid is False)
        if not new:
            equations = [(tuple(h), sum((Fraction(x) * y for x, y in zip(h, v0)), Fraction(0))) for h in ann]
            break
    stats["times"]["affine hull"] = time.perf_counter() - t0

    # 3. coordinates
    kind = frame
    ns = all(sum((Fraction(x) * Fraction(y) for x, y in zip(f, p) if x), Fraction(0)) ==
             sum((Fraction(x) * Fraction(y) for x, y in zip(f, v0) if x), Fraction(0))
             for f in no_signalling_functionals(sc) for p in points)
    if frame == "auto":
        kind = "collins-gisin" if ns else "probabilities"
    elif frame in ("collins-gisin", "correlators") and not ns:
        from .errors import InputError

        raise InputError(f"bundle '{model.label}' does not imply no-signalling, so {frame} coordinates are not a "
                         "faithful description of its behaviours", hint="use the probabilities frame")
    if frame == "correlators" and any(len(p.outcomes) != 2 for p in sc.parties):
        from .errors import InputError

        raise InputError("correlator coordinates need two outcomes per party")
    fr = choose_frame(sc, list(points), kind)
    k = fr.dim
    # cddlib's insertion order follows the input coordinates; measured on the local-friendliness
    # polytope (96 points, dimension 15) plain probability coordinates make its hull about twice as
    # fast as Collins–Gisin ones, so the hull is taken there and its facets are carried over exactly
    hull_frame = fr if kind == "probabilities" else choose_frame(sc, list(points), "probabilities")
    notes.append(f"no-signalling holds on this set (exact check on its affine hull): {'yes' if ns else 'no'}")

    # 4. more vertices: random directions in frame coordinates until they stop finding new ones
    t0 = time.perf_counter()
    G = np.array([[float(v) for v in f.vector] for f in fr.functionals]).reshape(k, d)
    patience, stale, tries = max(40, 2 * k), 0, 0
    while stale < patience and tries < 50 * (k + 10) and not out_of_time():
        batch = []
        for _ in range(16):
            w = rng.normal(size=k)
            c = w @ G
            batch.append((tuple(Fraction(float(v)).limit_denominator(10**6) for v in c), None, None))
        got = ask("max", batch)
        tries += len(batch)
        new = add(a.point for a in got)
        stale = 0 if new else stale + len(batch)
        report("vertices", len(points), None)
    stats["random_directions"] = tries

    perms = [_perm_of(sc, mv) for mv in (moves or [])]

    def close_under_moves() -> None:
        if not perms:
            return
        frontier = list(points)
        tried: set[Point] = set()
        while frontier and not out_of_time():
            cands = []
            for p in frontier:
                for perm in perms:
                    q = [Fraction(0)] * d
                    for i, j in enumerate(perm):
                        q[j] = p[i]
                    q = tuple(q)
                    if q not in points and q not in tried:
                        tried.add(q)
                        cands.append(q)
            got = ask("member", cands)
            frontier = [a.point for a in got if a.point is not None and a.point not in points]
            add(frontier)
            report("vertices", len(points), None)

    close_under_moves()
    stats["times"]["vertices"] = time.perf_counter() - t0

    # 5. hull, then the oracle on every facet, until every facet is valid
    hull: list[tuple[tuple[int, ...], int]] = []
    verified: dict[tuple[tuple[int, ...], int], Answer] = {}
    status = "complete"
    t_hull = t_check = 0.0
    while True:
        if out_of_time():
            status = "partial"
            break
        t0 = time.perf_counter()
        report("hull", len(points), k)
        hull = _hull_in(fr, hull_frame, list(points))
        t_hull += time.perf_counter() - t0
        stats["hull_rounds"] += 1
        t0 = time.perf_counter()
        todo = [f for f in hull if f not in verified]
        new_points: list[Point] = []
        for start in range(0, len(todo), chunk * max(1, workers or 1)):
            if out_of_time():
                status = "partial"
                break
            part = todo[start:start + chunk * max(1, workers or 1)]
            qs = []
            for a, b in part:
                pert = (rng.normal(size=k) * 1e-4) @ G
                qs.append((tuple(fr.full(a)), Fraction(b), pert))
            for f, ans in zip(part, ask("max", qs)):
                if ans.valid:
                    verified[f] = ans
                else:
                    new_points.append(ans.point)
            report("facets checked", len(verified), len(hull))
        t_check += time.perf_counter() - t0
        if status == "partial":
            break
        if not add(new_points):
            if new_points:
                raise PolytopeError("the oracle returned a point beyond a facet that the hull already holds")
            break
        close_under_moves()
    stats["times"]["hull"] = t_hull
    stats["times"]["facet checks"] = t_check

    # 6. exact facet check: valid on every point, tight on dim-1 affinely independent vertices
    t0 = time.perf_counter()
    plist = list(points)
    Y, den = _coords_matrix(fr, plist)
    facets: list[HullFacet] = []
    tight_sets: list[list[int]] = []
    if hull:
        vals = int_matmul([a for a, _ in hull], Y, k)
        for i, (a, b) in enumerate(hull):
            row = vals[i]
            lim = b * den
            if any(v > lim for v in row):
                raise PolytopeError("a hull facet is violated by a certified point")
            tight = [j for j, v in enumerate(row) if v == lim]
            tight_sets.append(tight)
            ans = verified.get((a, b))
            facets.append(HullFacet(a, b, True if ans else None, len(tight), ans.bound if ans else None,
                                    ans.method if ans else ""))
        for f, tight in zip(facets, tight_sets):
            M = _zmat([[1] + [int(v) for v in Y[j]] for j in tight], k + 1)
            if M.rank() != k:
                raise PolytopeError("a hull inequality is not tight on a facet's worth of vertices")
        if status == "complete":
            for f in facets:
                if f.bound is not None and f.bound != f.b:
                    raise PolytopeError("a certified bound is below a facet's value at its vertices")
    # vertices: points where the tight facets have full rank
    vertices = plist
    if hull and status == "complete":
        on: list[list[int]] = [[] for _ in plist]
        for i, tight in enumerate(tight_sets):
            for j in tight:
                on[j].append(i)
        vertices = []
        for j, p in enumerate(plist):
            M = _zmat([list(hull[i][0]) for i in on[j]], k)
            if len(on[j]) >= k and M.rank() == k:
                vertices.append(p)
        if len(vertices) < len(plist):
            notes.append(f"{len(plist) - len(vertices)} certified points found on the way are not vertices")
    stats["times"]["exact facet check"] = time.perf_counter() - t0
    stats["times"]["total"] = time.perf_counter() - t_start
    stats["points"] = len(plist)
    if status == "partial":
        notes.append("time limit reached: the facet list is the hull of the vertices found so far; facets "
                     "marked unverified were not yet checked against the bundle")
    return Polytope(sc, model.label, model.assumptions, fr, vertices, equations, facets, status, stats, notes, fp)
