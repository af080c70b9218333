"""Compile a bundle of linear assumptions into one :class:`LinearModel`.

Semantics (DESIGN.md §3).  The unknown is a conditional joint distribution
q(e | s) over the *present* event variables e for every settings tuple s:

* party outcomes are always present;
* an inner observer's outcome is present when some assumption of the bundle
  declares it absolute; its read-out rule then forces q = 0 wherever the
  party's setting is the read-out setting and the party's outcome differs
  from the (relabelled) observer's — those columns are simply left out;
* latent outcomes ``A@x`` are present under joint existence of
  counterfactual outcomes for A, with the read-out rule "A = A@x when A's
  setting is x";
* "events E independent of settings S" equates the marginal of E at s with
  the marginal at s', for every s, s' that differ only in the settings S
  (the *rule of projection*: only the present events of E are kept; an
  assumption that mentions no present event adds nothing).

Clauses that need a hidden variable (``hidden``, ``factorise``,
``predetermined``, independence ``given`` one) are not linear in q; they
raise :class:`NotLinear` so that the caller can route the bundle to the
mixture model.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from fractions import Fraction

from .errors import InputError, Where
from .model import Column, LinearModel, RowSource
from .scenario import EventVar, Scenario
from .supports import refuse_support_only
from .theory import (Absolute, Assumption, Counterfactual, Factorise, Hidden, Independent,
                     Predetermined, Theory)


class NotLinear(InputError):
    """The bundle uses a kind that the plain linear model cannot express."""


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
    """Does the joint assignment *e* at settings *s* obey every read-out rule?"""
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


def _label(events, values) -> str:
    return ", ".join(f"{e}={v}" for e, v in zip(events, values))


def compile_linear(theory: Theory, spec: str | list[str]) -> LinearModel:
    """Compile the bundle *spec* (a bundle name or assumption names) of *theory*."""
    label, assumptions = theory.resolve(spec)
    sc = theory.scenario
    for a in assumptions:
        for c in a.clauses:
            if isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given):
                raise NotLinear(f"assumption '{a.name}' needs a hidden variable; the plain linear model cannot hold it",
                                Where(theory.file, a.line, f"assumptions.{a.name}"))
    events = present_events(sc, assumptions)
    names = [e.name for e in events]
    support_notes = refuse_support_only(theory, assumptions, names)  # possibilistic clauses: implied or refused
    settings = sc.setting_tuples()
    coords = {c: i for i, c in enumerate(sc.coordinates())}
    n_party = len(sc.parties)

    columns: list[Column] = []
    observe: list[dict[int, Fraction]] = []
    col_index: dict[tuple, int] = {}
    for s in settings:
        for e in itertools.product(*(ev.outcomes for ev in events)):
            if not read_out_ok(sc, events, s, e):
                continue
            col_index[(s, e)] = len(columns)
            columns.append(Column(s, tuple(names), e))
            observe.append({coords[(s, e[:n_party])]: Fraction(1)})

    rows: list[dict[int, Fraction]] = []
    rhs: list[Fraction] = []
    sources: list[RowSource] = []
    notes: list[str] = list(support_notes)
    for o in sc.inner:
        if o.name in names and o.read_out_at is not None:
            notes.append(f"read-out: {o.lab}'s outcome equals {o.name}'s when {o.lab}'s setting is {o.read_out_at}")
    for p in sc.parties:
        if f"{p.name}@{p.settings[0]}" in names:
            notes.append(f"counterfactual outcomes {p.name}@x exist jointly; {p.name} = {p.name}@x at setting x")

    def st(s):
        return ", ".join(f"{p}={x}" for p, x in zip(sc.party_names, s))

    for s in settings:
        row = {col_index[(s, e)]: Fraction(1) for e in itertools.product(*(ev.outcomes for ev in events))
               if (s, e) in col_index}
        rows.append(row)
        rhs.append(Fraction(1))
        sources.append(RowSource("normalisation", "normalisation", 0, tuple(names), f"sum of q(· | {st(s)}) = 1"))

    for a in assumptions:
        for ci, c in enumerate(a.clauses):
            if not isinstance(c, Independent):
                continue
            pr = project_independence(sc, c.events, c.of, names, a.name, notes)
            if pr is None:
                continue
            kept, idx = list(pr.kept), pr.idx
            groups: dict[tuple, dict[tuple, list[int]]] = {}
            for (s, e), j in col_index.items():
                groups.setdefault(s, {}).setdefault(tuple(e[i] for i in idx), []).append(j)
            for s in settings:
                base = pr.base[s]
                if base == s:
                    continue
                for ev in itertools.product(*(events[i].outcomes for i in idx)):
                    row: dict[int, Fraction] = {}
                    for j in groups.get(s, {}).get(ev, []):
                        row[j] = row.get(j, Fraction(0)) + 1
                    for j in groups.get(base, {}).get(ev, []):
                        row[j] = row.get(j, Fraction(0)) - 1
                    row = {j: v for j, v in row.items() if v}
                    if not row:
                        continue
                    rows.append(row)
                    rhs.append(Fraction(0))
                    sources.append(RowSource(
                        a.name, "independent", ci, tuple(kept),
                        f"q({_label(kept, ev)} | {st(s)}) = q({_label(kept, ev)} | {st(base)})"))
    return LinearModel(sc, label, tuple(a.name for a in assumptions), columns, rows, rhs, sources, observe, notes)


def compile_bundle(theory: Theory, spec: str | list[str], **options) -> LinearModel:
    """Compile any bundle: the plain linear model, or the mixture model when needed."""
    try:
        return compile_linear(theory, spec)
    except NotLinear:
        try:
            from .mixture import compile_mixture  # noqa: PLC0415 - optional stage
        except ImportError:
            raise
        return compile_mixture(theory, spec, **options)
