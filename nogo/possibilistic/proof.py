"""Proofs a person can follow: numbered steps, each a local inference.

A proof is a list of steps; each step establishes *statements* of one form,

    "no run with settings s has the events C"   (q(C | s) = 0, C a partial
                                                 assignment of present events)

and says why, citing one fact or one assumption and earlier steps only:

* **observed** — the pattern says p(a | s) = 0: no run at s shows a;
* **transfer** — an independence assumption between settings s' and s (they
  differ only in the settings the assumption names), and C uses only events
  the assumption speaks of.  Every joint assignment at s' that matches C is
  excluded by the cited steps (a finite case check), so the marginal of C
  at s' has no support there, hence none at s;
* **contradiction** — the pattern says p(a | s) > 0 (or: something happens
  in every run), yet every joint assignment at s that shows a is excluded
  by the cited steps.

This is unit propagation of the dual-Horn clauses of
:mod:`nogo.possibilistic.encode`, lifted from single joint assignments to
partial ones so that a step reads like the hand proofs of GHZ-type
arguments (Mermin, PRL 65, 1838 (1990)).  :mod:`nogo.possibilistic.checker`
re-verifies every step without a solver.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

from .encode import SupportSpace
from .propagate import Propagation, propagate


@dataclass
class Statement:
    """No run with these settings has these event values."""

    settings: tuple[str, ...]
    cube: tuple[tuple[str, str], ...]  # (event name, value)


@dataclass
class Step:
    number: int
    kind: str  # "observed" | "transfer" | "contradiction"
    settings: tuple[str, ...]  # where the step's statements (or the contradiction) hold
    statements: list[Statement] = field(default_factory=list)
    uses: list[int] = field(default_factory=list)  # earlier step numbers
    assumption: str = ""  # transfer: the assumption ...
    clause: int = 0  # ... and its clause
    says: str = ""  # the assumption's words
    from_settings: tuple[str, ...] = ()  # transfer: where the statements are first shown
    outcomes: tuple[str, ...] = ()  # contradiction: the possible observed outcomes (empty = normalisation)
    cases: list[tuple[tuple[tuple[str, str], ...], int]] = field(default_factory=list)  # for readers


@dataclass
class Proof:
    theory: str
    bundle: str
    events: tuple[str, ...]  # present events, in order
    parties: tuple[str, ...]
    steps: list[Step]
    read_outs: list[str] = field(default_factory=list)
    pattern: str = ""
    zero_test: str = "declared"
    assumptions_used: tuple[str, ...] = ()
    facts_used: int = 0
    smallest: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        for st in d["steps"]:
            st["statements"] = [{"settings": list(s["settings"]), "excluded": dict(s["cube"])} for s in st["statements"]]
            st["cases"] = [{"values": dict(c), "step": n} for c, n in st["cases"]]
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Proof":
        steps = []
        for st in d["steps"]:
            st = dict(st)
            st["statements"] = [Statement(tuple(s["settings"]), tuple((k, str(v)) for k, v in s["excluded"].items()))
                                for s in st["statements"]]
            st["cases"] = [(tuple(c["values"].items()), c["step"]) for c in st.get("cases", [])]
            for k in ("settings", "from_settings", "outcomes"):
                st[k] = tuple(st.get(k, ()))
            steps.append(Step(**st))
        rest = {k: v for k, v in d.items() if k != "steps"}
        for k in ("events", "parties", "assumptions_used"):
            rest[k] = tuple(rest.get(k, ()))
        return cls(steps=steps, **rest)


def _read_out_notes(space: SupportSpace) -> list[str]:
    from ..events import read_out_rules  # noqa: PLC0415

    sc = space.scenario
    out = []
    for r in read_out_rules(sc, list(space.events)):
        rel = "" if r.shown == tuple(range(len(r.shown))) else " (relabelled)"
        when = " and ".join(f"{sc.parties[k].name}'s setting is {x}" for k, x in r.when)
        via = f" (through {', '.join(r.via)})" if r.via else ""
        out.append(f"{r.target} = {r.source}{rel} " + (f"when {when}" if when else "in every run") + via)
    return out


def build_proof(space: SupportSpace, core: list[int], theory_file: str = "") -> Proof:
    """The propagation over the groups of *core*, cut to what the contradiction needs.

    Parameters
    ----------
    space: the support space; core: group indices of an unsatisfiable
    subset (a minimal one gives a proof in which every group is used).

    Returns a :class:`Proof` whose steps are ordered by propagation round,
    so each cites only earlier steps.  Statements are widened from full
    assignments of an assumption's events to the shortest partial
    assignments that the earlier rounds already exclude.  Stages: propagate
    forwards to the conflict; walk back from it to what is needed
    (:func:`_needed`); number the steps (:func:`_steps`).
    """
    prop: Propagation = propagate(space, core, stop_at_conflict=True)
    if prop.conflict is None:
        raise ValueError("the given groups are not contradictory; no proof")
    needed = _needed(space, prop)
    steps, assumptions = _steps(space, needed)
    used_assumptions = tuple(a for a in space.assumptions if a in assumptions)
    pat = space.pattern
    return Proof(theory_file, space.label, space.names, space.scenario.party_names, steps, _read_out_notes(space),
                 pat.title if pat else "", pat.zero_test if pat else "declared", used_assumptions,
                 len(needed.facts_used) + (1 if needed.possible else 0))


@dataclass
class _Needed:
    """What the contradiction needs, found backwards from it."""

    facts_used: set[int]  # groups of observed zeros cited
    cubes: dict[tuple, list[dict[int, str]]]  # (round, group, direction) -> widened partial assignments
    end_settings: tuple[str, ...]  # where the contradiction holds
    end_outcomes: tuple[str, ...]  # its possible observed outcomes (empty = normalisation)
    end_vars: list[int]  # the joint assignments the contradiction rules out
    possible: bool  # the conflict is with a declared possibility (else with normalisation)


def _matching(joint, cube: dict[int, str]):
    """The joint assignments of *joint* that agree with the partial assignment *cube*."""
    return (e for e in joint if all(e[k] == val for k, val in cube.items()))


def _needed(space: SupportSpace, prop: Propagation) -> _Needed:
    """Walk back from the conflict, round by round: the facts and transfer cubes each exclusion rests on."""
    dead = prop.dead
    groups = space.groups
    facts_used: set[int] = set()
    needs: dict[tuple, set] = {}  # (round, group, direction) -> values needed

    def need(x):
        r = dead[x]
        if r[0] == "fact":
            facts_used.add(r[1])
        else:
            needs.setdefault(r[1:4], set()).add(r[4])

    kind, what = prop.conflict
    if kind == "possible":
        g = groups[what]
        end_s, end_a, end_vars = g.settings, g.outcomes, space.fact_vars[what]
    else:
        end_s, end_a, end_vars = what, (), space.vars_at(what)
    for x in end_vars:
        need(x)

    cubes: dict[tuple, list[dict[int, str]]] = {}
    for r in range(prop.rounds, 0, -1):
        for key in sorted(k for k in needs if k[0] == r):
            s_from, found = _widened(space, dead, key, needs[key])
            cubes[key] = found
            for c in found:
                for e in _matching(space.joint[s_from], c):
                    need(space.var[(s_from, e)])
    return _Needed(facts_used, cubes, end_s, end_a, end_vars, kind == "possible")


def _widened(space: SupportSpace, dead: dict, key: tuple, values: set) -> tuple[tuple[str, ...], list[dict[int, str]]]:
    """The settings a transfer starts from, and the needed values widened to the shortest cubes already excluded.

    An event is dropped from a cube when every joint assignment matching the rest
    was excluded in an earlier round (or is an observed zero).
    """
    r, gi, direction = key
    g = space.groups[gi]
    s_from = g.other if direction == 0 else g.settings
    idx = [space.names.index(n) for n in g.events]
    here = space.joint[s_from]

    def excluded_before(e) -> bool:
        x = space.var[(s_from, e)]
        return x in dead and (0 if dead[x][0] == "fact" else dead[x][1]) < r

    found: list[dict[int, str]] = []
    for v in sorted(values):
        if any(all(v[idx.index(i)] == val for i, val in c.items()) for c in found):
            continue
        cube = dict(zip(idx, v))
        for i in reversed(idx):
            trial = {k: val for k, val in cube.items() if k != i}
            if all(excluded_before(e) for e in _matching(here, trial)):
                cube = trial
        found.append(cube)
    return s_from, found


def _covering(steps: list[Step], names, s, e) -> int:
    """The step that excludes joint assignment e at s (earliest statement that matches)."""
    for step in steps:
        for stt in step.statements:
            if stt.settings == s and all(e[names.index(k)] == v for k, v in stt.cube):
                return step.number
    raise AssertionError("uncovered case in a proof under construction")


def _steps(space: SupportSpace, needed: _Needed) -> tuple[list[Step], set[str]]:
    """Number the steps: observed facts per settings tuple, then transfers by round, then the contradiction."""
    names, groups = space.names, space.groups
    steps: list[Step] = []
    fact_by_s: dict[tuple, list[tuple]] = {}
    for gi in needed.facts_used:
        g = groups[gi]
        fact_by_s.setdefault(g.settings, []).append(g.outcomes)
    for s in sorted(fact_by_s):
        st = [Statement(s, tuple(zip(space.scenario.party_names, a))) for a in sorted(fact_by_s[s])]
        steps.append(Step(len(steps) + 1, "observed", s, st))

    def cited(pairs):
        """The steps that exclude each (settings, joint assignment), and the cases for readers."""
        uses, cases = set(), []
        for s, e in pairs:
            k = _covering(steps, names, s, e)
            uses.add(k)
            cases.append((tuple(zip(names, e)), k))
        return sorted(uses), cases

    assumptions: set[str] = set()
    for key in sorted(needed.cubes):
        _, gi, direction = key
        g = groups[gi]
        s_from, s_to = (g.other, g.settings) if direction == 0 else (g.settings, g.other)
        stmts = [Statement(s_to, tuple((names[i], val) for i, val in sorted(c.items()))) for c in needed.cubes[key]]
        uses, cases = cited((s_from, e) for c in needed.cubes[key] for e in _matching(space.joint[s_from], c))
        assumptions.add(g.assumption)
        steps.append(Step(len(steps) + 1, "transfer", s_to, stmts, uses, g.assumption, g.clause, "", s_from,
                          cases=cases))
    uses, cases = cited(space.decode(x) for x in needed.end_vars)
    steps.append(Step(len(steps) + 1, "contradiction", needed.end_settings, [], uses,
                      outcomes=needed.end_outcomes, cases=cases))
    return steps, assumptions
