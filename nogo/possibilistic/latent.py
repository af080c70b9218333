"""The Bell-local reading that grows with the facts: one assignment per (party, setting).

When a bundle is "counterfactual outcomes for every party + their
independence of all settings" (Bell locality by A. Fine, PRL 48, 291
(1982)), every run carries one deterministic assignment λ of an outcome to
every (party, setting), the observed outcome at settings s is λ read out at
s, and the support of λ is the same at every s.  Over supports this reads:

* the pattern is consistent exactly when every possible observed event
  (a | s) has a *witness* λ with λ(s) = a that produces no impossible event,
  and some λ produces none at all (normalisation);
* an impossible event (a | t) is the clause "λ(t) != a" over the booleans of
  one λ: n literals, whatever n.

So a verdict needs a SAT problem over n·(settings) one-hot booleans per
witness, instead of one boolean per joint assignment and settings tuple
(2^(3n) for n parties with two settings).  Witnesses are generated lazily:
a λ found for one possible event covers every possible event it produces.

Smallest proofs: a minimal proof uses at most one possible event (the
formula is dual Horn; Dowling & Gallier, J. Logic Programming 1, 267 (1984))
or none (normalisation), and a set F of impossible events.  For a fixed
witness, F must exclude every λ that agrees with it, so the smallest F is a
smallest set cover of those λ by the events' cubes.  It is found by an
implicit hitting-set loop (A. Ignatiev, A. Previti, M. Liffiton,
J. Marques-Silva, CP 2015): a minimum hitting set (RC2 MaxSAT) of the
correction sets found so far is tested; if some λ escapes it, the impossible
events λ produces form a new correction set, and so do those of every image
of λ under the pattern's symmetries that fix the witness.  The size of the
last hitting set is a lower bound; one witness per symmetry orbit is tried.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

from pysat.solvers import Solver

from ..theory import Counterfactual, Independent, Theory
from .hitting import NO_PROOF, smallest_for_witness
from .support import SupportPattern
from .symmetry import orbit, pattern_symmetries


@dataclass
class LatentReading:
    """Why a bundle has the one-assignment reading: its clause and the variables."""

    label: str
    assumptions: tuple[str, ...]
    independence: tuple[str, int]  # (assumption, clause index) of the global setting independence
    latents: tuple[str, ...]  # names A@x, in the present-event order
    names: tuple[str, ...]  # all present events (parties, then latents)


def latent_reading(theory: Theory, spec) -> LatentReading | None:
    """The reading if *spec* is Bell locality in the counterfactual form, else None.

    Accepted: clauses ``counterfactual`` (covering every party) and
    ``independent`` without ``given``; one independence clause must keep every
    counterfactual outcome and move every party's setting; every other
    independence clause may keep observed outcomes only of parties whose
    settings it does not move (it is then implied).  No inner observers may be
    made absolute.
    """
    sc = theory.scenario
    label, assumptions = theory.resolve(spec)
    cf: set[str] = set()
    indep = []
    for a in assumptions:
        for ci, c in enumerate(a.clauses):
            if isinstance(c, Counterfactual):
                cf.update(c.parties)
            elif isinstance(c, Independent) and not c.given:
                indep.append((a.name, ci, c))
            else:
                return None
    if cf != set(sc.party_names):
        return None
    latents = tuple(f"{p.name}@{x}" for p in sc.parties for x in p.settings)
    names = sc.party_names + latents
    glob = None
    for name, ci, c in indep:
        kept = {e for e in c.events if e in names}
        if set(latents) <= kept and set(c.of) == set(sc.party_names):
            glob = glob or (name, ci)
            continue
        if any(e in sc.party_names and e in c.of for e in kept):
            return None
    if glob is None:
        return None
    return LatentReading(label, tuple(a.name for a in assumptions), glob, latents, names)


class LatentSolver:
    """One SAT solver: one-hot booleans per (party, setting, outcome); impossible events behind selectors."""

    def __init__(self, sc, pattern: SupportPattern, solver: str = "g4"):
        self.sc = sc
        self.n = len(sc.parties)
        self.var: dict[tuple[int, str, str], int] = {}
        for i, p in enumerate(sc.parties):
            for x in p.settings:
                for o in p.outcomes:
                    self.var[(i, x, o)] = len(self.var) + 1
        self.impossible = sorted(pattern.impossible)
        self.index = {c: k for k, c in enumerate(self.impossible)}
        self.base = len(self.var)
        self.solver = Solver(name=solver)
        self.n_clauses = 0
        for i, p in enumerate(sc.parties):
            for x in p.settings:
                lits = [self.var[(i, x, o)] for o in p.outcomes]
                self._add(lits)
                for u in range(len(lits)):
                    for v in range(u + 1, len(lits)):
                        self._add([-lits[u], -lits[v]])
        for k, (s, a) in enumerate(self.impossible):
            self._add([-self.sel(k)] + [-self.var[(i, s[i], a[i])] for i in range(self.n)])
        self.calls = 0

    def _add(self, cl):
        self.solver.add_clause(cl)
        self.n_clauses += 1

    @property
    def n_vars(self) -> int:
        return self.base

    def sel(self, k: int) -> int:
        return self.base + 1 + k

    def witness_lits(self, w) -> list[int]:
        if w is None:
            return []
        s, a = w
        return [self.var[(i, s[i], a[i])] for i in range(self.n)]

    def solve(self, facts, w=None):
        """(True, λ as {(i, x): o}) or (False, core as impossible-event indices)."""
        self.calls += 1
        ok = self.solver.solve(assumptions=self.witness_lits(w) + [self.sel(k) for k in facts])
        if ok:
            m = self.solver.get_model()
            lam = {(i, x): o for (i, x, o), v in self.var.items() if m[v - 1] > 0}
            return True, lam
        core = self.solver.get_core() or []
        return False, sorted(lit - self.base - 1 for lit in core if lit > self.base)

    def produced(self, lam) -> list[int]:
        """Indices of the impossible events λ produces (one per settings tuple at most)."""
        out = []
        for s in self.sc.setting_tuples():
            k = self.index.get((s, tuple(lam[(i, s[i])] for i in range(self.n))))
            if k is not None:
                out.append(k)
        return out

    def close(self):
        self.solver.delete()


def _relevant(ls: LatentSolver, w) -> list[int]:
    """Impossible events that can exclude a λ agreeing with witness w."""
    if w is None:
        return list(range(len(ls.impossible)))
    s, a = w
    return [k for k, (t, b) in enumerate(ls.impossible)
            if all(t[i] != s[i] or b[i] == a[i] for i in range(ls.n))]


def minimal_facts(ls: LatentSolver, core: list[int], w=None) -> list[int]:
    """Deletion-based shrinking (Marques-Silva, ISMVL 2010) of an unsatisfiable set of impossible events."""
    core = list(core)
    i = 0
    while i < len(core):
        ok, res = ls.solve(core[:i] + core[i + 1:], w)
        if ok:
            i += 1
        else:
            keep = set(res)
            core = [k for k in core[:i] + core[i + 1:] if k in keep]
    return core


@dataclass
class Verdict:
    contradiction: bool
    witness: tuple | None = None  # the possible event of the first core (None: normalisation)
    core: list[int] = field(default_factory=list)
    witnesses: list[dict] = field(default_factory=list)  # consistent: the λ found (a model's support)


def decide(ls: LatentSolver, pattern: SupportPattern, tries: int = 8) -> Verdict:
    """Contradiction (with a core and its witness) or a model (a list of λ covering every possible event)."""
    allk = list(range(len(ls.impossible)))
    ok, res = ls.solve(allk)
    if not ok:
        # normalisation fails; a proof ending at a possible event is usually far shorter
        best = Verdict(True, None, res)
        for w in sorted(pattern.possible)[:tries]:
            ok2, res2 = ls.solve(allk, w)
            if not ok2 and len(res2) + 1 < len(best.core) + (best.witness is not None):
                best = Verdict(True, w, res2)
        return best
    lams = [res]
    left = set(pattern.possible)
    n = ls.n

    def cover(lam):
        for s in ls.sc.setting_tuples():
            left.discard((s, tuple(lam[(i, s[i])] for i in range(n))))

    cover(res)
    for w in sorted(pattern.possible):
        if w not in left:
            continue
        ok, res = ls.solve(allk, w)
        if not ok:
            return Verdict(True, w, res)
        lams.append(res)
        cover(res)
    return Verdict(False, witnesses=lams)


@dataclass
class Smallest:
    witness: tuple | None
    facts: list[int]
    proven: bool
    lower_bound: int  # no proof with fewer facts (the witness counted) exists
    iterations: int
    seconds: float
    orbits: int = 0
    symmetries: int = 0


def counting_bound(ls: LatentSolver, w) -> int:
    """Lower bound on the impossible events a proof ending at w needs: the λ agreeing
    with w, divided by the most that any one impossible event excludes of them (a
    counting bound; it depends only on w's settings tuple)."""
    cache = ls.__dict__.setdefault("_bounds", {})
    key = None if w is None else w[0]
    if key in cache:
        return cache[key]
    sc = ls.sc
    sizes = [[len(p.outcomes)] * len(p.settings) for p in sc.parties]
    if w is None:
        total = 1
        for row in sizes:
            for k in row:
                total *= k
        per = total // _prod(len(p.outcomes) for p in sc.parties)  # an event fixes one value per party
        bound = -(-total // per) if ls.impossible else NO_PROOF
    else:
        s = w[0]
        total = _prod(k for i, p in enumerate(sc.parties) for x in p.settings if x != s[i]
                      for k in [len(p.outcomes)])
        per = 0
        for t in {t for t, _ in ls.impossible}:
            if t == s:
                continue  # an impossible event at the witness's own settings never agrees with it
            div = _prod(len(sc.parties[i].outcomes) for i in range(ls.n) if t[i] != s[i])
            per = max(per, total // div)
        bound = -(-total // per) if per else NO_PROOF
    cache[key] = bound
    return bound


def _prod(xs) -> int:
    out = 1
    for x in xs:
        out *= x
    return out


def _ihs(ls: LatentSolver, w, best_size: int, gens, deadline, n_iter: list):
    """Smallest impossible-event set for witness w, if smaller than best_size (see :mod:`.hitting`)."""
    def act(g, x):
        ww, lam = x
        return (g.fact(ww) if ww is not None else None, tuple(sorted(g.latent(dict(lam)).items())))

    def test(hs):
        ok, lam = ls.solve(hs, w)
        if not ok:
            return None
        images = [lam]
        if gens:
            images = [dict(l) for ww, l in orbit((w, tuple(sorted(lam.items()))), gens, act, cap=128) if ww == w]
        return [ls.produced(im) for im in images]

    return smallest_for_witness(_relevant(ls, w), test, best_size, deadline, n_iter)


def smallest(ls: LatentSolver, pattern: SupportPattern, first: Verdict, time_limit: float | None,
             use_symmetry: bool = True) -> Smallest:
    """Smallest proof over all witnesses (one per orbit), with a lower bound when time runs out."""
    t0 = time.monotonic()
    deadline = None if time_limit is None else t0 + time_limit
    gens = pattern_symmetries(ls.sc, pattern) if use_symmetry and len(pattern.impossible) <= 20000 else []
    best_w, best = first.witness, minimal_facts(ls, first.core, first.witness)
    best_size = len(best) + (first.witness is not None)
    # witnesses: normalisation, then one possible event per orbit whose witness fails
    reps: list = [None]
    seen: set = set()
    for w in sorted(pattern.possible):
        if w in seen:
            continue
        orb = orbit(w, gens, lambda g, x: g.fact(x), cap=100000) if gens else [w]
        seen.update(orb)
        reps.append(w)
    iters = [0]
    lowers = []
    proven = True
    order = sorted(reps, key=lambda w: (counting_bound(ls, w) + (w is not None), w is None, w or ()))
    for w in order:
        extra = 0 if w is None else 1
        bound = counting_bound(ls, w) + extra
        if bound >= best_size:
            lowers.append(best_size)
            continue
        if deadline is not None and time.monotonic() > deadline:
            proven = False
            lowers.append(bound)
            continue
        ok, _ = ls.solve(list(range(len(ls.impossible))), w)
        if ok:
            continue  # this witness has a λ: no proof ends at it
        facts, low, done = _ihs(ls, w, best_size - extra, gens, deadline, iters)
        if facts is not None:
            best_w, best, best_size = w, facts, len(facts) + extra
        if not done:
            proven = False
        lowers.append(min(max(low, bound - extra) + extra, best_size))
    lower = min([best_size] + lowers) if not proven else best_size
    return Smallest(best_w, best, proven, lower, iters[0], time.monotonic() - t0, len(reps), len(gens))
