"""Verdicts with python-sat: consistent (with a model) or contradictory (with cores).

A group's clauses carry a selector literal; a set of groups is tested by
solving under the assumption that its selectors are true, and an
unsatisfiable answer returns a core of selectors.  From a core:

* a *minimal* unsatisfiable subset by deletion (each group is dropped in
  turn and kept out when the rest stays unsatisfiable; the solver's core
  shrinks the set on each success): J. Marques-Silva, "Minimal
  unsatisfiability: models, algorithms and applications", ISMVL 2010;
* a *smallest* one by implicit hitting sets (every unsatisfiable subset
  hits every minimal correction set; the smallest hitting set of the
  correction sets found so far that is unsatisfiable is a smallest MUS):
  A. Ignatiev, A. Previti, M. Liffiton, J. Marques-Silva, "Smallest MUS
  extraction with minimal hitting set dualization", CP 2015.  Hitting sets
  come from pysat's Hitman (RC2 MaxSAT); correction sets are grown from the
  largest support of the satisfiable part.  The search stops at a time
  limit and says whether the smallest was proven.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

from pysat.examples.hitman import Hitman
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


def _satisfied(space: SupportSpace, model_true: set[int], g) -> bool:
    if g.kind == "impossible":
        return not any(x in model_true for x in space.fact_vars[g.index])
    if g.kind == "possible":
        return any(x in model_true for x in space.fact_vars[g.index])
    left, right = space.buckets[g.index]
    for v in set(left) | set(right):
        if any(x in model_true for x in left.get(v, ())) != any(x in model_true for x in right.get(v, ())):
            return False
    return True


def _grow(oracle: Oracle, space: SupportSpace, start: list[int], model: list[int]) -> list[int]:
    """A maximal satisfiable superset of *start*; returns its complement (a correction set).

    *model* satisfies the groups of *start*; every group it also satisfies
    joins at once, the rest are tried one by one.
    """
    sat_set = set(start)

    def absorb(m):
        true = {lit for lit in m if 0 < lit <= oracle.base}
        for g in space.groups:
            if g.index not in sat_set and _satisfied(space, true, g):
                sat_set.add(g.index)

    absorb(model)
    for g in space.groups:
        if g.index in sat_set:
            continue
        ok, m = oracle.solve(sorted(sat_set | {g.index}))
        if ok:
            sat_set.add(g.index)
            absorb(m)
    return [g.index for g in space.groups if g.index not in sat_set]


@dataclass
class CoreSearch:
    smallest: list[int]
    proven: bool  # True when no smaller unsatisfiable subset exists
    lower_bound: int
    minimal_seen: int
    iterations: int
    seconds: float
    first: list[int] = field(default_factory=list)


def smallest_core(oracle: Oracle, space: SupportSpace, start: list[int], time_limit: float | None) -> CoreSearch:
    """Implicit-hitting-set search for a smallest unsatisfiable subset of groups.

    Parameters
    ----------
    oracle: the solver; space: the groups; start: a known minimal core (the
    upper bound); time_limit: seconds (None = no limit).

    Returns a :class:`CoreSearch`: the smallest core found, whether it is
    proven smallest, and the lower bound reached (the size of the last
    hitting set, which every unsatisfiable subset must reach).
    """
    t0 = time.monotonic()
    best = list(start)
    seen = 1
    lower = 1
    it = 0
    with Hitman(htype="sorted") as hitman:
        # the whole set minus any one group of a core is a (possibly
        # non-minimal) seed; begin from an empty hitting set instead
        while True:
            if time_limit is not None and time.monotonic() - t0 > time_limit:
                return CoreSearch(best, False, lower, seen, it, time.monotonic() - t0, start)
            it += 1
            hs = hitman.get()
            if hs is None:
                break
            hs = sorted(hs)
            lower = max(lower, len(hs))
            if len(hs) >= len(best):
                return CoreSearch(best, True, len(best), seen, it, time.monotonic() - t0, start)
            ok, res = oracle.solve(hs)
            if not ok:
                seen += 1
                best = minimal_core(oracle, res)
                return CoreSearch(best, True, len(best), seen, it, time.monotonic() - t0, start)
            mcs = _grow(oracle, space, hs, res)
            if not mcs:  # everything is satisfiable: cannot happen with a core in hand
                break
            hitman.hit(mcs)
    return CoreSearch(best, True, len(best), seen, it, time.monotonic() - t0, start)
