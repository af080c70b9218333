"""Does a bundle imply an inequality?  The decision, with exact evidence.

``decide(model, ineq)`` maximises the inequality's left side over the
bundle's set (float LP, :mod:`nogo.lp`), makes the optimum exact
(:mod:`nogo.exact`) and returns a :class:`CheckResult`:

* **implied** when the exact maximum is <= the bound; the evidence is a
  :class:`Certificate`: rational multipliers of the constraints, grouped by
  assumption, whose combination gives the inequality (Farkas' lemma);
* **not implied** otherwise; the evidence is a :class:`Counterexample`: a
  rational point of the model (the full hidden joint distribution, or the
  mixture), the observed behaviour it produces and its value.

Results speak in assumption and event names only.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Sequence

from typing import TYPE_CHECKING

from .errors import InputError
from .inequality import Coord, Inequality
from .lazyseq import LazySeq
from .model import LinearModel, RowSource

if TYPE_CHECKING:  # numpy, flint and HiGHS load only when a decision is made (nogo --help stays fast)
    from .exact import ExactOptimum
    from .intarith import ExactVector


def _ex():
    from . import exact

    return exact


@dataclass
class WeightedRow:
    source: RowSource
    weight: Fraction


class WeightedRows(LazySeq):
    """The rows of a certificate with a non-zero multiplier, written out on demand."""

    def __init__(self, sources: Sequence, duals: ExactVector):
        self.sources, self.duals = sources, duals
        self.index = duals.nonzero()

    def __len__(self) -> int:
        return len(self.index)

    def _one(self, k: int) -> WeightedRow:
        i = int(self.index[k])
        return WeightedRow(self.sources[i], self.duals[i])


@dataclass
class Certificate:
    """c·q <= Σ y_i (row_i · q) − Σ s_j q_j = Σ y_i rhs_i for every feasible q."""

    rows: Sequence[WeightedRow]  # rows with non-zero multiplier
    positivity: int  # how many q_j >= 0 enter (with positive weight s_j)
    bound: Fraction  # Σ y_i rhs_i
    duals: ExactVector | list = field(repr=False, default_factory=list)

    def by_assumption(self) -> dict[str, int]:
        src = getattr(self.rows, "sources", None)
        if src is not None and hasattr(src, "count_by_assumption"):
            return src.count_by_assumption(self.rows.index)
        out: dict[str, int] = {}
        for r in self.rows:
            out[r.source.assumption] = out.get(r.source.assumption, 0) + 1
        return out


class JointEntries(LazySeq):
    """Non-zero entries of a model point, described on demand: (name, weight)."""

    def __init__(self, model: LinearModel, point: ExactVector):
        self.columns, self.scenario, self.point = model.columns, model.scenario, point
        self.index = point.nonzero()

    def __len__(self) -> int:
        return len(self.index)

    def _one(self, k: int) -> tuple[str, Fraction]:
        j = int(self.index[k])
        return self.columns[j].describe(self.scenario), self.point[j]


@dataclass
class Counterexample:
    behaviour: dict[Coord, Fraction]  # observed p(a|s)
    joint: Sequence[tuple[str, Fraction]]  # non-zero entries of the model point, described
    value: Fraction
    point: ExactVector | list = field(repr=False, default_factory=list)


@dataclass
class CheckResult:
    bundle: str
    assumptions: tuple[str, ...]
    inequality: Inequality
    verdict: str  # "implied" | "not implied"
    maximum: Fraction
    certificate: Certificate | None
    counterexample: Counterexample | None
    method: str
    notes: list[str] = field(default_factory=list)
    model_kind: str = "linear"
    shape: tuple[int, int] = (0, 0)
    reductions: list[str] = field(default_factory=list)  # the reduction steps that ran (words)
    solved_shape: tuple[int, int] | None = None  # the model the LP solved (after reductions)
    point: ExactVector | None = field(default=None, repr=False)  # the exact optimum (checked on the model)

    @property
    def implied(self) -> bool:
        return self.verdict == "implied"


def _certificate(model: LinearModel, cost, duals, positive: int | None = None) -> Certificate:
    """The certificate of checked duals (*positive*: their count of reduced costs > 0, when the check gave it)."""
    from .exact import dual_bound, reduced_cost_vector
    from .intarith import ExactVector

    y = duals if isinstance(duals, ExactVector) else ExactVector.from_fractions(list(duals))
    if positive is None:
        positive = int((reduced_cost_vector(model, cost, y).num > 0).sum())
    return Certificate(WeightedRows(model.sources, y), positive, dual_bound(model, y), y)


def _counterexample(model: LinearModel, cost, point) -> Counterexample:
    from .exact import dot
    from .intarith import ExactVector

    x = point if isinstance(point, ExactVector) else ExactVector.from_fractions(list(point))
    return Counterexample(model.behaviour(x), JointEntries(model, x), dot(cost, x), x)


def signalling_witness(model: LinearModel, ineq: Inequality, point) -> str | None:
    """The parties whose marginal moves with another party's setting at an exact point of the model, or None.

    *point* must be a point of *model* already checked exactly (a
    counterexample, or the optimum a decision found); the behaviour it
    produces and each probe's value at it are exact.  A non-zero probe is a
    witness that the bundle does not imply no-signalling for that marginal:
    the guard's refusal follows without any further LP.
    """
    key = tuple(sorted({m.parties for m in ineq.marginals}))
    beh = model.behaviour(point)
    for parties, probe in marginal_probes(model.scenario, key):
        if probe.value(beh) != 0:
            return ",".join(parties)
    return None


def marginal_guard(model: LinearModel, ineq: Inequality, point=None) -> None:
    """Refuse an inequality written with marginals under a signalling bundle.

    A marginal p_A(a|x) is a function of the behaviour only when it does not
    depend on the other parties' settings.  If the bundle does not imply
    that (exactly checked, like any implication), the written inequality has
    no single meaning; answering for the Collins–Gisin expansion would
    silently answer a different question (DESIGN.md §2).  *point*: an exact,
    checked point of the model (e.g. a decision's optimum), tried first as a
    witness of signalling (:func:`signalling_witness`).
    """
    key = tuple(sorted({m.parties for m in ineq.marginals}))
    cache = model.extra.setdefault("_guard", {})
    if key not in cache and point is not None:
        who = signalling_witness(model, ineq, point)  # a checked point may show the refusal at once
        if who is not None:
            cache[key] = who
    if key not in cache:
        cache[key] = _guard_answer(model, key)
    who = cache[key]
    if who is not None:
        raise InputError(
            f"'{ineq.name or ineq.text}' uses the marginal of {who}, but bundle '{model.label}' "
            f"lets it depend on the other parties' settings (it does not imply no-signalling "
            f"for {who}); its value, and the maximum, depend on which setting is meant",
            hint="write the inequality with joint probabilities at explicit settings, "
                 "or check it under a bundle that implies no-signalling")


_PROBES: dict = {}  # (id of scenario, parties) -> (scenario, probes): one search asks for the same probes often


def marginal_probes(scenario, parties_list) -> list[tuple[tuple[str, ...], Inequality]]:
    """Functionals "marginal at s minus marginal at s0" whose vanishing is no-signalling for each marginal."""
    key = (id(scenario), tuple(parties_list))
    got = _PROBES.get(key)
    if got is not None and got[0] is scenario:
        return got[1]
    if len(_PROBES) > 32:
        _PROBES.clear()
    probes = _marginal_probes(scenario, parties_list)
    _PROBES[key] = (scenario, probes)
    return probes


def _marginal_probes(scenario, parties_list) -> list[tuple[tuple[str, ...], Inequality]]:
    sc = scenario
    probes: list[tuple[tuple[str, ...], Inequality]] = []
    for parties in parties_list:
        idx = [sc.party_index(p) for p in parties]
        others = [i for i in range(len(sc.parties)) if i not in idx]
        for xs in itertools.product(*(sc.parties[i].settings for i in idx)):
            # the last joint outcome's probe is minus the sum of the others plus a difference of two
            # normalisation rows, so it vanishes on the model whenever they do: left out
            for outs in list(itertools.product(*(sc.parties[i].outcomes for i in idx)))[:-1]:
                # marginal at settings s (others varying) minus at the others' first settings
                for ys in itertools.product(*(sc.parties[i].settings for i in others)):
                    base = [None] * len(sc.parties)
                    for i, x in zip(idx, xs):
                        base[i] = x
                    s = list(base)
                    s0 = list(base)
                    for i, y in zip(others, ys):
                        s[i] = y
                        s0[i] = sc.parties[i].settings[0]
                    if s == s0:
                        continue
                    coeffs: dict[Coord, Fraction] = {}
                    for a in sc.outcome_tuples():
                        if tuple(a[i] for i in idx) == outs:
                            coeffs[(tuple(s), a)] = coeffs.get((tuple(s), a), 0) + 1
                            coeffs[(tuple(s0), a)] = coeffs.get((tuple(s0), a), 0) - 1
                    probes.append((parties, Inequality(sc, coeffs, Fraction(0))))
    return probes


def _guard_answer(model: LinearModel, key) -> str | None:
    """None when the bundle implies no-signalling for every marginal in *key*, else the parties that fail."""
    sc = model.scenario
    probes = marginal_probes(sc, key)
    costs = [model.cost_vector(p) for _, p in probes]
    direct = _span_from_blocks(model, probes, costs)
    rest = [k for k, ok in enumerate(direct) if not ok]
    spanned = list(direct)
    for k, ok in zip(rest, _span_members(model, [costs[k] for k in rest])):
        spanned[k] = ok
    for (parties, probe), c, inside in zip(probes, costs, spanned):
        if inside or not any(c.num.tolist()):
            continue
        for sign in (1, -1):
            r = decide(model, Inequality(sc, {k: sign * v for k, v in probe.coeffs.items()}, Fraction(0)),
                       guard=False)
            if not r.implied:
                return ",".join(parties)
    return None


def _span_from_blocks(model: LinearModel, probes, costs) -> list[bool]:
    """Probes shown forced by the rows of one independence clause, read off the compiled rows' structure.

    A probe "marginal of P at s minus at s0" is the sum of a clause's rows
    q(kept = k | s) − q(kept = k | s0) over the keys k with P's outcomes
    fixed, when the clause keeps P's outcomes and links s to s0 (agency,
    no-signalling clauses).  The rows are only a candidate: the combination
    is checked exactly on the model (Aᵀy = f, b·y = 0), as in
    :func:`_span_members`.
    """
    import numpy as np

    from .exact import dual_bound
    from .intarith import ExactVector, reduced_costs

    A = model.arrays.A
    out = [False] * len(probes)
    if getattr(type(A), "difference_rows", None) is None:
        return out
    sc = model.scenario
    s_index = {s: i for i, s in enumerate(sc.setting_tuples())}
    for k, ((parties, probe), f) in enumerate(zip(probes, costs)):
        plus = {c[0] for c, v in probe.coeffs.items() if v > 0}
        minus = {c[0] for c, v in probe.coeffs.items() if v < 0}
        if len(plus) != 1 or len(minus) != 1:
            continue
        a = next(c[1] for c, v in probe.coeffs.items() if v > 0)
        fixed = {p: a[sc.party_index(p)] for p in parties}
        rows = A.difference_rows(s_index[next(iter(plus))], s_index[next(iter(minus))], fixed)
        if rows is None:
            continue
        num = np.zeros(A.shape[0], dtype=np.int64)
        num[rows] = 1
        y = ExactVector(num, 1)
        R, _ = reduced_costs(model.arrays, None, f, y)
        out[k] = not np.any(R != 0) and dual_bound(model, y) == 0
    return out


def _in_affine_span(model: LinearModel, functionals) -> bool:
    """Exact test: is every f·q = 0 forced by the equalities rows·q = rhs alone?  (See :func:`_span_members`.)"""
    return all(_span_members(model, functionals))


def _span_members(model: LinearModel, functionals, max_entries: int = 500_000,
                  small_entries: int = 40_000) -> list[bool]:
    """For each f: True when f·q = 0 is shown forced by the equalities rows·q = rhs alone.

    True means (f, 0) is a combination y of the rows: Aᵀy = f exactly and
    b·y = 0, so f·q = y·b = 0 on the whole affine hull, certainly on the
    model.  (Sufficient, not necessary: positivity can force more; the
    caller then asks the LP.)  The combination is sought on the reduced
    model (:mod:`nogo.reduce`): when the system is small (below
    *small_entries* entries), by one exact fraction-free row reduction of
    [Aᵀ | F] for all probes F at once (python-flint); otherwise as a basic
    solution of Aᵀλ = f from HiGHS (a vertex, whose small denominators
    rounding recovers), else, when rounding misses and the system is below
    *max_entries*, by the exact row reduction of [Aᵀ | f].  Either way the combination is
    lifted through the reductions and checked in integer arithmetic on the
    unreduced model, so neither the floats nor the reductions are trusted.
    """
    from .intarith import ExactVector
    from .reduce import reduce_model

    fs = [f if isinstance(f, ExactVector) else ExactVector.from_fractions(list(f)) for f in functionals]
    out = [not f.nonzero().size for f in fs]
    todo = [k for k, done in enumerate(out) if not done]
    if not todo:
        return out
    red = reduce_model(model)
    m, n = red.model.arrays.shape
    if m == 0:
        return out
    reds = {k: red.reduce_cost(fs[k]) for k in todo}
    exact_ok = [k for k in todo if reds[k].num.dtype != object]
    if n * (m + len(exact_ok)) <= small_entries and exact_ok:
        # small: one exact row reduction answers every probe at once (cheaper than one LP per probe)
        got = _span_by_rref(model, red, red.model.arrays.A.toarray().T, [fs[k] for k in exact_ok],
                            [reds[k] for k in exact_ok])
        for k, ok in zip(exact_ok, got):
            out[k] = ok
        todo = [k for k in todo if k not in exact_ok]  # f shown outside the span stays False: the LP decides
        if not todo:
            return out
    for k, status in zip(todo, _span_by_lp(model, red, [fs[k] for k in todo], [reds[k] for k in todo])):
        if status == "shown":
            out[k] = True
        elif status == "rounding" and n * (m + 1) <= max_entries and reds[k].num.dtype != object:
            out[k] = _span_by_rref(model, red, red.model.arrays.A.toarray().T, [fs[k]], [reds[k]])[0]
    return out


def _verify_span(model: LinearModel, red, f, cand) -> bool:
    """Exact: the lifted combination y gives Aᵀy = f and b·y = 0 on the unreduced model."""
    import numpy as np

    from .exact import dual_bound
    from .intarith import reduced_costs

    y = red.lift_duals(cand, f) if red.steps else cand
    R_, _ = reduced_costs(model.arrays, None, f, y)
    return not np.any(R_ != 0) and dual_bound(model, y) == 0


def _span_by_lp(model, red, fs, reds) -> list[str]:
    """Float guide: a basic solution of Aᵀλ = f (λ free) from HiGHS, rounded; checked exactly.

    Per f: "shown" (checked exactly), "outside" (HiGHS finds no solution:
    the LP probes will decide), "rounding" (a float solution that no small
    denominators reproduce).
    """
    import highspy
    import numpy as np

    from .exact import round_vector
    from .lp import new_highs

    rm = red.model
    a = rm.arrays
    m, n = a.shape
    AT = rm.transposed()  # n x m: row j of Aᵀ lists the rows meeting column j
    val = AT.data.astype(float) / a.row_den.astype(float)[AT.indices]
    h = new_highs()
    h.setOptionValue("presolve", "off")  # the same matrix for every probe: each run starts from the last basis
    lp = highspy.HighsLp()
    lp.num_col_, lp.num_row_ = m, n
    lp.col_cost_ = np.zeros(m)
    lp.col_lower_ = np.full(m, -highspy.kHighsInf)
    lp.col_upper_ = np.full(m, highspy.kHighsInf)
    rhs = _float_vec(reds[0])
    lp.row_lower_, lp.row_upper_ = rhs, rhs.copy()
    lp.a_matrix_.format_ = highspy.MatrixFormat.kRowwise
    lp.a_matrix_.start_ = AT.indptr.astype(np.int32)
    lp.a_matrix_.index_ = AT.indices.astype(np.int32)
    lp.a_matrix_.value_ = val
    lp.a_matrix_.num_col_, lp.a_matrix_.num_row_ = m, n
    h.passModel(lp)
    every = np.arange(n, dtype=np.int32)
    out = []
    for k, (f, r) in enumerate(zip(fs, reds)):
        if k:
            rhs = _float_vec(r)
            h.changeRowsBounds(n, every, rhs, rhs)  # the same matrix: HiGHS starts from the last basis
        h.run()
        if h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
            out.append("outside")
            continue
        lam = np.array(h.getSolution().col_value)
        ok = any(_verify_span(model, red, f, cand) for cand in round_vector(lam))
        out.append("shown" if ok else "rounding")
    return out


def _span_by_rref(model, red, AT, fs, reds) -> list[bool]:
    """Exact fraction-free row reduction of [Aᵀ | F] (python-flint); per f, lifted and checked exactly.

    With R = E [Aᵀ | F] in reduced row-echelon form and r = rank Aᵀ (its
    pivots come first), f_k is a combination of the columns of Aᵀ exactly
    when R[r:, m + k] = 0; the combination is read off the pivot rows.
    """
    import flint
    import numpy as np

    from .intarith import ExactVector

    a = red.model.arrays
    m = a.shape[0]
    M = np.hstack([AT, np.stack([r.num for r in reds], axis=1)])
    R, d, rank = flint.fmpz_mat(M.shape[0], M.shape[1], M.ravel().tolist()).rref()  # flat: 4x faster to build
    pivots = []  # entries are read one by one: converting the whole matrix to Python ints costs more than rref
    p = 0
    for i in range(rank):
        while p < m and R[i, p] == 0:
            p += 1
        if p >= m:
            break
        pivots.append(p)
        p += 1
    r_a = len(pivots)
    d = int(d)
    sign = 1 if d > 0 else -1
    d = abs(d)
    out = []
    for kk, (f, r) in enumerate(zip(fs, reds)):
        if any(R[i, m + kk] != 0 for i in range(r_a, rank)):  # rows past the rank are zero in rref
            out.append(False)  # f is not a combination of the rows
            continue
        num = np.zeros(m, dtype=object)
        for i, p in enumerate(pivots):
            num[p] = sign * int(R[i, m + kk]) * int(a.row_den[p])  # λ_p = μ_p den_p / D with Aᵀμ = r.num
        out.append(_verify_span(model, red, f, ExactVector(num, d * r.den).normalised()))
    return out


def _float_vec(v):
    import numpy as np

    if v.num.dtype == object:
        return np.array([float(x) for x in v])
    return v.num.astype(float) / float(v.den)


def _solve(model: LinearModel, cost: ExactVector, reducer) -> tuple[ExactOptimum, list[str], tuple[int, int], list[str]]:
    """Exact optimum over *model*; through the reductions when they shrink it (evidence lifted and checked here)."""
    from .exact import ExactFailure, ExactOptimum, check_point, dot, dual_bound, duals_check, exact_optimum
    notes: list[str] = []
    if reducer is not False:
        from .reduce import reduce_model

        red = (reducer or reduce_model)(model)
        if red.steps:
            try:
                ro = exact_optimum(red.model, red.reduce_cost(cost))
            except ExactFailure:
                ro = None  # infeasible or unbounded there: let the unreduced model say it
            bad = "no multipliers on the reduced model"
            if ro is not None and ro.duals is not None:
                x = red.lift_point(ro.point)
                y = red.lift_duals(ro.duals, cost)
                bad = check_point(model, x)
                if bad is None:
                    bad, positive = duals_check(model, cost, y)
                if bad is None:
                    v, b = dot(cost, x), dual_bound(model, y)
                    if v == b:
                        return (ExactOptimum(v, x, y, ro.method + "; lifted to the unreduced model and checked there",
                                             positive), red.summary(), red.model.shape, notes)
                    bad = f"lifted point gives {v}, lifted multipliers {b}"
            if ro is not None:
                notes.append(f"the reduced model's evidence failed its exact check on the unreduced model ({bad}); "
                             "solved the unreduced model instead")
    return exact_optimum(model, cost), [], model.shape, notes


def decide(model: LinearModel, ineq: Inequality, guard: bool = True, reducer=None) -> CheckResult:
    """Decide whether the model's set satisfies *ineq*, with exact evidence.

    ``reducer``: None for the standard reductions (:mod:`nogo.reduce`),
    False to solve the model as compiled, or a function model -> Reduced.
    Evidence always refers to *model* itself and has been checked on it.
    """
    from .exact import ExactFailure
    if ineq.scenario.coordinates() != model.scenario.coordinates():
        raise InputError("the inequality and the theory describe different scenarios")
    if guard and ineq.marginals:
        marginal_guard(model, ineq)
    cost = model.cost_vector(ineq)
    try:
        opt, steps, solved, extra_notes = _solve(model, cost, reducer)
    except ExactFailure as exc:
        if str(exc) == "infeasible":
            raise InputError(f"bundle '{model.label}' admits no behaviour at all: its assumptions contradict each other"
                             " (every inequality would follow vacuously)") from None
        raise
    implied = opt.value <= ineq.bound
    cert = ce = None
    if opt.duals is not None:
        cert = _certificate(model, cost, opt.duals, opt.positive) if implied else None
    ce = _counterexample(model, cost, opt.point) if not implied else None
    method = opt.method
    if implied and cert is None:
        method += "; no Farkas multipliers were recovered, the bound rests on z3's exact optimum"
    if steps:
        m, n = solved
        method += f"; LP solved on the reduced model ({m} rows x {n} columns)"
    return CheckResult(model.label, model.assumptions, ineq, "implied" if implied else "not implied",
                       opt.value, cert, ce, method, list(model.notes) + [f"reduction {t}" for t in steps] + extra_notes,
                       model.kind, model.shape, steps, solved, opt.point)


def recheck(model: LinearModel, result: CheckResult) -> str | None:
    """Independent exact re-check of a result's evidence; None when it holds.

    Uses only exact integer arithmetic on the compiled (unreduced) rows, with
    the model's cached arrays: no LP solver, no reduction.
    """
    from .exact import check_duals, check_point, dot, dual_bound
    cost = model.cost_vector(result.inequality)
    if result.implied:
        if result.certificate is None:
            return "no certificate"
        y = result.certificate.duals
        bad = check_duals(model, cost, y)
        if bad:
            return bad
        if dual_bound(model, y) > result.inequality.bound:
            return "certificate gives a weaker bound"
        return None
    ce = result.counterexample
    if ce is None:
        return "no counterexample"
    bad = check_point(model, ce.point)
    if bad:
        return bad
    value = dot(cost, ce.point)
    if value <= result.inequality.bound or value != ce.value:
        return "the counterexample does not violate the inequality"
    if result.inequality.value(ce.behaviour) != value:
        return "behaviour and model point disagree"
    return None
