"""Scenarios: parties, their settings and outcomes, inner observers, events.

A *party* chooses one of its settings in each run and records one outcome.
An *inner observer* sits inside a party's lab and has outcomes of its own;
its *read-out rule* says that when the party's setting is the read-out
setting, the party's outcome equals the observer's (optionally relabelled).

Event variables are the things a joint distribution can speak of: every
party's outcome (always present), every inner observer's outcome (present
only when an assumption declares it absolute) and latent counterfactual
outcomes ``A@x`` (present only under joint existence of counterfactual
outcomes).  Labels of settings and outcomes are kept as strings exactly as a
user would write them; numeric outcome values are kept for correlators.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Iterator

from .errors import InputError, Where, suggest


@dataclass(frozen=True)
class Party:
    name: str
    settings: tuple[str, ...]
    outcomes: tuple[str, ...]
    values: tuple[Fraction, ...] | None  # numeric outcome values (for correlators)


@dataclass(frozen=True)
class InnerObserver:
    name: str
    lab: str
    outcomes: tuple[str, ...]
    read_out_at: str | None
    # relabel[i] = index of the party's outcome shown when the observer has outcome i
    relabel: tuple[int, ...]


@dataclass(frozen=True)
class EventVar:
    """One variable of the joint distribution."""

    name: str
    kind: str  # "party" | "inner" | "latent"
    outcomes: tuple[str, ...]
    party: str  # the lab it belongs to
    setting: str | None = None  # for a latent counterfactual outcome A@x


def outcome_label(value) -> str:
    """How an outcome written in YAML is shown: +1/-1 keep their sign."""
    if isinstance(value, bool):
        raise TypeError("a boolean is not an outcome")
    if isinstance(value, int) and value > 0:
        return f"+{value}"
    return str(value)


def _numeric(labels: tuple[str, ...]) -> tuple[Fraction, ...] | None:
    try:
        return tuple(Fraction(lbl) for lbl in labels)
    except (ValueError, ZeroDivisionError):
        return None


@dataclass(frozen=True)
class Scenario:
    parties: tuple[Party, ...]
    inner: tuple[InnerObserver, ...] = ()
    name: str = ""

    # -- lookups ---------------------------------------------------------
    @property
    def party_names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.parties)

    def party(self, name: str, where: Where | None = None) -> Party:
        for p in self.parties:
            if p.name == name:
                return p
        raise InputError(f"no party named '{name}'", where, suggest(name, self.party_names))

    def party_index(self, name: str) -> int:
        return self.party_names.index(name)

    def observer(self, name: str) -> InnerObserver:
        for o in self.inner:
            if o.name == name:
                return o
        raise KeyError(name)

    def setting_tuples(self) -> list[tuple[str, ...]]:
        return list(itertools.product(*(p.settings for p in self.parties)))

    def outcome_tuples(self) -> list[tuple[str, ...]]:
        return list(itertools.product(*(p.outcomes for p in self.parties)))

    def coordinates(self) -> list[tuple[tuple[str, ...], tuple[str, ...]]]:
        """Full probability coordinates (settings, outcomes) in a fixed order."""
        return [(s, a) for s in self.setting_tuples() for a in self.outcome_tuples()]

    # -- event variables -------------------------------------------------
    def party_events(self) -> list[EventVar]:
        return [EventVar(p.name, "party", p.outcomes, p.name) for p in self.parties]

    def inner_events(self) -> list[EventVar]:
        return [EventVar(o.name, "inner", o.outcomes, o.lab) for o in self.inner]

    def latent_events(self, party: str) -> list[EventVar]:
        p = self.party(party)
        return [EventVar(f"{p.name}@{x}", "latent", p.outcomes, p.name, x) for x in p.settings]

    def all_event_names(self) -> list[str]:
        names = [e.name for e in self.party_events() + self.inner_events()]
        for p in self.parties:
            names += [e.name for e in self.latent_events(p.name)]
        return names

    def describe(self) -> str:
        lines = []
        for p in self.parties:
            lines.append(f"party {p.name}: settings {list(p.settings)}, outcomes {list(p.outcomes)}")
        for o in self.inner:
            ro = f", read out at {o.lab}'s setting {o.read_out_at}" if o.read_out_at is not None else ""
            lines.append(f"inner observer {o.name} in lab {o.lab}: outcomes {list(o.outcomes)}{ro}")
        return "\n".join(lines)


def _labels(raw, where: Where, what: str) -> tuple[str, ...]:
    from .yamlread import YList

    if not isinstance(raw, list) or not raw:
        raise InputError(f"{what} must be a non-empty list", where, f"for example [1, 2] or [+1, -1]")
    out = []
    for i, v in enumerate(raw):
        w = raw.where(i, where.key) if isinstance(raw, YList) else where
        if isinstance(v, (dict, list)) or v is None or isinstance(v, bool):
            raise InputError(f"{what} must be plain labels, got {v!r}", w)
        out.append(outcome_label(v) if what == "outcomes" else str(v))
    if len(set(out)) != len(out):
        raise InputError(f"{what} repeat a label: {out}", where)
    return tuple(out)


_PARTY_KEYS = {"settings", "outcomes", "says"}
_INNER_KEYS = {"lab", "outcomes", "read_out_at", "relabel", "says"}


def check_keys(m, allowed: set[str], path: str) -> None:
    from .yamlread import YMap

    for k in m:
        if k not in allowed:
            w = m.where(k, f"{path}.{k}") if isinstance(m, YMap) else Where(key=f"{path}.{k}")
            raise InputError(f"unknown key '{k}'", w, suggest(str(k), sorted(allowed)))


def scenario_from_yaml(raw, file: str | None = None) -> Scenario:
    """Build a :class:`Scenario` from the ``scenario:`` mapping of a theory file."""
    from .yamlread import YMap

    if not isinstance(raw, dict):
        raise InputError("'scenario' must be a mapping with 'parties'", Where(file, getattr(raw, "line", None), "scenario"))
    check_keys(raw, {"parties", "inner_observers", "name", "says"}, "scenario")
    parties_raw = raw.get("parties")
    if not isinstance(parties_raw, dict) or len(parties_raw) < 2:
        w = raw.where("parties", "scenario.parties") if isinstance(raw, YMap) else Where(file)
        raise InputError("a scenario needs a mapping 'parties' with at least two parties", w)
    parties = []
    for name, spec in parties_raw.items():
        path = f"scenario.parties.{name}"
        w = parties_raw.where(name, path)
        if not isinstance(spec, dict):
            raise InputError("a party needs 'settings' and 'outcomes'", w)
        check_keys(spec, _PARTY_KEYS, path)
        for k in ("settings", "outcomes"):
            if k not in spec:
                raise InputError(f"party '{name}' has no '{k}'", w)
        settings = _labels(spec["settings"], spec.where("settings", f"{path}.settings"), "settings")
        outcomes = _labels(spec["outcomes"], spec.where("outcomes", f"{path}.outcomes"), "outcomes")
        if len(outcomes) < 2:
            raise InputError("a party needs at least two outcomes", spec.where("outcomes", f"{path}.outcomes"))
        pname = str(name)
        if not pname.replace("_", "").isalnum() or not pname[0].isalpha():
            raise InputError(f"party name '{pname}' must start with a letter and use letters, digits, '_'", w)
        parties.append(Party(pname, settings, outcomes, _numeric(outcomes)))
    names = [p.name for p in parties]
    inner = []
    inner_raw = raw.get("inner_observers") or {}
    if not isinstance(inner_raw, dict):
        raise InputError("'inner_observers' must be a mapping", raw.where("inner_observers", "scenario.inner_observers"))
    for name, spec in inner_raw.items():
        path = f"scenario.inner_observers.{name}"
        w = inner_raw.where(name, path)
        if not isinstance(spec, dict):
            raise InputError("an inner observer needs 'lab' and 'outcomes'", w)
        check_keys(spec, _INNER_KEYS, path)
        if str(name) in names:
            raise InputError(f"'{name}' is already a party's name", w)
        lab = spec.get("lab")
        if lab is None:
            raise InputError(f"inner observer '{name}' has no 'lab'", w, "name the party whose lab it sits in")
        if str(lab) not in names:
            raise InputError(f"no party named '{lab}'", spec.where("lab", f"{path}.lab"), suggest(str(lab), names))
        party = parties[names.index(str(lab))]
        outs = _labels(spec.get("outcomes", list(party.outcomes)),
                       spec.where("outcomes", f"{path}.outcomes"), "outcomes")
        ro = spec.get("read_out_at")
        if ro is not None:
            ro = str(ro)
            if ro not in party.settings:
                raise InputError(f"party '{lab}' has no setting '{ro}'", spec.where("read_out_at", f"{path}.read_out_at"),
                                 suggest(ro, party.settings))
        relabel_raw = spec.get("relabel")
        if relabel_raw is None:
            if ro is not None and (len(outs) != len(party.outcomes) or set(outs) != set(party.outcomes)):
                raise InputError(
                    f"read-out needs a 'relabel' map: '{name}' has outcomes {', '.join(outs)}, "
                    f"'{lab}' has {', '.join(party.outcomes)}", w,
                    "say which party outcome each observer outcome shows, e.g. relabel: {0: +1, 1: -1}")
            # the same labels: matched by label, never by position
            relabel = tuple(party.outcomes.index(o) if o in party.outcomes else i for i, o in enumerate(outs))
        else:
            rw = spec.where("relabel", f"{path}.relabel")
            if not isinstance(relabel_raw, dict):
                raise InputError("'relabel' maps each observer outcome to the party outcome it shows", rw)
            m = {outcome_label(k): outcome_label(v) for k, v in relabel_raw.items()}
            rel = []
            for o in outs:
                if o not in m:
                    raise InputError(f"'relabel' says nothing of outcome '{o}'", rw)
                if m[o] not in party.outcomes:
                    raise InputError(f"'relabel' sends '{o}' to '{m[o]}', not an outcome of '{lab}'", rw,
                                     suggest(m[o], party.outcomes))
                rel.append(party.outcomes.index(m[o]))
            extra = set(m) - set(outs)
            if extra:
                raise InputError(f"'relabel' names outcomes the observer does not have: {sorted(extra)}", rw)
            relabel = tuple(rel)
        inner.append(InnerObserver(str(name), str(lab), outs, ro, relabel))
    # Two observers read out at the same setting of the same lab would force
    # contradictory (or redundant) equalities; refuse rather than guess.
    seen: dict[tuple[str, str], str] = {}
    for o in inner:
        if o.read_out_at is None:
            continue
        key = (o.lab, o.read_out_at)
        if key in seen:
            raise InputError(
                f"inner observers '{seen[key]}' and '{o.name}' are both read out at setting {o.read_out_at} of '{o.lab}'",
                inner_raw.where(o.name, f"scenario.inner_observers.{o.name}.read_out_at"),
                "a party's outcome can follow only one observer at a given setting")
        seen[key] = o.name
    return Scenario(tuple(parties), tuple(inner), str(raw.get("name", "")))
