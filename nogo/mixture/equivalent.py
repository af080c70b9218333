"""Hidden-variable bundles whose set is that of a plain linear model: compiled as that model.

Two shortcuts of the mixture route, each stated in the model's notes:

* no clause is given λ: λ adds nothing (the joint itself is a one-valued
  mixture), so the bundle is its plain linear model without λ;
* one group, no predetermination, λ free of every setting: the responses
  form one convex polytope, so a mixture with shared weights is again a
  response and every response a one-valued mixture; the per-λ clauses are
  put on the joint instead (same set, linear model).  Used when the
  polytope's vertices are too many to list; its size is guarded from the
  declaration first (:func:`nogo.sizes.guard_linear`).
"""

from __future__ import annotations

from dataclasses import replace

from ..errors import Where
from ..linear import compile_linear
from ..model import LinearModel
from ..sizes import guard_linear
from ..theory import Hidden, Independent, Theory
from .bundle import _Bundle


def _strip(theory: Theory, assumptions, hidden: str, given_to_joint: bool) -> Theory:
    """The theory with λ's clauses removed (and, if asked, per-λ clauses made joint ones)."""
    stripped = {}
    for a in assumptions:
        cl = []
        for c in a.clauses:
            if isinstance(c, Hidden):
                continue
            if isinstance(c, Independent) and not c.given and hidden in c.events:
                rest = tuple(e for e in c.events if e != hidden)
                if rest and given_to_joint:
                    cl.append(Independent(rest, c.of))
                continue
            if isinstance(c, Independent) and c.given and given_to_joint:
                cl.append(Independent(c.events, c.of))
                continue
            cl.append(c)
        stripped[a.name] = replace(a, clauses=tuple(cl))
    return Theory(theory.scenario, {**theory.assumptions, **stripped}, theory.bundles, theory.file,
                  theory.title, theory.text)


def _convex_linear(theory: Theory, label: str, assumptions, b: _Bundle, why: str,
                   max_columns: int | None = None) -> LinearModel:
    """One group, no predetermination, λ setting-independent: the mixture set is the response polytope.

    The responses form a convex set (a polytope cut out by the per-λ clauses),
    so a mixture with shared weights is again a response and every response is
    a one-valued mixture: the per-λ clauses hold exactly on the joint.  Used
    when listing the polytope's vertices is too big (*why*).  The linear
    model's size is estimated from the declaration and refused above
    *max_columns* before anything is built.
    """
    stripped = _strip(theory, assumptions, b.hidden, True)
    names = [a.name for a in assumptions]
    guard_linear(theory.scenario, label, stripped.resolve(names)[1], max_columns, Where(theory.file),
                 what=f"the responses given {b.hidden} form one convex polytope ({why}); the equivalent "
                      "linear model")
    model = compile_linear(stripped, names)
    model.label = label
    model.notes = list(b.notes) + [
        f"the responses given {b.hidden} form one convex polytope and {b.hidden} is setting-independent, so the "
        f"mixture set is that polytope itself; its vertices were not listed ({why}); compiled as the equivalent "
        f"linear model with the clauses given {b.hidden} holding on the joint"] + model.notes
    return model


def _vacuous(theory: Theory, label: str, assumptions, b: _Bundle) -> LinearModel:
    """No per-λ constraint: λ adds nothing (take λ = the joint itself); compile linearly."""
    hidden = b.hidden
    model = compile_linear(_strip(theory, assumptions, hidden, False), [a.name for a in assumptions])
    model.label = label
    model.notes.insert(0, f"{hidden} carries no constraint given its value, so it adds nothing: any joint "
                          "distribution is a one-valued mixture; compiled as the plain linear model")
    return model

