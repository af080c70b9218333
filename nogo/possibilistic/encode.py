"""The possibilistic reading of a bundle: supports instead of probabilities.

The same declarations that :mod:`nogo.compile` turns into linear equalities
are read over *supports* (DESIGN.md §3, backend 3).  For every settings
tuple s and every joint assignment e of the present events that obeys the
read-out rules there is one boolean, "q(e | s) > 0".  Then

* an observed event (a | s) is possible  ⇔  some e at s with outcomes a is;
* it is impossible                       ⇔  every such e is impossible;
* in every run something happens (normalisation: a hard constraint);
* "E is independent of the settings S": for settings tuples s, s' that
  differ only in the settings of S and every value v of the present events
  of E, [some e at s with e|E = v is possible] ⇔ [the same at s'].  For a
  probability distribution equal marginals have equal supports, so this is
  implied by the linear constraint (a support-level relaxation; a
  contradiction here is a contradiction there).

Every clause has at most one negative literal (dual Horn): the formula is
satisfiable exactly when pushing "impossible" through the constraints
(unit propagation) never empties a positive clause, and the largest
possible support is then a model.  :mod:`nogo.possibilistic.proof` prints
that propagation as a proof; this module builds the clauses for python-sat,
grouped by the fact or assumption instance they come from (a selector
literal per group) so that minimal unsatisfiable subsets speak in names.

Hidden-variable kinds (``hidden``, ``factorise``, ``predetermined``,
``independent ... given``) have no possibilistic reading here yet: the
Bell-local reading goes through ``counterfactual`` + ``setting
independence`` (equivalent by A. Fine, PRL 48, 291 (1982)).
"""

from __future__ import annotations

import itertools
import operator
from dataclasses import dataclass, field

from ..compile import present_events, project_independence
from ..errors import InputError, Where
from ..scenario import EventVar, Scenario
from ..theory import Absolute, Counterfactual, Factorise, Hidden, Independent, Predetermined, Theory
from .support import SupportPattern


@dataclass(frozen=True)
class Group:
    """One named constraint of the possibilistic model (one selector literal).

    kind: "possible" / "impossible" (an observed fact of the pattern) or
    "independent" (one instance of an independence clause: two settings
    tuples and every value of the kept events).
    """

    index: int
    kind: str
    settings: tuple[str, ...]  # the fact's settings, or the first tuple of the pair
    outcomes: tuple[str, ...] = ()  # the fact's outcomes
    other: tuple[str, ...] = ()  # the second settings tuple of the pair
    assumption: str = ""
    clause: int = 0
    events: tuple[str, ...] = ()  # kept (present) events of the clause
    of: tuple[str, ...] = ()  # parties whose settings move

    def name(self, party_names: tuple[str, ...]) -> str:
        st = ",".join(self.settings)
        if self.kind in ("possible", "impossible"):
            sign = ">" if self.kind == "possible" else "="
            return f"p({','.join(self.outcomes)}|{st}) {sign} 0"
        return f"{self.assumption}[{st} ~ {','.join(self.other)}]"


@dataclass
class SupportSpace:
    """Booleans q(e|s) > 0 and the grouped constraints over them.

    ``joint[s]`` lists the joint assignments e (tuples over ``events``) that
    obey the read-out rules at s; variable ids are 1-based and
    ``var[(s, e)]`` gives one.  ``buckets[g]`` holds, for an independence
    group, two dicts v -> variable ids (one per settings tuple of the pair);
    ``fact_vars[g]`` the variables of an observed fact.
    """

    scenario: Scenario
    label: str
    assumptions: tuple[str, ...]
    events: tuple[EventVar, ...]
    settings: list[tuple[str, ...]]
    joint: dict[tuple[str, ...], list[tuple[str, ...]]]
    var: dict[tuple[tuple[str, ...], tuple[str, ...]], int]
    groups: list[Group]
    fact_vars: dict[int, list[int]] = field(default_factory=dict)
    buckets: dict[int, tuple[dict, dict]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    pattern: SupportPattern | None = None

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(e.name for e in self.events)

    @property
    def n_vars(self) -> int:
        return len(self.var)

    def decode(self, v: int) -> tuple[tuple[str, ...], tuple[str, ...]]:
        return self._inverse[v - 1]

    def __post_init__(self):
        self._inverse = [None] * len(self.var)
        for k, i in self.var.items():
            self._inverse[i - 1] = k

    def vars_at(self, s: tuple[str, ...]) -> list[int]:
        cache = self.__dict__.setdefault("_at", {})
        if s not in cache:
            cache[s] = [self.var[(s, e)] for e in self.joint[s]]
        return cache[s]

    def group_clauses(self, g: Group) -> list[list[int]]:
        """The clauses of one group, without its selector."""
        if g.kind == "impossible":
            return [[-x] for x in self.fact_vars[g.index]]
        if g.kind == "possible":
            return [list(self.fact_vars[g.index])]
        left, right = self.buckets[g.index]
        out = []
        for a, b in ((left, right), (right, left)):
            for v, xs in a.items():
                for x in xs:
                    out.append([-x] + list(b.get(v, ())))
        return out

    def hard_clauses(self) -> list[list[int]]:
        """Normalisation: in every run some joint assignment occurs."""
        return [self.vars_at(s) for s in self.settings]


_NO_READING = ("the possibilistic reading of '{kind}' (in assumption '{name}') is not available yet",
               "state Bell locality as 'counterfactual' + setting independence of the A@* outcomes "
               "(equivalent by Fine's theorem), or drop this assumption")


def support_independence(c):
    """(events, of) if clause *c* is read over supports as "the support of events does not
    move with the settings of of", else None.

    ``independent`` without ``given`` reads so (equal marginals have equal
    supports).  Hook for a clause kind that states *only* the support-level
    independence ("possibilistic independence"; being added to the theory
    layer): any clause object with ``support_only = True`` and fields
    ``events`` and ``of`` is read the same way here and in the checker.  The
    linear backends must not read such a clause as equal marginals.
    """
    if isinstance(c, Independent):
        return None if c.given else (c.events, c.of)
    if getattr(c, "support_only", False) and hasattr(c, "events") and hasattr(c, "of"):
        return tuple(c.events), tuple(c.of)
    return None


def check_readable(theory: Theory, assumptions) -> None:
    """Refuse, with a clear message, kinds that have no support reading here."""
    for a in assumptions:
        for c in a.clauses:
            kind = None
            if isinstance(c, Hidden):
                kind = "hidden"
            elif isinstance(c, Factorise):
                kind = "factorise"
            elif isinstance(c, Predetermined):
                kind = "predetermined"
            elif isinstance(c, Independent) and c.given:
                kind = "independent ... given"
            elif not isinstance(c, (Absolute, Counterfactual, Independent)) and support_independence(c) is None:
                kind = type(c).__name__
            if kind:
                msg, hint = _NO_READING
                raise InputError(msg.format(kind=kind, name=a.name), Where(theory.file, a.line, f"assumptions.{a.name}"), hint)


def joint_at(sc: Scenario, events, s) -> list[tuple[str, ...]]:
    """The joint assignments at s that obey the read-out rules (product order of the free events).

    Only the events a read-out rule leaves free are enumerated; the tied ones
    (an inner record or counterfactual outcome read out at s, through chains
    of nested observers: :func:`nogo.events.read_out_rules`) are filled in,
    each from the event it is read out as (one preimage per value; several
    when a relabelling merges outcomes).
    """
    from ..events import read_out_rules  # noqa: PLC0415 - nogo.compile re-exports it; imported here for clarity

    pos = {ev.name: i for i, ev in enumerate(events)}
    tied: dict[int, tuple[int, dict]] = {}  # source index -> (target index, target value -> source values)
    for r in read_out_rules(sc, list(events)):
        if r.active(s):
            src, tgt = events[pos[r.source]], events[pos[r.target]]
            pre: dict[str, list[str]] = {}
            for k, v in enumerate(src.outcomes):
                pre.setdefault(tgt.outcomes[r.shown[k]], []).append(v)
            tied[pos[r.source]] = (pos[r.target], pre)
    order: list[int] = []  # tied events after the events they are read out as (chains)
    while len(order) < len(tied):
        order += [i for i, (t, _) in tied.items() if i not in order and (t not in tied or t in order)]
    free = [i for i in range(len(events)) if i not in tied]
    out = []
    for vals in itertools.product(*(events[i].outcomes for i in free)):
        partial = [[None] * len(events)]
        for row in partial:
            for i, v in zip(free, vals):
                row[i] = v
        for i in order:
            t, pre = tied[i]
            partial = [row[:i] + [v] + row[i + 1:] for row in partial for v in pre.get(row[t], [])]
        out += [tuple(row) for row in partial]
    return out


def build_space(theory: Theory, spec, pattern: SupportPattern, settings=None) -> SupportSpace:
    """Read *spec* (bundle or assumption names) over supports, with *pattern*'s facts.

    Parameters
    ----------
    theory: a loaded theory; spec: a bundle name or assumption names
    (``theory.resolve``); pattern: the observed support pattern.

    settings: restrict the model to these settings tuples (None = all).  A
    restriction keeps the independence instances whose both tuples are kept;
    it is a relaxation (a model of the whole restricts to one of the part),
    so a contradiction found there is a contradiction of the whole.

    Returns a :class:`SupportSpace` whose groups are the pattern's facts
    (one per listed event) followed by one group per instance of every
    independence clause (a pair of settings tuples: each tuple with its
    moved parties at their first setting, as :mod:`nogo.compile` does).
    Stages: check and resolve the declarations; one variable per joint
    assignment (:func:`_variables`); the pattern's facts
    (:func:`_fact_groups`); the independence instances
    (:func:`_independence_groups`).

    Example
    -------
    >>> space = build_space(load_theory("theories/bell-2x2.yaml"), "Bell-local", pattern)  # doctest: +SKIP
    >>> len(space.groups)  # doctest: +SKIP
    """
    sc = theory.scenario
    if tuple(pattern.parties) != sc.party_names:
        raise InputError(f"the pattern's parties {list(pattern.parties)} differ from the theory's {list(sc.party_names)}")
    label, assumptions = theory.resolve(spec)
    from ..sizes import guard_bundle  # noqa: PLC0415 - one boolean per model column: same size guard
    guard_bundle(theory, spec)
    check_readable(theory, assumptions)
    events = present_events(sc, assumptions)
    if settings is None:
        settings = sc.setting_tuples()
    else:
        settings = [s for s in sc.setting_tuples() if s in set(settings)]
    joint, var = _variables(sc, events, settings)
    groups, fact_vars = _fact_groups(pattern, len(sc.parties), settings, joint, var)
    notes: list[str] = []
    buckets = _independence_groups(sc, assumptions, [e.name for e in events], settings, joint, var, groups, notes)
    return SupportSpace(sc, label, tuple(x.name for x in assumptions), tuple(events), settings, joint, var,
                        groups, fact_vars, buckets, notes, pattern)


def _variables(sc, events, settings) -> tuple[dict, dict]:
    """The joint assignments at each settings tuple, and one boolean variable (from 1) per (settings, assignment)."""
    joint: dict = {}
    var: dict = {}
    for s in settings:
        joint[s] = joint_at(sc, events, s)
        for e in joint[s]:
            var[(s, e)] = len(var) + 1
    return joint, var


def _fact_groups(pattern: SupportPattern, n_party: int, settings, joint: dict, var: dict):
    """One group per observed fact at a kept settings tuple: its variables are the joints showing the outcomes."""
    groups: list[Group] = []
    fact_vars: dict[int, list[int]] = {}
    by_obs: dict = {}
    for s in settings:
        for e in joint[s]:
            by_obs.setdefault((s, e[:n_party]), []).append(var[(s, e)])
    kept_s = set(settings)
    for kind, coords in (("impossible", pattern.impossible), ("possible", pattern.possible)):
        for (s, a) in sorted(c for c in coords if c[0] in kept_s):
            g = Group(len(groups), kind, s, a)
            groups.append(g)
            fact_vars[g.index] = by_obs.get((s, a), [])
    return groups, fact_vars


def _independence_groups(sc, assumptions, names, settings, joint: dict, var: dict,
                         groups: list[Group], notes: list[str]) -> dict:
    """Append one group per instance of every independence clause; returns each group's two marginal maps."""
    kept_s = set(settings)
    buckets: dict = {}
    marg: dict = {}  # (settings, kept indices) -> marginal map, shared by every clause keeping them
    var_ids = {t: [var[(t, e)] for e in joint[t]] for t in settings}

    def marginal(t, idx):
        if (t, idx) not in marg:
            get = operator.itemgetter(*idx)
            m: dict = {}
            for e, x in zip(joint[t], var_ids[t]):
                v = get(e)
                m.setdefault(v if len(idx) > 1 else (v,), []).append(x)
            marg[(t, idx)] = m
        return marg[(t, idx)]

    for a in assumptions:
        for ci, c in enumerate(a.clauses):
            reading = support_independence(c)
            if reading is None:
                continue
            c_events, c_of = reading
            pr = project_independence(sc, c_events, c_of, names, a.name, notes)
            if pr is None:
                continue
            for s in settings:
                base = pr.base[s]
                if base == s or base not in kept_s:
                    continue
                g = Group(len(groups), "independent", s, (), base, a.name, ci, tuple(pr.kept), tuple(c_of))
                groups.append(g)
                buckets[g.index] = (dict(marginal(s, pr.idx)), dict(marginal(base, pr.idx)))
    return buckets
