"""The exact check that a permutation of a model's columns maps the model onto itself.

Used by :func:`nogo.symmetry.lift_to_model` after a relabelling has been
lifted to the columns.  Three tests, each exact, from cheapest: the set of
rows (scaled to primitive integers with a fixed sign) is mapped onto itself;
or the partition into columns that rows q_i - q_j = 0 make equal is mapped
onto itself with the other rows summed over the classes; or the permuted
equations have the same solution set (a particular solution and an integer
null-space basis, python-flint, checked with integer sparse products).
"""

from __future__ import annotations

from fractions import Fraction

from .unionfind import DisjointSets


def _row_ints(model):
    """Each row with its right-hand side as primitive integers: (columns, values, rhs); cached on the model."""
    import math

    import numpy as np

    got = model.extra.get("_row_ints")
    if got is not None:
        return got
    out = []
    for row, rhs in zip(model.rows, model.rhs):
        items = sorted((j, Fraction(v)) for j, v in row.items() if v)
        vals = [v for _, v in items] + [Fraction(rhs)]
        L = 1
        for v in vals:
            L = L * v.denominator // math.gcd(L, v.denominator)
        ints = [int(v * L) for v in vals]
        g = 0
        for v in ints:
            g = math.gcd(g, abs(v))
        g = g or 1
        out.append((np.array([j for j, _ in items], dtype=np.int64), [v // g for v in ints[:-1]], ints[-1] // g))
    model.extra["_row_ints"] = out
    return out


def _key(cols, vals, rhs) -> tuple:
    """Rows as a set element: columns sorted, the sign fixed by the first coefficient."""
    order = sorted(range(len(cols)), key=lambda t: cols[t])
    sign = 1 if not vals or vals[order[0]] > 0 else -1
    return (tuple(int(cols[t]) for t in order), tuple(sign * vals[t] for t in order), sign * rhs)


def model_invariant(model, sigma: list[int], perm_obs: list[int]) -> bool:
    """Exact: does the column permutation σ carry the observation map along *perm_obs* and map the
    model's solution set onto itself (rows as a set, else classes of equal columns, else the null space)?"""
    import numpy as np

    for j, obs in enumerate(model.observe):
        moved = {perm_obs[i]: w for i, w in obs.items() if w}
        target = {i: w for i, w in model.observe[sigma[j]].items() if w}
        if moved != target:
            return False
    rows = _row_ints(model)
    base = model.extra.get("_row_keys")
    if base is None:
        base = model.extra["_row_keys"] = {_key(list(c), v, b) for c, v, b in rows}
    sig = np.array(sigma, dtype=np.int64)
    moved = {_key(list(sig[c]), v, b) for c, v, b in rows}
    if moved == base:
        return True
    if _same_classes(model, sigma):
        return True
    return _same_row_space(model, sigma)


def _equal_classes(model):
    """Columns the rows q_i - q_j = 0 make equal (a partition), and the other rows summed over those classes.

    Cached on the model: (class of each column, the set of other rows as keys over classes).
    """
    import numpy as np

    got = model.extra.get("_equal_classes")
    if got is not None:
        return got
    n = len(model.columns)
    sets = DisjointSets(n)
    rest = []
    for c, v, b in _row_ints(model):
        if len(c) == 2 and b == 0 and sorted(v) == [-1, 1]:
            sets.union(int(c[0]), int(c[1]))
        else:
            rest.append((c, v, b))
    cls = np.array([sets.find(i) for i in range(n)], dtype=np.int64)
    got = model.extra["_equal_classes"] = (cls, rest)
    return got


def _class_rows(cls, rest, colmap) -> set:
    out = set()
    for c, v, b in rest:
        acc: dict[int, int] = {}
        for j, x in zip(c, v):
            k = int(cls[colmap[int(j)]])
            acc[k] = acc.get(k, 0) + x
        items = sorted((k, x) for k, x in acc.items() if x)
        out.add(_key([k for k, _ in items], [x for _, x in items], b))
    return out


def _same_classes(model, sigma: list[int]) -> bool:
    """Exact, sufficient: σ maps the partition into equal columns onto itself and the other rows with it.

    The solutions are the vectors constant on each class that satisfy the other
    rows, which on such vectors only see the sums of their coefficients over each
    class.  When σ permutes the classes and the set of those summed rows (each
    scaled to coprime integers with a fixed sign) onto itself, it maps the
    solution set onto itself.  (Rows q_i - q_j = 0 are how setting independence
    compiles; the full null-space test below is the fallback.)
    """
    import numpy as np

    cls, rest = _equal_classes(model)
    sig = np.array(sigma, dtype=np.int64)
    # the class of a column's image must be determined by the column's class, one to one
    img = {}
    for j in range(len(sig)):
        a, b = int(cls[j]), int(cls[sig[j]])
        if img.setdefault(a, b) != b:
            return False
    if len(set(img.values())) != len(img):
        return False
    base = model.extra.get("_class_row_keys")
    if base is None:
        base = model.extra["_class_row_keys"] = _class_rows(cls, rest, list(range(len(sig))))
    return _class_rows(cls, rest, sig) == base


def _same_row_space(model, sigma: list[int]) -> bool:
    """Exact: the permuted equations have the same solution set as the original ones.

    With a solution q0 of rows·q = rhs and an integer basis N of the null space
    of the rows (both computed once per model, python-flint), the solution set
    is mapped onto itself exactly when rows·(σ q0) = rhs and rows·(σ N) = 0,
    checked with integer sparse products.
    """
    import numpy as np
    import scipy.sparse as sp

    rows = _row_ints(model)
    n = len(model.columns)
    cached = model.extra.get("_null_space")
    if cached is None:
        import flint

        A = flint.fmpz_mat([[0] * n for _ in rows]) if rows else flint.fmpz_mat(0, n)
        for i, (c, v, _) in enumerate(rows):
            for j, x in zip(c, v):
                A[i, int(j)] = x
        X, nullity = A.nullspace()
        N = np.array([[int(X[i, j]) for j in range(nullity)] for i in range(n)], dtype=object)
        Ab = flint.fmpq_mat(len(rows), n + 1)
        for i, (c, v, b) in enumerate(rows):
            for j, x in zip(c, v):
                Ab[i, int(j)] = x
            Ab[i, n] = b
        R, rank = Ab.rref()
        q0 = [flint.fmpq(0)] * n
        for i in range(rank):
            piv = next(j for j in range(n + 1) if R[i, j] != 0)
            if piv == n:
                return False  # no solution: nothing to preserve
            q0[piv] = R[i, n] / R[i, piv]
        den = 1
        for v in q0:
            den = den * int(v.q) // np.gcd(den, int(v.q))
        Q0 = np.array([int(v.p) * (den // int(v.q)) for v in q0], dtype=object)
        ri = [i for i, (c, _, _) in enumerate(rows) for _ in c]
        ci = [int(j) for c, _, _ in rows for j in c]
        vi = [x for _, v, _ in rows for x in v]
        B = np.array([b for _, _, b in rows], dtype=object)
        amax = max((abs(x) for x in vi), default=0)
        width = max((len(c) for c, _, _ in rows), default=0)
        big = max([abs(int(x)) for x in N.flat] + [abs(int(x)) for x in Q0] + [abs(int(x)) * den for x in B] + [0])
        if amax < 2**31 and amax * big * max(width, 1) < 2**62:
            Asp = sp.csr_matrix((np.array(vi, dtype=np.int64), (ri, ci)), shape=(len(rows), n))
            N, Q0, B = N.astype(np.int64), Q0.astype(np.int64), B.astype(np.int64)
        else:
            Asp = None
        cached = model.extra["_null_space"] = (Asp, N, Q0, den, B)
    Asp, N, Q0, den, B = cached
    inv = np.argsort(np.array(sigma))
    # (σ x)[sigma[j]] = x[j], i.e. σ x = x[inv]
    if Asp is None:  # large numbers: Python integers, row by row
        for (c, v, b), i in zip(rows, range(len(rows))):
            if sum(x * int(Q0[inv[j]]) for j, x in zip(c, v)) != b * den:
                return False
            for t in range(N.shape[1]):
                if sum(x * int(N[inv[j], t]) for j, x in zip(c, v)) != 0:
                    return False
        return True
    if np.any(Asp @ Q0[inv] != B * den):
        return False
    return not N.size or not np.any((Asp @ N[inv, :]) != 0)
