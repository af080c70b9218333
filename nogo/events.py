"""Present event variables, read-out rules and the rule of projection.

The first stage after the declarations, shared by every compiler (linear,
mixture, possibilistic): which event variables a bundle brings into the
model, which joint assignments a read-out rule forbids, and what an
independence clause says once absent events are projected away
(DESIGN.md §3).  Kept apart from :mod:`nogo.linear` and :mod:`nogo.mixture`
so that neither compiler imports the other's module to reach them.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

from .scenario import EventVar, Scenario
from .theory import Absolute, Assumption, Counterfactual


def present_events(scenario: Scenario, assumptions: tuple[Assumption, ...]) -> list[EventVar]:
    """Event variables of the model, in a fixed order: parties, inner, latent."""
    absolute, counterfactual = set(), set()
    for a in assumptions:
        for c in a.clauses:
            if isinstance(c, Absolute):
                absolute.update(c.events)
            elif isinstance(c, Counterfactual):
                counterfactual.update(c.parties)
    events = scenario.party_events()
    events += [e for e in scenario.inner_events() if e.name in absolute]
    for p in scenario.parties:
        if p.name in counterfactual:
            events += scenario.latent_events(p.name)
    return events


@dataclass(frozen=True)
class ReadOut:
    """One read-out rule between present events, after chains are resolved.

    ``target`` (a party's outcome or an inner observer's) equals
    ``shown[i]``-th outcome of the target when ``source`` (an inner observer
    or a counterfactual outcome) has its i-th outcome, in every run whose
    settings tuple s has ``s[k] == x`` for every ``(k, x)`` in ``when``
    (``when == ()``: every run).  ``via``: the absent observers the chain
    passes through.
    """

    target: str
    source: str
    shown: tuple[int, ...]
    when: tuple[tuple[int, str], ...]
    via: tuple[str, ...] = ()

    def active(self, s: tuple[str, ...]) -> bool:
        return all(s[k] == x for k, x in self.when)


def read_out_rules(scenario: Scenario, events: list[EventVar]) -> list[ReadOut]:
    """The read-out rules among the present *events*, chains resolved (DEVELOPERS.md, nested observers).

    An inner observer o read out by its lab L (a party, or another inner
    observer) gives "L = relabel(o) when L's setting is r" (or in every run).
    When L is not present (its absoluteness is not assumed), the rule of
    projection applies to the read-out rules themselves: the constraint on
    the present events is the projection of the whole chain, which for
    deterministic equalities is the composition o -> L -> L' -> ... up to
    the first present lab, active when every link's condition holds (at
    other settings the absent link is unconstrained, so nothing remains).  A
    chain that meets an absent observer without a read-out rule ends there.
    An observer read out at several settings gives one rule per setting,
    each with its own relabelling; through an absent lab read out at
    several settings, every combination of links whose conditions can hold
    together gives one composed rule.  At any settings tuple a source has at
    most one active rule (its links' settings are distinct).
    Counterfactual outcomes ``A@x`` give "A = A@x when A's setting is x".
    """
    present = {ev.name for ev in events}
    out: list[ReadOut] = []
    for ev in events:
        if ev.kind == "latent":
            pi = scenario.party_index(ev.party)
            out.append(ReadOut(ev.party, ev.name, tuple(range(len(ev.outcomes))), ((pi, ev.setting),)))
        elif ev.kind == "inner":
            o = scenario.observer(ev.name)
            _walk(scenario, o.name, o, tuple(range(len(o.outcomes))), {}, [], present, out)
    return out


def _walk(scenario: Scenario, source: str, cur, shown: tuple[int, ...], when: dict[int, str], via: list[str],
          present: set[str], out: list[ReadOut]) -> None:
    """Follow every read-out of *cur* (one per read-out setting) up to the first present lab."""
    for cond, relabel in scenario.read_out_links(cur):
        if any(when.get(k, x) != x for k, x in cond):
            continue  # the links never hold together: nothing to compose
        sh = tuple(relabel[i] for i in shown)
        w = {**when, **dict(cond)}
        if cur.lab in present:
            out.append(ReadOut(cur.lab, source, sh, tuple(sorted(w.items())), tuple(via)))
        else:
            _walk(scenario, source, scenario.observer(cur.lab), sh, w, via + [cur.lab], present, out)


def read_out_ok(scenario: Scenario, events: list[EventVar], s: tuple[str, ...], e: tuple[str, ...]) -> bool:
    """Does the joint assignment *e* at settings *s* obey every read-out rule?

    The per-tuple form, for small cell lists; :mod:`nogo.linear` applies the
    same rules (:func:`read_out_rules`) as array masks.
    """
    pos = {ev.name: i for i, ev in enumerate(events)}
    for r in read_out_rules(scenario, events):
        if r.active(s):
            src, tgt = events[pos[r.source]], events[pos[r.target]]
            if e[pos[r.target]] != tgt.outcomes[r.shown[src.outcomes.index(e[pos[r.source]])]]:
                return False
    return True


def read_out_text(scenario: Scenario, r: ReadOut) -> str:
    """A rule in words, for notes and ``nogo show``."""
    when = " and ".join(f"{scenario.parties[k].name}'s setting is {x}" for k, x in r.when) or "in every run"
    via = f" (through {', '.join(r.via)}, whose outcome is not assumed absolute)" if r.via else ""
    rel = "" if r.shown == tuple(range(len(r.shown))) else " (relabelled)"
    return f"{r.target}'s outcome equals {r.source}'s{rel} " + ("" if not r.when else "when ") + when + via


@dataclass(frozen=True)
class Projected:
    """An independence clause after the rule of projection.

    ``kept``: its present events (indices ``idx`` into the present names);
    ``base``: for every settings tuple s, the tuple s' with the named parties'
    settings moved to their first value.  "Marginal of kept at s equals that at
    base[s]" for all s is equivalent to the clause (every pair that differs
    only in the named settings is linked through the same s').
    """

    kept: tuple[str, ...]
    idx: tuple[int, ...]
    base: dict[tuple[str, ...], tuple[str, ...]]


def project_independence(scenario: Scenario, events: tuple[str, ...], of: tuple[str, ...],
                         present: list[str], who: str, notes: list[str]) -> Projected | None:
    """Apply the rule of projection to "events independent of the settings of *of*".

    Returns None (and says so in *notes*) when no event of the clause is
    present; notes also record events dropped because they are absent.
    """
    kept = tuple(n for n in events if n in present)
    if not kept:
        notes.append(f"{who}: none of {list(events)} is present here; by projection it adds nothing")
        return None
    dropped = [n for n in events if n not in present]
    if dropped:
        notes.append(f"{who}: {dropped} absent; by projection it constrains the marginal of {list(kept)}")
    return Projected(kept, tuple(present.index(n) for n in kept), hub_settings(scenario, of))


def hub_settings(scenario: Scenario, of: tuple[str, ...]) -> dict[tuple[str, ...], tuple[str, ...]]:
    """For every settings tuple, the one with the parties *of* moved to their first setting."""
    moved = {scenario.party_index(p) for p in of}
    return {s: tuple(scenario.parties[i].settings[0] if i in moved else x for i, x in enumerate(s))
            for s in scenario.setting_tuples()}


def column_count(scenario: Scenario, events: list[EventVar]) -> int:
    """The number of columns q(e | s) that obey the read-out rules, exactly, without listing them.

    Read-out rules never leave a lab (a party with every observer inside it
    and their choices), so the count is a product over labs of a sum over
    the lab's own settings; within a lab the active rules form a forest
    (each source is read out as one target) and the assignments are counted
    from the leaves up (a relabelling that merges outcomes leaves several
    values of a source per value of its target).
    """
    rules = read_out_rules(scenario, events)
    home = {p.name: p.name for p in scenario.labs}
    home.update({o.name: o.party for o in scenario.inner if o.settings})  # choice parties
    lab_of = {ev.name: (ev.party if ev.kind != "party" else home[ev.party]) for ev in events}
    total = 1
    for lab in scenario.labs:
        idx = [i for i, p in enumerate(scenario.parties) if home[p.name] == lab.name]
        evs = [ev for ev in events if lab_of[ev.name] == lab.name]
        mine = [r for r in rules if lab_of[r.source] == lab.name]
        subtotal = 0
        for combo in itertools.product(*(scenario.parties[i].settings for i in idx)):
            s = {i: x for i, x in zip(idx, combo)}
            active = [r for r in mine if all(s.get(k) == x for k, x in r.when)]
            subtotal += _forest_count(evs, active)
        total *= subtotal
    return total


def _forest_count(evs: list[EventVar], active: list[ReadOut]) -> int:
    outs = {ev.name: ev.outcomes for ev in evs}
    children: dict[str, list[ReadOut]] = {}
    for r in active:
        children.setdefault(r.target, []).append(r)
    tied = {r.source for r in active}

    def ways(name: str, value_index: int | None) -> int:
        """Assignments of the subtree under *name* given its value (None: summed over its values)."""
        vals = range(len(outs[name])) if value_index is None else [value_index]
        n = 0
        for v in vals:
            m = 1
            for r in children.get(name, []):
                m *= sum(ways(r.source, u) for u in range(len(outs[r.source])) if r.shown[u] == v)
            n += m
        return n

    out = 1
    for ev in evs:
        if ev.name not in tied:
            out *= ways(ev.name, None)
    return out


def read_out_notes(scenario: Scenario, events: list[EventVar], prefix: str = "read-out") -> list[str]:
    """Model notes for the read-out rules of a nested scenario (chains resolved); [] for a flat one,
    whose compilers write their own one-level notes."""
    if not scenario.nested:
        return []
    inner = {o.name for o in scenario.inner}
    return [f"{prefix}: {read_out_text(scenario, r)}" for r in read_out_rules(scenario, events) if r.source in inner]
