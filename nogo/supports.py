"""Support-only (possibilistic) independence in the probabilistic compilers.

A clause ``independent: {events: E, of: S, reading: supports}``
(:class:`nogo.theory.SupportIndependent`) says only that *which* values of E
are possible does not change with the settings S: possibilistic local agency
in the sense of M. Haddara and E. G. Cavalcanti, arXiv:2205.12223.  The
possibilistic backend (:mod:`nogo.possibilistic`) reads every independence
clause over supports already, so it honours these clauses as they are.

"Equal supports" is not a convex condition on q, so no linear or mixture
model holds it.  It is *implied*, though, by the probabilistic clause: equal
marginals have equal supports.  :func:`refuse_support_only` therefore lets a
bundle through exactly when its plain clauses imply each support-only clause
(then the set of behaviours is that of the plain clauses), and otherwise
raises a clear :class:`~nogo.errors.InputError`.
"""

from __future__ import annotations

from .errors import InputError, Where
from .theory import Independent, SupportIndependent


def refuse_support_only(theory, assumptions, present: list[str]) -> list[str]:
    """Notes for support-only clauses the bundle's probabilistic clauses imply; InputError for the rest.

    The test is on the *present* events (rule of projection): a plain clause
    on E' ⊇ E of S' implies the support-only clause on E of every S ⊆ S';
    plain clauses on supersets of E chain over their settings (E independent
    of S1 and of S2 is independent of S1 ∪ S2).
    """
    notes: list[str] = []
    plain = [c for a in assumptions for c in a.clauses
             if isinstance(c, Independent) and not isinstance(c, SupportIndependent) and not c.given]
    for a in assumptions:
        for c in a.clauses:
            if not isinstance(c, SupportIndependent):
                continue
            e = {x for x in c.events if x in present}
            if not e:
                continue  # by projection it adds nothing
            covered: set[str] = set()
            for d in plain:
                if e <= {x for x in d.events if x in present}:
                    covered |= set(d.of)
            if set(c.of) <= covered:
                notes.append(f"{a.name}: declared on supports only; implied by the bundle's probabilistic clauses")
                continue
            of = [p + ".setting" for p in c.of]
            raise InputError(
                f"assumption '{a.name}' is declared on supports only (possibilistic); a probabilistic model "
                "cannot hold it, since equal supports is not a convex condition",
                Where(theory.file, a.line, f"assumptions.{a.name}"),
                "use the possibilistic backend (nogo proof), or add the probabilistic form "
                f"(independent: {{events: {sorted(e)}, of: {of}}}) to the bundle")
    return notes
