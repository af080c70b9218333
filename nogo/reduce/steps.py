"""The zero, fixed and same steps: columns forced to 0, fixed to a value, or equal to another."""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from ..intarith import ExactVector, as_int, lcm_all, matvec, mul
from ..model import LinearModel, ModelArrays
from .base import (MergedColumns, Step, Subset, _derived, _float_dot, _rows_equal, _transpose, hash_weights,
                   reduced_cost_numerators)


@dataclass
class ZeroStep(Step):
    kept_cols: np.ndarray = None
    kept_rows: np.ndarray = None
    zero_rows: np.ndarray = None

    def lift_point(self, x):
        n = len(self.before.columns)
        out = np.zeros(n, dtype=x.num.dtype)
        out[self.kept_cols] = x.num
        return ExactVector(out, x.den)

    def reduce_cost(self, cost):
        return ExactVector(cost.num[self.kept_cols], cost.den)

    def lift_duals(self, y, cost):
        a = self.before.arrays
        m_before = a.A.shape[0]
        yb = np.zeros(m_before, dtype=object if y.num.dtype == object else np.int64)
        yb[self.kept_rows] = y.num
        yk = ExactVector(yb, y.den)
        T, G = reduced_cost_numerators(self.before, cost, yk)
        mult: dict[int, Fraction] = {}
        A = a.A
        kept = np.zeros(A.shape[1], dtype=bool)
        kept[self.kept_cols] = True
        need = np.flatnonzero(~kept)
        At = _transpose(self.before)
        zero_set = set(self.zero_rows.tolist())
        for j in need.tolist():
            t = int(T[j])
            if t >= 0:
                continue
            rows = At.indices[At.indptr[j]:At.indptr[j + 1]]
            vals = At.data[At.indptr[j]:At.indptr[j + 1]]
            for i, aij in zip(rows.tolist(), vals.tolist()):
                if i in zero_set:
                    # (aij / den_i) * y_i >= -t / G
                    want = Fraction(-t * int(a.row_den[i]), G * int(aij))
                    cur = mult.get(i, Fraction(0))
                    mult[i] = max(cur, want) if aij > 0 else min(cur, want)
                    break
        if not mult:
            return yk
        D = lcm_all({f.denominator for f in mult.values()} | {y.den})
        num = mul(yb, D // y.den).astype(object)
        for i, f in mult.items():
            num[i] = f.numerator * (D // f.denominator)
        return ExactVector(as_int(num), D)


def _zero(model: LinearModel) -> ZeroStep | None:
    a = model.arrays
    A = a.A
    m, n = A.shape
    nnz = A.row_nnz()
    rid = A.row_ids()
    pos = np.bincount(rid[A.data > 0], minlength=m)
    neg = np.bincount(rid[A.data < 0], minlength=m)
    zr = np.flatnonzero((a.rhs_num == 0) & (nnz > 0) & ((pos == 0) | (neg == 0)))
    if len(zr) == 0:
        return None
    dead = np.zeros(n, dtype=bool)
    dead[A.take_rows(zr).indices] = True
    kept_cols = np.flatnonzero(~dead)
    is_zero = np.zeros(m, dtype=bool)
    is_zero[zr] = True
    rest = np.flatnonzero(~is_zero)
    B = A.take_rows(rest).take_cols(kept_cols)
    rn = a.rhs_num[rest]
    keep = ~((B.row_nnz() == 0) & (rn == 0))
    kept_rows = rest[keep]
    B = B.take_rows(np.flatnonzero(keep))
    arrays = ModelArrays(B, a.row_den[kept_rows], a.rhs_num[kept_rows], a.rhs_den[kept_rows],
                         a.O.take_rows(kept_cols), a.obs_den)
    summary = (f"zero: {int(dead.sum())} columns forced to 0 by {len(zr)} rows with entries of one sign "
               f"and right side 0 ({n} -> {len(kept_cols)} columns)")
    after = _derived(model, arrays, Subset(model.columns, kept_cols), Subset(model.sources, kept_rows),
                     summary)
    return ZeroStep("zero", summary, model, after, kept_cols=kept_cols, kept_rows=kept_rows, zero_rows=zr)


@dataclass
class FixedStep(Step):
    kept_cols: np.ndarray = None
    kept_rows: np.ndarray = None
    fixed_cols: np.ndarray = None  # columns fixed by a row with one entry ...
    fixing_rows: np.ndarray = None  # ... this row (one per fixed column)
    values: ExactVector = None  # ... to these values

    def lift_point(self, x):
        n = len(self.before.columns)
        D = x.den * self.values.den // math.gcd(x.den, self.values.den)
        out = np.zeros(n, dtype=object)
        out[self.kept_cols] = mul(x.num, D // x.den)
        out[self.fixed_cols] = mul(self.values.num, D // self.values.den)
        return ExactVector(as_int(out), D)

    def reduce_cost(self, cost):
        return ExactVector(cost.num[self.kept_cols], cost.den)  # the fixed columns add a constant

    def lift_duals(self, y, cost):
        """The fixing row of column j gets the multiplier that makes j's reduced cost 0 (w = −t_j·den / a)."""
        a = self.before.arrays
        yb = np.zeros(a.shape[0], dtype=object if y.num.dtype == object else np.int64)
        yb[self.kept_rows] = y.num
        yk = ExactVector(yb, y.den)
        T, G = reduced_cost_numerators(self.before, cost, yk)  # over G
        t = T[self.fixed_cols].astype(object)
        p0 = a.A.indptr[self.fixing_rows]
        coef = a.A.data[p0].astype(object)
        den = np.asarray(a.row_den)[self.fixing_rows].astype(object)
        w_num, w_den = -t * den, coef * G  # w = w_num / w_den, exactly
        sign = np.where(w_den < 0, -1, 1).astype(object)
        w_num, w_den = w_num * sign, w_den * sign
        D = lcm_all(set(w_den.tolist()) | {y.den})
        num = mul(yb, D // y.den).astype(object)
        num[self.fixing_rows] = w_num * (D // w_den)
        return ExactVector(as_int(num), D)


def _fixed(model: LinearModel) -> FixedStep | None:
    """Rows with one entry and a non-zero right side fix their column: it leaves, the other rows' sides move."""
    a = model.arrays
    A = a.A
    m, n = A.shape
    single = np.flatnonzero((A.row_nnz() == 1) & (a.rhs_num != 0))
    if len(single) == 0:
        return None
    p0 = A.indptr[single]
    col = A.indices[p0]
    # value = rhs * den / entry; a negative value means no point at all: left for the LP to report
    num = a.rhs_num[single].astype(object) * np.asarray(a.row_den)[single].astype(object)
    dd = a.rhs_den[single].astype(object) * A.data[p0].astype(object)
    ok = (num * dd) > 0
    col, single, num, dd = col[ok], single[ok], num[ok], dd[ok]
    order = np.argsort(col, kind="stable")  # one fixing row per column: its first
    lead = np.ones(len(order), dtype=bool)
    lead[1:] = col[order][1:] != col[order][:-1]
    first = order[lead]
    col = col[first]
    if len(col) == 0:
        return None
    single = single[first]
    vals = ExactVector.from_fractions([Fraction(int(p), int(q)) for p, q in zip(num[first], dd[first])])
    is_fixed = np.zeros(n, dtype=bool)
    is_fixed[col] = True
    kept_cols = np.flatnonzero(~is_fixed)
    # new right sides: rhs_i − (A[i, fixed] · v) / den_i, exactly, for the rows that meet a fixed column
    Vfull = np.zeros(n, dtype=object)
    Vfull[col] = vals.num
    AV = matvec(A, as_int(Vfull))  # over vals.den
    is_single = np.zeros(m, dtype=bool)
    is_single[single] = True
    rest = np.flatnonzero(~is_single)
    B = A.take_rows(rest).take_cols(kept_cols)
    rn, rd = a.rhs_num[rest].astype(object), a.rhs_den[rest].astype(object)
    den = np.asarray(a.row_den)[rest].astype(object)
    av = AV[rest].astype(object)
    new_n = rn * den * vals.den - rd * av
    new_d = rd * den * vals.den
    g = np.array([math.gcd(int(x), int(y)) for x, y in zip(new_n, new_d)], dtype=object)
    new_n, new_d = new_n // g, new_d // g
    keep = ~((B.row_nnz() == 0) & (new_n == 0))  # 0 = 0
    kept_rows = rest[keep]
    B = B.take_rows(np.flatnonzero(keep))
    arrays = ModelArrays(B, as_int(np.asarray(a.row_den)[kept_rows]), as_int(new_n[keep]), as_int(new_d[keep]),
                         a.O.take_rows(kept_cols), a.obs_den)
    summary = (f"fixed: {len(col)} columns fixed to non-zero values by rows with one entry "
               f"({n} -> {len(kept_cols)} columns, {m} -> {len(kept_rows)} rows)")
    after = _derived(model, arrays, Subset(model.columns, kept_cols), Subset(model.sources, kept_rows), summary)
    return FixedStep("fixed", summary, model, after, kept_cols=kept_cols, kept_rows=kept_rows, fixed_cols=col,
                     fixing_rows=single, values=vals)


@dataclass
class SameStep(Step):
    """Columns with the same entries in every row and the same observation: one stands for all of them."""

    first: np.ndarray = None  # the member kept for each class (its first)

    def lift_point(self, x):
        out = np.zeros(len(self.before.columns), dtype=x.num.dtype)
        out[self.first] = x.num  # the class's weight on its first member: the same rows, the same behaviour
        return ExactVector(out, x.den)

    def reduce_cost(self, cost):
        return ExactVector(cost.num[self.first], cost.den)

    def lift_duals(self, y, cost):
        return y  # the same rows; each member's reduced cost is its first member's (same column, same cost)


def _same(model: LinearModel) -> SameStep | None:
    """Group the columns equal in A and in the observation map (a hash, then an exact comparison)."""
    a = model.arrays
    n = a.shape[1]
    if n < 2:
        return None
    AT, O = model.transposed(), a.O
    # fixed pseudo-random weights (numpy.random costs 20 ms to import): a hash only, equality is confirmed exactly
    h0 = _float_dot(AT, hash_weights(a.shape[0], 0)) + _float_dot(O, hash_weights(O.shape[1], 2))
    s0 = np.sort(h0)
    if not bool(np.any(s0[1:] == s0[:-1])):
        return None  # every column's hash differs: no two columns are equal (the common case, one pass)
    h1 = _float_dot(AT, hash_weights(a.shape[0], 1)) + _float_dot(O, hash_weights(O.shape[1], 3))
    na, no = AT.row_nnz(), O.row_nnz()
    order = np.lexsort((np.arange(n), no, na, h1, h0))
    k0, k1, ka, ko = h0[order], h1[order], na[order], no[order]
    same = np.zeros(n, dtype=bool)
    same[1:] = (k0[1:] == k0[:-1]) & (k1[1:] == k1[:-1]) & (ka[1:] == ka[:-1]) & (ko[1:] == ko[:-1])
    if not same.any():
        return None
    rep = order.copy()  # representative (first member) of each column
    head = np.maximum.accumulate(np.where(same, 0, np.arange(n)))
    pos = np.flatnonzero(same)
    j, r = order[pos], order[head[pos]]
    eq = _rows_equal(AT, j, r) & _rows_equal(O, j, r)
    rep[pos[eq]] = r[eq]  # a hash collision keeps its own column
    rep_of = np.empty(n, dtype=np.int64)
    rep_of[order] = rep
    first = np.flatnonzero(rep_of == np.arange(n))
    if len(first) == n:
        return None
    cls = np.searchsorted(first, rep_of)
    size = np.bincount(cls, minlength=len(first))
    arrays = ModelArrays(a.A.take_cols(first), a.row_den, a.rhs_num, a.rhs_den, a.O.take_rows(first), a.obs_den)
    summary = (f"same: {n - len(first)} columns equal to another in every row and in the observed behaviour "
               f"({n} -> {len(first)} columns)")
    cols = MergedColumns(model.columns, model.scenario, first, size,
                         "column(s) with the same entries and behaviour (their weight on it)")
    after = _derived(model, arrays, cols, model.sources, summary)
    return SameStep("same", summary, model, after, first=first)
