"""Find possibilistic proofs automatically over families of experiments.

A *candidate* is an n-qubit state from a small family (GHZ, W, ring, line and
star graph states; :mod:`.families`), a pair of Pauli bases per party
(setting 1, setting 2), the labs that hold an inner observer and the setting
at which each lab reads it out.  Its exact support pattern is decided against
Bell locality (no observers) or local friendliness (absoluteness of the
records + the published, joint local agency) in the generated theory; every
contradiction comes with a minimal proof that the independent checker has
accepted.  Candidates fan out through :func:`nogo.fanout.fan_out` (each is a
pure function of a small picklable description), and the results are ranked
by fewest observed facts, then fewest settings tuples the proof uses, then
fewest labs with observers.

The GHZ family is the classic case (Greenberger, Horne, Shimony, Zeilinger,
Am. J. Phys. 58, 1131 (1990); Mermin, PRL 65, 1838 (1990)); graph states
carry GHZ-type arguments too (O. Gühne, G. Tóth, P. Hyllus, H. J. Briegel,
PRL 95, 120405 (2005), from memory); W states give Hardy-type ones with X
and Z, as almost every entangled state does (S. Abramsky, C. M. Constantin,
S. Ying, "Hardy is (almost) everywhere", arXiv:1506.01365).
"""

from __future__ import annotations

import itertools
import time
from dataclasses import dataclass, field

from ..errors import InputError
from ..fanout import fan_out
from .families import BASES, STATES, family_theory, party_names, state_by_name, support_pattern


@dataclass(frozen=True)
class Candidate:
    n: int
    state: str
    choice: tuple[tuple[str, str], ...]  # per party: basis at setting 1, at setting 2
    inner_labs: tuple[str, ...] = ()
    read_out: str = "1"

    @property
    def bundle(self) -> str:
        return "local-friendliness" if self.inner_labs else "Bell-local"

    def describe(self) -> str:
        ch = " ".join(f"{p}:{a}/{b}" for p, (a, b) in zip(party_names(self.n), self.choice))
        inner = f"; observers in {''.join(self.inner_labs)} read out at {self.read_out}" if self.inner_labs else ""
        return f"{self.state} {ch}{inner}"


@dataclass
class Outcome:
    candidate: Candidate
    contradiction: bool
    facts: int = 0
    settings_used: int = 0
    seconds: float = 0.0
    booleans: int = 0
    proven: bool = False  # facts is the proven smallest number
    undecided: str = ""  # why no verdict (the model was too large to call the pattern consistent)

    def rank(self):
        return (self.facts, self.settings_used, len(self.candidate.inner_labs), self.candidate.describe())


def evaluate(item) -> Outcome:
    """Decide one candidate (a checked proof: minimal, or smallest within a time limit).

    *item*: a :class:`Candidate`, or (candidate, minimise, seconds); a pure function of it."""
    from . import decide_pattern  # noqa: PLC0415

    c, minimise, limit = (item, "minimal", None) if isinstance(item, Candidate) else item
    t0 = time.monotonic()
    th = family_theory(c.n, c.inner_labs, c.read_out)
    pat = support_pattern(state_by_name(c.state, c.n), c.choice)
    try:
        r = decide_pattern(th, c.bundle, pat, minimise=minimise, time_limit=limit)
    except InputError as exc:  # too large to call consistent: undecided, not a crash of the sweep
        return Outcome(c, False, seconds=time.monotonic() - t0, undecided=str(exc))
    used = {g.settings for g in r.core if g.kind != "independent"} if r.contradiction else set()
    return Outcome(c, r.contradiction, r.facts_size if r.contradiction else 0, len(used),
                   time.monotonic() - t0, int(r.stats.get("joint_booleans", 0)),
                   proven=bool(r.contradiction and r.smallest_proven))


def candidates(n: int, states=("ghz",), bases=("X", "Y"), observers=("none",), same_for_all: bool = True,
               max_candidates: int = 2000) -> list[Candidate]:
    """Every candidate of the family, deduplicated, at most *max_candidates*.

    observers: any of "none" (Bell-local), "all@1", "all@2" (every lab, read out
    at setting 1 or 2), "first@1" (lab A only), "K@1" / "K@2" (the first K labs).
    """
    party_names(n)
    for s in states:
        if s not in STATES:
            raise InputError(f"no state family '{s}'", hint="one of: " + ", ".join(STATES))
    for b in bases:
        if b not in BASES:
            raise InputError(f"no basis '{b}'", hint="one of: " + ", ".join(BASES))
    pairs = [p for p in itertools.permutations(bases, 2)]
    if not pairs:
        raise InputError("give at least two bases")
    choices = [tuple([p] * n) for p in pairs] if same_for_all else list(itertools.product(pairs, repeat=n))
    labs = party_names(n)
    obs_opts = []
    for o in observers:
        if o == "none":
            obs_opts.append(((), "1"))
        elif o in ("all@1", "all@2"):
            obs_opts.append((labs, o[-1]))
        elif o in ("first@1", "first@2"):
            obs_opts.append((labs[:1], o[-1]))
        elif o[:-2].isdigit() and o[-2:] in ("@1", "@2") and 1 <= int(o[:-2]) <= n:
            obs_opts.append((labs[:int(o[:-2])], o[-1]))
        else:
            raise InputError(f"observer option '{o}' is not understood",
                             hint="none, all@1, all@2, first@1, first@2, or K@1 / K@2 (the first K labs)")
    out = []
    for s in states:
        for ch in choices:
            for labs_, r in obs_opts:
                out.append(Candidate(n, s, ch, tuple(labs_), r))
                if len(out) >= max_candidates:
                    return out
    return out


@dataclass
class HuntResult:
    tried: int
    outcomes: list[Outcome]
    seconds: float
    complete: bool = True
    best: list = field(default_factory=list)  # (Outcome, PossibilisticResult) for the best few

    @property
    def contradictions(self) -> list[Outcome]:
        return sorted((o for o in self.outcomes if o.contradiction), key=Outcome.rank)


def hunt(cands: list[Candidate], workers: int | None = None, time_limit: float | None = None, keep: int = 1,
         proof_time_limit: float | None = 20.0, rank_by: str = "minimal",
         candidate_time_limit: float | None = 5.0) -> HuntResult:
    """Decide every candidate (through :func:`fan_out`), rank, and minimise the best *keep* to smallest proofs.

    rank_by: "minimal" (rank by the size of one minimal proof each, fast) or
    "smallest" (each candidate's smallest proof, *candidate_time_limit* seconds each).
    """
    from . import decide_pattern  # noqa: PLC0415

    t0 = time.monotonic()
    outcomes: list[Outcome] = []
    complete = True
    step = max(1, (workers or 1) * 4)
    for i in range(0, len(cands), step):
        if time_limit is not None and time.monotonic() - t0 > time_limit:
            complete = False
            break
        items = [(c, rank_by, candidate_time_limit) for c in cands[i:i + step]]
        outcomes.extend(fan_out(evaluate, items, workers))
    res = HuntResult(len(outcomes), outcomes, 0.0, complete)
    for o in res.contradictions[:keep]:
        c = o.candidate
        th = family_theory(c.n, c.inner_labs, c.read_out)
        pat = support_pattern(state_by_name(c.state, c.n), c.choice)
        res.best.append((o, th, pat, decide_pattern(th, c.bundle, pat, minimise="smallest",
                                                    time_limit=proof_time_limit)))
    res.seconds = time.monotonic() - t0
    return res
