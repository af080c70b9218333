"""Reductions between the compiled model and the solver.

Each step takes a :class:`~nogo.model.LinearModel` and returns a smaller
equivalent one together with the maps that carry a solution and a
certificate back: a point of the reduced model lifts to a point of the
model before the step, and dual multipliers of the reduced model lift to
multipliers of the rows before the step (a Farkas certificate of the same
bound).  Lifted evidence is always checked again, exactly, against the
original model (:func:`nogo.check.decide`), so a wrong step cannot pass
unseen: the decision then falls back to the unreduced model.

Steps (applied until nothing changes):

* **merge** — a row ``q_j − q_k = 0`` (two entries of opposite sign and
  equal size, right side 0) says two columns are equal.  Independence
  clauses write exactly such rows when, at each settings tuple, the clause's
  events determine every other present event (counterfactual bundles under
  setting independence: one column per latent assignment at each settings
  tuple, so the 36 copies of the latent joint of Bell 2×6 merge into one
  distribution over the 4,096 deterministic strategies).  The connected
  components of these rows become one column each; rows that become equal
  are kept once, rows that become 0 = 0 are dropped.  Lifting the point
  copies the class value to every member; lifting the duals puts the
  merged rows' multipliers on a spanning forest of each class, peeled from
  the leaves so that every member column keeps a reduced cost of zero and
  the class's whole reduced cost (non-negative when the reduced duals are
  feasible) sits on its root.
* **zero** — a row with right side 0 whose entries all have one sign
  forces every column in it to 0; those columns and the row are removed.
  Lifting the duals gives the row a multiplier large enough to make the
  removed columns' reduced costs non-negative.

This is the pattern of presolve in LP codes (e.g. E. D. Andersen and K. D.
Andersen, "Presolving in linear programming", Math. Prog. 71, 221–245
(1995)), restricted to steps whose dual maps are exact and simple.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Sequence

import numpy as np

from .intarith import ExactVector, as_int, lcm_all, matvec, mul
from .lazyseq import LazySeq
from .model import Column, LinearModel, ModelArrays


# -- views of the reduced model's names --------------------------------------------
@dataclass
class Subset(LazySeq):
    """The entries ``keep`` of a parent sequence (kept rows' sources, kept columns)."""

    parent: Sequence
    keep: np.ndarray

    def __len__(self) -> int:
        return len(self.keep)

    def _one(self, i: int):
        return self.parent[int(self.keep[i])]


@dataclass
class MergedColumns(LazySeq):
    """A reduced column: a class of columns of the parent forced equal."""

    parent: Sequence
    scenario: object
    first: np.ndarray  # a member per class
    size: np.ndarray  # members per class
    what: str = "column(s) forced equal to it"

    def __len__(self) -> int:
        return len(self.first)

    def _one(self, c: int) -> Column:
        base = self.parent[int(self.first[c])]
        n = int(self.size[c])
        if n == 1:
            return base
        return Column(base.settings, base.events, base.values,
                      f"{base.describe(self.scenario)} and {n - 1} {self.what}")


def _derived(model: LinearModel, arrays: ModelArrays, columns, sources, note: str) -> LinearModel:
    return LinearModel(model.scenario, model.label, model.assumptions, columns, None, None, sources, None,
                       list(model.notes), kind=model.kind, extra={}, arrays=arrays)


# -- helpers -----------------------------------------------------------------------
def _transpose(model: LinearModel):
    return model.transposed()


def reduced_cost_numerators(model: LinearModel, cost: ExactVector, y: ExactVector) -> tuple[np.ndarray, int]:
    """(R, G) with Aᵀy − c = R / G exactly, column by column."""
    from .intarith import reduced_costs

    return reduced_costs(model.arrays, None, cost, y)


# -- steps -----------------------------------------------------------------------
@dataclass
class Step:
    """One reduction step: the model before and after, and the maps between them."""

    name: str
    summary: str
    before: LinearModel
    after: LinearModel

    def lift_point(self, x: ExactVector) -> ExactVector:
        raise NotImplementedError

    def lift_duals(self, y: ExactVector, cost: ExactVector) -> ExactVector:
        raise NotImplementedError

    def reduce_cost(self, cost: ExactVector) -> ExactVector:
        raise NotImplementedError


@dataclass
class MergeStep(Step):
    cls: np.ndarray = None  # class of every column before
    kept_rows: np.ndarray = None  # rows before that stand for the rows after, in order
    edges: tuple = ()  # spanning forest: (u, v, row, coefficient numerator at u)

    def lift_point(self, x):
        return ExactVector(x.num[self.cls], x.den)

    def reduce_cost(self, cost):
        k = len(self.after.columns)
        if cost.num.dtype == object:
            out = np.zeros(k, dtype=object)
            np.add.at(out, self.cls, cost.num)
        else:
            out = np.zeros(k, dtype=np.int64)
            np.add.at(out, self.cls, cost.num)
        return ExactVector(as_int(out), cost.den)

    def lift_duals(self, y, cost):
        m_before = self.before.shape[0]
        yb = np.zeros(m_before, dtype=object if y.num.dtype == object else np.int64)
        yb[self.kept_rows] = y.num
        yk = ExactVector(yb, y.den)
        T, G = reduced_cost_numerators(self.before, cost, yk)  # over G; merge rows still 0 here
        u, v, r, alpha = self.edges
        if len(u) == 0:
            return yk
        from .intarith import SAFE, max_abs
        small = T.dtype != object and max_abs(T) * max(1, len(T)) * int(self.before.arrays.row_den.max()) < SAFE
        S = T.copy() if small else T.astype(object)
        del T
        den = np.asarray(self.before.arrays.row_den)
        unit = int(den.max(initial=1)) == 1 and int(den.min(initial=1)) == 1
        z = np.zeros(len(u), dtype=np.int64 if small else object)
        deg = np.bincount(u, minlength=len(S)) + np.bincount(v, minlength=len(S))
        alive = np.ones(len(u), dtype=bool)
        ids = None  # None: every edge is still alive (no copies of u, v in the first round)
        while True:  # peel leaves: a leaf's whole reduced cost goes onto its edge, the rest to its parent
            au, av = (u, v) if ids is None else (u[ids], v[ids])
            lu, lv = deg[au] == 1, deg[av] == 1
            take_u = lu & (~lv | (au > av))
            sel = take_u | (lv & ~take_u)
            del lu, lv
            if not sel.any():
                raise RuntimeError("merge rows do not form a forest")
            e = np.flatnonzero(sel) if ids is None else ids[sel]
            tu = take_u[sel]
            j = np.where(tu, au[sel], av[sel])
            p = np.where(tu, av[sel], au[sel])
            del au, av, take_u, sel
            sign = np.where(tu, -1, 1) * alpha[e]  # z = -S_j d a (j = u) or +S_j d a (j = v)
            if not unit:
                sign = sign * den[r[e]]
            z[e] = S[j] * (sign if small else sign.astype(object))
            np.add.at(S, p, S[j])
            deg[j] = 0
            np.subtract.at(deg, p, 1)
            alive[e] = False
            del e, tu, j, p, sign
            if not alive.any():
                break
            ids = np.flatnonzero(alive)
        del S, deg, alive
        num = mul(yb, G // y.den)
        if num.dtype != object and z.dtype != object:
            num = num.copy()
        else:
            num = num.astype(object)
        num[r] = z
        return ExactVector(as_int(num), G)


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
    rng = np.random.default_rng(12345)  # fixed weights: a hash only; equality is confirmed exactly below
    h = [_float_dot(AT, rng.random(a.shape[0])) + _float_dot(O, rng.random(O.shape[1])) for _ in range(2)]
    na, no = AT.row_nnz(), O.row_nnz()
    order = np.lexsort((np.arange(n), no, na, h[1], h[0]))
    k0, k1, ka, ko = h[0][order], h[1][order], na[order], no[order]
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


def spanning_forest(n: int, u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(component label per node, edge ids of a spanning forest) of the graph with edges (u[e], v[e]).

    Borůvka's method with edge ids as distinct weights: each round every
    component takes its lowest incident edge to another component (such
    choices never close a cycle), then components are relabelled by
    hooking and pointer jumping.  All rounds are array operations.
    """
    comp = np.arange(n, dtype=np.int64)
    ids = np.arange(len(u), dtype=np.int64)
    chosen_all = []
    big = np.iinfo(np.int64).max
    while True:
        cu, cv = comp[u[ids]], comp[v[ids]]
        live = cu != cv
        ids, cu, cv = ids[live], cu[live], cv[live]
        if len(ids) == 0:
            break
        best = np.full(n, big, dtype=np.int64)
        np.minimum.at(best, cu, ids)
        np.minimum.at(best, cv, ids)
        mark = np.zeros(len(u), dtype=bool)
        mark[best[best != big]] = True
        chosen = np.flatnonzero(mark)
        chosen_all.append(chosen)
        a, b = comp[u[chosen]], comp[v[chosen]]
        lab = np.arange(n, dtype=np.int64)
        while True:
            la, lb = lab[a], lab[b]
            lo = np.minimum(la, lb)
            before = lab.copy()
            np.minimum.at(lab, la, lo)
            np.minimum.at(lab, lb, lo)
            while True:
                nxt = lab[lab]
                if np.array_equal(nxt, lab):
                    break
                lab = nxt
            if np.array_equal(lab, before):
                break
        comp = lab[comp]
    forest = np.concatenate(chosen_all) if chosen_all else np.zeros(0, dtype=np.int64)
    return comp, forest


def _equal_rows(model: LinearModel):
    """The rows q_j − q_k = 0: (u, v, row, alpha, the other rows, their ids, classes or None), or None.

    A matrix that knows its structure (:class:`nogo.linear.CompiledRows`)
    names them without a scan and without being built; otherwise rows with
    two entries of opposite sign, size 1 and right side 0 are picked out.
    """
    a = model.arrays
    A = a.A
    if getattr(type(A), "equal_pairs", None) is not None:
        got = A.equal_pairs()
        if got is not None:
            return got
    m, n = A.shape
    nnz = A.row_nnz()
    two = np.flatnonzero((nnz == 2) & (a.rhs_num == 0))
    if len(two) == 0:
        return None
    p0 = A.indptr[two]
    d0, d1 = A.data[p0], A.data[p0 + 1]
    ok = (np.abs(d0) == 1) & (d0 == -d1)
    rows = two[ok]
    if len(rows) == 0:
        return None
    p0 = A.indptr[rows]
    is_merge = np.zeros(m, dtype=bool)
    is_merge[rows] = True
    other = np.flatnonzero(~is_merge)
    return A.indices[p0], A.indices[p0 + 1], rows, A.data[p0], A.take_rows(other), other, None


def _classes(n: int, comp: np.ndarray):
    """Classes numbered in the order of their first member: (class per column, first member, size)."""
    firsts = np.full(n, n, dtype=np.int64)
    np.minimum.at(firsts, comp, np.arange(n, dtype=np.int64))
    roots = np.flatnonzero(firsts < n)
    order = np.argsort(firsts[roots], kind="stable")
    rank = np.full(n, -1, dtype=np.int64)
    rank[roots[order]] = np.arange(len(roots))
    cls = rank[comp]
    ncls = len(roots)
    return cls, firsts[roots[order]], np.bincount(cls, minlength=ncls)


def _merge(model: LinearModel) -> MergeStep | None:
    got = _equal_rows(model)
    if got is None:
        return None
    u, v, rows, alpha, B_other, other, comp = got
    a = model.arrays
    m, n = a.shape
    if comp is None:
        comp, forest = spanning_forest(n, u, v)
        fu, fv, fr, falpha = u[forest], v[forest], rows[forest], alpha[forest]
    else:  # the structure says the rows already form a forest
        fu, fv, fr, falpha = u, v, rows, alpha
    cls, firsts, size = _classes(n, comp)
    ncls = len(firsts)
    # the other rows, with columns summed per class
    B = B_other.sum_cols(cls, ncls)
    rn, rd, den = a.rhs_num[other], a.rhs_den[other], a.row_den[other]
    bnnz = B.row_nnz()
    keep = ~((bnnz == 0) & (rn == 0))  # 0 = 0
    # duplicates: equal rows with equal right sides (hash, then confirm exactly)
    ar = np.arange(ncls, dtype=np.uint64)
    h1 = _float_dot(B, ((ar * np.uint64(2654435761) + np.uint64(97)) % np.uint64(2 ** 32)).astype(float) / 2 ** 32)
    h2 = _float_dot(B, ((ar * np.uint64(40503) + np.uint64(7919)) % np.uint64(65521)).astype(float) / 65521)
    order = np.lexsort((bnnz, den, rd, rn, h2, h1))
    k1, k2 = h1[order], h2[order]
    same = np.zeros(len(order), dtype=bool)
    same[1:] = ((k1[1:] == k1[:-1]) & (k2[1:] == k2[:-1]) & (rn[order][1:] == rn[order][:-1])
                & (rd[order][1:] == rd[order][:-1]) & (den[order][1:] == den[order][:-1])
                & (bnnz[order][1:] == bnnz[order][:-1]))
    start = np.maximum.accumulate(np.where(same, 0, np.arange(len(order))))
    for pos in np.flatnonzero(same).tolist():
        i, rep = order[pos], order[start[pos]]
        if keep[rep] and _row_equal(B, i, rep):  # a hash collision is simply not merged
            keep[i] = False
    kept_local = np.flatnonzero(keep)
    kept_rows = other[kept_local]
    B = B.take_rows(kept_local)
    O = a.O.sum_rows(cls, ncls)
    arrays = ModelArrays(B, den[kept_local], rn[kept_local], rd[kept_local], O, a.obs_den)
    dup = len(other) - len(kept_local)
    summary = (f"merge: {n - ncls} columns forced equal to others by {len(rows)} rows q_j = q_k "
               f"({n} -> {ncls} columns); {dup} rows that became duplicates or 0 = 0 dropped")
    after = _derived(model, arrays, MergedColumns(model.columns, model.scenario, firsts, size),
                     Subset(model.sources, kept_rows), summary)
    return MergeStep("merge", summary, model, after, cls=cls, kept_rows=kept_rows,
                     edges=(fu.astype(np.int64, copy=False), fv.astype(np.int64, copy=False), fr,
                            falpha.astype(np.int8, copy=False)))


def _float_dot(B, w: np.ndarray) -> np.ndarray:
    """B @ w in floats, summed in index order (equal rows give bit-equal results; a hash only)."""
    out = np.zeros(B.shape[0])
    if B.nnz:
        prod = B.data * w[B.indices]
        nzr = np.flatnonzero(B.row_nnz())
        out[nzr] = np.add.reduceat(prod, B.indptr[nzr])
    return out


def _rows_equal(B, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    """Row i[k] of B equals row j[k] (same columns, same entries), for every k at once."""
    ni = B.indptr[i + 1] - B.indptr[i]
    ok = ni == B.indptr[j + 1] - B.indptr[j]
    k = np.where(ok, ni, 0)
    tot = int(k.sum())
    if tot == 0:
        return ok
    pair = np.repeat(np.arange(len(i)), k)
    off = np.arange(tot) - np.repeat(np.cumsum(k) - k, k)
    pi, pj = B.indptr[i][pair] + off, B.indptr[j][pair] + off
    bad = (B.indices[pi] != B.indices[pj]) | (B.data[pi] != B.data[pj])
    return ok & (np.bincount(pair[bad], minlength=len(i)) == 0)


def _row_equal(B, i: int, j: int) -> bool:
    a0, a1, b0, b1 = B.indptr[i], B.indptr[i + 1], B.indptr[j], B.indptr[j + 1]
    return (a1 - a0 == b1 - b0 and np.array_equal(B.indices[a0:a1], B.indices[b0:b1])
            and np.array_equal(B.data[a0:a1], B.data[b0:b1]))


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


STEPS = (_merge, _zero, _fixed, _same)


# -- the chain -------------------------------------------------------------------
@dataclass
class Reduced:
    """The original model, the reduced one and the steps between them."""

    original: LinearModel
    model: LinearModel
    steps: list[Step] = field(default_factory=list)

    def lift_point(self, x: ExactVector) -> ExactVector:
        for st in reversed(self.steps):
            x = st.lift_point(x)
        return x

    def reduce_cost(self, cost: ExactVector) -> ExactVector:
        costs = [cost]
        for st in self.steps:
            costs.append(st.reduce_cost(costs[-1]))
        return costs[-1]

    def lift_duals(self, y: ExactVector, cost: ExactVector) -> ExactVector:
        costs = [cost]
        for st in self.steps[:-1]:
            costs.append(st.reduce_cost(costs[-1]))
        for st, c in zip(reversed(self.steps), reversed(costs)):
            y = st.lift_duals(y, c).normalised()
        return y

    def summary(self) -> list[str]:
        return [st.summary for st in self.steps]


def reduce_model(model: LinearModel, steps=STEPS, max_rounds: int = 8) -> Reduced:
    """Apply the steps until none changes the model (cached on the model)."""
    if steps is STEPS:
        got = model.extra.get("_reduced")
        if got is not None:
            return got
    chain: list[Step] = []
    cur = model
    for _ in range(max_rounds):
        changed = False
        for f in steps:
            st = f(cur)
            if st is not None:
                chain.append(st)
                cur = st.after
                changed = True
        if not changed:
            break
    red = Reduced(model, cur, chain)
    if steps is STEPS:
        model.extra["_reduced"] = red
    return red
