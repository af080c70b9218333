"""Quantum claims: a value, a violation, lying outside a set, a critical visibility, an NPA bound.

Built on :mod:`nogo.quantum` (Born rule in exact sympy form and in Arb balls,
``certify.evaluate``, ``visibility.robustness``, ``npa.npa_bound``).  The
evidence gives each Born probability as a rational interval (the ball's
end points, exact dyadic numbers) and, when every probability lies in one
quadratic field Q(√n), its exact form r0 + r1·√n; the checker redoes the
sums in exact rational (or Q(√n)) arithmetic.

Critical visibility v_c = max {v : v·p_state + (1 − v)·p_noise in the set}
is bracketed exactly: the upper end by the separating inequality of
``robustness`` (Farkas certificate; past v = (β − S(p_noise)) / (S(p_state) −
S(p_noise)) the mixture breaks it), the lower end by a rational visibility L
whose behaviour lies on a segment between two rational behaviours of the set
(√n replaced by rationals just below and above it), each with an exact
preimage; convexity does the rest.  White-noise visibility of the singlet
against CHSH, 1/√2, is the standard check value (from memory).
"""

from __future__ import annotations

import math
from fractions import Fraction

from .claims import Claim, bundle_text
from .decide import Context, bound_check, inequality, inside_check, use_model
from .evidence import Verdict, ineq_record, q


def _frac_of_arb(x) -> Fraction:
    m, e = x.man_exp()
    return Fraction(int(m)) * (Fraction(2) ** int(e))


def quadratic_form(exact: dict):
    """(n, {coord: (r0, r1)}) when every entry is r0 + r1·√n with rationals, else None."""
    import sympy

    bases = set()
    for e in exact.values():
        for a in sympy.expand(e).atoms(sympy.Pow):
            if a.exp == sympy.Rational(1, 2) and a.base.is_Integer:
                bases.add(int(a.base))
            elif not a.exp.is_Integer:
                return None
    if len(bases) > 1:
        return None
    n = bases.pop() if bases else 1
    out = {}
    r = sympy.sqrt(n)
    for k, e in exact.items():
        e = sympy.expand(e)
        r1 = e.coeff(r) if n != 1 else sympy.Integer(0)
        r0 = sympy.expand(e - r1 * r) if n != 1 else e
        if not (r0.is_Rational and r1.is_Rational) or sympy.expand(r0 + r1 * r - e) != 0:
            return None
        out[k] = (Fraction(int(r0.p), int(r0.q)), Fraction(int(r1.p), int(r1.q)))
    return n, out


def behaviour_record(exp) -> dict:
    """Rational interval enclosures of the Born probabilities, and the exact Q(√n) form when there is one."""
    from ..quantum.born import ball_behaviour, exact_behaviour

    coords = exp.scenario.coordinates()
    balls = ball_behaviour(exp)
    rec = {"intervals": [[q(_frac_of_arb(balls[k].lower())), q(_frac_of_arb(balls[k].upper()))] for k in coords],
           "state": str(exp.state.label), "measurements": _measurement_text(exp)}
    try:
        form = quadratic_form(exact_behaviour(exp))
    except ValueError:
        form = None
    if form is not None:
        n, vals = form
        rec["sqrt"] = n
        rec["exact"] = [[q(vals[k][0]), q(vals[k][1])] for k in coords]
    return rec


def _measurement_text(exp) -> dict:
    """The effective measurement of each lab's outcome, keyed "party+setting"; for a lab whose
    observers choose (no one measurement per setting), keyed by the lab and the reading's number."""
    out = {}
    try:
        for p in exp.scenario.parties:
            for x in p.settings:
                out[f"{p.name}{x}"] = _one_measurement(exp.effective(p.name, x))
    except ValueError:
        out = {}
        rows, _ = exp.lab_rows()
        for lab, ms in zip(exp.scenario.labs, rows):
            for k, m in enumerate(ms):
                out[f"{lab.name}#{k}"] = _one_measurement(m)
    return out


def _one_measurement(m) -> dict:
    return {"label": m.label, "projectors": [str(P.tolist()) for P in (m.exact or ())] if m.exact else
            [str(P.round(12).tolist()) for P in m.projectors]}


def _claimed(text: str):
    """A claimed number: (sympy expression, rational interval enclosing it)."""
    from ..quantum.numbers import parse_number, to_acb

    e = parse_number(text)
    b = to_acb(e).real
    return e, (_frac_of_arb(b.lower()), _frac_of_arb(b.upper()))


def _load(ctx: Context, claim: Claim, v: Verdict):
    from ..quantum.experiment import load_experiment

    exp = load_experiment(claim.params["experiment"])
    v.files["experiment"] = claim.params["experiment"]
    if exp.theory_file:
        claim.theory = claim.theory or str(exp.theory_file)
        v.files["theory"] = claim.theory
    return exp


def decide_violates(ctx: Context, claim: Claim, v: Verdict) -> None:
    from ..quantum.certify import evaluate

    exp = _load(ctx, claim, v)
    ineq = inequality(ctx, claim)
    v.notation = ineq.display()
    if not exp.is_exact:
        v.status, v.summary = "NOT DECIDED", "the experiment is written with floating-point numbers"
        v.account = ("Without exact inputs no rigorous enclosure of the Born-rule value exists, so no verdict is "
                     "certified; write the state and the measurements with exact numbers (fractions, sqrt, pi).")
        return
    (val,) = evaluate(exp, [ineq], want_exact=True)
    brec = behaviour_record(exp)
    rec = {"type": "quantum", "role": "claim", "inequality": ineq_record(ineq), "behaviour": brec,
           "violated": val.violated}
    v.details = {"value": str(val.exact) if val.exact is not None else f"{val.float_value:.12g}",
                 "float_value": val.float_value, "verdict": val.verdict}
    problems, unsure = [], []
    if not val.violated:
        (problems if val.verdict in ("satisfied", "attained") else unsure).append(
            f"the behaviour does not violate the bound {q(ineq.bound)} ({val.evidence})")
    if "value" in claim.params:
        import sympy

        tol = Fraction(claim.params.get("tolerance", "0"))
        ce, (clo, chi) = _claimed(claim.params["value"])
        rec["claimed"] = {"text": claim.params["value"], "interval": [q(clo), q(chi)], "tolerance": q(tol)}
        if val.exact is not None and tol == 0:
            if sympy.simplify(val.exact - ce) != 0:
                problems.append(f"the value is {val.exact}, not {claim.params['value']}")
        else:
            lo, hi = _frac_of_arb(val.ball.lower()), _frac_of_arb(val.ball.upper())
            if lo >= clo - tol and hi <= chi + tol:
                pass
            elif hi < clo - tol or lo > chi + tol:
                problems.append(f"the value lies in [{float(lo):.10g}, {float(hi):.10g}], outside "
                                f"{claim.params['value']} ± {q(tol)}")
            else:
                unsure.append("the value's enclosure straddles the edge of the claimed range")
    v.checks.append(rec)
    shown = v.details["value"]
    if problems:
        v.status, v.summary = "REFUTED", problems[0]
        v.account = f"The Born-rule value of the inequality on the experiment's behaviour is {shown}: " + "; ".join(problems) + "."
    elif unsure:
        v.status, v.summary = "NOT DECIDED", unsure[0]
        v.account = "Interval arithmetic could not settle the claim: " + "; ".join(unsure) + "."
    else:
        v.status = "CONFIRMED"
        v.summary = f"value {shown} > {q(ineq.bound)}"
        v.account = (f"The Born-rule behaviour of the experiment gives the left side the value {shown} "
                     f"({val.evidence}), above the bound {q(ineq.bound)}"
                     + (f", and within the claimed {claim.params['value']}" if "value" in claim.params else "")
                     + ". Evidence: rational interval enclosures of every probability (and their exact form).")


def _separation_evidence(v, mid, sep) -> None:
    bound_check(v, mid, sep.inequality, sep.check, "separating")


def decide_outside(ctx: Context, claim: Claim, v: Verdict) -> None:
    from ..quantum.certify import evaluate
    from ..quantum.visibility import robustness

    exp = _load(ctx, claim, v)
    model, mid = use_model(v, ctx, claim.theory, claim.params["bundle"])
    rob = robustness(model, exp)
    b = bundle_text(claim.params["bundle"])
    if rob.inside is False and rob.separation is not None:
        sep = rob.separation
        _separation_evidence(v, mid, sep)
        (val,) = evaluate(exp, [sep.inequality])
        v.checks.append({"type": "quantum", "role": "claim", "inequality": ineq_record(sep.inequality),
                         "behaviour": behaviour_record(exp), "violated": True})
        v.notation = sep.text
        v.status, v.summary = "CONFIRMED", f"outside {b}: breaks {sep.text}"
        v.account = (f"The inequality {sep.text} is valid on the set of {b} (Farkas certificate, bound "
                     f"{q(sep.inequality.bound)}), and the experiment's behaviour gives it {val.evidence}.")
        return
    if rob.inside:
        pts = None
        if "rational point" in rob.inside_evidence:
            from ..quantum.born import exact_behaviour

            eb = exact_behaviour(exp)
            pts = [[Fraction(int(eb[k].p), int(eb[k].q)) for k in exp.scenario.coordinates()]]
        if pts and inside_check(v, mid, model, pts, "claim"):
            v.status, v.summary = "REFUTED", f"the behaviour lies inside {b}"
            v.account = f"The experiment's behaviour is rational and an exact point of the model of {b} produces it."
            return
        v.status, v.summary = "NOT DECIDED", "inside by float LP only"
        v.account = f"The visibility LP puts the behaviour inside {b}, but no exact witness exists: {rob.inside_evidence}."
        return
    v.status, v.summary = "NOT DECIDED", "no certified separating inequality"
    v.account = "; ".join(rob.notes) or "the LP did not finish"


def _sqrt_bracket(n: int, digits: int = 12) -> tuple[Fraction, Fraction]:
    D = 10 ** digits
    s = math.isqrt(n * D * D)
    return Fraction(s, D), Fraction(s + 1, D)


def _lower_bound(v, mid, model, brec, noise, vstar: float, floor: Fraction):
    """A rational L <= v_c shown by two rational behaviours of the set around p(L), or None."""
    if "exact" not in brec:
        return None
    n = brec["sqrt"]
    r = [(Fraction(a), Fraction(b)) for a, b in brec["exact"]]
    s_lo, s_hi = _sqrt_bracket(n) if n != 1 else (Fraction(1), Fraction(1))
    for margin in (Fraction(1, 10 ** 7), Fraction(1, 10 ** 5), Fraction(1, 10 ** 3)):
        L = Fraction(vstar).limit_denominator(10 ** 8) - margin
        if L < floor:
            L = floor
        if L <= 0:
            return None
        ends = [[L * (r0 + s * r1) + (1 - L) * pn for (r0, r1), pn in zip(r, noise)] for s in (s_lo, s_hi)]
        before = len(v.checks)
        if inside_check(v, mid, model, ends, "visibility lower end"):
            v.checks[before]["segment"] = {"visibility": q(L), "sqrt": n, "s": [q(s_lo), q(s_hi)]}
            return L
        if L == floor:
            return None
    return None


def decide_visibility(ctx: Context, claim: Claim, v: Verdict) -> None:
    from ..quantum.born import exact_behaviour
    from ..quantum.visibility import noise_state, robustness

    exp = _load(ctx, claim, v)
    model, mid = use_model(v, ctx, claim.theory, claim.params["bundle"])
    b = bundle_text(claim.params["bundle"])
    tol = Fraction(claim.params["tolerance"])
    _, (clo, chi) = _claimed(claim.params["value"])
    rob = robustness(model, exp)
    if rob.visibility is None or rob.separation is None or not rob.inside is False:
        v.status, v.summary = "NOT DECIDED", "no certified separation (the behaviour may lie inside)"
        v.account = "; ".join(rob.notes) or f"the visibility LP gave {rob.visibility}"
        return
    sep = rob.separation
    nexp = exp.with_state(noise_state(exp, None))
    nb = exact_behaviour(nexp)
    coords = exp.scenario.coordinates()
    if not all(nb[k].is_Rational for k in coords):
        v.status, v.summary = "NOT DECIDED", "the noise behaviour is not rational"
        v.account = v.summary
        return
    noise = [Fraction(int(nb[k].p), int(nb[k].q)) for k in coords]
    brec = behaviour_record(exp)
    _separation_evidence(v, mid, sep)
    # upper end from the separating inequality
    c = sep.inequality
    S_n = sum((c.coeffs.get(k, 0) * p for k, p in zip(coords, noise)), Fraction(0))
    S_q_lo = sum((Fraction(cf) * (Fraction(iv[0]) if cf > 0 else Fraction(iv[1]))
                  for cf, iv in ((c.coeffs.get(k, 0), iv) for k, iv in zip(coords, brec["intervals"])) if cf),
                 Fraction(0))
    if S_q_lo <= S_n:
        v.status, v.summary = "NOT DECIDED", "the separating inequality does not separate in exact terms"
        v.account = v.summary
        return
    U = (c.bound - S_n) / (S_q_lo - S_n)
    L = _lower_bound(v, mid, model, brec, noise, rob.visibility, clo - tol)
    v.checks.append({"type": "visibility", "role": "claim", "inequality": ineq_record(c), "behaviour": brec,
                     "noise": [q(x) for x in noise], "upper": q(U), "lower": q(L) if L is not None else None,
                     "claimed": {"text": claim.params["value"], "interval": [q(clo), q(chi)], "tolerance": q(tol)}})
    v.notation = sep.text
    v.details = {"float_visibility": rob.visibility, "upper": f"{float(U):.10g}",
                 "lower": f"{float(L):.10g}" if L is not None else None}
    lo_txt = f"{float(L):.8f}" if L is not None else "?"
    if U < clo - tol:
        v.status, v.summary = "REFUTED", f"v_c <= {float(U):.8f}, below the claimed {claim.params['value']} ± {q(tol)}"
    elif L is not None and L > chi + tol:
        v.status, v.summary = "REFUTED", f"v_c >= {float(L):.8f}, above the claimed {claim.params['value']} ± {q(tol)}"
    elif L is not None and L >= clo - tol and U <= chi + tol:
        v.status, v.summary = "CONFIRMED", f"{lo_txt} <= v_c <= {float(U):.8f}"
    else:
        v.status, v.summary = "NOT DECIDED", f"{lo_txt} <= v_c <= {float(U):.8f}: not inside the claimed range"
    v.account = (f"Against white noise and the set of {b}, the critical visibility is bracketed exactly: above "
                 f"{float(U):.10g} the mixture breaks {sep.text}, valid on the set by a Farkas certificate; "
                 + (f"at {float(L):.10g} the mixture lies on a segment between two rational behaviours of the set "
                    f"(exact preimages), so it is inside. " if L is not None else "no exact lower end was found. ")
                 + f"The claim was {claim.params['value']} ± {q(tol)}.")


def decide_npa(ctx: Context, claim: Claim, v: Verdict) -> None:
    import sympy

    from ..quantum.npa import npa_bound

    ineq = inequality(ctx, claim)
    v.notation = ineq.display()
    level = str(claim.params.get("level", "1"))
    tol = Fraction(claim.params.get("tolerance", "0"))
    ce, _ = _claimed(claim.params["bound"])
    res = npa_bound(ineq, level)
    v.details = {"level": level, "sdp_value": res.value, "certified": q(res.certified) if res.certified else None}
    v.checks.append({"type": "trusted", "role": "claim", "what": f"quantum value <= {q(res.certified) if res.certified else '?'} "
                     f"(NPA level {level})", "why": "the rigorous dual certificate of nogo.quantum.npa (exact rational "
                     "dual, interval LDLᵀ) is checked in the deciding run; the dual matrix is not exported"})
    if res.certified is None:
        v.status, v.summary = "NOT DECIDED", "the SDP dual could not be certified"
        v.account = "; ".join(res.notes)
        return
    cert = sympy.Rational(res.certified.numerator, res.certified.denominator)
    lim = ce + sympy.Rational(tol.numerator, tol.denominator)
    if bool(cert <= lim):
        v.status, v.summary = "CONFIRMED", f"NPA level {level} certifies <= {float(res.certified):.10g}"
        v.account = (f"The level-{level} moment matrix relaxation of the quantum set gives the certified upper bound "
                     f"{float(res.certified):.12g} on the left side, within the claimed {claim.params['bound']}"
                     f"{' + ' + q(tol) if tol else ''}.")
    else:
        v.status = "NOT DECIDED"
        v.summary = f"level {level} gives only <= {float(res.certified):.10g}"
        v.account = ("An NPA level bounds the quantum value from above; a level bound above the claim neither shows nor "
                     f"refutes it (level {level}: {float(res.certified):.12g}). Try a higher level, or claim a violation "
                     "with an experiment.")


QUANTUM = {"violates": decide_violates, "outside": decide_outside, "critical_visibility": decide_visibility,
           "quantum_bound": decide_npa}
