"""Local friendliness against the Bell-local set by the LP oracle, with one hull only.

Used by :mod:`nogo.family` (question ``lf-equals-bell``, route ``oracle``)
when no cheap witness separates the two sets, i.e. where they are expected
to be equal.  Method (Minkowski–Weyl; common practice): two polytopes are
equal iff each lies in the other.

* Bell-local ⊆ local friendliness: by the assumptions' strength this always
  holds (absoluteness and local agency follow from joint counterfactual
  outcomes with setting independence; K.-W. Bong et al., Nature Physics 16,
  1199 (2020)), and it is *shown* here vertex by vertex: every Bell-local
  vertex gets an exact preimage in the local-friendliness model.
* local friendliness ⊆ Bell-local: the Bell-local set is {x : E x = e,
  F x <= f}.  First every equation of its affine hull is asked on local
  friendliness both ways (Farkas certificates; a certified point off an
  equation shows "not equal" at once: the one-lab-at-a-time reading in three
  labs is signalling).  Then every facet: a relabelling that is a verified
  symmetry of the local-friendliness model *and* permutes the Bell-local
  vertices maps both sets onto themselves, so one exact LP per orbit of the
  Bell-local facets under those moves decides it (orbits by
  :func:`nogo.facets.classify`, array arithmetic).  The time limit is
  checked between batches of bound questions.

Imports nothing of :mod:`nogo.family` (results are filled in duck-typed).
"""

from __future__ import annotations

import time
from fractions import Fraction

BATCH = 32  # bound questions per oracle batch (the time limit is checked between batches)


def equal_by_oracle(th, res, deadline: float | None, lf_bundle: str = "local-friendliness") -> None:
    """Fill *res* with the answer to "does *lf_bundle* equal the Bell-local set?" (see the module docstring)."""
    from .compile import compile_bundle
    from .facets import facets

    t0 = time.perf_counter()
    # the hull from joint counterfactual outcomes: a linear model, so facets go class by class under its
    # verified symmetries (the mixture of deterministic strategies has none verified: one plain hull)
    bundle = "Bell-local-joint" if "Bell-local-joint" in th.bundles else "Bell-local"
    r2 = facets(th, bundle, cache=False, time_limit=_left(deadline))
    if r2.status != "complete":
        res.answer = res.answer or "out of time"
        res.notes.append("Bell-local facet derivation hit the time limit")
        return
    res.facets = {"Bell-local": len(r2.facets)}
    res.classes = {"Bell-local": len(r2.classes)}
    lf = compile_bundle(th, lf_bundle)
    models = [("local friendliness", lf)]
    if bundle != "Bell-local":  # the same set as the deterministic mixtures (Fine 1982): shown vertex by vertex
        models.append(("the Bell-local mixture", compile_bundle(th, "Bell-local")))
    if not _vertices_inside(r2, models, res):
        return
    if not _equations_hold(r2, lf, res):
        return
    orbits, moves = _orbits(th, r2, lf, lf_bundle)
    if not _facets_hold(r2, lf, orbits, res, deadline):
        return
    res.answer, res.relation = "equal", "equal"
    res.facets["local-friendliness"] = len(r2.facets)
    res.evidence.append(
        f"Bell-local set derived exactly ({bundle}: {len(r2.facets)} facets in {len(r2.classes)} classes, "
        f"{len(r2.vertices)} vertices); every vertex has an exact preimage in "
        f"{' and in '.join(w for w, _ in models)}; the {len(r2.polytope.equations)} equations of its affine hull "
        f"hold on local friendliness (Farkas certificates both ways); every Bell-local facet holds on local "
        f"friendliness: {len(orbits)} orbit representatives decided with exactly checked Farkas certificates, "
        f"the rest their images under {len(moves)} moves that are verified symmetries of both sets "
        f"({time.perf_counter() - t0:.1f} s)")


def _left(deadline: float | None) -> float | None:
    return None if deadline is None else max(1.0, deadline - time.perf_counter())


def _vertices_inside(r2, models, res) -> bool:
    from .polytope.oracle import oracle_batch

    for who, model in models:
        answers = oracle_batch((model, "member", list(r2.vertices)))
        missing = [v for v, a in zip(r2.vertices, answers) if a.point != tuple(v)]
        if missing:
            res.answer = res.answer or "unverified"
            res.notes.append(f"{len(missing)} Bell-local vertices without an exact preimage in {who}")
            return False
    return True


def _equations_hold(r2, lf, res) -> bool:
    """Every equation of the Bell-local affine hull holds on local friendliness (both ways), or a point off it."""
    from .polytope.oracle import oracle_batch

    eqs = r2.polytope.equations
    qs = [(tuple(Fraction(s * x) for x in h), s * Fraction(v), None) for h, v in eqs for s in (1, -1)]
    for i, a in enumerate(oracle_batch((lf, "max", qs))):
        if a.valid:
            continue
        if a.valid is False and a.point is not None:
            h, v = eqs[i // 2]
            value = sum(Fraction(x) * y for x, y in zip(h, a.point))
            res.answer, res.relation = "not equal", "local friendliness outside the Bell-local affine hull"
            res.evidence.append(f"an equation of the Bell-local affine hull fails on local friendliness: "
                                f"{_eq_text(r2, h, v)}, value {value} at a certified point of the model")
            return False
        res.answer = res.answer or "unverified"
        res.notes.append(f"equation {_eq_text(r2, *eqs[i // 2])}: the oracle gave neither certificate nor point")
        return False
    return True


def _orbits(th, r2, lf, lf_bundle: str) -> tuple[list[list[int]], list[str]]:
    """Orbits of the Bell-local facets under the moves that are symmetries of both sets."""
    from .facets import classify
    from .symmetry import bundle_generators, lift_to_model

    gens = [g for g in bundle_generators(th, lf_bundle) if lift_to_model(lf, g) is not None]
    orbits, kept, _dropped = classify(r2.polytope, gens)
    return sorted(orbits, key=lambda m: (min(m), len(m))), kept


def _facets_hold(r2, lf, orbits, res, deadline) -> bool:
    """One bound question per orbit; a failure decided exactly with a re-checked counterexample."""
    from .check import decide, recheck
    from .polytope.oracle import oracle_batch

    coord = {c: i for i, c in enumerate(r2.scenario.coordinates())}
    reps = [r2.facets[min(m)] for m in orbits]
    for k in range(0, len(reps), BATCH):
        if deadline is not None and time.perf_counter() > deadline:
            res.answer = res.answer or "out of time"
            res.notes.append(f"oracle comparison stopped at the time limit ({len(reps) - k} of {len(reps)} "
                             "orbit representatives left)")
            return False
        batch = reps[k:k + BATCH]
        answers = oracle_batch((lf, "max", [(_vector(f.inequality, coord), f.inequality.bound, None) for f in batch]))
        for f, ans in zip(batch, answers):
            if ans.valid:
                continue  # a certified bound: rounded duals checked exactly by the oracle
            r = decide(lf, f.inequality)  # not certified, or beyond: decide exactly, with a witness
            bad = recheck(lf, r)
            if bad:
                res.answer = "unverified"
                res.notes.append(f"re-check failed: {bad}")
                return False
            if not r.implied:
                res.answer, res.relation = "not equal", "Bell-local inside local friendliness, strictly"
                res.evidence.append(f"Bell-local facet {f.text} fails on local friendliness: maximum {r.maximum} "
                                    f"(rational point of the model, re-checked exactly)")
                return False
    return True


def _vector(ineq, coord: dict) -> list:
    """The inequality's coefficients over the scenario's coordinates, in their order."""
    c = [Fraction(0)] * len(coord)
    for k, v in ineq.coeffs.items():
        c[coord[k]] = Fraction(v)
    return c


def _eq_text(r2, h, v) -> str:
    terms = [f"{'+' if c > 0 else '-'} {abs(c) if abs(c) != 1 else ''}p({' '.join(a)}|{' '.join(s)})"
             for c, (s, a) in zip(h, r2.scenario.coordinates()) if c]
    return " ".join(terms).lstrip("+ ") + f" = {v}"
