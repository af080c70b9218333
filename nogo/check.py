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

from .errors import InputError
from .exact import (ExactFailure, ExactOptimum, check_duals, check_point, dot, dual_bound, exact_optimum,
                    reduced_cost_vector)
from .inequality import Coord, Inequality, Marginal
from .intarith import ExactVector
from .model import LinearModel, RowSource


@dataclass
class WeightedRow:
    source: RowSource
    weight: Fraction


class WeightedRows(Sequence):
    """The rows of a certificate with a non-zero multiplier, written out on demand."""

    def __init__(self, sources: Sequence, duals: ExactVector):
        self.sources, self.duals = sources, duals
        self.index = duals.nonzero()

    def __len__(self) -> int:
        return len(self.index)

    def _one(self, k: int) -> WeightedRow:
        i = int(self.index[k])
        return WeightedRow(self.sources[i], self.duals[i])

    def __getitem__(self, k):
        if isinstance(k, slice):
            return [self._one(i) for i in range(*k.indices(len(self)))]
        if k < 0:
            k += len(self)
        return self._one(k)


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


class JointEntries(Sequence):
    """Non-zero entries of a model point, described on demand: (name, weight)."""

    def __init__(self, model: LinearModel, point: ExactVector):
        self.columns, self.scenario, self.point = model.columns, model.scenario, point
        self.index = point.nonzero()

    def __len__(self) -> int:
        return len(self.index)

    def _one(self, k: int) -> tuple[str, Fraction]:
        j = int(self.index[k])
        return self.columns[j].describe(self.scenario), self.point[j]

    def __getitem__(self, k):
        if isinstance(k, slice):
            return [self._one(i) for i in range(*k.indices(len(self)))]
        if k < 0:
            k += len(self)
        return self._one(k)


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

    @property
    def implied(self) -> bool:
        return self.verdict == "implied"


def _certificate(model: LinearModel, cost, duals) -> Certificate:
    y = duals if isinstance(duals, ExactVector) else ExactVector.from_fractions(list(duals))
    r = reduced_cost_vector(model, cost, y)
    pos = int((r.num > 0).sum())
    return Certificate(WeightedRows(model.sources, y), pos, dual_bound(model, y), y)


def _counterexample(model: LinearModel, cost, point) -> Counterexample:
    x = point if isinstance(point, ExactVector) else ExactVector.from_fractions(list(point))
    return Counterexample(model.behaviour(x), JointEntries(model, x), dot(cost, x), x)


def marginal_guard(model: LinearModel, ineq: Inequality) -> None:
    """Refuse an inequality written with marginals under a signalling bundle.

    A marginal p_A(a|x) is a function of the behaviour only when it does not
    depend on the other parties' settings.  If the bundle does not imply
    that (exactly checked, like any implication), the written inequality has
    no single meaning; answering for the Collins–Gisin expansion would
    silently answer a different question (DESIGN.md §2).
    """
    sc = model.scenario
    key = tuple(sorted({m.parties for m in ineq.marginals}))
    cache = model.extra.setdefault("_guard", {})
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


def marginal_probes(scenario, parties_list) -> list[tuple[tuple[str, ...], Inequality]]:
    """Functionals "marginal at s minus marginal at s0" whose vanishing is no-signalling for each marginal."""
    sc = scenario
    probes: list[tuple[tuple[str, ...], Inequality]] = []
    for parties in parties_list:
        idx = [sc.party_index(p) for p in parties]
        others = [i for i in range(len(sc.parties)) if i not in idx]
        for xs in itertools.product(*(sc.parties[i].settings for i in idx)):
            for outs in itertools.product(*(sc.parties[i].outcomes for i in idx)):
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
    if _in_affine_span(model, costs):
        return None
    for (parties, probe), c in zip(probes, costs):
        if not any(c.num.tolist()):
            continue
        for sign in (1, -1):
            r = decide(model, Inequality(sc, {k: sign * v for k, v in probe.coeffs.items()}, Fraction(0)),
                       guard=False)
            if not r.implied:
                return ",".join(parties)
    return None


def _in_affine_span(model: LinearModel, functionals, max_entries: int = 4_000_000) -> bool:
    """Exact test: is every f·q = 0 forced by the equalities rows·q = rhs alone?

    True when each (f, 0) lies in the row space of [rows | rhs]; then f·q = 0
    on the whole affine hull, so certainly on the model.  (Sufficient, not
    necessary: positivity can force more; the caller then asks the LP.)
    Built from the integer arrays (row i scaled by its denominators) and
    decided by one exact integer rank pair (python-flint); False, without
    deciding, when the dense matrix would exceed *max_entries*.
    """
    import flint
    import numpy as np

    from .intarith import ExactVector

    a = model.arrays
    m, n = a.shape
    fs = [f if isinstance(f, ExactVector) else ExactVector.from_fractions(list(f)) for f in functionals]
    fs = [f for f in fs if f.nonzero().size]
    if not fs:
        return True
    # columns that no row and no functional touches do not change a rank
    touched = np.zeros(n, dtype=bool)
    touched[a.A.indices] = True
    for f in fs:
        touched[f.nonzero()] = True
    cols = np.flatnonzero(touched)
    if (m + len(fs)) * (len(cols) + 1) > max_entries:
        return False
    if any(f.num.dtype == object for f in fs):
        return False
    base = np.zeros((m, len(cols) + 1), dtype=np.int64)
    base[:, :-1] = a.A.take_cols(cols).toarray() * a.rhs_den[:, None]
    base[:, -1] = a.rhs_num * a.row_den
    extra = np.zeros((len(fs), len(cols) + 1), dtype=np.int64)
    for k, f in enumerate(fs):
        extra[k, :-1] = f.num[cols]
    r0 = flint.fmpz_mat(base.tolist()).rank() if m else 0
    r1 = flint.fmpz_mat(np.vstack([base, extra]).tolist()).rank()
    return r0 == r1


def _solve(model: LinearModel, cost: ExactVector, reducer) -> tuple[ExactOptimum, list[str], tuple[int, int], list[str]]:
    """Exact optimum over *model*; through the reductions when they shrink it (evidence lifted and checked here)."""
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
                bad = check_point(model, x) or check_duals(model, cost, y)
                if bad is None:
                    v, b = dot(cost, x), dual_bound(model, y)
                    if v == b:
                        return (ExactOptimum(v, x, y, ro.method + "; lifted to the unreduced model and checked there"),
                                red.summary(), red.model.shape, notes)
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
        cert = _certificate(model, cost, opt.duals) if implied else None
    ce = _counterexample(model, cost, opt.point) if not implied else None
    method = opt.method
    if implied and cert is None:
        method += "; no Farkas multipliers were recovered, the bound rests on z3's exact optimum"
    if steps:
        m, n = solved
        method += f"; LP solved on the reduced model ({m} rows x {n} columns)"
    return CheckResult(model.label, model.assumptions, ineq, "implied" if implied else "not implied",
                       opt.value, cert, ce, method, list(model.notes) + [f"reduction {t}" for t in steps] + extra_notes,
                       model.kind, model.shape, steps, solved)


def recheck(model: LinearModel, result: CheckResult) -> str | None:
    """Independent exact re-check of a result's evidence; None when it holds.

    Uses only exact integer arithmetic on the compiled (unreduced) rows, with
    the model's cached arrays: no LP solver, no reduction.
    """
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
