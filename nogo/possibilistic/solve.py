"""Verdicts with python-sat: consistent (with a model) or contradictory (with cores).

A group's clauses carry a selector literal; a set of groups is tested by
solving under the assumption that its selectors are true, and an
unsatisfiable answer returns a core of selectors.  From a core:

* a *minimal* unsatisfiable subset by deletion (each group is dropped in
  turn and kept out when the rest stays unsatisfiable; the solver's core
  shrinks the set on each success): J. Marques-Silva, "Minimal
  unsatisfiability: models, algorithms and applications", ISMVL 2010;
* a *smallest* set of observed facts (:func:`smallest_facts`; assumption
  instances always available) by implicit hitting sets, one witness at a
  time (:mod:`.hitting`; A. Ignatiev, A. Previti, M. Liffiton,
  J. Marques-Silva, "Smallest MUS extraction with minimal hitting set
  dualization", CP 2015), with correction sets read from small models and
  their images under the symmetries of pattern and bundle.  The search
  stops at a time limit and says whether the smallest was proven.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

from pysat.solvers import Solver

from .encode import SupportSpace


class Oracle:
    """One incremental SAT solver holding every group behind its selector."""

    def __init__(self, space: SupportSpace, solver: str = "g4"):
        self.space = space
        self.base = space.n_vars
        self.solver = Solver(name=solver)
        self.n_clauses = 0
        for cl in space.hard_clauses():
            self.solver.add_clause(cl)
            self.n_clauses += 1
        for g in space.groups:
            sel = self.selector(g.index)
            for cl in space.group_clauses(g):
                self.solver.add_clause([-sel] + cl)
                self.n_clauses += 1
        # prefer "possible": on dual-Horn clauses the solver then returns the
        # largest support of the selected groups, which satisfies the most others
        self.solver.set_phases(list(range(1, self.base + 1)))
        self.calls = 0

    def selector(self, g: int) -> int:
        return self.base + 1 + g

    def solve(self, groups) -> tuple[bool, list[int] | None]:
        """(satisfiable, model) or (False, core as group indices)."""
        self.calls += 1
        ok = self.solver.solve(assumptions=[self.selector(g) for g in groups])
        if ok:
            return True, self.solver.get_model()
        core = self.solver.get_core() or []
        return False, sorted(lit - self.base - 1 for lit in core)

    def close(self):
        self.solver.delete()


def minimal_core(oracle: Oracle, core: list[int]) -> list[int]:
    """Deletion-based shrinking of an unsatisfiable set of groups to a minimal one."""
    core = list(core)
    i = 0
    while i < len(core):
        trial = core[:i] + core[i + 1:]
        ok, res = oracle.solve(trial)
        if ok:
            i += 1
        else:
            keep = set(res)
            core = [g for g in trial if g in keep]
    return core


# -- smallest sets of facts (instances of assumptions always available) ----------------
@dataclass
class FactSearch:
    witness: int | None  # group index of the possible fact the proof ends at (None: normalisation)
    facts: list[int]  # impossible-fact group indices
    proven: bool
    lower_bound: int
    iterations: int
    seconds: float
    orbits: int = 0
    symmetries: int = 0


def space_symmetries(space: SupportSpace, theory) -> list:
    """Pattern symmetries (uniform relabellings, party permutations) that also map the
    bundle's present events, read-out rules and independence clauses onto themselves."""
    from .encode import support_independence  # noqa: PLC0415
    from .symmetry import pattern_symmetries  # noqa: PLC0415

    sc = space.scenario
    if sc.nested:
        return []  # nested observers and observers' choices: no symmetry search (correct, only slower)
    pn = sc.party_names
    gens = pattern_symmetries(sc, space.pattern, uniform=True)
    names = set(space.names)
    clauses = set()
    for a in space.assumptions:
        for c in theory.assumptions[a].clauses:
            r = support_independence(c)
            if r is not None:
                clauses.add((frozenset(e for e in r[0] if e in names), frozenset(r[1])))

    def rename(g, e):
        ev = next(x for x in space.events if x.name == e)
        j = pn[g.perm[pn.index(ev.party)]]
        if ev.kind == "party":
            return j
        if ev.kind == "latent":
            return f"{j}@{ev.setting}"
        o = sc.observer(e)
        others = [x for x in space.events if x.kind == "inner" and sc.observer(x.name).lab == j]
        if len(others) != 1 or len([x for x in space.events if x.kind == "inner" and sc.observer(x.name).lab == ev.party]) != 1:
            return None
        o2 = sc.observer(others[0].name)
        same = (o.read_out_at == o2.read_out_at and o.outcomes == o2.outcomes == sc.party(o.lab).outcomes
                and o.relabel == o2.relabel == tuple(range(len(o.outcomes))))
        return o2.name if same else None

    out = []
    for g in gens:
        m = {e: rename(g, e) for e in space.names}
        if any(v is None for v in m.values()):
            continue
        if any(ev.kind == "latent" for ev in space.events) and any(
                g.outs[i][x] != g.outs[i][sc.parties[i].settings[0]] for i in range(len(pn)) for x in g.outs[i]):
            continue
        img = {(frozenset(m[e] for e in k), frozenset(pn[g.perm[pn.index(p)]] for p in of)) for k, of in clauses}
        if img == clauses:
            out.append(g)
    return out


def smallest_facts(theory, space: SupportSpace, first: list[int], time_limit: float | None,
                   solver: str = "g4") -> FactSearch:
    """Smallest set of observed facts that, with every assumption instance, is contradictory.

    One witness (possible fact) per symmetry orbit, or normalisation; for each,
    the implicit hitting-set loop of :mod:`.hitting` with correction sets read
    from small models (the solver prefers "impossible").
    """
    from .hitting import smallest_for_witness  # noqa: PLC0415
    from .symmetry import orbit  # noqa: PLC0415

    t0 = time.monotonic()
    deadline = None if time_limit is None else t0 + time_limit
    inst = [g.index for g in space.groups if g.kind == "independent"]
    imp = [g.index for g in space.groups if g.kind == "impossible"]
    pos = [g.index for g in space.groups if g.kind == "possible"]
    coord = {(g.settings, g.outcomes): g.index for g in space.groups if g.kind != "independent"}
    gens = space_symmetries(space, theory)
    small = Oracle(space, solver)
    small.solver.set_phases([-v for v in range(1, small.base + 1)])
    first_w = next((g for g in first if space.groups[g].kind == "possible"), None)
    best_w, best = first_w, sorted(g for g in first if space.groups[g].kind == "impossible")
    best_size = len(best) + (first_w is not None)

    def gmap(g, gi):
        if gi is None:
            return None
        grp = space.groups[gi]
        return coord.get(g.fact((grp.settings, grp.outcomes)))

    reps, seen = [], set()
    for w in pos:
        if w in seen:
            continue
        orb = orbit(w, gens, gmap, cap=100000) if gens else [w]
        seen.update(x for x in orb if x is not None)
        reps.append(w)
    reps.append(None)
    iters = [0]
    proven, lowers = True, []
    try:
        for w in reps:
            extra = 0 if w is None else 1
            if best_size <= 1 + extra:
                lowers.append(best_size)
                continue
            if deadline is not None and time.monotonic() > deadline:
                proven = False
                lowers.append(1 + extra)
                continue
            wl = [] if w is None else [w]
            ok, _ = small.solve(inst + imp + wl)
            if ok:
                continue

            def test(hs, wl=wl, w=w):
                ok, m = small.solve(inst + hs + wl)
                if not ok:
                    return None
                true = {lit for lit in m if 0 < lit <= small.base}
                cs = [g for g in imp if any(x in true for x in space.fact_vars[g])]
                sets = [cs]
                for g in gens:  # images under generators that fix the witness
                    if w is None or gmap(g, w) == w:
                        im = [gmap(g, k) for k in cs]
                        if all(k is not None for k in im):
                            sets.append(im)
                return sets

            facts, low, done = smallest_for_witness(imp, test, best_size - extra, deadline, iters)
            if facts is not None:
                best_w, best, best_size = w, facts, len(facts) + extra
            if not done:
                proven = False
            lowers.append(min(low + extra, best_size))
    finally:
        small.close()
    lower = best_size if proven else min([best_size] + lowers)
    return FactSearch(best_w, best, proven, lower, iters[0], time.monotonic() - t0, len(reps), len(gens))
