"""The merge step: columns forced equal by rows q_j − q_k = 0 become one (spanning-forest dual lift)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..intarith import ExactVector, as_int, mul
from ..model import LinearModel, ModelArrays
from .base import MergedColumns, Step, Subset, _derived, _float_dot, _row_equal, hash_weights, reduced_cost_numerators


@dataclass
class MergeStep(Step):
    cls: np.ndarray = None  # class of every column before
    kept_rows: np.ndarray = None  # rows before that stand for the rows after, in order
    edges: tuple = ()  # spanning forest: (u, v, row, coefficient numerator at u)
    star: bool = False  # stars: u is a leaf (entry +1, its only edge), v its root

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
        from ..intarith import SAFE, max_abs
        small = T.dtype != object and max_abs(T) * max(1, len(T)) * int(self.before.arrays.row_den.max()) < SAFE
        S = T.copy() if small else T.astype(object)
        del T
        den = np.asarray(self.before.arrays.row_den)
        unit = int(den.max(initial=1)) == 1 and int(den.min(initial=1)) == 1
        if self.star:  # every edge joins a leaf (its only edge) to its class's root: one peeling round, in closed form
            leaf, root = u, v  # u: the column of the non-base settings tuple (entry +1 in the row), v: its root
            z = -S[leaf] if unit else -S[leaf] * (den[r] if small else den[r].astype(object))
            np.add.at(S, root, S[leaf])
            del S
        else:
            z = self._peel(S, u, v, r, alpha, den, unit, small)
        num = mul(yb, G // y.den)
        if num.dtype != object and z.dtype != object:
            num = num.copy()
        else:
            num = num.astype(object)
        num[r] = z
        return ExactVector(as_int(num), G)

    @staticmethod
    def _peel(S, u, v, r, alpha, den, unit, small):
        """Multipliers of the forest's rows, peeled from the leaves (S: reduced costs, updated in place)."""
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
        return z


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
    star = comp is not None
    if comp is None:
        comp, forest = spanning_forest(n, u, v)
        fu, fv, fr, falpha = u[forest], v[forest], rows[forest], alpha[forest]
    else:  # the structure says the rows already form a forest
        fu, fv, fr, falpha = u, v, rows, alpha
    cls, firsts, size = _classes(n, comp)
    del comp
    ncls = len(firsts)
    # the other rows, with columns summed per class
    B = B_other.sum_cols(cls, ncls)
    rn, rd, den = a.rhs_num[other], a.rhs_den[other], a.row_den[other]
    bnnz = B.row_nnz()
    keep = ~((bnnz == 0) & (rn == 0))  # 0 = 0
    # duplicates: equal rows with equal right sides (hash, then confirm exactly)
    h1, h2 = _float_dot(B, hash_weights(ncls, 0)), _float_dot(B, hash_weights(ncls, 1))
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
    return MergeStep("merge", summary, model, after, cls=cls, kept_rows=kept_rows, star=star,
                     edges=(fu.astype(np.int64, copy=False), fv.astype(np.int64, copy=False), fr,
                            falpha.astype(np.int8, copy=False)))
