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
        self._guard_size()
        return list(itertools.product(*(p.settings for p in self.parties)))

    def outcome_tuples(self) -> list[tuple[str, ...]]:
        self._guard_size()
        return list(itertools.product(*(p.outcomes for p in self.parties)))

    def coordinates(self) -> list[tuple[tuple[str, ...], tuple[str, ...]]]:
        """Full probability coordinates (settings, outcomes) in a fixed order."""
        return [(s, a) for s in self.setting_tuples() for a in self.outcome_tuples()]

    def _guard_size(self) -> None:
        """Refuse a scenario whose observed probabilities could not even be listed (nogo.sizes)."""
        from .sizes import guard_coordinates  # noqa: PLC0415 - sizes imports nothing of ours at load

        guard_coordinates(self)

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


#: characters a setting or outcome label cannot hold (latent names A@x, wildcards A@*, expressions)
_LABEL_RESERVED = set("@*|,<>()[]{}⟨⟩")


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
        bad = sorted(set(out[-1]) & _LABEL_RESERVED) + (["a space"] if any(ch.isspace() for ch in out[-1]) else [])
        if bad or not out[-1]:
            raise InputError(f"{what[:-1]} label '{out[-1][:40]}' cannot be used: "
                             + (f"it uses {', '.join(bad)}" if bad else "it is empty"), w,
                             "labels are short plain values such as 1, 2, x, z or +1, -1")
    if len(set(out)) != len(out):
        raise InputError(f"{what} repeat a label: {out}", where)
    return tuple(out)


def _relabel_map(raw, where: Where) -> dict[str, str]:
    """The ``relabel`` mapping as outcome labels; booleans, lists and repeats refused."""
    out: dict[str, str] = {}
    for k, v in raw.items():
        if isinstance(v, (bool, dict, list)) or v is None or isinstance(k, bool):
            raise InputError(f"'relabel' sends '{k}' to {v!r}, which is not an outcome label", where,
                             "write outcomes as plain labels such as +1, -1 or 0, 1")
        lk = outcome_label(k)
        if lk in out:
            raise InputError(f"'relabel' names outcome '{lk}' twice", where)
        out[lk] = outcome_label(v)
    return out


_PARTY_KEYS = {"settings", "outcomes", "says"}
_INNER_KEYS = {"lab", "outcomes", "read_out_at", "relabel", "says"}


def check_keys(m, allowed: set[str], path: str) -> None:
    from .yamlread import YMap

    for k in m:
        if k not in allowed:
            w = m.where(k, f"{path}.{k}") if isinstance(m, YMap) else Where(key=f"{path}.{k}")
            raise InputError(f"unknown key '{k}'", w, suggest(str(k), sorted(allowed)))


# -- names (one namespace; reserved characters) -------------------------------------
#: characters the expression, event and latent syntax use; never part of a user's name
RESERVED = set("@*+|<>,;:=()[]{}/\\.'\"`!?#&%$^~") | {"⟨", "⟩", "≤", "≥", "·"}


def check_name(name, where: Where, what: str, dash: bool = True) -> str:
    """A user's name for a party, observer, hidden variable, assumption or bundle, or an InputError.

    A name is text that starts with a letter and continues with letters,
    digits, '_' (and '-' where ``dash``); the characters of the expression
    and latent syntax (``@ * + | < > ,`` spaces, ...) are refused so that a
    name can never be read as something else (``A@2`` is A's counterfactual
    outcome at setting 2).
    """
    if not isinstance(name, str):
        kind = "a number" if isinstance(name, (int, float)) else type(name).__name__
        raise InputError(f"the {what} name '{name}' is read as {kind}", where,
                         "names are text starting with a letter; put quotes around it only if it is one")
    extra = "_-" if dash else "_"
    bad = sorted({ch for ch in name if not (ch.isalnum() or ch in extra)})
    if not name or not name[0].isalpha() or bad:
        shown = name if len(name) <= 40 else name[:40] + "…"
        why = (f"it uses {', '.join(repr(c) for c in bad)}" if bad else "it does not start with a letter")
        raise InputError(f"{what} name '{shown}' cannot be used: {why}", where,
                         f"a name starts with a letter and uses letters, digits, {'_ and -' if dash else '_'}")
    return name


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
        check_name(name, w, "party", dash=False)
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
        pname = check_name(name, w, "party", dash=False)
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
        check_name(name, w, "inner observer")
        check_keys(spec, _INNER_KEYS, path)
        if str(name) in names:
            line = parties_raw.where(name).line if isinstance(parties_raw, YMap) else None
            raise InputError(f"'{name}' names both the party (line {line}) and this inner observer", w,
                             "parties, inner observers and hidden variables need names of their own")
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
            m = _relabel_map(relabel_raw, rw)
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
