"""Exact answers from a floating-point LP, and their solver-free checks.

For max c·q s.t. A q = b, q >= 0 the float solver is only a guide.  Two
exact checks need no solver:

* q* is feasible: A q* = b and q* >= 0 (a *counterexample* when c·q* > β);
* y* is dual feasible: Aᵀy* >= c; then c·q <= b·y* for every feasible q
  (weak duality), so b·y* <= β is a *Farkas certificate* of the implication.

When b·y* = c·q* the exact maximum is proven.  Candidates come from the
float answer rounded to small denominators (first one common denominator
for the whole vector, vectorised; then entry by entry), then from an exact
re-solve of the optimal basis in rationals (python-flint), and last from
z3's exact linear real arithmetic.  A float is never rounded and called
exact: every returned number has passed the exact checks above (or comes
from z3's exact arithmetic, which the result says).

The checks run on the model's integer arrays (:mod:`nogo.intarith`):
``A·X`` and ``Aᵀ·Y`` for integer numerators X, Y over one denominator,
int64 where a bound rules out overflow and exact limbs otherwise.

Method: the classical certificate of LP duality (Farkas' lemma); see e.g.
A. Schrijver, *Theory of Linear and Integer Programming*, Wiley (1986), §7.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Sequence

import numpy as np

from .intarith import ExactVector, as_int, lcm_all, matvec, mul
from .model import LinearModel


@dataclass
class ExactOptimum:
    value: Fraction
    point: ExactVector  # exact, feasible (checked)
    duals: ExactVector | None  # exact, dual feasible (checked); None only from the z3 route
    method: str
    positive: int | None = None  # columns with reduced cost > 0 under these duals (from their check)


class ExactFailure(RuntimeError):
    pass


def _vec(v) -> ExactVector:
    return v if isinstance(v, ExactVector) else ExactVector.from_fractions(list(v))


def _times(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Exact elementwise product of two integer arrays."""
    from .intarith import SAFE, max_abs

    if a.dtype != object and b.dtype != object and max_abs(a) * max_abs(b) < SAFE:
        return a * b
    return as_int(a.astype(object) * b.astype(object))


def _all_one(a) -> bool:
    a = np.asarray(a)
    return a.dtype != object and (a.size == 0 or (int(a.min()) == 1 and int(a.max()) == 1))


# -- solver-free checks ------------------------------------------------------
def check_point(model: LinearModel, point) -> str | None:
    """None when *point* satisfies every row exactly and is non-negative."""
    x = _vec(point)
    a = model.arrays
    if len(x) != a.shape[1]:
        return "wrong length"
    neg = np.flatnonzero(x.num < 0)
    if len(neg):
        j = int(neg[0])
        return f"negative entry {x[j]} at {model.columns[j].describe(model.scenario)}"
    AX = matvec(a.A, x.num)  # row i: AX_i / (row_den_i * x.den)
    if _all_one(a.rhs_den) and _all_one(a.row_den):  # compiled models: no products of whole arrays needed
        lhs, rhs = AX, mul(a.rhs_num, x.den)
    else:
        lhs = _times(AX, a.rhs_den)
        rhs = mul(_times(a.rhs_num, a.row_den), x.den)
    bad = np.flatnonzero(lhs != rhs)
    if len(bad):
        i = int(bad[0])
        got = Fraction(int(AX[i]), int(a.row_den[i]) * x.den)
        return f"row '{model.sources[i].detail}' gives {got}, not {Fraction(int(a.rhs_num[i]), int(a.rhs_den[i]))}"
    return None


def reduced_cost_vector(model: LinearModel, cost, duals) -> ExactVector:
    """Aᵀy − c, column by column (must be >= 0 for a valid certificate)."""
    from .intarith import reduced_costs

    R, G = reduced_costs(model.arrays, None, _vec(cost), _vec(duals))
    return ExactVector(R, G)


def check_duals(model: LinearModel, cost, duals) -> str | None:
    return duals_check(model, cost, duals)[0]


def duals_check(model: LinearModel, cost, duals) -> tuple[str | None, int]:
    """(None when Aᵀy >= c holds exactly, else what fails; how many columns have reduced cost > 0)."""
    y = _vec(duals)
    if len(y) != model.shape[0]:
        return "wrong length", 0
    r = reduced_cost_vector(model, cost, y)
    bad = np.flatnonzero(r.num < 0)
    if len(bad):
        j = int(bad[0])
        return f"column {model.columns[j].describe(model.scenario)} has reduced cost {r[j]} < 0", 0
    return None, int((r.num > 0).sum())


def dual_bound(model: LinearModel, duals) -> Fraction:
    y = _vec(duals)
    a = model.arrays
    nz = np.flatnonzero((y.num != 0) & (a.rhs_num != 0))
    return sum((Fraction(int(y.num[i]) * int(a.rhs_num[i]), int(a.rhs_den[i])) for i in nz.tolist()),
               Fraction(0)) / y.den


def dot(cost, point) -> Fraction:
    c, x = _vec(cost), _vec(point)
    nz = np.flatnonzero((x.num != 0) & (c.num != 0))
    return Fraction(sum(int(c.num[j]) * int(x.num[j]) for j in nz.tolist()), c.den * x.den)


# list-based names kept for older callers
def point_violation(model: LinearModel, point: Sequence[Fraction]) -> str | None:
    return check_point(model, point)


def duals_violation(model: LinearModel, cost, duals) -> str | None:
    return check_duals(model, cost, duals)


def reduced_costs(model: LinearModel, cost, duals) -> list[Fraction]:
    return list(reduced_cost_vector(model, cost, duals))


# -- from a float answer to exact ones -----------------------------------------
_COMMON = (1, 2, 4, 6, 8, 12, 16, 24, 48, 120, 720720)


def round_vector(v: np.ndarray, den: int = 10**4) -> list[ExactVector]:
    """Rational candidates near a float vector (small denominators), best guesses first."""
    v = np.asarray(v, dtype=float)
    out = []
    scale = max(1.0, float(np.abs(v).max()) if v.size else 1.0)
    for D in _COMMON:
        r = np.rint(v * D)
        if np.abs(r - v * D).max(initial=0.0) <= 1e-7 * D * scale:
            out.append(ExactVector(r.astype(np.int64), D).normalised())
            break
    nz = np.flatnonzero(np.abs(v) > 1e-13)
    if len(nz) <= 200_000:
        fr = [Fraction(float(v[j])).limit_denominator(den) for j in nz.tolist()]
        D = lcm_all({f.denominator for f in fr})
        num = np.zeros(len(v), dtype=object)
        for j, f in zip(nz.tolist(), fr):
            num[j] = f.numerator * (D // f.denominator)
        cand = ExactVector(num, D).normalised()
        if not out or not cand == out[0]:
            out.append(cand)
    return out


def _from_basis(model: LinearModel, cost: ExactVector, ans):
    import flint

    if ans.basic_cols is None:
        return None
    a = model.arrays
    m, n = a.shape
    basic_rows = np.zeros(m, dtype=bool)
    basic_rows[list(ans.basic_rows or [])] = True
    nr = np.flatnonzero(~basic_rows)
    bc = np.asarray(ans.basic_cols, dtype=np.int64)
    if len(nr) != len(bc):
        return None
    if len(bc) == 0:
        return ExactVector.zeros(n), ExactVector.zeros(m)
    if len(bc) > 6000:
        return None  # a dense rational solve this large is slower than z3
    B = a.A.take_rows(nr).take_cols(bc).toarray() if np.all(np.diff(bc) > 0) else \
        a.A.take_rows(nr).toarray()[:, bc]
    M = flint.fmpz_mat(B.shape[0], B.shape[1], B.ravel().tolist())  # from a flat list: faster than nested
    # (A_num / den) x = rhs  <=>  A_num x = rhs * den ;  A_numᵀ w = c_B, y = w / den
    rhs = flint.fmpq_mat(len(nr), 1, [flint.fmpq(int(a.rhs_num[i]) * int(a.row_den[i]), int(a.rhs_den[i]))
                                      for i in nr.tolist()])
    cb = flint.fmpq_mat(len(bc), 1, [flint.fmpq(int(cost.num[j]), cost.den) for j in bc.tolist()])
    try:
        Mq = flint.fmpq_mat(M)
        xb = Mq.solve(rhs)
        w = Mq.transpose().solve(cb)
    except (ZeroDivisionError, ValueError):
        return None
    xs = [Fraction(int(xb[k, 0].p), int(xb[k, 0].q)) for k in range(len(bc))]
    ys = [Fraction(int(w[k, 0].p), int(w[k, 0].q)) * int(a.row_den[i]) for k, i in enumerate(nr.tolist())]
    Dx = lcm_all({f.denominator for f in xs})
    px = np.zeros(n, dtype=object)
    for j, f in zip(bc.tolist(), xs):
        px[j] = f.numerator * (Dx // f.denominator)
    Dy = lcm_all({f.denominator for f in ys})
    py = np.zeros(m, dtype=object)
    for i, f in zip(nr.tolist(), ys):
        py[i] = f.numerator * (Dy // f.denominator)
    return ExactVector(px, Dx), ExactVector(py, Dy)


def exact_optimum(model: LinearModel, cost, ans=None) -> ExactOptimum:
    """The exact maximum of cost·q over the model, with checked primal and dual."""
    from .lp import maximise

    cost = _vec(cost)
    if ans is None:
        ans = maximise(model, cost)
    if ans.status != "optimal":
        raise ExactFailure(ans.status)
    # Rounding is cheap and almost always right here (the optima have small
    # denominators); the exact basis re-solve costs a dense rational solve.
    ycands = []
    for y in round_vector(ans.row_dual):
        ycands += [y, ExactVector(-y.num if y.num.dtype != object else as_int(-y.num), y.den)]
    for x in round_vector(np.maximum(ans.x, 0.0)):
        if check_point(model, x) is not None:
            continue
        v = dot(cost, x)
        for y in ycands:
            if dual_bound(model, y) == v:
                bad, positive = duals_check(model, cost, y)
                if bad is None:
                    return ExactOptimum(v, x, y, "float optimum rounded to small denominators, checked exactly",
                                        positive)
    got = _from_basis(model, cost, ans)
    if got is not None:
        x, y = got
        if check_point(model, x) is None and check_duals(model, cost, y) is None:
            v = dot(cost, x)
            if v == dual_bound(model, y):
                return ExactOptimum(v, x, y, "exact re-solve of the optimal basis")
    return _z3_optimum(model, cost)


def _optimizer():
    """A z3 ``Optimize`` without z3's own SIGINT handler, which would swallow a Ctrl-C; nogo's takes it."""
    import z3

    opt = z3.Optimize()
    opt.set("ctrl_c", False)
    return opt


def _z3_optimum(model: LinearModel, cost: ExactVector) -> ExactOptimum:
    """Last resort: z3's exact linear real arithmetic finds the maximum."""
    import z3

    q = [z3.Real(f"q{j}") for j in range(len(model.columns))]
    opt = _optimizer()
    for x in q:
        opt.add(x >= 0)
    for i, row in enumerate(model.rows):
        opt.add(z3.Sum([z3.RealVal(str(v)) * q[j] for j, v in row.items()]) == z3.RealVal(str(model.rhs[i])))
    obj = z3.Sum([z3.RealVal(str(c)) * q[j] for j, c in enumerate(cost) if c])
    opt.maximize(obj)
    if opt.check() != z3.sat:
        raise ExactFailure("z3 found no feasible point")
    m = opt.model()
    point = ExactVector.from_fractions([Fraction(m.eval(x, model_completion=True).as_fraction()) for x in q])
    if check_point(model, point) is not None:
        raise ExactFailure("z3's point failed the exact check")
    return ExactOptimum(dot(cost, point), point, None, "z3 exact linear real arithmetic (optimum)")
