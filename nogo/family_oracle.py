"""Local friendliness against the Bell-local set by the LP oracle, with one hull only.

Used by :mod:`nogo.family` (question ``lf-equals-bell``, route ``oracle``)
when no cheap witness separates the two sets, i.e. where they are expected
to be equal.  Method: two polytopes are equal iff each one's vertices lie in
the other (Minkowski–Weyl; common practice).  Bell-local ⊆ local
friendliness is shown vertex by vertex (certified preimages in the
local-friendliness model); local friendliness ⊆ Bell-local needs no vertex
of local friendliness: it holds iff every Bell-local facet is valid on it,
a bound question for the LP oracle with an exact Farkas certificate.  The
facets are decided one per orbit under symmetries verified on the
local-friendliness model (a symmetry maps a certificate to a certificate).
Imports nothing of :mod:`nogo.family` (results are filled in duck-typed).
"""

from __future__ import annotations

import time


def equal_by_oracle(th, res, deadline: float | None) -> None:
    """Local friendliness against the Bell-local set with one hull only (the Bell-local one).

    Two polytopes are equal iff each one's vertices lie in the other.  The
    Bell-local vertices are derived exactly; each is shown to lie in the
    local-friendliness model by a certified preimage (an exact point of the
    model).  The other direction needs no vertex of local friendliness: it
    lies inside the Bell-local set iff every Bell-local facet holds on it,
    which the LP oracle decides with a Farkas certificate (re-checked
    exactly).  One facet per orbit under the verified symmetries of the
    local-friendliness model is decided: a symmetry of the model maps a
    certificate to a certificate (:func:`nogo.symmetry.lift_to_model`).
    """
    from .check import decide, recheck
    from .compile import compile_bundle
    from .facets import facets
    from .polytope.oracle import oracle_batch
    from .symmetry import bundle_generators, lift_to_model, orbit

    t0 = time.perf_counter()
    # the hull from joint counterfactual outcomes: a linear model, so facets go class by class under its
    # verified symmetries (the mixture of deterministic strategies has none verified: one plain hull)
    bundle = "Bell-local-joint" if "Bell-local-joint" in th.bundles else "Bell-local"
    left = None if deadline is None else max(1.0, deadline - time.perf_counter())
    r2 = facets(th, bundle, cache=False, time_limit=left)
    if r2.status != "complete":
        res.answer = res.answer or "out of time"
        res.notes.append("Bell-local facet derivation hit the time limit")
        return
    res.facets = {"Bell-local": len(r2.facets)}
    res.classes = {"Bell-local": len(r2.classes)}
    lf = compile_bundle(th, "local-friendliness")
    models = [("local friendliness", lf)]
    if bundle != "Bell-local":  # the same set as the deterministic mixtures (Fine 1982): shown vertex by vertex
        models.append(("the Bell-local mixture", compile_bundle(th, "Bell-local")))
    for who, model in models:
        answers = oracle_batch((model, "member", list(r2.vertices)))
        missing = [v for v, a in zip(r2.vertices, answers) if a.point != tuple(v)]
        if missing:
            res.answer = res.answer or "unverified"
            res.notes.append(f"{len(missing)} Bell-local vertices without a certified preimage in {who}")
            return
    gens = [g for g in bundle_generators(th, "local-friendliness") if lift_to_model(lf, g) is not None]
    reps = _orbit_representatives(r2.facets, gens, orbit)
    coord = {c: i for i, c in enumerate(th.scenario.coordinates())}
    decided = 0
    for k in range(0, len(reps), 64):  # batches of bound questions; the time limit between batches
        if deadline is not None and time.perf_counter() > deadline:
            res.answer = res.answer or "out of time"
            res.notes.append(f"oracle comparison stopped at the time limit ({len(reps) - k} of {len(reps)} "
                             "orbit representatives left)")
            return
        batch = reps[k:k + 64]
        answers = oracle_batch((lf, "max", [(_vector(f.inequality, coord), f.inequality.bound, None) for f in batch]))
        for f, ans in zip(batch, answers):
            decided += 1
            if ans.valid:
                continue  # a certified bound: rounded duals checked exactly by the oracle
            r = decide(lf, f.inequality)  # not certified, or beyond: decide exactly, with a witness
            bad = recheck(lf, r)
            if bad:
                res.answer = "unverified"
                res.notes.append(f"re-check failed: {bad}")
                return
            if not r.implied:
                res.answer, res.relation = "not equal", "Bell-local inside local friendliness, strictly"
                res.evidence.append(f"Bell-local facet {f.text} fails on local friendliness: maximum {r.maximum} "
                                    f"(rational point of the model, re-checked exactly)")
                return
    res.answer, res.relation = "equal", "equal"
    res.facets["local-friendliness"] = len(r2.facets)
    res.evidence.append(
        f"Bell-local set derived exactly ({bundle}: {len(r2.facets)} facets, {len(r2.vertices)} vertices); every "
        f"vertex has a certified preimage in {' and in '.join(w for w, _ in models)}; every Bell-local facet holds on local "
        f"friendliness: {decided} orbit representatives with exactly checked Farkas certificates, the rest "
        f"their images under {len(gens)} verified symmetry generators of the model ({time.perf_counter() - t0:.1f} s)")


def _orbit_representatives(facets, gens, orbit) -> list:
    """One facet per orbit of the group the verified generators make (orbits by canonical form)."""
    seen: set = set()
    reps = []
    for f in facets:
        key = f.inequality.canonical()
        if key in seen:
            continue
        reps.append(f)
        seen.update(q.canonical() for q in orbit(f.inequality, gens))
    return reps


def _vector(ineq, coord: dict) -> list:
    """The inequality's coefficients over the scenario's coordinates, in their order."""
    from fractions import Fraction

    c = [Fraction(0)] * len(coord)
    for k, v in ineq.coeffs.items():
        c[coord[k]] = Fraction(v)
    return c
