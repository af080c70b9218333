"""Minimal implicating sets: which assumptions an inequality really needs.

For a theory, a *pool* of its atomic assumptions and an inequality I, a set
S of pool members *implies* I when the bundle S (plus a fixed background,
below) implies I; the answer comes from the exact oracle
``nogo.check.decide(compile_bundle(theory, S), I)``.  Implication is
monotone: a superset of an implying set implies (its set of behaviours is
smaller), a subset of a non-implying set does not.  This module lists

* every **minimal implicating set** (implies I, no proper subset does), each
  with its own exact Farkas certificate, and
* every **maximal non-implying set** (does not imply I, adding any pool
  member makes it imply), each with its own exact counterexample: a
  behaviour the set allows and the value of I it reaches.

Method: MARCO (M. H. Liffiton, A. Previti, A. Malik, J. Marques-Silva, "Fast,
flexible MUS enumeration", Constraints 21(2):223–250 (2016)).  A SAT *map
solver* (python-sat) holds one boolean per pool member; its models are the
subsets not yet explained.  Each round takes a *maximal* model of the map
(a seed) and asks the oracle:

* seed does not imply I -> it is a maximal non-implying set (every proper
  superset of it is already known to imply); block it and all its subsets
  with the clause "some member outside the seed";
* seed implies I -> shrink it by deleting members one at a time while the
  rest still implies, to a minimal implicating set; block it and all its
  supersets with the clause "some member of it is missing".

The search ends when the map is unsatisfiable; by then every subset of the
pool lies above a listed minimal set or below a listed maximal one.  Every
oracle answer is kept, and before each call the known answers are consulted
through monotonicity, so no subset is ever decided twice; the report counts
oracle calls against the 2**n of brute force.  Shrinking is sped up by the
Farkas certificate: members that only add rows (plain independence
constraints) and whose rows carry no weight in the certificate are dropped
in one step, which is then confirmed by the oracle like any other step (a
hint that saves calls, never a shortcut to a verdict).

Choices (and why):

* **Background.**  Assumptions that only *declare* a hidden variable
  (``hidden: lam``) constrain nothing on their own; they are the language in
  which other assumptions speak.  They are never pool members: each one
  that a pool or fixed assumption mentions (through ``given``) is added to
  every bundle, and the report lists it as background.  The caller may fix
  further assumptions (``fixed``) that stay in every bundle.
* **Inequalities written with marginals** (I3322 in Collins–Gisin form) have
  no single meaning under a bundle that lets the marginal depend on the
  other parties' settings; the oracle refuses them (``decide`` raises
  InputError).  Here such a subset gets the status ``"refused"`` and counts
  on the *not implying* side: refusal means the subset does not imply
  no-signalling for that marginal, which is inherited by every subset, so
  the implying family stays upward-closed and the search stays exact.  A
  maximal set that is refused is reported as such, with the reason, never
  as a counterexample.  Write the inequality with correlators or joint
  probabilities to get counterexamples for every maximal set.
* **Contradictory bundles** (no behaviour at all) imply everything
  vacuously; they get the status ``"contradictory"`` on the implying side,
  without a certificate, and the report says so.

Example::

    >>> from nogo.theory import load_theory
    >>> from nogo.catalog import resolve_inequality
    >>> th = load_theory("theories/friends-2x2.yaml")
    >>> res = find_minimal_sets(th, resolve_inequality(th.scenario, "CHSH"),
    ...                         ["absoluteness", "agency-A", "agency-B", "agency-inner"])
    >>> [sorted(a.subset) for a in res.minimal]
    [['absoluteness', 'agency-A', 'agency-B']]

Every oracle call is the pure function :func:`ask` of picklable inputs; many
inequalities fan out through :func:`nogo.fanout.fan_out`.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Callable, Iterable

from .check import CheckResult, decide, marginal_guard, recheck
from .compile import compile_bundle
from .errors import InputError
from .inequality import Inequality
from .model import LinearModel
from .theory import Hidden, Independent, Factorise, Predetermined, Theory

IMPLYING = ("implied", "contradictory")
STATUSES = ("implied", "contradictory", "not implied", "refused")


# -- one oracle answer ----------------------------------------------------
@dataclass
class Answer:
    """The oracle's answer for one subset of the pool.

    ``status``: "implied" (certificate in ``result``), "not implied"
    (counterexample in ``result``), "refused" (the inequality has no single
    meaning under this subset; ``message`` says why) or "contradictory"
    (the bundle admits no behaviour).  ``recheck`` is None when the
    evidence passed the independent exact re-check of
    :func:`nogo.check.recheck`, else the reason it failed.
    """

    subset: frozenset[str]
    status: str
    maximum: Fraction | None = None
    result: CheckResult | None = None
    recheck: str | None = None
    message: str = ""
    seconds: float = 0.0

    @property
    def implies(self) -> bool:
        return self.status in IMPLYING


@dataclass
class GuardMemory:
    """Marginal-guard answers of one search, reused by monotonicity.

    A set that passes the guard (implies no-signalling for the inequality's
    marginals) passes it with every superset, whose set of behaviours is
    smaller; a refused set is refused with every subset.  The pool, the
    background and the inequality are fixed within one search.
    """

    passed: list[frozenset] = field(default_factory=list)
    refused: list[tuple[frozenset, str]] = field(default_factory=list)
    computed: int = 0  # guards actually computed (the rest were inherited)

    def lookup(self, s: frozenset) -> tuple[bool, str] | None:
        if any(t <= s for t in self.passed):
            return True, ""
        for t, msg in self.refused:
            if s <= t:
                return False, msg
        return None


def ask(theory: Theory, members: Iterable[str], background: Iterable[str], ineq: Inequality,
        options: dict | None = None, models: dict | None = None, guards: GuardMemory | None = None) -> Answer:
    """Decide whether ``members`` (plus ``background``) imply ``ineq``; exact evidence, re-checked.

    Parameters: the theory; pool members of the subset; background
    assumptions added to every bundle; the inequality; options passed to
    :func:`nogo.compile.compile_bundle` (e.g. ``max_columns``); an optional
    dict used as a cache of compiled models keyed by the name tuple (the
    same subset, another inequality); an optional :class:`GuardMemory`
    shared by the calls of one search.  Returns an :class:`Answer`.
    Raises InputError for problems that are not about this subset (a model
    too large, a missing compiler).
    """
    t0 = time.perf_counter()
    subset = frozenset(members)
    names = [n for n in theory.assumptions if n in subset or n in set(background)]
    key = tuple(names)
    model: LinearModel | None = models.get(key) if models is not None else None
    if model is None:
        try:
            model = compile_bundle(theory, names, **(options or {}))
        except InputError as exc:
            # not an answer about this subset: the search cannot go on exactly without it
            raise type(exc)(f"the set {{{', '.join(n for n in names if n in subset) or 'no assumption'}}} "
                            f"cannot be compiled, so the search cannot decide it: {exc.message}",
                            exc.where, exc.hint or "choose a pool without this combination (--pool)") from None
        if models is not None:
            models[key] = model
    known = guards.lookup(subset) if guards is not None and ineq.marginals else None
    if known is not None and not known[0]:
        return Answer(subset, "refused", message=known[1] + " (inherited: a larger set of this search is refused)",
                      seconds=time.perf_counter() - t0)
    try:
        r = decide(model, ineq, guard=False)  # the guard below may then refuse from this answer's exact point
    except InputError as exc:
        if "admits no behaviour" in exc.message:  # no behaviour: no-signalling holds vacuously, the guard passes
            return Answer(subset, "contradictory", message=exc.message, seconds=time.perf_counter() - t0)
        raise
    if ineq.marginals and known is None:
        try:
            marginal_guard(model, ineq, r.point)
            if guards is not None:
                guards.passed.append(subset)
                guards.computed += 1
        except InputError as exc:
            if guards is not None:
                guards.refused.append((subset, exc.message))
                guards.computed += 1
            return Answer(subset, "refused", message=exc.message, seconds=time.perf_counter() - t0)
    return Answer(subset, "implied" if r.implied else "not implied", r.maximum, r,
                  recheck(model, r), seconds=time.perf_counter() - t0)


# -- pool and background ------------------------------------------------------
def _declares_only(a) -> bool:
    return bool(a.clauses) and all(isinstance(c, Hidden) for c in a.clauses)


def _mentions_hidden(a) -> set[str]:
    out: set[str] = set()
    for c in a.clauses:
        if isinstance(c, (Independent, Factorise, Predetermined)):
            out.update(c.given)
        if isinstance(c, Independent):
            out.update(c.events)  # "lam independent of the settings" names lam as an event
    return out


def split_pool(theory: Theory, pool: Iterable[str] | None = None,
               fixed: Iterable[str] = ()) -> tuple[tuple[str, ...], tuple[str, ...], list[str]]:
    """(pool, background, notes): the searched members and what every bundle also holds.

    ``pool`` defaults to every assumption of the theory.  Bundle names are
    expanded.  Declarations of hidden variables move to the background
    (they constrain nothing alone); so does any declaration that a member
    mentions, even when the caller left it out.
    """
    def expand(names) -> list[str]:
        out: list[str] = []
        for n in names:
            _, assumptions = theory.resolve([n])
            out += [a.name for a in assumptions]
        return list(dict.fromkeys(out))

    members = expand(pool) if pool is not None else list(theory.assumptions)
    fixed_l = expand(fixed)
    notes: list[str] = []
    background = [n for n in fixed_l]
    for n in list(members):
        if _declares_only(theory.assumptions[n]):
            members.remove(n)
            if n not in background:
                background.append(n)
            notes.append(f"'{n}' only declares a hidden variable; it is part of every bundle (background)")
    members = [n for n in members if n not in background]
    declared = {c.name: n for n, a in theory.assumptions.items() if _declares_only(a) for c in a.clauses}
    for n in members + background:
        for h in sorted(_mentions_hidden(theory.assumptions[n])):
            d = declared.get(h)
            if d and d not in background:
                background.append(d)
                notes.append(f"'{d}' declares {h}, which '{n}' speaks of; added to every bundle (background)")
    if not members:
        raise InputError("the pool is empty", hint="name assumptions of the theory with --pool a,b,c")
    order = list(theory.assumptions)
    return (tuple(sorted(members, key=order.index)), tuple(sorted(background, key=order.index)), notes)


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
    hints = 0
    complete = True
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
    order = list(theory.assumptions)

    def key(a: Answer):
        return (len(a.subset), sorted(order.index(p) for p in a.subset))
    return SearchResult(ineq, members, background, sorted(minimal, key=key), sorted(maximal, key=key),
                        know.calls, know.answers, complete, time.perf_counter() - t0, notes, hints)


# -- many inequalities ------------------------------------------------------------
def _search_job(job) -> SearchResult:
    theory, ineq, pool, fixed, time_limit, options = job
    return find_minimal_sets(theory, ineq, pool, fixed=fixed, time_limit=time_limit, options=options)


def find_for_many(theory: Theory, ineqs: list[Inequality], pool: Iterable[str] | None = None, *,
                  fixed: Iterable[str] = (), time_limit: float | None = None, options: dict | None = None,
                  workers: int | None = None,
                  progress: Callable[[str, object], None] | None = None) -> list[SearchResult]:
    """One search per inequality (e.g. every version from :func:`nogo.symmetry.orbit`).

    Sequentially the compiled models are shared between the searches (the
    same subset is compiled once); with ``workers > 1`` the searches fan
    out through :func:`nogo.fanout.fan_out` and ``time_limit`` applies to
    each.  With a time limit and one worker, the limit is for all of them.
    """
    pool = list(pool) if pool is not None else None
    fixed = list(fixed)
    if workers and workers > 1:
        from .fanout import fan_out

        return fan_out(_search_job, [(theory, i, pool, fixed, time_limit, options) for i in ineqs], workers)
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


@dataclass
class Summary:
    """Across several inequalities: which members are always needed, which never."""

    pool: tuple[str, ...]
    essential: list[str]  # in every minimal set of every inequality
    idle: list[str]  # in no minimal set of any inequality
    per_inequality: list[tuple[str, list[str], list[str]]]  # (name, essential, idle)
    oracle_calls: int
    complete: bool


def summarise(results: list[SearchResult]) -> Summary:
    pool = results[0].pool
    ess = [p for p in pool if all(p in r.essential() for r in results)]
    idle = [p for p in pool if all(p in r.idle() for r in results)]
    per = [(r.inequality.name or r.inequality.display(), r.essential(), r.idle()) for r in results]
    return Summary(pool, ess, idle, per, sum(r.oracle_calls for r in results), all(r.complete for r in results))


# -- claims a referee checks ------------------------------------------------------
@dataclass
class ClaimResult:
    """Verdict on "``claimed`` implies the inequality and is minimal".

    ``verdict``: "confirmed" or "refuted".  Evidence: ``whole`` (the claimed
    set's certificate, or its counterexample when it does not imply), and
    ``drops``: for each member, the answer for the set without it (each a
    counterexample when confirmed).  When a smaller set implies,
    ``smaller`` is a minimal implicating subset, with its certificate.
    """

    claimed: frozenset[str]
    background: tuple[str, ...]
    verdict: str
    reason: str
    whole: Answer
    drops: dict[str, Answer]
    smaller: Answer | None
    oracle_calls: int


def check_claim(theory: Theory, ineq: Inequality, claimed: Iterable[str], *, fixed: Iterable[str] = (),
                options: dict | None = None) -> ClaimResult:
    """Referee a claim "this set implies I and is minimal", with exact evidence either way.

    Minimality needs only the sets with one member removed: by
    monotonicity every proper subset lies below one of them.

    Example: ``check_claim(th, chsh, ["absoluteness", "agency-A", "agency-B"])``
    on theories/friends-2x2.yaml is confirmed; adding "agency-inner" is
    refuted with the smaller set.
    """
    members, background, _ = split_pool(theory, list(claimed), fixed)
    know = _Knowledge(theory, background, ineq, options, {}, None, None)
    whole = know.call(frozenset(members))
    if not whole.implies:
        why = ("the inequality has no single meaning under it: " + whole.message) if whole.status == "refused" \
            else f"it allows a behaviour reaching {whole.maximum}, above the bound {ineq.bound}"
        return ClaimResult(frozenset(members), background, "refuted", "the set does not imply the inequality: " + why,
                           whole, {}, None, know.calls)
    drops = {}
    for p in members:
        drops[p] = know.call(frozenset(members) - {p})
        if drops[p].implies:
            small, _ = _shrink(know, frozenset(members) - {p}, theory, True)
            smaller = know.call(small)
            return ClaimResult(frozenset(members), background, "refuted",
                               f"it is not minimal: without '{p}' it still implies the inequality; "
                               f"a minimal implicating subset is {{{', '.join(sorted(small))}}}",
                               whole, drops, smaller, know.calls)
    return ClaimResult(frozenset(members), background, "confirmed",
                       "the set implies the inequality (certificate) and each set with one member removed "
                       "does not (counterexample each)", whole, drops, None, know.calls)
