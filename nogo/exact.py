"""Exact answers from a floating-point LP, and their solver-free checks.

For max c·q s.t. A q = b, q >= 0 the float solver is only a guide.  From its
final basis we re-solve the basic system in rationals (python-flint): the
primal point q* and the dual multipliers y*.  Then two exact checks, which
need no solver:

* q* is feasible: A q* = b and q* >= 0 (a *counterexample* when c·q* > β);
* y* is dual feasible: Aᵀy* >= c; then c·q <= b·y* for every feasible q
  (weak duality), so b·y* <= β is a *Farkas certificate* of the implication.

When b·y* = c·q* the exact maximum is proven.  If the basis was wrong
(numerical trouble, a degenerate optimum) we try rounding the float answers
to small-denominator rationals and, failing that, fall back to z3's exact
linear real arithmetic.  A float is never rounded and called exact: every
returned number has passed the exact checks above (or comes from z3's exact
arithmetic, which the result says).

Method: the classical certificate of LP duality (Farkas' lemma); see e.g.
A. Schrijver, *Theory of Linear and Integer Programming*, Wiley (1986), §7.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import flint

from .lp import FloatAnswer, maximise
from .model import LinearModel


@dataclass
class ExactOptimum:
    value: Fraction
    point: list[Fraction]  # exact, feasible (checked)
    duals: list[Fraction] | None  # exact, dual feasible (checked); None only from the z3 route
    method: str


class ExactFailure(RuntimeError):
    pass


# -- solver-free checks ------------------------------------------------------
def point_violation(model: LinearModel, point: list[Fraction]) -> str | None:
    """None when *point* satisfies every row exactly and is non-negative."""
    if len(point) != len(model.columns):
        return "wrong length"
    for j, x in enumerate(point):
        if x < 0:
            return f"negative entry {x} at {model.columns[j].describe(model.scenario)}"
    for i, row in enumerate(model.rows):
        lhs = sum((v * point[j] for j, v in row.items()), Fraction(0))
        if lhs != model.rhs[i]:
            return f"row '{model.sources[i].detail}' gives {lhs}, not {model.rhs[i]}"
    return None


def reduced_costs(model: LinearModel, cost: list[Fraction], duals: list[Fraction]) -> list[Fraction]:
    """Aᵀy − c, column by column (must be >= 0 for a valid certificate)."""
    acc = [-Fraction(c) for c in cost]
    for i, row in enumerate(model.rows):
        y = duals[i]
        if y:
            for j, v in row.items():
                acc[j] += v * y
    return acc


def duals_violation(model: LinearModel, cost: list[Fraction], duals: list[Fraction]) -> str | None:
    if len(duals) != len(model.rows):
        return "wrong length"
    for j, r in enumerate(reduced_costs(model, cost, duals)):
        if r < 0:
            return f"column {model.columns[j].describe(model.scenario)} has reduced cost {r} < 0"
    return None


def dual_bound(model: LinearModel, duals: list[Fraction]) -> Fraction:
    return sum((b * y for b, y in zip(model.rhs, duals)), Fraction(0))


def dot(cost: list[Fraction], point: list[Fraction]) -> Fraction:
    return sum((c * x for c, x in zip(cost, point) if x), Fraction(0))


# -- from a float answer to exact ones -----------------------------------------
def _from_basis(model: LinearModel, cost: list[Fraction], ans: FloatAnswer):
    if ans.basic_cols is None:
        return None
    basic_rows = set(ans.basic_rows or [])
    nr = [i for i in range(len(model.rows)) if i not in basic_rows]
    bc = ans.basic_cols
    if len(nr) != len(bc):
        return None
    if not bc:
        point = [Fraction(0)] * len(model.columns)
        return point, [Fraction(0)] * len(model.rows)
    pos = {j: k for k, j in enumerate(bc)}
    M = flint.fmpq_mat(len(nr), len(bc))
    for r, i in enumerate(nr):
        for j, v in model.rows[i].items():
            k = pos.get(j)
            if k is not None:
                M[r, k] = flint.fmpq(v.numerator, v.denominator)
    rhs = flint.fmpq_mat(len(nr), 1, [flint.fmpq(model.rhs[i].numerator, model.rhs[i].denominator) for i in nr])
    cb = flint.fmpq_mat(len(bc), 1, [flint.fmpq(cost[j].numerator, cost[j].denominator) for j in bc])
    try:
        xb = M.solve(rhs)
        yn = M.transpose().solve(cb)
    except (ZeroDivisionError, ValueError):
        return None
    point = [Fraction(0)] * len(model.columns)
    for k, j in enumerate(bc):
        q = xb[k, 0]
        point[j] = Fraction(int(q.p), int(q.q))
    duals = [Fraction(0)] * len(model.rows)
    for r, i in enumerate(nr):
        q = yn[r, 0]
        duals[i] = Fraction(int(q.p), int(q.q))
    return point, duals


def _rounded(model: LinearModel, ans: FloatAnswer, den: int):
    point = [Fraction(float(x)).limit_denominator(den) for x in ans.x]
    point = [x if x > 0 else Fraction(0) for x in point]
    cands = []
    y = [Fraction(float(v)).limit_denominator(den) for v in ans.row_dual]
    cands.append(y)
    cands.append([-v for v in y])
    return point, cands


def exact_optimum(model: LinearModel, cost: list[Fraction], ans: FloatAnswer | None = None) -> ExactOptimum:
    """The exact maximum of cost·q over the model, with checked primal and dual."""
    cost = [Fraction(c) for c in cost]
    if ans is None:
        ans = maximise(model, cost)
    if ans.status != "optimal":
        raise ExactFailure(ans.status)
    # Rounding is cheap and almost always right here (the optima have small
    # denominators); the exact basis re-solve costs a dense rational solve.
    for den in (10**4,):
        point, cands = _rounded(model, ans, den)
        if point_violation(model, point) is not None:
            continue
        v = dot(cost, point)
        for y in cands:
            if duals_violation(model, cost, y) is None and dual_bound(model, y) == v:
                return ExactOptimum(v, point, y, f"float optimum rounded to denominators <= {den}, checked exactly")
    got = _from_basis(model, cost, ans)
    if got is not None:
        point, duals = got
        if point_violation(model, point) is None and duals_violation(model, cost, duals) is None:
            v = dot(cost, point)
            if v == dual_bound(model, duals):
                return ExactOptimum(v, point, duals, "exact re-solve of the optimal basis")
    return _z3_optimum(model, cost)


def _z3_optimum(model: LinearModel, cost: list[Fraction]) -> ExactOptimum:
    """Last resort: z3's exact linear real arithmetic finds the maximum."""
    import z3

    q = [z3.Real(f"q{j}") for j in range(len(model.columns))]
    opt = z3.Optimize()
    for x in q:
        opt.add(x >= 0)
    for i, row in enumerate(model.rows):
        opt.add(z3.Sum([z3.RealVal(str(v)) * q[j] for j, v in row.items()]) == z3.RealVal(str(model.rhs[i])))
    obj = z3.Sum([z3.RealVal(str(c)) * q[j] for j, c in enumerate(cost) if c])
    opt.maximize(obj)
    if opt.check() != z3.sat:
        raise ExactFailure("z3 found no feasible point")
    m = opt.model()
    point = [Fraction(m.eval(x, model_completion=True).as_fraction()) for x in q]
    if point_violation(model, point) is not None:
        raise ExactFailure("z3's point failed the exact check")
    return ExactOptimum(dot(cost, point), point, None, "z3 exact linear real arithmetic (optimum)")
