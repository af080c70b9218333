"""Minimal sets, stage 2: the MARCO search over one pool, and one search per inequality."""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Callable, Iterable

from ..inequality import Inequality
from ..theory import Hidden, Independent, Theory
from .oracle import Answer, GuardMemory, ask
from .pool import split_pool


# -- the search ---------------------------------------------------------------
class _OutOfTime(Exception):
    pass


@dataclass
class SearchResult:
    """Every minimal implicating and maximal non-implying set of ``pool`` for ``inequality``.

    ``complete`` is False when the time limit stopped the search: the sets
    listed are then genuine (each was confirmed) but others may exist.
    """

    inequality: Inequality
    pool: tuple[str, ...]
    background: tuple[str, ...]
    minimal: list[Answer]
    maximal: list[Answer]
    oracle_calls: int
    answers: dict[frozenset, Answer] = field(repr=False)
    complete: bool = True
    seconds: float = 0.0
    notes: list[str] = field(default_factory=list)
    hint_steps: int = 0  # shrink steps taken on a certificate's hint

    @property
    def brute_force(self) -> int:
        return 2 ** len(self.pool)

    def essential(self) -> list[str]:
        """Members in every minimal implicating set (none when there is no minimal set)."""
        if not self.minimal:
            return []
        return [p for p in self.pool if all(p in a.subset for a in self.minimal)]

    def idle(self) -> list[str]:
        """Members in no minimal implicating set: never needed for this inequality."""
        return [p for p in self.pool if not any(p in a.subset for a in self.minimal)]

    def status_of(self, subset: Iterable[str]) -> str:
        """Status of any subset of the pool, by monotonicity, without an oracle call.

        'implied' (above a minimal set), 'refused' (below a refused maximal
        set: refusal is inherited by subsets), 'not implied', or 'unknown'
        (only when the search is partial).
        """
        s = frozenset(subset)
        if any(a.subset <= s for a in self.minimal):
            return "implied"
        below = [a for a in self.maximal if s <= a.subset]
        if any(a.status == "refused" for a in below):
            return "refused"
        if below:
            return "not implied"
        return "not implied" if self.complete else "unknown"

    def failed_rechecks(self) -> list[Answer]:
        return [a for a in self.answers.values() if a.recheck]


class _Knowledge:
    """Oracle answers plus the monotone closure of them, with a call counter."""

    def __init__(self, theory, background, ineq, options, models, deadline, progress):
        self.theory, self.background, self.ineq = theory, background, ineq
        self.options, self.models, self.deadline, self.progress = options, models, deadline, progress
        self.answers: dict[frozenset, Answer] = {}
        self.calls = 0
        self.guards = GuardMemory()

    def known(self, s: frozenset) -> bool | None:
        a = self.answers.get(s)
        if a is not None:
            return a.implies
        for t, a in self.answers.items():
            if a.implies and t <= s:
                return True
            if not a.implies and s <= t:
                return False
        return None

    def call(self, s: frozenset) -> Answer:
        if s in self.answers:
            return self.answers[s]
        if self.deadline is not None and time.monotonic() > self.deadline:
            raise _OutOfTime
        a = ask(self.theory, s, self.background, self.ineq, self.options, self.models, self.guards)
        self.calls += 1
        self.answers[s] = a
        if self.progress:
            self.progress("oracle", a)
        return a

    def implies(self, s: frozenset) -> bool:
        k = self.known(s)
        return k if k is not None else self.call(s).implies


def _row_only(theory: Theory, name: str) -> bool:
    """Does the assumption only add rows (independence on present events), never columns?

    True for independence clauses that speak neither *given* a hidden
    variable nor *of* one (setting independence of λ changes the mixture's
    weight classes, i.e. its columns).  Removing such an assumption removes
    its rows and nothing else, in the linear and in the mixture model.
    """
    hidden = {c.name for a in theory.assumptions.values() for c in a.clauses if isinstance(c, Hidden)}
    return all(isinstance(c, Independent) and not c.given and not (set(c.events) & hidden)
               for c in theory.assumptions[name].clauses)


def _shrink(know: _Knowledge, seed: frozenset, theory: Theory, use_hint: bool) -> tuple[frozenset, int]:
    """Deletion-based shrink of an implying set to a minimal one; (set, hint steps)."""
    current = seed
    hints = 0
    if use_hint:
        a = know.call(current)
        cert = a.result.certificate if a.result is not None else None
        if cert is not None:
            used = set(cert.by_assumption())
            drop = {n for n in current if _row_only(theory, n) and n not in used}
            if drop and know.implies(current - drop):
                current = current - drop
                hints += 1
    for n in sorted(current, key=list(theory.assumptions).index):
        trial = current - {n}
        if know.implies(trial):
            current = trial
    return current, hints


def _maximal_seed(solver, n: int) -> set[int] | None:
    """A maximal model of the map (indices 0..n-1 set true), or None when the map is exhausted."""
    if not solver.solve():
        return None
    chosen = {v - 1 for v in solver.get_model() if v > 0}
    for i in range(n):
        if i in chosen:
            continue
        if solver.solve(assumptions=[j + 1 for j in chosen] + [i + 1]):
            chosen |= {v - 1 for v in solver.get_model() if v > 0}
    return chosen


def explored_fraction(pool: tuple[str, ...], minimal: list[Answer], maximal: list[Answer]) -> float | None:
    """Share of the 2**n subsets already explained (None for pools above 20 members)."""
    n = len(pool)
    if n > 20:
        return None
    import numpy as np

    idx = {p: i for i, p in enumerate(pool)}
    masks = np.arange(2 ** n, dtype=np.int64)
    covered = np.zeros(2 ** n, dtype=bool)
    for a in minimal:
        m = sum(1 << idx[p] for p in a.subset)
        covered |= (masks & m) == m
    for a in maximal:
        m = sum(1 << idx[p] for p in a.subset)
        covered |= (masks & ~m) == 0
    return float(covered.mean())


def find_minimal_sets(theory: Theory, ineq: Inequality, pool: Iterable[str] | None = None, *,
                      fixed: Iterable[str] = (), time_limit: float | None = None,
                      options: dict | None = None, models: dict | None = None,
                      progress: Callable[[str, object], None] | None = None,
                      use_hint: bool = True) -> SearchResult:
    """List every minimal implicating and maximal non-implying subset of ``pool`` (MARCO).

    Parameters
    ----------
    theory, ineq:  the theory and the inequality (in the theory's scenario).
    pool:          assumption (or bundle) names to choose from; default every
                   assumption of the theory.  Hidden-variable declarations
                   go to the background (see the module docstring).
    fixed:         assumptions held in every bundle, not searched.
    time_limit:    seconds; when exceeded the result is returned with
                   ``complete=False`` (a running oracle call is finished first).
    options:       passed to :func:`nogo.compile.compile_bundle`.
    models:        a dict shared between searches to re-use compiled models.
    progress:      called as ``progress(kind, payload)`` with kind "start"
                   (payload the pool), "oracle" (an Answer), "minimal" /
                   "maximal" (an Answer).
    use_hint:      shrink along the Farkas certificate first (verified).

    Returns a :class:`SearchResult`; every listed set carries its own
    oracle answer (certificate or counterexample) and its re-check.

    Example: for CHSH in theories/hidden-2x2.yaml with the pool
    param-indep, outcome-indep, lam-free, predetermined the minimal sets are
    {param-indep, outcome-indep, lam-free} and {param-indep, predetermined,
    lam-free} (Fine, PRL 48, 291 (1982); Jarrett, Noûs 18, 569 (1984)).

    Reference: Liffiton, Previti, Malik, Marques-Silva, Constraints
    21(2):223–250 (2016).
    """
    from pysat.solvers import Solver

    t0 = time.perf_counter()
    members, background, notes = split_pool(theory, pool, fixed)
    n = len(members)
    deadline = time.monotonic() + time_limit if time_limit else None
    know = _Knowledge(theory, background, ineq, options, {} if models is None else models, deadline, progress)
    if progress:
        progress("start", members)
    minimal: list[Answer] = []
    maximal: list[Answer] = []
    hints, complete = 0, True
    with Solver(name="m22") as solver:
        try:
            while True:
                seed_idx = _maximal_seed(solver, n)
                if seed_idx is None:
                    break
                seed = frozenset(members[i] for i in seed_idx)
                if not know.implies(seed):
                    a = know.call(seed)  # its own counterexample (never inferred from a superset)
                    maximal.append(a)
                    if progress:
                        progress("maximal", a)
                    if len(seed_idx) == n:
                        break  # the whole pool does not imply: nothing implies
                    solver.add_clause([i + 1 for i in range(n) if i not in seed_idx])
                    continue
                m, h = _shrink(know, seed, theory, use_hint)
                hints += h
                a = know.call(m)  # its own certificate
                minimal.append(a)
                if not m:
                    break  # the background alone implies: the empty set is the one minimal set
                solver.add_clause([-(members.index(p) + 1) for p in m])
                if progress:
                    progress("minimal", a)
        except _OutOfTime:
            complete = False
            notes.append(f"time limit of {time_limit:g} s reached: the lists are partial "
                         "(every set listed is confirmed; others may exist)")
    key = _by_size(theory)
    return SearchResult(ineq, members, background, sorted(minimal, key=key), sorted(maximal, key=key),
                        know.calls, know.answers, complete, time.perf_counter() - t0, notes, hints)


def _by_size(theory: Theory):
    """Sort key of answers: smaller sets first, then in the theory's order of assumptions."""
    order = list(theory.assumptions)
    return lambda a: (len(a.subset), sorted(order.index(p) for p in a.subset))


# -- many inequalities ------------------------------------------------------------
def _search_job(theory: Theory, job) -> SearchResult:
    ineq, pool, fixed, time_limit, options = job
    return find_minimal_sets(theory, ineq, pool, fixed=fixed, time_limit=time_limit, options=options)


def find_for_many(theory: Theory, ineqs: list[Inequality], pool: Iterable[str] | None = None, *,
                  fixed: Iterable[str] = (), time_limit: float | None = None, options: dict | None = None,
                  workers: int | None = None,
                  progress: Callable[[str, object], None] | None = None) -> list[SearchResult]:
    """One search per inequality (e.g. every version from :func:`nogo.symmetry.orbit`).

    Sequentially the compiled models are shared between the searches (the
    same subset is compiled once); with ``workers > 1`` or inside an open
    :func:`nogo.fanout.engine` the searches fan out through
    :func:`nogo.fanout.fan_out` (the theory sent to each worker once) and
    ``time_limit`` applies to each.  With a time limit and one worker, the
    limit is for all of them.
    """
    from ..fanout import fan_out, is_open

    pool = list(pool) if pool is not None else None
    fixed, ineqs = list(fixed), list(ineqs)
    if (workers and workers > 1 or is_open()) and len(ineqs) > 1:
        return fan_out(_search_job, [(i, pool, fixed, time_limit, options) for i in ineqs], workers, shared=theory)
    models: dict = {}
    out: list[SearchResult] = []
    deadline = time.monotonic() + time_limit if time_limit else None
    for k, ineq in enumerate(ineqs):
        left = None if deadline is None else max(deadline - time.monotonic(), 1e-9)
        if progress:
            progress("inequality", (k, ineq))
        out.append(find_minimal_sets(theory, ineq, pool, fixed=fixed, time_limit=left, options=options,
                                     models=models, progress=progress))
    return out
