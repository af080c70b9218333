"""Born-rule behaviours: p(a|s) = Tr[rho (P^{s_1}_{a_1} ⊗ ... ⊗ P^{s_n}_{a_n})].

Three evaluations of the same formula:

* :func:`behaviour` – floating point (numpy), for display, LP input and optimisation;
* :func:`exact_behaviour` – sympy, when every input is exact (values such as
  cos(pi/8)^2 = (2 + sqrt 2)/4 come out as such);
* :func:`ball_behaviour` – complex-ball arithmetic (Arb) on the exact inputs
  (decimals as written, optimiser floats as the binary rationals they are):
  each value is an interval guaranteed to contain the true probability.
  Certified verdicts rest on these balls, never on the floats.

Effective measurements (inner observers read out or undone) come from
:meth:`Experiment.effective`; the explicit register model is in
:mod:`nogo.quantum.inner`.
"""

from __future__ import annotations

import itertools
import string
from functools import reduce

import flint
import numpy as np
import sympy

from ..inequality import Coord
from .experiment import Experiment

PREC = 200  # bits of the balls; far more than the margins we certify


def _einsum_spec(n: int) -> str:
    letters = iter(string.ascii_letters)
    a = [next(letters) for _ in range(n)]
    i = [next(letters) for _ in range(n)]
    j = [next(letters) for _ in range(n)]
    rho = "".join(i) + "".join(j)
    ops = ",".join(a[k] + j[k] + i[k] for k in range(n))
    return f"{rho},{ops}->{''.join(a)}"


def behaviour_array(rho: np.ndarray, dims: tuple[int, ...], povms: list[list[np.ndarray]],
                    which: tuple[tuple[int, ...], ...] | None = None) -> np.ndarray:
    """p over ``scenario.coordinates()`` order, from numeric operators.

    ``povms[i][r]`` is an array (outcomes, d_i, d_i) for lab i's r-th
    measurement; ``which[k]`` names the measurement of each lab at the k-th
    settings tuple (default: every combination, in order — a scenario whose
    parties are its labs, one measurement per setting).  A choice party's
    one outcome has probability one, so the outcome order is the labs'.
    """
    n = len(dims)
    R = rho.reshape(tuple(dims) * 2)
    spec = _einsum_spec(n)
    if which is None:
        which = itertools.product(*(range(len(p)) for p in povms))
    out = []
    for xs in which:
        ops = [povms[k][x] for k, x in enumerate(xs)]
        out.append(np.einsum(spec, R, *ops, optimize=False).real.reshape(-1))
    return np.concatenate(out)


def numeric_povms(exp: Experiment) -> list[list[np.ndarray]]:
    """The labs' effective measurements as arrays, ``[lab][reading]`` (pair with ``exp.lab_rows()[1]``)."""
    return [[np.array(m.projectors) for m in row] for row in exp.lab_rows()[0]]


def behaviour_vector(exp: Experiment, rho: np.ndarray | None = None) -> np.ndarray:
    """Float behaviour over ``scenario.coordinates()``, for the experiment's state or another *rho*."""
    rho = exp.state.rho if rho is None else rho
    return behaviour_array(rho, exp.state.dims, numeric_povms(exp), exp.lab_rows()[1])


def behaviour(exp: Experiment) -> dict[Coord, float]:
    """Floating-point behaviour ``{(settings, outcomes): p}`` of the experiment.

    Example::

        exp = load_experiment("examples/experiments/chsh-singlet.yaml")
        behaviour(exp)[(("1", "1"), ("+1", "-1"))]   # 0.4267...
    """
    return dict(zip(exp.scenario.coordinates(), (float(x) for x in behaviour_vector(exp))))


def _kron(mats):
    return reduce(lambda a, b: sympy.kronecker_product(a, b), mats)


def _cells(exp: Experiment, rows):
    """(settings, outcomes, [operator of each lab]) for every coordinate, in scenario order."""
    sc = exp.scenario
    which = exp.lab_rows()[1]
    for s, xs in zip(sc.setting_tuples(), which):
        mats = [rows[i][x] for i, x in enumerate(xs)]
        for a, ks in zip(sc.outcome_tuples(), itertools.product(*(range(len(m)) for m in mats))):
            yield s, a, [m[k] for m, k in zip(mats, ks)]


def exact_behaviour(exp: Experiment, simplify: bool = True) -> dict[Coord, sympy.Expr]:
    """Exact sympy behaviour; raises ValueError when some input is not exact."""
    if not exp.is_exact:
        raise ValueError("the experiment has inputs that are not exact (numeric states or measurements)")
    key = ("exact", simplify)
    if key not in exp.cache:
        exp.cache[key] = _exact_behaviour(exp, simplify)
    return dict(exp.cache[key])


def _exact_behaviour(exp: Experiment, simplify: bool) -> dict[Coord, sympy.Expr]:
    rho = exp.state.exact
    rows = [[m.exact for m in row] for row in exp.lab_rows()[0]]
    out: dict[Coord, sympy.Expr] = {}
    for s, a, ops in _cells(exp, rows):
        v = (rho * _kron(ops)).trace()
        if simplify:
            # a probability is real: keep the real part, then tidy radicals
            v = sympy.radsimp(sympy.simplify(sympy.re(sympy.expand_complex(v))))
        out[(s, a)] = v
    return out


# -- balls -------------------------------------------------------------------
def _acb_matrix(m: sympy.Matrix):
    from .numbers import to_acb

    return [[to_acb(m[i, j]) for j in range(m.cols)] for i in range(m.rows)]


def _acb_kron(a, b):
    return [[x * y for x in ra for y in rb] for ra in a for rb in b]


def ball_behaviour(exp: Experiment, prec: int = PREC) -> dict[Coord, flint.arb]:
    """Rigorous enclosures of every p(a|s), from the experiment's exact inputs.

    Raises ValueError when some input has no exact form.
    """
    if not exp.is_exact:
        raise ValueError("the experiment has inputs that are not exact (numeric states or measurements)")
    if ("ball", prec) in exp.cache:
        return dict(exp.cache[("ball", prec)])
    old = flint.ctx.prec
    flint.ctx.prec = prec
    try:
        rho = _acb_matrix(exp.state.exact)
        D = len(rho)
        rows = [[[_acb_matrix(P) for P in m.exact] for m in row] for row in exp.lab_rows()[0]]
        out: dict[Coord, flint.arb] = {}
        for s, a, ops in _cells(exp, rows):
            K = reduce(_acb_kron, ops)
            tr = flint.acb(0)
            for i in range(D):
                ri = rho[i]
                for j in range(D):
                    tr += ri[j] * K[j][i]
            out[(s, a)] = tr.real
        exp.cache[("ball", prec)] = out
        return dict(out)
    finally:
        flint.ctx.prec = old
