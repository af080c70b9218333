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

from .errors import InputError
from .exact import ExactFailure, dual_bound, duals_violation, exact_optimum, point_violation, reduced_costs
from .inequality import Coord, Inequality, Marginal
from .model import LinearModel, RowSource


@dataclass
class WeightedRow:
    source: RowSource
    weight: Fraction


@dataclass
class Certificate:
    """c·q <= Σ y_i (row_i · q) − Σ s_j q_j = Σ y_i rhs_i for every feasible q."""

    rows: list[WeightedRow]  # rows with non-zero multiplier
    positivity: int  # how many q_j >= 0 enter (with positive weight s_j)
    bound: Fraction  # Σ y_i rhs_i
    duals: list[Fraction] = field(repr=False, default_factory=list)

    def by_assumption(self) -> dict[str, int]:
        out: dict[str, int] = {}
        for r in self.rows:
            out[r.source.assumption] = out.get(r.source.assumption, 0) + 1
        return out


@dataclass
class Counterexample:
    behaviour: dict[Coord, Fraction]  # observed p(a|s)
    joint: list[tuple[str, Fraction]]  # non-zero entries of the model point, described
    value: Fraction
    point: list[Fraction] = field(repr=False, default_factory=list)


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

    @property
    def implied(self) -> bool:
        return self.verdict == "implied"


def _certificate(model: LinearModel, cost, duals: list[Fraction]) -> Certificate:
    rows = [WeightedRow(model.sources[i], y) for i, y in enumerate(duals) if y]
    pos = sum(1 for r in reduced_costs(model, cost, duals) if r > 0)
    return Certificate(rows, pos, dual_bound(model, duals), duals)


def _counterexample(model: LinearModel, cost, point: list[Fraction]) -> Counterexample:
    joint = [(model.columns[j].describe(model.scenario), x) for j, x in enumerate(point) if x]
    value = sum((c * x for c, x in zip(cost, point) if x), Fraction(0))
    return Counterexample(model.behaviour(point), joint, value, point)


def marginal_guard(model: LinearModel, ineq: Inequality) -> None:
    """Refuse an inequality written with marginals under a signalling bundle.

    A marginal p_A(a|x) is a function of the behaviour only when it does not
    depend on the other parties' settings.  If the bundle does not imply
    that (exactly checked, like any implication), the written inequality has
    no single meaning; answering for the Collins–Gisin expansion would
    silently answer a different question (DESIGN.md §2).
    """
    sc = model.scenario
    probes: list[tuple[Marginal, Inequality]] = []
    for m in sorted(ineq.marginals, key=lambda m: m.parties):
        idx = [sc.party_index(p) for p in m.parties]
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
                    probes.append((m, Inequality(sc, coeffs, Fraction(0))))
    if _in_affine_span(model, [model.cost(p) for _, p in probes]):
        return
    for m, probe in probes:
        for sign in (1, -1):
            r = decide(model, Inequality(sc, {k: sign * v for k, v in probe.coeffs.items()}, Fraction(0)),
                       guard=False)
            if not r.implied:
                who = ",".join(m.parties)
                raise InputError(
                    f"'{ineq.name or ineq.text}' uses the marginal of {who}, but bundle '{model.label}' "
                    f"lets it depend on the other parties' settings (it does not imply no-signalling "
                    f"for {who}); its value, and the maximum, depend on which setting is meant",
                    hint="write the inequality with joint probabilities at explicit settings, "
                         "or check it under a bundle that implies no-signalling")


def _in_affine_span(model: LinearModel, functionals: list[list[Fraction]]) -> bool:
    """Exact test: is every f·q = 0 forced by the equalities rows·q = rhs alone?

    True when each (f, 0) lies in the row space of [rows | rhs]; then f·q = 0
    on the whole affine hull, so certainly on the model.  (Sufficient, not
    necessary: positivity can force more; the caller then asks the LP.)
    """
    import flint

    n = len(model.columns)
    def mat(rows):
        M = flint.fmpq_mat(len(rows), n + 1)
        for i, (row, b) in enumerate(rows):
            for j, v in row.items():
                M[i, j] = flint.fmpq(v.numerator, v.denominator)
            M[i, n] = flint.fmpq(b.numerator, b.denominator)
        return M
    base = list(zip(model.rows, model.rhs))
    extra = [({j: v for j, v in enumerate(f) if v}, Fraction(0)) for f in functionals]
    return mat(base).rank() == mat(base + extra).rank()


def decide(model: LinearModel, ineq: Inequality, guard: bool = True) -> CheckResult:
    """Decide whether the model's set satisfies *ineq*, with exact evidence."""
    if ineq.scenario.coordinates() != model.scenario.coordinates():
        raise InputError("the inequality and the theory describe different scenarios")
    if guard and ineq.marginals:
        marginal_guard(model, ineq)
    cost = model.cost(ineq)
    try:
        opt = exact_optimum(model, cost)
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
    return CheckResult(model.label, model.assumptions, ineq, "implied" if implied else "not implied",
                       opt.value, cert, ce, method, list(model.notes), model.kind, model.shape)


def recheck(model: LinearModel, result: CheckResult) -> str | None:
    """Independent exact re-check of a result's evidence; None when it holds.

    Uses only exact arithmetic on the compiled rows: no LP solver.
    """
    cost = model.cost(result.inequality)
    if result.implied:
        if result.certificate is None:
            return "no certificate"
        y = result.certificate.duals
        bad = duals_violation(model, cost, y)
        if bad:
            return bad
        if dual_bound(model, y) > result.inequality.bound:
            return "certificate gives a weaker bound"
        return None
    ce = result.counterexample
    if ce is None:
        return "no counterexample"
    bad = point_violation(model, ce.point)
    if bad:
        return bad
    value = sum((c * x for c, x in zip(cost, ce.point) if x), Fraction(0))
    if value <= result.inequality.bound or value != ce.value:
        return "the counterexample does not violate the inequality"
    if result.inequality.value(ce.behaviour) != value:
        return "behaviour and model point disagree"
    return None
