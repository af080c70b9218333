"""Deciding each claim kind, with exact evidence in the layout of :mod:`nogo.referee.evidence`.

Every kind is decided through the public functions of the other stages:
``nogo.check.decide``/``recheck`` (implications, with Farkas certificates or
exact counterexamples), ``nogo.minimal.check_claim`` (minimality by the sets
with one member removed, monotonicity covering the rest), ``nogo.facets``
(facet lists and comparisons by exact hulls), ``nogo.quantum`` (Born-rule
values in ball arithmetic, visibility LPs, NPA bounds) and
``nogo.possibilistic.decide_pattern`` (SAT with smallest cores).  This module
adds the evidence that the independent checker needs: for a set
comparison, the facets of one set certified on the other; for a facet,
the tight vertices with exact preimages and the affine hull certified both
ways; for a possibilistic contradiction, a Farkas certificate restricted to
the core's facts.

Verdicts: CONFIRMED / REFUTED (with the counterexample or the true value) /
NOT DECIDED (what stopped it) / ILL-POSED (the claim has no single meaning
under the declarations: the message says why).  Floats never decide.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

from ..errors import InputError
from .claims import Claim, bundle_spec, bundle_text
from .evidence import Verdict, ineq_record, model_record, q, sparse


class Context:
    """Loaded declarations and compiled models, shared by the claims of one file."""

    def __init__(self, workers: int = 1):
        self.workers = workers  # processes for facet certificates (through nogo.fanout)
        self.theories: dict[str, Any] = {}
        self.models: dict[tuple, tuple[Any, list[str], str]] = {}
        self.facet_results: dict[tuple, Any] = {}
        self.evidence: dict[tuple, list] = {}  # evidence shared by claims about the same object

    def theory(self, path: str):
        from ..theory import load_theory

        if path not in self.theories:
            self.theories[path] = load_theory(path)
        return self.theories[path]

    def names(self, theory, spec) -> list[str]:
        _, assumptions = theory.resolve(bundle_spec(spec))
        return [a.name for a in assumptions]

    def model(self, theory_path: str, spec) -> tuple[Any, list[str], str]:
        """(compiled model, assumption names, model id) of a bundle."""
        from ..compile import compile_bundle

        th = self.theory(theory_path)
        names = self.names(th, spec)
        key = (theory_path, tuple(names))
        if key not in self.models:
            label = bundle_text(spec) if not isinstance(spec, list) else "+".join(names)
            m = compile_bundle(th, spec if not isinstance(spec, list) else names)
            m.label = label
            self.models[key] = (m, names, f"m{len(self.models)}")
        return self.models[key]

    def facets(self, theory_path: str, spec, time_limit: float | None = None):
        from ..facets import facets

        key = (theory_path, tuple(self.names(self.theory(theory_path), spec)))
        if key not in self.facet_results or (self.facet_results[key].status != "complete" and time_limit is None):
            self.facet_results[key] = facets(self.theory(theory_path), bundle_spec(spec), cache=False,
                                             time_limit=time_limit)
        return self.facet_results[key]


# -- evidence helpers -------------------------------------------------------------
def use_model(v: Verdict, ctx: Context, theory_path: str, spec):
    model, names, mid = ctx.model(theory_path, spec)
    if mid not in v.models:
        v.models[mid] = model_record(model, theory_path, names)
    return model, mid


def bound_check(v: Verdict, mid: str, ineq, result, role: str) -> None:
    cert = result.certificate
    rec = {"type": "bound", "role": role, "model": mid, "inequality": ineq_record(ineq),
           "maximum": q(result.maximum)}
    if cert is None or not cert.duals:
        rec = {"type": "trusted", "role": role, "what": f"bound {q(result.maximum)} of {ineq.display()}",
               "why": "no Farkas multipliers were recovered (exact optimum from z3)"}
    else:
        rec["multipliers"] = sparse(cert.duals)
    v.checks.append(rec)


def exceeds_check(v: Verdict, mid: str, ineq, point, value, role: str) -> None:
    v.checks.append({"type": "exceeds", "role": role, "model": mid, "inequality": ineq_record(ineq),
                     "point": sparse(point), "value": q(value)})


def decided(model, ineq, guard: bool = True):
    from ..check import decide, recheck

    r = decide(model, ineq, guard=guard)
    bad = recheck(model, r)
    if bad:
        raise RuntimeError(f"the evidence failed its exact re-check: {bad}")
    return r


def record(v: Verdict, mid: str, ineq, r, role: str) -> None:
    if r.implied:
        bound_check(v, mid, ineq, r, role)
    else:
        exceeds_check(v, mid, ineq, r.counterexample.point, r.counterexample.value, role)


def preimage(model, behaviour: list[Fraction]) -> list[Fraction] | None:
    """An exact point of the model whose behaviour is *behaviour* (checked), or None."""
    from ..exact import ExactFailure, exact_optimum, point_violation
    from ..model import LinearModel

    rows, rhs = list(model.rows), list(model.rhs)
    for i, p in enumerate(behaviour):
        rows.append({j: obs[i] for j, obs in enumerate(model.observe) if i in obs})
        rhs.append(Fraction(p))
    fixed = LinearModel(model.scenario, model.label, model.assumptions, model.columns, rows, rhs,
                        list(model.sources) + [model.sources[0]] * len(behaviour), model.observe)
    n = len(model.columns)
    for cost in ([Fraction(0)] * n, [Fraction(-((j * 7919) % 11)) for j in range(n)]):
        try:
            opt = exact_optimum(fixed, cost)
        except (ExactFailure, AttributeError, ValueError):  # the z3 fallback refuses a constant objective
            continue
        if point_violation(fixed, opt.point) is None:
            return opt.point
    return None


def inside_check(v: Verdict, mid: str, model, points: list, role: str) -> bool:
    items = []
    for p in points:
        pre = preimage(model, list(p))
        if pre is None:
            return False
        items.append({"behaviour": [q(x) for x in p], "preimage": sparse(pre)})
    v.checks.append({"type": "inside", "role": role, "model": mid, "points": items})
    return True


def inequality(ctx: Context, claim: Claim):
    from ..catalog import resolve_inequality

    th = ctx.theory(claim.theory)
    return resolve_inequality(th.scenario, str(claim.params["inequality"]))


def _catalog_file(ctx: Context, claim: Claim, v: Verdict) -> None:
    from ..catalog import catalog_dir, load_catalog

    name = str(claim.params.get("inequality", ""))
    try:
        cat = load_catalog()
    except InputError:
        return
    if name in cat:
        for p in sorted(catalog_dir().glob("*.yaml")):
            if p.stem.lower() == name.lower() or name in p.read_text(encoding="utf-8").split("\n", 1)[0]:
                v.files["catalog"] = str(p)
                return


# -- implications -------------------------------------------------------------------
def _uses_read_out(ineq) -> bool:
    sc = ineq.scenario
    ro = {(o.lab, x) for o in sc.inner for x, _ in o.read_outs}  # every read-out setting
    return any((p, s[i]) in ro for (s, _), c in ineq.coeffs.items() if c for i, p in enumerate(sc.party_names))


def versions_of(ineq, which: str) -> list:
    if which in (None, "one"):
        return [ineq]
    from ..symmetry import orbit

    out = orbit(ineq)
    if which == "read-out":
        out = [x for x in out if _uses_read_out(x)]
    elif which == "no-read-out":
        out = [x for x in out if not _uses_read_out(x)]
    return out


def decide_implication(ctx: Context, claim: Claim, v: Verdict) -> None:
    positive = claim.kind == "implies"
    ineq = inequality(ctx, claim)
    v.notation = ineq.display()
    model, mid = use_model(v, ctx, claim.theory, claim.params["bundle"])
    which = claim.params.get("versions", "one")
    targets = versions_of(ineq, which)
    if not targets:
        v.status, v.summary = "ILL-POSED", f"no version of the inequality matches 'versions: {which}'"
        v.account = v.summary + " in this scenario; the claim speaks of nothing."
        return
    results = [decided(model, t) for t in targets]
    bad = [r for r in results if r.implied != positive]
    for t, r in zip(targets, results):
        if not bad or r is bad[0]:
            record(v, mid, t, r, "claim")
    b = bundle_text(claim.params["bundle"])
    n = len(targets)
    many = f"all {n} versions ({which}) of " if n > 1 else ""
    v.details = {"versions": n, "maxima": [q(r.maximum) for r in results], "bound": q(ineq.bound)}
    if not bad:
        v.status = "CONFIRMED"
        if positive:
            v.summary = f"{b} implies {many}{ineq.name or 'the inequality'} (max {q(max(r.maximum for r in results))})"
            v.account = (f"The largest value of the left side over the set of bundle {b} is "
                         f"{q(max(r.maximum for r in results))} (exact), at most the bound {q(ineq.bound)}"
                         f"{' for each version' if n > 1 else ''}. Evidence: non-negative rational multipliers of "
                         f"the compiled rows (a Farkas certificate) whose combination bounds the left side, "
                         f"checked in exact arithmetic.")
        else:
            v.summary = f"{b} does not imply {many}{ineq.name or 'the inequality'}"
            v.account = (f"A behaviour of the set of bundle {b} reaches {q(results[0].maximum)} > {q(ineq.bound)}. "
                         f"Evidence: an exact rational point of the compiled model (the full hidden joint "
                         f"distribution) satisfying every row and violating the inequality.")
        return
    r = bad[0]
    t = targets[results.index(r)]
    v.status = "REFUTED"
    if positive:
        v.summary = f"{b} allows {q(r.maximum)} > {q(t.bound)} on {t.display()}"
        v.account = (f"The claimed bound does not follow: an exact rational behaviour of bundle {b} reaches "
                     f"{q(r.maximum)} on {t.display()}, above the claimed {q(t.bound)}; the tightest bound the bundle "
                     f"gives is {q(r.maximum)}. Evidence: the counterexample point of the compiled model.")
    else:
        v.summary = f"{b} implies {t.display()} (max {q(r.maximum)})"
        v.account = (f"Contrary to the claim, bundle {b} implies {t.display()}: its exact maximum is {q(r.maximum)}. "
                     f"Evidence: a Farkas certificate over the compiled rows.")


def decide_minimal(ctx: Context, claim: Claim, v: Verdict) -> None:
    from ..minimal import check_claim

    th = ctx.theory(claim.theory)
    ineq = inequality(ctx, claim)
    v.notation = ineq.display()
    members = ctx.names(th, claim.params["bundle"])
    fixed = ctx.names(th, claim.params["background"]) if "background" in claim.params else []
    res = check_claim(th, ineq, members, fixed=fixed)
    background = list(res.background)

    def names_of(ans):
        return [n for n in th.assumptions if n in ans.subset or n in set(background)]

    def ev(ans, role):
        if ans.result is None:
            return
        m, mid = use_model(v, ctx, claim.theory, names_of(ans))
        r = ans.result
        if r.implied:
            bound_check(v, mid, r.inequality, r, role)
        else:
            exceeds_check(v, mid, r.inequality, r.counterexample.point, r.counterexample.value, role)

    v.details = {"oracle_calls": res.oracle_calls, "claimed": sorted(res.claimed), "background": background}
    if res.whole.status == "refused":
        v.status, v.summary = "ILL-POSED", "the inequality has no single meaning under the claimed set"
        v.account = res.whole.message
        return
    ev(res.whole, "whole")
    for p, a in res.drops.items():
        ev(a, f"without {p}")
    if res.smaller is not None:
        ev(res.smaller, "smaller")
    s = "{" + ", ".join(sorted(res.claimed)) + "}"
    if res.verdict == "confirmed":
        v.status = "CONFIRMED"
        v.summary = f"{s} implies it and no proper subset does"
        v.account = (f"The set {s} implies the inequality (Farkas certificate), and each of the {len(res.drops)} sets "
                     f"with one member removed allows a behaviour violating it (an exact counterexample each); by "
                     f"monotonicity every proper subset lies below one of them. {res.oracle_calls} exact decisions.")
    else:
        v.status = "REFUTED"
        v.summary = res.reason.split(":")[0] if res.smaller is None else \
            f"not minimal: {{{', '.join(sorted(res.smaller.subset))}}} already implies it"
        v.account = f"The claim that {s} is minimal fails: {res.reason}."
        if res.smaller is not None:
            v.details["smaller"] = sorted(res.smaller.subset)


def settle(v: Verdict, status: str, summary: str, account: str) -> None:
    """The verdict's status, one-line summary and account in words."""
    v.status, v.summary, v.account = status, summary, account


def decide_not_needed(ctx: Context, claim: Claim, v: Verdict) -> None:
    th = ctx.theory(claim.theory)
    ineq = inequality(ctx, claim)
    v.notation = ineq.display()
    names = ctx.names(th, claim.params["bundle"])
    drop = str(claim.params["assumption"])
    if drop not in names:
        v.status, v.summary = "ILL-POSED", f"'{drop}' is not a member of the bundle"
        v.account = f"The bundle {{{', '.join(names)}}} does not contain '{drop}', so dropping it says nothing."
        return
    rest = [n for n in names if n != drop]
    model, mid = use_model(v, ctx, claim.theory, rest)
    r = decided(model, ineq)
    record(v, mid, ineq, r, "claim")
    rs = "{" + ", ".join(rest) + "}"
    if r.implied:
        settle(v, "CONFIRMED", f"without {drop}, {rs} still implies it",
               f"Dropping '{drop}' leaves {rs}, which still implies the inequality: exact maximum "
               f"{q(r.maximum)} <= {q(ineq.bound)}, with a Farkas certificate.")
    else:
        settle(v, "REFUTED", f"without {drop} the set allows {q(r.maximum)} > {q(ineq.bound)}",
               f"'{drop}' is needed: {rs} allows an exact behaviour reaching {q(r.maximum)}, above the bound "
               f"{q(ineq.bound)}.")
