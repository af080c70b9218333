"""Reading a hidden-variable bundle: the hidden variable, the clauses given it, and the groups.

First stage of the mixture route (:mod:`nogo.mixture`): every clause of the
bundle is sorted by what it says about λ (declares it, frees it of some
settings, constrains each response, factorises each response, predetermines
some events, or holds on the mixture), and the present events are split into
the groups of the factorisation: the meet of all partitions declared (if a
response factorises over two partitions it factorises over their common
refinement).  A read-out rule across groups is refused, as is a factorisation
that leaves a present event in no group.  J. P. Jarrett, Noûs 18, 569 (1984)
for the split of local causality into parameter and outcome independence.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError, Where
from ..events import read_out_rules
from ..scenario import EventVar
from ..theory import Absolute, Assumption, Counterfactual, Factorise, Hidden, Independent, Predetermined, Theory

Settings = tuple[str, ...]


@dataclass(frozen=True)
class GroupConstraint:
    """A per-λ independence clause restricted to one group's events."""

    assumption: str
    clause: int
    events: tuple[str, ...]  # present events of the group it speaks of
    of: tuple[str, ...]  # party names


@dataclass(frozen=True)
class GroupSpec:
    events: tuple[EventVar, ...]
    constraints: tuple[GroupConstraint, ...]
    predetermined: tuple[tuple[str, tuple[str, ...], str], ...]  # (event, allowed parties, assumption)




# -- reading the bundle -------------------------------------------------------
def _where(theory: Theory, a: Assumption) -> Where:
    return Where(theory.file, a.line, f"assumptions.{a.name}")


def _mentions_hidden(c) -> bool:
    return isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given)


@dataclass
class _Bundle:
    hidden: str | None
    free_of: set[str]  # parties whose settings λ is independent of
    free_by: list[str]  # assumptions saying so
    per_lam: list[tuple[str, int, tuple[str, ...], tuple[str, ...]]]  # (assumption, clause, events, of)
    partitions: list[tuple[str, tuple[tuple[str, ...], ...]]]  # (assumption, groups)
    predet: dict[str, tuple[set[str], list[str]]]  # event -> (allowed parties, assumptions)
    linear: list[tuple[str, int, Independent]]
    notes: list[str]


def _read_bundle(theory: Theory, assumptions: tuple[Assumption, ...], names: list[str]) -> _Bundle:
    sc = theory.scenario
    hidden_names = {str(c.name) for a in theory.assumptions.values() for c in a.clauses if isinstance(c, Hidden)}
    b = _Bundle(None, set(), [], [], [], {}, [], [])
    used: dict[str, str] = {}  # hidden name -> first assumption using it

    def use(h: str, a: Assumption):
        used.setdefault(h, a.name)
        if len(used) > 1:
            raise InputError(f"this bundle uses two hidden variables ({', '.join(sorted(used))}); "
                             "the mixture model holds one", _where(theory, a),
                             "give all clauses the same 'given' hidden variable")

    for a in assumptions:
        for ci, c in enumerate(a.clauses):
            if isinstance(c, Hidden):
                use(c.name, a)
            elif isinstance(c, (Absolute, Counterfactual)):
                pass  # they decide the present events
            elif isinstance(c, Independent) and not c.given:
                lam = [e for e in c.events if e in hidden_names]
                if not lam:
                    b.linear.append((a.name, ci, c))
                    continue
                for h in lam:
                    use(h, a)
                b.free_of.update(c.of)
                b.free_by.append(a.name)
                rest = tuple(e for e in c.events if e not in hidden_names)
                if rest:  # (λ, E) independent of S  <=>  λ is, and E is given λ
                    b.per_lam.append((a.name, ci, rest, c.of))
            elif isinstance(c, Independent):
                for h in c.given:
                    use(h, a)
                if any(e in hidden_names for e in c.events):
                    raise InputError(f"assumption '{a.name}' makes the hidden variable independent of settings "
                                     "given itself; that says nothing", _where(theory, a),
                                     "write setting independence of λ without 'given'")
                b.per_lam.append((a.name, ci, c.events, c.of))
            elif isinstance(c, Factorise):
                for h in c.given:
                    use(h, a)
                groups = tuple(tuple(e for e in g if e in names) for g in c.groups)
                dropped = sorted({e for g in c.groups for e in g if e not in names})
                if dropped:
                    b.notes.append(f"{a.name}: {dropped} absent; by projection the groups are "
                                   f"{[list(g) for g in groups if g]}")
                groups = tuple(g for g in groups if g)
                flat = [e for g in groups for e in g]
                if len(set(flat)) != len(flat):
                    raise InputError(f"assumption '{a.name}' puts an event in two groups", _where(theory, a),
                                     "each event belongs to one group")
                missing = [n for n in names if n not in flat]
                if missing:
                    raise InputError(
                        f"assumption '{a.name}' factorises given {c.given[0]} but leaves the present event(s) "
                        f"{missing} in no group; the product form would then hold only for a marginal, which "
                        "is not a mixture of product responses and cannot be compiled by the mixture route",
                        _where(theory, a),
                        "put every present event in a group, e.g. a lab's outcome with its inner observer "
                        "([[A, A_in], [B, B_in]])")
                b.partitions.append((a.name, groups))
            elif isinstance(c, Predetermined):
                for h in c.given:
                    use(h, a)
                allowed = set(c.depends_on) if c.depends_on is not None else set(sc.party_names)
                absent = [e for e in c.events if e not in names]
                if absent:
                    b.notes.append(f"{a.name}: {absent} absent; by projection only {[e for e in c.events if e in names]}"
                                   " are predetermined")
                for e in c.events:
                    if e in names:
                        old, by = b.predet.get(e, (set(sc.party_names), []))
                        b.predet[e] = (old & allowed, by + [a.name])
    if used:
        b.hidden = next(iter(used))
        declared = any(isinstance(c, Hidden) and c.name == b.hidden for a in assumptions for c in a.clauses)
        if not declared:
            b.notes.append(f"{b.hidden}: no assumption of the bundle declares it; the clauses that mention it do "
                           "(a hidden variable on its own constrains nothing)")
    return b


def _groups(theory: Theory, b: _Bundle, events: list[EventVar],
            assumptions: tuple[Assumption, ...]) -> tuple[list[tuple[str, ...]], str]:
    """The partition of the present events into groups, and who declared it."""
    names = [e.name for e in events]
    if not b.partitions:
        return [tuple(names)], ""
    # meet of all partitions: two events share a group iff they share one in every partition
    key = {n: tuple(next(i for i, g in enumerate(groups) if n in g) for _, groups in b.partitions) for n in names}
    blocks: dict[tuple, list[str]] = {}
    for n in names:
        blocks.setdefault(key[n], []).append(n)
    groups = [tuple(v) for v in blocks.values()]
    by = ", ".join(dict.fromkeys(a for a, _ in b.partitions))
    where_of = {a.name: a for a in assumptions}
    gi = {n: i for i, g in enumerate(groups) for n in g}
    sc = theory.scenario
    for r in read_out_rules(sc, events):  # chains of read-outs resolved in nogo.events
        if gi[r.source] != gi[r.target]:
            a = where_of[b.partitions[0][0]]
            raise InputError(f"{r.source} is read out as {r.target}'s outcome, but '{by}' puts them in different "
                             "groups; a read-out rule across groups forces both to be deterministic and is not a "
                             "product of response polytopes", _where(theory, a),
                             f"put {r.source} in {r.target}'s group")
    return groups, by

