"""A second, independent decision procedure: z3's linear real arithmetic.

It reads the same declarations but builds its own encoding, sharing no code
with :mod:`nogo.compile` beyond the parsed theory: one real variable per
joint assignment of the present events (read-out rules written as explicit
zero constraints rather than dropped columns), marginals summed afresh, and
the question "is there a point with left side > bound?" handed to z3, whose
simplex works in exact rationals (L. de Moura and N. Bjørner, "Z3: an
efficient SMT solver", TACAS 2008).  Used in the tests to cross-check the LP
route; it is slower and meant for small scenarios.

Support-only clauses (``reading: supports``, possibilistic local agency) are
not convex: they are refused unless the bundle's probabilistic clauses imply
them (:func:`nogo.supports.refuse_support_only`), and then dropped as
redundant — never read as equal marginals.  Read-out chains of nested
observers and several read-outs are walked afresh
(:func:`nogo.readout_walk.walk_read_outs`), not taken from :mod:`nogo.events`.
"""

from __future__ import annotations

import itertools

import z3

from .inequality import Inequality
from .readout_walk import walk_read_outs
from .supports import refuse_support_only
from .theory import (Absolute, Counterfactual, Factorise, Hidden, Independent, Predetermined, SupportIndependent,
                     Theory)


def implies_z3(theory: Theory, spec: str | list[str], ineq: Inequality, timeout_ms: int = 120_000) -> bool:
    """True when the bundle implies *ineq*, decided by z3 in exact arithmetic."""
    _, assumptions = theory.resolve(spec)
    sc = theory.scenario
    absolute, counterfactual = set(), set()
    for a in assumptions:
        for c in a.clauses:
            if isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given):
                raise ValueError("the z3 cross-check covers the linear kinds only")
            if isinstance(c, Absolute):
                absolute.update(c.events)
            if isinstance(c, Counterfactual):
                counterfactual.update(c.parties)
    # (name, outcomes, kind, extra)
    ev = [(p.name if p.choice_of is None else f"{p.name}.choice", p.outcomes, "party", None) for p in sc.parties]
    ev += [(o.name, o.outcomes, "inner", walk_read_outs(sc, o, absolute)) for o in sc.inner if o.name in absolute]
    ev += [(f"{p.name}@{x}", p.outcomes, "latent", (p.name, x)) for p in sc.parties if p.name in counterfactual
           for x in p.settings]
    names = [e[0] for e in ev]
    refuse_support_only(theory, assumptions, names)  # InputError unless the probabilistic clauses imply them
    solver = z3.Solver()
    solver.set("timeout", timeout_ms)
    q = {}
    for s in sc.setting_tuples():
        total = []
        for e in itertools.product(*(x[1] for x in ev)):
            v = z3.Real("q_" + "_".join(s) + "__" + "_".join(e))
            q[(s, e)] = v
            solver.add(v >= 0)
            total.append(v)
            broken = False
            for k, (name, outs, kind, extra) in enumerate(ev):
                if kind == "inner":
                    for lab, when, shown in extra:
                        if all(s[i] == x for i, x in when):
                            broken |= e[names.index(lab)] != shown[e[k]]
                if kind == "latent":
                    pi = sc.party_names.index(extra[0])
                    broken |= s[pi] == extra[1] and e[pi] != e[k]
            if broken:
                solver.add(v == 0)
        solver.add(z3.Sum(total) == 1)
    for a in assumptions:
        for c in a.clauses:
            if not isinstance(c, Independent) or isinstance(c, SupportIndependent):
                continue  # a support-only clause got here only when the others imply it
            kept = [names.index(n) for n in c.events if n in names]
            if not kept:
                continue
            for s, t in itertools.combinations(sc.setting_tuples(), 2):
                if any(s[i] != t[i] for i, p in enumerate(sc.party_names) if p not in c.of):
                    continue
                for val in itertools.product(*(ev[i][1] for i in kept)):
                    def marg(st):
                        return z3.Sum([q[(st, e)] for e in itertools.product(*(x[1] for x in ev))
                                       if tuple(e[i] for i in kept) == val])
                    solver.add(marg(s) == marg(t))
    n_party = len(sc.parties)
    lhs = []
    for (s, a), coef in ineq.coeffs.items():
        for e in itertools.product(*(x[1] for x in ev)):
            if e[:n_party] == a:
                lhs.append(z3.RealVal(str(coef)) * q[(s, e)])
    solver.add(z3.Sum(lhs) > z3.RealVal(str(ineq.bound)))
    res = solver.check()
    if res == z3.unknown:
        raise TimeoutError("z3 gave no answer in time")
    return res == z3.unsat
