"""Upper bounds on the quantum value of a Bell functional: the NPA hierarchy.

M. Navascués, S. Pironio, A. Acín, "Bounding the set of quantum
correlations", Phys. Rev. Lett. 98, 010401 (2007).

Operators are the parties' projectors E^x_a for every setting x and every
outcome a except the last (Collins–Gisin style: the last projector is the
identity minus the others, so nothing is lost).  A level is a list of words
(products of operators): level k = all words of length <= k, level "1+AB" =
level 1 plus every product of two operators of different parties.  The
moment matrix Γ_ij = <S_i† S_j> obeys the rules of projective measurements
(E^x_a E^x_b = δ_ab E^x_a, operators of different parties commute,
E† = E) and must be positive semidefinite; Γ_00 = 1.  Since the functional
is real, Γ may be taken real symmetric (the real part of a moment matrix is
one), so <W> = <W†> identifies more entries.

The SDP's float optimum is only a guide.  The bound that is reported as
*certified* comes from the dual: a symmetric matrix Z with
Σ_{(i,j) in class k} Z_ij = -c_k for every free moment k, made exact in
rational arithmetic, and δ >= 0 with Z + δI positive definite (an LDLᵀ in
ball arithmetic whose pivot enclosures are all positive).  Then for every quantum realisation

    value = const + s_1 - tr(Z Γ) <= const + s_1 + δ n,

because tr((Z + δI) Γ) >= 0 (positive definiteness shown by a ball-arithmetic LDLᵀ) and Γ_ii = <S_i† S_i> <= 1 for products of
projectors.  (The standard way to turn an SDP dual into a rigorous bound;
e.g. C. Jansson, SIAM J. Optim. 19, 1185 (2008) for the idea of bounding
with a slightly shifted dual.)
"""

from __future__ import annotations

import itertools
import time
from dataclasses import dataclass, field
from fractions import Fraction

import flint
import numpy as np

from ..errors import InputError
from ..inequality import Inequality
from ..scenario import Scenario
from .certify import collins_gisin_terms

Op = tuple[int, str, str]  # (party index, setting, outcome)
Word = tuple[Op, ...]


def reduce_word(word: Word, n_parties: int) -> tuple[tuple[Op, ...], ...] | None:
    """Per-party reduced sequences of a word, or None when the product is zero."""
    per: list[list[Op]] = [[] for _ in range(n_parties)]
    for op in word:
        st = per[op[0]]
        if st and st[-1][1] == op[1]:
            if st[-1][2] == op[2]:
                continue  # E^x_a E^x_a = E^x_a
            return None  # orthogonal outcomes of one measurement
        st.append(op)
    return tuple(tuple(s) for s in per)


def moment_key(word: Word, n_parties: int):
    """Class of <word> in a real symmetric moment matrix: the word and its adjoint agree."""
    red = reduce_word(word, n_parties)
    if red is None:
        return None
    adj = tuple(tuple(reversed(s)) for s in red)
    return min(red, adj)


def operators(scenario: Scenario) -> list[Op]:
    return [(i, x, a) for i, p in enumerate(scenario.parties) for x in p.settings for a in p.outcomes[:-1]]


def level_words(scenario: Scenario, level: str) -> list[Word]:
    """The words that index the moment matrix at a level ('1', '1+AB', '2', ...)."""
    ops = operators(scenario)
    n = len(scenario.parties)
    level = str(level).strip().upper()
    if level == "1+AB":
        words = [()] + [(o,) for o in ops] + [(a, b) for a, b in itertools.combinations(ops, 2) if a[0] != b[0]]
    elif level.isdigit() and int(level) >= 1:
        k = int(level)
        from ..sizes import guard_npa_words  # noqa: PLC0415 - size guard before listing words
        guard_npa_words(len(ops), k, level, n)
        words = [()]
        for length in range(1, k + 1):
            words += list(itertools.product(ops, repeat=length))
    else:
        raise InputError(f"unknown NPA level '{level}'", hint="use 1, 1+AB, 2 or 3")
    seen, out = set(), []
    for w in words:
        red = reduce_word(w, n)
        if red is None or red in seen:
            continue
        seen.add(red)
        out.append(tuple(op for s in red for op in s))
    from ..sizes import guard_moment_matrix  # noqa: PLC0415
    guard_moment_matrix(len(out), level, n)
    return out


@dataclass
class NPABound:
    level: str
    size: int  # moment matrix dimension
    value: float  # the SDP optimum (floating point; solver tolerance)
    certified: Fraction | None  # rigorous upper bound on the quantum value, or None
    solver: str
    seconds: float
    notes: list[str] = field(default_factory=list)


def _psd_shift_ok(Z: list[list[Fraction]], delta: Fraction) -> bool:
    """Rigorous test that Z + δI is positive definite.

    LDLᵀ elimination in ball arithmetic (Arb, 256 bits) on the exact rational
    entries: every ball encloses the exact pivot, so pivots whose balls lie
    above zero prove the exact pivots positive, hence positive definiteness
    (Sylvester's criterion through the LDLᵀ factorisation).
    """
    from .numbers import arb_from_fraction

    n = len(Z)
    old = flint.ctx.prec
    flint.ctx.prec = 256
    try:
        A = [[arb_from_fraction(v) for v in row] for row in Z]
        d = arb_from_fraction(delta)
        for i in range(n):
            A[i][i] += d
        for k in range(n):
            piv = A[k][k]
            if not piv > 0:
                return False
            rowk = A[k]
            for i in range(k + 1, n):
                f = A[i][k] / piv
                rowi = A[i]
                for j in range(k + 1, n):
                    rowi[j] -= f * rowk[j]
        return True
    finally:
        flint.ctx.prec = old


def npa_bound(ineq: Inequality, level: str = "1", solver: str | None = None, certify: bool = True) -> NPABound:
    """Upper bound on the quantum value of ``ineq`` (its left side) at an NPA level.

    Parameters
    ----------
    ineq : a full-coordinate inequality of a scenario with two or more parties.
    level : "1", "1+AB", "2", ... (words of the moment matrix).
    solver : "CLARABEL" (default) or "SCS".
    certify : also compute the rigorous bound from the dual.

    Returns
    -------
    :class:`NPABound` with the float optimum and the certified rational bound.

    Example
    -------
    >>> from nogo.theory import load_theory; from nogo.catalog import resolve_inequality
    >>> chsh = resolve_inequality(load_theory("theories/bell-2x2.yaml").scenario, "CHSH")
    >>> round(npa_bound(chsh, "1").value, 6)
    2.828427

    References: Navascués, Pironio, Acín, PRL 98, 010401 (2007).
    """
    import cvxpy as cp

    sc = ineq.scenario
    if any(p.choice_of for p in sc.parties):
        from .labs import lab_plan, pull_back, reduction_note

        plan = lab_plan(sc)
        b = npa_bound(pull_back(ineq, plan), level, solver, certify)
        b.notes.insert(0, reduction_note(sc, plan))
        return b
    n_par = len(sc.parties)
    if n_par < 2:
        raise InputError("an NPA bound needs two or more parties")
    t0 = time.time()
    words = level_words(sc, level)
    n = len(words)
    classes, entry_class = _moment_classes(words, n_par)
    ident = tuple(() for _ in range(n_par))
    cost, const = _moment_cost(ineq, classes, level)

    G = cp.Variable((n, n), symmetric=True)
    Aeq, rhs = _moment_equalities(classes, entry_class, ident, n)
    psd = G >> 0
    cons = [psd, Aeq @ cp.vec(G, order="F") == rhs]
    obj = float(const) + sum(float(c) * G[classes[k][0]] for k, c in cost.items())
    prob = cp.Problem(cp.Maximize(obj), cons)
    solver = (solver or "CLARABEL").upper()
    prob.solve(solver=solver)
    if prob.status not in ("optimal", "optimal_inaccurate"):
        raise RuntimeError(f"the SDP solver ended with status {prob.status}")
    res = NPABound(str(level), n, float(prob.value), None, solver, 0.0)
    if prob.status != "optimal":
        res.notes.append(f"solver status {prob.status}")
    if certify and psd.dual_value is not None:
        res.certified = _certify(np.asarray(psd.dual_value), classes, cost, const, ident, n)
        if res.certified is None:
            res.notes.append("the dual could not be made into a certified bound")
    res.seconds = time.time() - t0
    return res


def _moment_classes(words, n_par: int):
    """Group the moment matrix's entries by the moment they stand for (None: a zero entry)."""
    classes: dict = {}
    entry_class = {}
    n = len(words)
    for i in range(n):
        for j in range(i, n):
            key = moment_key(tuple(reversed(words[i])) + words[j], n_par)
            entry_class[(i, j)] = key
            if key is not None:
                classes.setdefault(key, []).append((i, j))
    return classes, entry_class


def _moment_cost(ineq: Inequality, classes: dict, level: str):
    """The left side in Collins–Gisin moments: a coefficient per moment class, and the constant."""
    sc = ineq.scenario
    n_par = len(sc.parties)
    terms, const = collins_gisin_terms(sc, ineq.coeffs)
    cost: dict = {}
    for (parties, settings, outcomes), c in terms.items():
        word = tuple((sc.party_index(p), x, a) for p, x, a in zip(parties, settings, outcomes))
        key = moment_key(word, n_par)
        if key not in classes:
            raise InputError(f"level {level} does not contain the moment of {parties} at settings {settings}",
                             hint="use a higher level (for three parties: 1+AB or 2)")
        cost[key] = cost.get(key, Fraction(0)) + c
    return cost, const


def _moment_equalities(classes: dict, entry_class: dict, ident, n: int):
    """Sparse equalities on vec(G) (column-major): zero entries, G[identity] = 1, equal moments equal."""
    import scipy.sparse as sps

    rows, cols, vals, rhs = [], [], [], []

    def vec_index(i, j):
        return j * n + i  # column-major (cp.vec)

    def row(entries):
        r = len(rhs)
        for col, val in entries:
            rows.append(r)
            cols.append(col)
            vals.append(val)

    for (i, j), key in entry_class.items():
        if key is None:
            row([(vec_index(i, j), 1.0)])
            rhs.append(0.0)
    for key, entries in classes.items():
        i0, j0 = entries[0]
        if key == ident:
            row([(vec_index(i0, j0), 1.0)])
            rhs.append(1.0)
        for (i, j) in entries[1:]:
            row([(vec_index(i, j), 1.0), (vec_index(i0, j0), -1.0)])
            rhs.append(0.0)
    return sps.csr_matrix((vals, (rows, cols)), shape=(len(rhs), n * n)), np.array(rhs)


def _certify(Zf: np.ndarray, classes: dict, cost: dict, const: Fraction, ident, n: int) -> Fraction | None:
    """Rigorous bound const + s_1 + δ n from a float dual matrix (see module docstring)."""
    best = None
    for sign in (1, -1):
        Zs = sign * (Zf + Zf.T) / 2
        Z = [[Fraction(float(Zs[i, j])).limit_denominator(10 ** 9) for j in range(n)] for i in range(n)]
        for i in range(n):
            for j in range(i):
                Z[i][j] = Z[j][i]
        for key, entries in classes.items():
            if key == ident:
                continue
            s = Fraction(0)
            for (i, j) in entries:
                s += Z[i][j] if i == j else 2 * Z[i][j]
            want = -cost.get(key, Fraction(0))
            if s != want:
                i, j = entries[0]
                if i == j:
                    Z[i][i] += want - s
                else:
                    Z[i][j] += (want - s) / 2
                    Z[j][i] = Z[i][j]
        s_id = Fraction(0)
        for (i, j) in classes[ident]:
            s_id += Z[i][j] if i == j else 2 * Z[i][j]
        lam = float(np.min(np.linalg.eigvalsh(np.array([[float(v) for v in row] for row in Z]))))
        delta = Fraction(max(0.0, -lam)).limit_denominator(10 ** 12) + Fraction(1, 10 ** 10)
        for _ in range(8):
            if _psd_shift_ok(Z, delta):
                bound = const + s_id + delta * n
                if best is None or bound < best:
                    best = bound
                break
            delta *= 10
    return best
