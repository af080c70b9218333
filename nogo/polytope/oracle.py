"""The LP oracle of a compiled model, with exact certificates.

The set of observed behaviours of a bundle is the image P = O(Q) of the
model polytope Q = {q >= 0 : rows·q = rhs} under the observation map O
(:class:`nogo.model.LinearModel`).  The oracle answers two questions, each
with exact evidence:

* **max c·p over P** (HiGHS, warm-started per process): a rounded dual y is
  checked exactly, rowsᵀy >= Oᵀc and rhs·y <= beta (a Farkas certificate of
  c·p <= beta), or the rounded optimum is checked to be a point of Q whose
  image lies beyond beta;
* **membership**: a rational q >= 0 with rows·q = rhs and O q = p.

Rounding to small denominators then checking exactly is the recipe of
DESIGN.md §3; when it fails, the exact simplex of :mod:`nogo.exact` decides.
This is the classical "vertex discovery by optimisation" approach to
projections (C. N. Jones, E. C. Kerrigan, J. M. Maciejowski, "Equality set
projection", CUED/F-INFENG/TR.463 (2004)), here with exact certificates.

Every oracle call is a pure function of picklable inputs (the model and the
question) and batches go through :func:`nogo.fanout.fan_out`.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from fractions import Fraction
from typing import Sequence

import numpy as np
import scipy.sparse as sp

from ..model import LinearModel
from .ints import Point, PolytopeError, _int_matvec, _lcm, _round_vector

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

        from ..lp import new_highs

        self.model = model
        self.data = D = _data_of(model)
        self.hs = highspy
        self.h = self._build(D.A, D.b.astype(float))
        self.member = None  # built on first use: rows plus O q = p
        self.last_certificate = None
        self.calls = 0

    def _build(self, A: sp.csr_matrix, rhs: np.ndarray):
        from ..lp import new_highs

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
_DATA: dict[str, _Data] = {}


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
    from ..exact import exact_optimum

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
            o.last_certificate = ([int(v) for v in Y], int(yden))
            return bound
    return None


def check_certificate(model: LinearModel, c: Sequence[Fraction], beta: Fraction, cert) -> bool:
    """Exact check of stored multipliers y = Y/den for c·p <= beta: rowsᵀy >= Oᵀc and rhs·y <= beta.

    Integer arithmetic throughout (rows scaled to integers, O over one denominator); no solver.
    """
    Y, yden = cert
    D = _DATA.get(fingerprint(model))
    if D is None:
        if len(_DATA) > 8:
            _DATA.clear()
        D = _DATA[fingerprint(model)] = _data_of(model)
    if len(Y) != D.m or int(yden) <= 0:
        return False
    Yv = np.array([int(v) for v in Y], dtype=object)
    if max((abs(int(v)) for v in Yv), default=0) < 2**40:
        Yv = Yv.astype(np.int64)
    cden = _lcm(Fraction(v).denominator for v in c)
    ci = np.array([int(Fraction(v) * cden) for v in c], dtype=object)
    if max((abs(int(v)) for v in ci), default=0) < 2**40:
        ci = ci.astype(np.int64)
    mc = _int_matvec(D.OT, D.omax, ci)
    mden = cden * D.oden
    lhs = _int_matvec(D.AT, D.amax, Yv)
    if any(int(l) * mden < int(r) * int(yden) for l, r in zip(lhs, mc)):
        return False
    return Fraction(sum(int(y) * int(bi) for y, bi in zip(Yv, D.b)), int(yden)) <= Fraction(beta)


@dataclass
class Answer:
    """One oracle answer, already exact."""

    valid: bool | None  # for bound questions: True (certified), False (a point beyond), None (not asked)
    point: Point | None  # a certified point of P (the optimum, or the preimage found)
    bound: Fraction | None  # certified upper bound when valid
    method: str = ""
    certificate: tuple | None = None  # (integer multipliers Y, denominator) of the model's rows, when kept


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
            return Answer(True, None, bnd, "rounded duals, checked exactly", o.last_certificate)
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

