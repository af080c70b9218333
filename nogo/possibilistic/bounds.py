"""Lower bounds on proof size borrowed from a stronger bundle.

If every model of bundle B is (after adding the events B lacks) a model of
bundle A, then facts that contradict A contradict B, so the smallest proof
under A has at least as many facts as the smallest under B.  Bell locality is
such a B for every bundle made only of absoluteness of inner records and
independence clauses that never keep the outcome of a party whose setting
they move (local agency, no-signalling, their one-lab readings): from a
Bell-local model (a set of assignments λ of an outcome to every (party,
setting), the same at every settings tuple) set every inner record to its
lab's outcome at the read-out setting, λ(lab, r) (through the read-out
relabelling); read-out rules then hold, and the kept events of every such
clause are functions of λ and of settings the clause does not move, so their
support does not move either.

The Bell-local smallest proof comes from :mod:`.latent` (fast at any n), which
turns "smallest among proofs on some settings tuples" of the joint search
into a proven smallest over the whole model when the two sizes meet.
"""

from __future__ import annotations

from ..theory import Absolute, Independent, Theory


def bell_models_included(theory: Theory, spec) -> bool:
    """Does every Bell-local model extend to a model of *spec* (see the module docstring)?"""
    sc = theory.scenario
    _, assumptions = theory.resolve(spec)
    for a in assumptions:
        for c in a.clauses:
            if isinstance(c, Absolute):
                continue
            if isinstance(c, Independent) and not c.given:
                if any(e in sc.party_names and e in c.of for e in c.events):
                    return False
                if any("@" in e for e in c.events):
                    return False
                continue
            return False
    return True


def bell_lower_bound(theory: Theory, spec, pattern, time_limit: float | None) -> int | None:
    """The proven smallest Bell-local proof size for *pattern*, if it applies and finishes; else None."""
    from .latent import LatentSolver, decide, smallest  # noqa: PLC0415

    if not bell_models_included(theory, spec):
        return None
    ls = LatentSolver(theory.scenario, pattern)
    try:
        v = decide(ls, pattern)
        if not v.contradiction:
            return None
        sm = smallest(ls, pattern, v, time_limit)
        return sm.lower_bound if not sm.proven else len(sm.facts) + (sm.witness is not None)
    finally:
        ls.close()
