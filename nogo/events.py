"""Present event variables, read-out rules and the rule of projection.

The first stage after the declarations, shared by every compiler (linear,
mixture, possibilistic): which event variables a bundle brings into the
model, which joint assignments a read-out rule forbids, and what an
independence clause says once absent events are projected away
(DESIGN.md §3).  Kept apart from :mod:`nogo.linear` and :mod:`nogo.mixture`
so that neither compiler imports the other's module to reach them.
"""

from __future__ import annotations

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


def read_out_ok(scenario: Scenario, events: list[EventVar], s: tuple[str, ...], e: tuple[str, ...]) -> bool:
    """Does the joint assignment *e* at settings *s* obey every read-out rule?

    The per-tuple form, for small cell lists and for the tests' independent
    encoding; :mod:`nogo.linear` applies the same rules as array masks.
    """
    pos = {ev.name: i for i, ev in enumerate(events)}
    for ev in events:
        if ev.kind == "inner":
            o = scenario.observer(ev.name)
            pi = scenario.party_index(o.lab)
            if o.read_out_at is not None and s[pi] == o.read_out_at:
                party = scenario.parties[pi]
                shown = party.outcomes[o.relabel[o.outcomes.index(e[pos[ev.name]])]]
                if e[pos[o.lab]] != shown:
                    return False
        elif ev.kind == "latent":
            pi = scenario.party_index(ev.party)
            if s[pi] == ev.setting and e[pos[ev.party]] != e[pos[ev.name]]:
                return False
    return True


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
