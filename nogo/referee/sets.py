"""Set claims: facets, facet counts, equal and contained sets (through nogo.facets).

A containment X ⊆ Y is shown by every facet and hull equation of Y implied by X
(a Farkas certificate each) and Y's vertices having exact preimages; a
non-containment by a vertex of X (exact preimage) breaking an inequality
certified valid on Y.  A facet: valid (certificate), the set's dimension from
hull equations certified both ways and affinely independent points with
preimages, and dim − 1 affinely independent tight points.  The completeness of
a facet list rests on the exact hull of ``nogo.facets`` (a ``trusted`` record).
"""

from __future__ import annotations

from fractions import Fraction

from .claims import Claim, bundle_text
from .decide import (Context, bound_check, decided, exceeds_check, inequality, inside_check, preimage, record,
                     use_model)
from .evidence import Verdict, ineq_record, q, sparse


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


def _certify_chunk(model, ineqs) -> list[list[Fraction]]:
    """Farkas multipliers of several inequalities on one model (a pure function, for fan_out; *model* shared)."""
    from ..check import decide

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
        chunks = [ineqs[i:i + size] for i in range(0, len(ineqs), size)]
        duals = [y for part in fan_out(_certify_chunk, chunks, ctx.workers, shared=model) for y in part]
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


