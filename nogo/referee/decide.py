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

import time
from fractions import Fraction
from typing import Any, Callable

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
    ro = {(o.lab, o.read_out_at) for o in sc.inner if o.read_out_at is not None}
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
        v.status, v.summary = "CONFIRMED", f"without {drop}, {rs} still implies it"
        v.account = (f"Dropping '{drop}' leaves {rs}, which still implies the inequality: exact maximum "
                     f"{q(r.maximum)} <= {q(ineq.bound)}, with a Farkas certificate.")
    else:
        v.status, v.summary = "REFUTED", f"without {drop} the set allows {q(r.maximum)} > {q(ineq.bound)}"
        v.account = (f"'{drop}' is needed: {rs} allows an exact behaviour reaching {q(r.maximum)}, above the bound "
                     f"{q(ineq.bound)}.")


# -- sets and facets ---------------------------------------------------------------------
def _ineq_of(res, f):
    return res.polytope.inequality(f)


def _equation_ineqs(res):
    from ..inequality import Inequality

    sc = res.scenario
    coords = sc.coordinates()
    out = []
    for h, val in res.polytope.equations:
        for sign in (1, -1):
            coeffs = {c: Fraction(sign * x) for c, x in zip(coords, h) if x}
            out.append(Inequality(sc, coeffs, Fraction(sign) * Fraction(val), "", f"hull equation ({'<=' if sign > 0 else '>='})"))
    return out


def _contained_evidence(v: Verdict, ctx: Context, claim: Claim, inner_spec, outer_res, outer_spec) -> None:
    """inner ⊆ outer: every facet and hull equation of outer certified on inner; outer's vertices in outer."""
    inner_m, inner_id = use_model(v, ctx, claim.theory, inner_spec)
    outer_m, outer_id = use_model(v, ctx, claim.theory, outer_spec)
    for t in [_ineq_of(outer_res, f) for f in outer_res.polytope.facets] + _equation_ineqs(outer_res):
        r = decided(inner_m, t, guard=False)
        if not r.implied:
            raise RuntimeError("comparison and certificate disagree; this is a bug in nogo")
        bound_check(v, inner_id, t, r, "outer facet on inner")
    inside_check(v, outer_id, outer_m, outer_res.vertices, "outer vertices")
    v.checks.append({"type": "trusted", "role": "hull", "what": f"the {len(outer_res.facets)} facets listed are all "
                     f"the facets of the hull of the {len(outer_res.vertices)} listed vertices of {bundle_text(outer_spec)}",
                     "why": "exact hull (cddlib, fractions) in the deciding run; the checker re-checks each facet's "
                            "validity and each vertex, not that none is missing"})


def _witness_evidence(v, ctx, claim, spec_in, res_in, spec_out, res_out, w) -> None:
    """A vertex of res_in that breaks a facet (or equation) of res_out: both halves exact."""
    m_in, id_in = use_model(v, ctx, claim.theory, spec_in)
    m_out, id_out = use_model(v, ctx, claim.theory, spec_out)
    if w.facet is not None:
        t = _ineq_of(res_out, res_out.polytope.facets[w.facet])
        cands = [t]
    else:
        cands = _equation_ineqs(res_out)
    for t in cands:
        if t.value(dict(zip(res_in.scenario.coordinates(), w.behaviour))) > t.bound:
            r = decided(m_out, t, guard=False)
            bound_check(v, id_out, t, r, "valid on the outer set")
            pre = preimage(m_in, list(w.behaviour))
            exceeds_check(v, id_in, t, pre, t.value(dict(zip(res_in.scenario.coordinates(), w.behaviour))),
                          "a behaviour of the inner set breaks it")
            v.notation = t.display()
            return
    raise RuntimeError("no broken inequality found for a witness; this is a bug in nogo")


def decide_sets(ctx: Context, claim: Claim, v: Verdict) -> None:
    from ..facets import compare_results

    if claim.kind == "same_set":
        a, b = claim.params["bundles"]
    else:
        a, b = claim.params["inner"], claim.params["outer"]
    tl = claim.params.get("time_limit")
    ra, rb = ctx.facets(claim.theory, a, tl), ctx.facets(claim.theory, b, tl)
    if ra.status != "complete" or rb.status != "complete":
        v.status, v.summary = "NOT DECIDED", f"a facet description stayed partial (time limit {tl} s)"
        v.account = (f"The exact descriptions did not finish within the time limit: {bundle_text(a)} "
                     f"{ra.status} ({len(ra.vertices)} vertices, {len(ra.facets)} facets so far), {bundle_text(b)} "
                     f"{rb.status} ({len(rb.vertices)} vertices, {len(rb.facets)} facets so far); no comparison is "
                     "claimed.")
        return
    c = compare_results(ra, rb)
    at, bt = bundle_text(a), bundle_text(b)
    v.details = {"relation": c.relation, "facets": [len(ra.facets), len(rb.facets)],
                 "vertices": [len(ra.vertices), len(rb.vertices)]}
    a_in_b = c.relation in ("equal", "first inside second")
    b_in_a = c.relation in ("equal", "second inside first")
    want = {"same_set": (True, True), "contained_in": (True, None), "not_contained_in": (False, None)}[claim.kind]
    ok = (a_in_b == want[0]) and (want[1] is None or b_in_a == want[1])
    v.status = "CONFIRMED" if ok else "REFUTED"
    rel = {"equal": f"{at} = {bt}", "first inside second": f"{at} ⊂ {bt}", "second inside first": f"{bt} ⊂ {at}",
           "neither": f"neither of {at}, {bt} contains the other"}[c.relation]
    v.summary = rel
    # evidence for each direction that matters
    if a_in_b:
        _contained_evidence(v, ctx, claim, a, rb, b)
    elif c.first_outside:
        _witness_evidence(v, ctx, claim, a, ra, b, rb, c.first_outside[0])
    if claim.kind == "same_set":
        if b_in_a:
            _contained_evidence(v, ctx, claim, b, ra, a)
        elif c.second_outside:
            _witness_evidence(v, ctx, claim, b, rb, a, ra, c.second_outside[0])
    parts = [f"Both sets were described exactly ({at}: {len(ra.vertices)} vertices, {len(ra.facets)} facets; "
             f"{bt}: {len(rb.vertices)} vertices, {len(rb.facets)} facets): {rel}."]
    for role, spec_in, spec_out, inside, w in (("first", at, bt, a_in_b, c.first_outside),
                                               ("second", bt, at, b_in_a, c.second_outside)):
        if role == "second" and claim.kind != "same_set":
            break
        if inside:
            parts.append(f"{spec_in} ⊆ {spec_out}: every facet and hull equation of {spec_out} is implied by "
                         f"{spec_in} (a Farkas certificate each), and {spec_out}'s vertices have exact preimages "
                         f"in its model.")
        elif w:
            parts.append(f"{spec_in} ⊄ {spec_out}: a vertex of {spec_in} (exact preimage) reaches {q(w[0].value)} on "
                         f"{w[0].breaks}, whose bound {q(w[0].bound)} is certified valid on {spec_out}.")
    v.account = " ".join(parts)


def _affine_evidence(v, ctx, claim, res, mid, model) -> None:
    for t in _equation_ineqs(res):
        bound_check(v, mid, t, decided(model, t, guard=False), "hull equation")


def decide_facet(ctx: Context, claim: Claim, v: Verdict) -> None:
    ineq = inequality(ctx, claim)
    v.notation = ineq.display()
    model, mid = use_model(v, ctx, claim.theory, claim.params["bundle"])
    r = decided(model, ineq, guard=False)
    b = bundle_text(claim.params["bundle"])
    if not r.implied:
        record(v, mid, ineq, r, "claim")
        v.status, v.summary = "REFUTED", f"not even valid: {b} reaches {q(r.maximum)} > {q(ineq.bound)}"
        v.account = f"The inequality is not valid on the set of {b}, so it is no facet: an exact behaviour reaches {q(r.maximum)}."
        return
    res = ctx.facets(claim.theory, claim.params["bundle"], claim.params.get("time_limit"))
    if res.status != "complete":
        bound_check(v, mid, ineq, r, "claim")
        v.status, v.summary = "NOT DECIDED", "valid, but the facet derivation stopped at its time limit"
        v.account = (f"The inequality is valid on the set (Farkas certificate); the exact description stopped after "
                     f"{len(res.vertices)} vertices and {len(res.facets)} facets, before facetness was settled.")
        return
    f = res.facet_of(ineq)
    coords = res.scenario.coordinates()
    tight = [p for p in res.vertices if ineq.value(dict(zip(coords, p))) == ineq.bound]
    v.details = {"dimension": res.dim, "tight_vertices": len(tight), "maximum": q(r.maximum)}
    if f is not None:
        bound_check(v, mid, ineq, r, "claim")
        _affine_evidence(v, ctx, claim, res, mid, model)
        pts = _affine_points(res.vertices, tight)
        inside_check(v, mid, model, pts, "spanning points")
        v.checks.append({"type": "face", "role": "claim", "model": mid, "inequality": ineq_record(ineq),
                         "dimension": res.dim, "tight": [i for i, p in enumerate(pts) if p in tight]})
        v.status = "CONFIRMED"
        v.summary = f"a facet of the {res.dim}-dimensional set of {b} ({len(tight)} vertices on it)"
        v.account = (f"The inequality is valid (Farkas certificate, maximum {q(r.maximum)}), the set's affine hull "
                     f"is cut out by {len(res.polytope.equations)} equations certified both ways, so the set has "
                     f"dimension {res.dim}; {res.dim} affinely independent vertices with exact preimages lie on the "
                     f"inequality and one off it, so the face it defines has dimension {res.dim - 1}.")
    else:
        bound_check(v, mid, ineq, r, "claim")
        v.checks.append({"type": "trusted", "role": "hull", "what": f"only {len(tight)} of the {len(res.vertices)} "
                         "vertices are tight, spanning less than a facet", "why": "the vertex list is complete by the "
                         "exact hull of the deciding run"})
        v.status = "REFUTED" if r.maximum == ineq.bound else "REFUTED"
        v.summary = (f"valid but not a facet of {b}" if r.maximum == ineq.bound
                     else f"valid but not tight on {b} (max {q(r.maximum)})")
        v.account = (f"The inequality holds on the set of {b} (exact maximum {q(r.maximum)}), but it is not one of "
                     f"its {len(res.facets)} facets: the vertices on it span a face of lower dimension.")


def _affine_points(vertices, tight):
    """Tight vertices spanning their face, plus one vertex off it (exact rank, greedy)."""
    import flint

    def rank(pts):
        if len(pts) < 2:
            return 0
        M = flint.fmpq_mat([[flint.fmpq(x.numerator, x.denominator) for x in (Fraction(a) - Fraction(b)
                                                                          for a, b in zip(p, pts[0]))] for p in pts[1:]])
        return M.rank()

    chosen: list = []
    for p in tight:
        if not chosen or rank(chosen + [p]) > rank(chosen):
            chosen.append(p)
    for p in vertices:
        if p not in tight:
            chosen.append(p)
            break
    return chosen


def _certify_chunk(task) -> list[list[Fraction]]:
    """Farkas multipliers of several inequalities on one model (a pure function, for fan_out)."""
    from ..check import decide

    model, ineqs = task
    out = []
    for t in ineqs:
        # decide() returns only multipliers that passed its exact checks (nogo.exact); a second re-check
        # per facet would double the cost, and the bundle is re-verified as a whole by `nogo recheck`
        r = decide(model, t, guard=False)
        if not r.implied or r.certificate is None:
            raise RuntimeError("a facet of the derivation is not certified valid; this is a bug in nogo")
        out.append(r.certificate.duals)
    return out


def decide_facet_count(ctx: Context, claim: Claim, v: Verdict) -> None:
    res = ctx.facets(claim.theory, claim.params["bundle"], claim.params.get("time_limit"))
    b = bundle_text(claim.params["bundle"])
    model, mid = use_model(v, ctx, claim.theory, claim.params["bundle"])
    n, k = len(res.facets), len(res.classes)
    want_n, want_k = claim.params["facets"], claim.params.get("classes")
    v.details = {"facets": n, "classes": k, "vertices": len(res.vertices), "dimension": res.dim,
                 "class_sizes": {c.name: c.size for c in res.classes}}
    v.notation = ", ".join(f"{c.name}: {c.size}" for c in res.classes)
    if res.status != "complete":
        v.status, v.summary = "NOT DECIDED", f"the derivation stopped at its time limit with {n} facets found"
        v.account = (f"The facet derivation stopped at its time limit ({claim.params.get('time_limit')} s) with "
                     f"{len(res.vertices)} vertices and {n} candidate facets; no count is claimed.")
        return
    key = ("facet list", claim.theory, mid)
    if key not in ctx.evidence:  # the same set counted by several claims: certify its facets once
        before = len(v.checks)
        _affine_evidence(v, ctx, claim, res, mid, model)
        inside_check(v, mid, model, res.vertices, "vertices")
        from ..fanout import fan_out

        ineqs = [_ineq_of(res, f) for f in res.polytope.facets]
        size = max(1, len(ineqs) // (4 * max(1, ctx.workers)))
        chunks = [(model, ineqs[i:i + size]) for i in range(0, len(ineqs), size)]
        duals = [y for part in fan_out(_certify_chunk, chunks, ctx.workers) for y in part]
        facets = [{"inequality": ineq_record(t), "multipliers": sparse(y)} for t, y in zip(ineqs, duals)]
        v.checks.append({"type": "facets", "role": "claim", "model": mid, "dimension": res.dim, "facets": facets,
                         "count": n})
        ctx.evidence[key] = v.checks[before:]
    else:
        v.checks.extend(ctx.evidence[key])
    v.checks.append({"type": "trusted", "role": "hull", "what": f"no facet beyond these {n}; {k} classes under "
                     f"the symmetries {', '.join(res.symmetries) or '(none)'}",
                     "why": "exact hull (cddlib, fractions) and union-find over the symmetry moves in the deciding "
                            "run; the checker re-checks every listed facet (valid, tight on a facet's worth of "
                            "vertices, pairwise distinct), not that none is missing"})
    ok = n == want_n and (want_k is None or k == want_k)
    v.status = "CONFIRMED" if ok else "REFUTED"
    v.summary = f"{n} facets in {k} classes" + ("" if ok else f" (claimed {want_n}" +
                                                 (f" in {want_k}" if want_k is not None else "") + ")")
    v.account = (f"The set of {b} is {res.dim}-dimensional with {len(res.vertices)} vertices (exact preimages) and "
                 f"{n} facets in {k} classes ({v.notation}). Each facet is certified valid by a Farkas "
                 f"certificate and tight on {res.dim} affinely independent vertices; that no facet is missing "
                 f"rests on the exact hull of the vertex list.")


# -- possibilistic -------------------------------------------------------------------------
def decide_pattern_claim(ctx: Context, claim: Claim, v: Verdict) -> None:
    from ..possibilistic import decide_pattern, load_pattern, to_markdown

    th = ctx.theory(claim.theory)
    pat = load_pattern(claim.params["pattern"], th.scenario)
    v.files["pattern"] = claim.params["pattern"]
    b = bundle_text(claim.params["bundle"])
    model, _ = use_model(v, ctx, claim.theory, claim.params["bundle"])
    if model.kind == "mixture":
        _decide_pattern_responses(ctx, claim, v, th, pat, b)
        return
    res = decide_pattern(th, bundle_spec(claim.params["bundle"]), pat, minimise="smallest", time_limit=20.0)
    k = claim.params.get("facts")
    if not res.contradiction:
        v.status, v.summary = "REFUTED", f"the pattern is consistent with {b}"
        v.account = (f"No contradiction: a support satisfying every assumption of {b} and every fact of the pattern "
                     f"exists (the largest one, accepted by nogo's independent support checker).")
        v.details = {"model": {",".join(s): [",".join(e) for e in es] for s, es in (res.model or {}).items()}}
        v.checks.append({"type": "trusted", "role": "claim", "what": "the consistent support",
                         "why": "the support-level checker of nogo.possibilistic re-checked it in the deciding run"})
        return
    facts = [g for g in res.core if g.kind in ("possible", "impossible")]
    v.details = {"core_size": len(res.core), "facts": len(facts), "smallest_proven": res.smallest_proven,
                 "core": res.core_names(), "assumptions_needed": res.assumptions_needed()}
    v.notation = "; ".join(g.name(res.parties) for g in facts)
    if res.proof is not None:
        v.details["proof_markdown"] = to_markdown(res.proof, {n: a.says for n, a in th.assumptions.items()})
        v.details["proof"] = res.proof.to_dict()
    _pattern_certificate(v, ctx, claim, [(g.kind, g.settings, g.outcomes) for g in facts])
    if k is None or len(facts) <= k:
        v.status = "CONFIRMED"
        v.summary = f"contradiction from {len(facts)} facts" + (f" (at most {k} claimed)" if k else "")
        v.account = (f"No support obeys {b} and the pattern: unit propagation over a core of {len(res.core)} "
                     f"constraints ({len(facts)} observed facts) derives a contradiction; the proof steps are in the "
                     f"evidence. As an exact cross-check the same facts force the possible events' probabilities to "
                     f"zero in the bundle's linear model (Farkas certificate).")
    elif res.smallest_proven:
        v.status, v.summary = "REFUTED", f"the smallest contradiction needs {len(facts)} facts, more than {k}"
        v.account = (f"The smallest unsatisfiable core (proven smallest by the hitting-set search) uses {len(facts)} "
                     f"facts, more than the claimed {k}.")
    else:
        v.status, v.summary = "NOT DECIDED", f"found a contradiction with {len(facts)} facts; smaller not excluded"
        v.account = (f"The smallest-core search stopped at its time limit with a core of {len(facts)} facts "
                     f"(lower bound {res.lower_bound} constraints); the claim of at most {k} is neither shown nor refuted.")


def _decide_pattern_responses(ctx, claim, v, th, pat, b) -> None:
    """Hidden-variable bundles: the pattern read over the mixture's responses (nogo.possibilistic.responses)."""
    from ..possibilistic.responses import decide_responses, response_proof_markdown

    res = decide_responses(th, bundle_spec(claim.params["bundle"]), pat)
    k = claim.params.get("facts")
    if not res.contradiction:
        v.status, v.summary = "REFUTED", f"the pattern is consistent with {b}"
        v.account = (f"Responses of the mixture of {b} that produce no impossible event still produce every possible "
                     f"event ({len(res.model)} survive), so the pattern can occur.")
        v.details = {"surviving_responses": res.model}
        v.checks.append({"type": "trusted", "role": "claim", "what": "the surviving responses",
                         "why": "re-checked by nogo.possibilistic.responses in the deciding run"})
        return
    facts = [("impossible", s, a) for s, a in res.facts] + [("possible",) + tuple(res.event)]
    v.details = {"facts": len(facts), "exclusions": len(res.exclusions),
                 "proof_markdown": response_proof_markdown(res, th.file or "")}
    v.notation = "; ".join(f"p({','.join(a)}|{','.join(s)}) {'> 0' if kind == 'possible' else '= 0'}"
                           for kind, s, a in facts)
    _pattern_certificate(v, ctx, claim, facts)
    if k is None or len(facts) <= k:
        v.status = "CONFIRMED"
        v.summary = f"contradiction from {len(facts)} facts" + (f" (at most {k} claimed)" if k else "")
        v.account = (f"Every response of the mixture of {b} that could produce the possible event "
                     f"p({','.join(res.event[1])}|{','.join(res.event[0])}) would also produce one of "
                     f"{len(res.facts)} impossible events, so it has weight zero; as an exact cross-check the same "
                     f"facts force that probability to zero (Farkas certificate over the responses' weights).")
    else:
        v.status, v.summary = "NOT DECIDED", f"found a contradiction with {len(facts)} facts; smaller not searched"
        v.account = ("The response reading covers the excluded responses greedily; a smaller set of facts is not "
                     f"excluded, so 'at most {k}' is neither shown nor refuted.")


def _pattern_certificate(v, ctx, claim, facts) -> None:
    """Zeros of the core's impossible facts force its possible events to probability zero (linear models)."""
    from ..inequality import Inequality
    from ..model import LinearModel, RowSource

    model, mid = use_model(v, ctx, claim.theory, claim.params["bundle"])
    sc = model.scenario
    coords = {c: i for i, c in enumerate(sc.coordinates())}
    rows, rhs, src = list(model.rows), list(model.rhs), list(model.sources)
    for kind, st, outs in facts:
        if kind == "impossible":
            i = coords[(tuple(st), tuple(outs))]
            rows.append({j: o[i] for j, o in enumerate(model.observe) if i in o})
            rhs.append(Fraction(0))
            src.append(RowSource("fact", "fact", 0, tuple(sc.party_names),
                                 f"p({','.join(outs)}|{','.join(st)}) = 0"))
    fixed = LinearModel(sc, model.label + " with the facts", model.assumptions, model.columns, rows, rhs, src,
                        model.observe, kind=model.kind)
    poss = {(tuple(st), tuple(outs)): Fraction(1) for kind, st, outs in facts if kind == "possible"}
    ineq = Inequality(sc, poss, Fraction(0), "possible events", " + ".join(
        f"p({','.join(a)}|{','.join(s)})" for s, a in poss) + " <= 0")
    r = decided(fixed, ineq, guard=False)
    if not r.implied:
        v.checks.append({"type": "trusted", "role": "claim", "what": "the possibilistic contradiction",
                         "why": "the facts alone do not force zeros in the linear model; the support proof stands"})
        return
    fid = mid + "f"
    rec = model_record(fixed, claim.theory, v.models[mid]["assumptions"])
    rec["facts_from"] = "pattern"
    v.models[fid] = rec
    bound_check(v, fid, ineq, r, "claim")


DECIDERS: dict[str, Callable] = {
    "implies": decide_implication, "does_not_imply": decide_implication, "minimal": decide_minimal,
    "not_needed": decide_not_needed, "same_set": decide_sets, "contained_in": decide_sets,
    "not_contained_in": decide_sets, "facet": decide_facet, "facet_count": decide_facet_count,
    "contradiction": decide_pattern_claim, "contradiction_within": decide_pattern_claim,
}


def decide_claim(ctx: Context, claim: Claim) -> Verdict:
    """Decide one claim; a claim the declarations cannot give one meaning is ILL-POSED, not an error."""
    from .quantum import QUANTUM

    t0 = time.perf_counter()
    v = Verdict(claim.id, claim.kind, "NOT DECIDED", "", "")
    if claim.theory:
        v.files["theory"] = claim.theory
    fn = DECIDERS.get(claim.kind) or QUANTUM[claim.kind]
    try:
        fn(ctx, claim, v)
    except InputError as exc:
        v.status, v.summary = "ILL-POSED", exc.message.split(";")[0]
        v.account = f"The claim cannot be given one meaning under the declarations: {exc.message}."
        if exc.hint:
            v.account += f" ({exc.hint}.)"
        v.checks, v.models = [], {}
    except Exception as exc:  # noqa: BLE001 - one claim's failure must not hide the verdicts of the others
        import os

        if os.environ.get("NOGO_DEBUG"):
            raise
        v.status, v.summary = "NOT DECIDED", f"nogo could not decide it ({type(exc).__name__})"
        v.account = (f"Deciding this claim stopped with an internal error ({type(exc).__name__}: {exc}); no verdict "
                     "is given. This is a defect of nogo, not of the claim: please report it (NOGO_DEBUG=1 shows "
                     "where it happened).")
        v.checks, v.models = [], {}
    v.seconds = time.perf_counter() - t0
    return v
