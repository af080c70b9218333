"""Possibilistic claims: a pattern contradicts a bundle, with at most k facts (nogo.possibilistic).

The verdict comes from ``decide_pattern`` (SAT, smallest cores) or, for
hidden-variable bundles, ``decide_responses`` (the mixture's responses); the
re-checkable evidence is a Farkas certificate that the core's impossible facts
force the possible events' probabilities to zero in the bundle's model.
"""

from __future__ import annotations

from fractions import Fraction

from .claims import Claim, bundle_spec, bundle_text
from .decide import Context, bound_check, decided, settle, use_model
from .evidence import Verdict, model_record


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
        _consistent(v, b, f"No contradiction: a support satisfying every assumption of {b} and every fact of the "
                    f"pattern exists (the largest one, accepted by nogo's independent support checker).",
                    {"model": {",".join(s): [",".join(e) for e in es] for s, es in (res.model or {}).items()}},
                    "the consistent support",
                    "the support-level checker of nogo.possibilistic re-checked it in the deciding run")
        return
    facts = [g for g in res.core if g.kind in ("possible", "impossible")]
    v.details = {"core_size": len(res.core), "facts": len(facts), "smallest_proven": res.smallest_proven,
                 "core": res.core_names(), "assumptions_needed": res.assumptions_needed()}
    v.notation = "; ".join(g.name(res.parties) for g in facts)
    if res.proof is not None:
        v.details["proof_markdown"] = to_markdown(res.proof, {n: a.says for n, a in th.assumptions.items()})
        v.details["proof"] = res.proof.to_dict()
    _pattern_certificate(v, ctx, claim, [(g.kind, g.settings, g.outcomes) for g in facts])
    if _within(v, len(facts), k, f"No support obeys {b} and the pattern: unit propagation over a core of "
               f"{len(res.core)} constraints ({len(facts)} observed facts) derives a contradiction; the proof steps "
               f"are in the evidence. As an exact cross-check the same facts force the possible events' "
               f"probabilities to zero in the bundle's linear model (Farkas certificate)."):
        return
    if res.smallest_proven:
        settle(v, "REFUTED", f"the smallest contradiction needs {len(facts)} facts, more than {k}",
               f"The smallest unsatisfiable core (proven smallest by the hitting-set search) uses {len(facts)} "
               f"facts, more than the claimed {k}.")
    else:
        settle(v, "NOT DECIDED", f"found a contradiction with {len(facts)} facts; smaller not excluded",
               f"The smallest-core search stopped at its time limit with a core of {len(facts)} facts "
               f"(lower bound {res.lower_bound} constraints); the claim of at most {k} is neither shown nor refuted.")


def _decide_pattern_responses(ctx, claim, v, th, pat, b) -> None:
    """Hidden-variable bundles: the pattern read over the mixture's responses (nogo.possibilistic.responses)."""
    from ..possibilistic.responses import decide_responses, response_proof_markdown

    res = decide_responses(th, bundle_spec(claim.params["bundle"]), pat)
    k = claim.params.get("facts")
    if not res.contradiction:
        _consistent(v, b, f"Responses of the mixture of {b} that produce no impossible event still produce every "
                    f"possible event ({len(res.model)} survive), so the pattern can occur.",
                    {"surviving_responses": res.model}, "the surviving responses",
                    "re-checked by nogo.possibilistic.responses in the deciding run")
        return
    facts = [("impossible", s, a) for s, a in res.facts] + [("possible",) + tuple(res.event)]
    v.details = {"facts": len(facts), "exclusions": len(res.exclusions),
                 "proof_markdown": response_proof_markdown(res, th.file or "")}
    v.notation = "; ".join(f"p({','.join(a)}|{','.join(s)}) {'> 0' if kind == 'possible' else '= 0'}"
                           for kind, s, a in facts)
    _pattern_certificate(v, ctx, claim, facts)
    if not _within(v, len(facts), k, f"Every response of the mixture of {b} that could produce the possible event "
                   f"p({','.join(res.event[1])}|{','.join(res.event[0])}) would also produce one of "
                   f"{len(res.facts)} impossible events, so it has weight zero; as an exact cross-check the same "
                   f"facts force that probability to zero (Farkas certificate over the responses' weights)."):
        v.status, v.summary = "NOT DECIDED", f"found a contradiction with {len(facts)} facts; smaller not searched"
        v.account = ("The response reading covers the excluded responses greedily; a smaller set of facts is not "
                     f"excluded, so 'at most {k}' is neither shown nor refuted.")


def _consistent(v: Verdict, b: str, account: str, details: dict, what: str, why: str) -> None:
    """The pattern can occur under the bundle: the claim of a contradiction is refuted."""
    v.status, v.summary = "REFUTED", f"the pattern is consistent with {b}"
    v.account, v.details = account, details
    v.checks.append({"type": "trusted", "role": "claim", "what": what, "why": why})


def _within(v: Verdict, n: int, k, account: str) -> bool:
    """A contradiction from *n* facts confirms a claim of at most *k* (or of any number when k is None)."""
    if k is not None and n > k:
        return False
    v.status = "CONFIRMED"
    v.summary = f"contradiction from {n} facts" + (f" (at most {k} claimed)" if k else "")
    v.account = account
    return True


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


