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

Nested observers and observers' own choices (DEVELOPERS.md, "Nested
observers and observers' choices"): an inner observer's ``lab`` may name
another inner observer (a friend of a friend); its read-out rule then says
when *that observer's* outcome equals its own — at one of the outer
observer's own settings, or ``always``.  An inner observer with ``settings``
chooses among them in every run: the choice is a setting variable
``NAME.setting``, held in the settings tuple after the parties' settings as a
*choice party* (:attr:`Party.choice_of`) with one fixed outcome ``c``, so
that every stage that speaks of settings tuples (independence, light cones,
observed coordinates) speaks of it without a second code path.  Chains of
read-out rules are resolved in :func:`nogo.events.read_out_rules`.
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
    choice_of: str | None = None  # the inner observer whose own choice this setting variable is


#: the one outcome of a choice party (its setting is the observer's choice; it records nothing itself)
CHOICE_OUTCOME = "c"
#: ``read_out_at: always``: an observer inside another observer's lab, read out in every run
ALWAYS = "always"


@dataclass(frozen=True)
class InnerObserver:
    name: str
    lab: str
    outcomes: tuple[str, ...]
    read_out_at: str | None
    # relabel[i] = index of the lab's outcome shown when the observer has outcome i
    relabel: tuple[int, ...]
    settings: tuple[str, ...] = ()  # the observer's own choices (a setting variable NAME.setting)
    party: str = ""  # the party whose lab holds the chain of labs (== lab unless nested)
    # every read-out as (setting of the lab, relabel at that setting); the first is (read_out_at, relabel)
    read_outs: tuple[tuple[str, tuple[int, ...]], ...] = ()

    @property
    def several(self) -> bool:
        """Is the observer read out at more than one setting of its lab (``read_out_at: [x, y, ...]``)?"""
        return len(self.read_outs) > 1

    def relabel_at(self, setting: str | None) -> tuple[int, ...] | None:
        """The relabelling under which the observer is read out at *setting* of its lab (None: not read out there).

        An observer read out ``always`` is read out whatever the setting (also when the lab has none)."""
        for x, rel in self.read_outs:
            if x == ALWAYS or (setting is not None and x == setting):
                return rel
        return None


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

    @property
    def labs(self) -> tuple[Party, ...]:
        """The parties proper (without the choice parties of observers with choices)."""
        return tuple(p for p in self.parties if p.choice_of is None)

    @property
    def nested(self) -> bool:
        """Is the scenario beyond one read-out per observer at one level?  An observer inside another's
        lab, an observer with a choice of its own, or an observer read out at several settings."""
        return any(o.lab != o.party or o.settings or o.several for o in self.inner)

    def read_out_when(self, o: InnerObserver) -> tuple[tuple[int, str], ...] | None:
        """When *o* is read out (its first read-out): (settings-tuple index, setting) pairs; () = every
        run; None = never.  :meth:`read_out_links` gives every read-out of an observer."""
        links = self.read_out_links(o)
        return links[0][0] if links else None

    def read_out_links(self, o: InnerObserver) -> list[tuple[tuple[tuple[int, str], ...], tuple[int, ...]]]:
        """Every read-out of *o* by its lab: (condition, relabel) with condition as in :meth:`read_out_when`."""
        out = []
        for x, rel in o.read_outs:
            if x == ALWAYS and not (o.lab in self.party_names and self.party(o.lab).choice_of is None):
                out.append(((), rel))
            else:
                out.append((((self.party_index(o.lab), x),), rel))
        return out

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
        """One event per party; a choice party's constant outcome is named ``NAME.choice``."""
        return [EventVar(p.name if p.choice_of is None else f"{p.name}.choice", "party", p.outcomes, p.name)
                for p in self.parties]

    def inner_events(self) -> list[EventVar]:
        return [EventVar(o.name, "inner", o.outcomes, o.party or o.lab) for o in self.inner]

    def latent_events(self, party: str) -> list[EventVar]:
        p = self.party(party)
        return [EventVar(f"{p.name}@{x}", "latent", p.outcomes, p.name, x) for x in p.settings]

    def all_event_names(self) -> list[str]:
        names = [e.name for e in self.party_events() if self.party(e.party).choice_of is None]
        names += [e.name for e in self.inner_events()]
        for p in self.labs:
            names += [e.name for e in self.latent_events(p.name)]
        return names

    def describe(self) -> str:
        lines = []
        for p in self.labs:
            lines.append(f"party {p.name}: settings {list(p.settings)}, outcomes {list(p.outcomes)}")
        for o in self.inner:
            if o.read_out_at == ALWAYS and self.read_out_when(o) == ():
                ro = f", read out by {o.lab} in every run"
            elif o.several:
                ro = f", read out at {o.lab}'s settings {', '.join(x for x, _ in o.read_outs)}"
            else:
                ro = f", read out at {o.lab}'s setting {o.read_out_at}" if o.read_out_at is not None else ""
            where = f"lab {o.lab}" if o.lab == o.party else f"the lab of {o.lab} (inside {o.party}'s lab)"
            own = (f", chooses among settings {list(o.settings)} (setting variable {o.name}.setting)"
                   if o.settings else "")
            lines.append(f"inner observer {o.name} in {where}: outcomes {list(o.outcomes)}{own}{ro}")
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
_INNER_KEYS = {"lab", "outcomes", "read_out_at", "relabel", "says", "settings"}


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


# -- reading the ``scenario:`` mapping, stage by stage -------------------------------
def scenario_from_yaml(raw, file: str | None = None) -> Scenario:
    """Build a :class:`Scenario` from the ``scenario:`` mapping of a theory file.

    Stages: the parties; the inner observers' lab chains (unknown labs and
    cycles refused); each observer in chain order (outcomes, own choices,
    read-out rule); one observer per read-out setting; the choice parties.
    """
    from .yamlread import YMap

    if not isinstance(raw, dict):
        raise InputError("'scenario' must be a mapping with 'parties'", Where(file, getattr(raw, "line", None), "scenario"))
    check_keys(raw, {"parties", "inner_observers", "name", "says"}, "scenario")
    parties_raw = raw.get("parties")
    if not isinstance(parties_raw, dict) or len(parties_raw) < 2:
        w = raw.where("parties", "scenario.parties") if isinstance(raw, YMap) else Where(file)
        raise InputError("a scenario needs a mapping 'parties' with at least two parties", w)
    parties = [_read_party(name, spec, parties_raw) for name, spec in parties_raw.items()]
    inner_raw = raw.get("inner_observers") or {}
    if not isinstance(inner_raw, dict):
        raise InputError("'inner_observers' must be a mapping", raw.where("inner_observers", "scenario.inner_observers"))
    order = _chain_order(inner_raw, parties_raw, [p.name for p in parties])
    by_name: dict[str, InnerObserver] = {}
    for name in order:
        by_name[name] = _read_observer(name, inner_raw[name], inner_raw, parties, by_name)
    inner = [by_name[str(n)] for n in inner_raw]  # declaration order
    _one_reader_per_setting(inner, inner_raw)
    choices = [Party(o.name, o.settings, (CHOICE_OUTCOME,), None, o.name) for o in inner if o.settings]
    return Scenario(tuple(parties) + tuple(choices), tuple(inner), str(raw.get("name", "")))


def _read_party(name, spec, parties_raw) -> Party:
    path = f"scenario.parties.{name}"
    w = parties_raw.where(name, path)
    pname = check_name(name, w, "party", dash=False)
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
    return Party(pname, settings, outcomes, _numeric(outcomes))


def _chain_order(inner_raw, parties_raw, party_names: list[str]) -> list[str]:
    """The observers in an order where every lab comes before the observers inside it.

    Refuses a lab that names neither a party nor an inner observer, and labs
    that sit inside each other (a cycle), each with its file and line.
    """
    from .yamlread import YMap

    labs: dict[str, str] = {}
    for name, spec in inner_raw.items():
        path = f"scenario.inner_observers.{name}"
        w = inner_raw.where(name, path)
        if not isinstance(spec, dict):
            raise InputError("an inner observer needs 'lab' and 'outcomes'", w)
        check_name(name, w, "inner observer")
        check_keys(spec, _INNER_KEYS, path)
        if str(name) in party_names:
            line = parties_raw.where(name).line if isinstance(parties_raw, YMap) else None
            raise InputError(f"'{name}' names both the party (line {line}) and this inner observer", w,
                             "parties, inner observers and hidden variables need names of their own")
        lab = spec.get("lab")
        if lab is None:
            raise InputError(f"inner observer '{name}' has no 'lab'", w,
                             "name the party (or the inner observer) whose lab it sits in")
        if str(lab) not in party_names and str(lab) not in inner_raw:
            raise InputError(f"no party or inner observer named '{lab}'", spec.where("lab", f"{path}.lab"),
                             suggest(str(lab), party_names + [str(n) for n in inner_raw]))
        labs[str(name)] = str(lab)
    order: list[str] = []
    for start in labs:
        chain = [start]
        while chain[-1] in labs and chain[-1] not in order:
            nxt = labs[chain[-1]]
            if nxt in chain:
                loop = chain[chain.index(nxt):] + [nxt]
                spec = inner_raw[start]
                raise InputError("inner observers sit inside each other's labs: " + " -> ".join(loop),
                                 spec.where("lab", f"scenario.inner_observers.{start}.lab"),
                                 "a chain of labs ends at a party: write 'lab: PARTY' for the outermost observer")
            chain.append(nxt)
        for n in reversed(chain):
            if n in labs and n not in order:
                order.append(n)
    return order


def _read_observer(name, spec, inner_raw, parties: list[Party], done: dict[str, InnerObserver]) -> InnerObserver:
    """One inner observer, once its lab (a party or an observer read before it) is known."""
    path = f"scenario.inner_observers.{name}"
    w = inner_raw.where(name, path)
    lab = str(spec["lab"])
    outer = done.get(lab)
    if outer is None:
        party = next(p for p in parties if p.name == lab)
        lab_outcomes, lab_settings, top = party.outcomes, party.settings, lab
    else:
        lab_outcomes, lab_settings, top = outer.outcomes, outer.settings, outer.party
    outs = _labels(spec.get("outcomes", list(lab_outcomes)), spec.where("outcomes", f"{path}.outcomes"), "outcomes")
    own = ()
    if "settings" in spec:
        own = _labels(spec["settings"], spec.where("settings", f"{path}.settings"), "settings")
        if ALWAYS in own:
            raise InputError(f"'{ALWAYS}' cannot be a setting label", spec.where("settings", f"{path}.settings"),
                             "it is the word for a read-out in every run")
    ro_raw = spec.get("read_out_at")
    ats = _read_out_settings(spec, path, ro_raw, outer is None, lab, lab_settings)
    if isinstance(ro_raw, list):
        rels = _relabels_at(name, spec, path, w, outs, lab, lab_outcomes, ats)
        read_outs = tuple(zip(ats, rels))
        ro, relabel = read_outs[0]
    else:
        ro = ats[0] if ats else None
        relabel = _relabel(name, spec, path, w, outs, lab, lab_outcomes, ro)
        read_outs = ((ro, relabel),) if ro is not None else ()
    return InnerObserver(str(name), lab, outs, ro, relabel, own, top, read_outs)


def _read_out_settings(spec, path, raw, in_party: bool, lab, lab_settings) -> list[str]:
    """The settings of ``read_out_at`` (one label, ``always`` or a list of distinct labels), each checked."""
    from .yamlread import YList

    if raw is None:
        return []
    rw = spec.where("read_out_at", f"{path}.read_out_at")
    if not isinstance(raw, list):
        if isinstance(raw, (dict, bool)):
            raise InputError(f"'read_out_at' must be a setting of '{lab}', a list of them or '{ALWAYS}', "
                             f"not {raw!r}", rw, f"for example read_out_at: 1 or read_out_at: [1, 3]")
        return [_read_out_setting(str(raw), rw, in_party, lab, lab_settings)]
    if not raw:
        raise InputError("'read_out_at' lists no setting", rw, "for example read_out_at: [1, 3]")
    out: list[str] = []
    for i, v in enumerate(raw):
        w = raw.where(i, f"{path}.read_out_at") if isinstance(raw, YList) else rw
        if isinstance(v, (dict, list, bool)) or v is None:
            raise InputError(f"'read_out_at' lists {v!r}, which is not a setting label", w,
                             f"list settings of '{lab}', for example read_out_at: [1, 3]")
        x = str(v)
        if x == ALWAYS:
            raise InputError(f"'{ALWAYS}' cannot be one of several read-out settings", w,
                             f"write read_out_at: {ALWAYS} alone, or list settings of '{lab}'")
        if x in out:
            raise InputError(f"'read_out_at' names setting {x} twice", w, "list each read-out setting once")
        out.append(_read_out_setting(x, w, in_party, lab, lab_settings))
    return out


def _read_out_setting(ro: str, rw: Where, in_party: bool, lab, lab_settings) -> str:
    if ro == ALWAYS and in_party:
        raise InputError(f"a party's outcome is read out at one of its settings, not '{ALWAYS}'", rw,
                         suggest(ro, lab_settings) or f"one of {list(lab_settings)}")
    if ro != ALWAYS and ro not in lab_settings:
        what = "party" if in_party else "inner observer"
        hint = (suggest(ro, lab_settings) or f"one of {list(lab_settings)}") if lab_settings else (
            f"'{lab}' chooses no setting: write read_out_at: {ALWAYS}, or give '{lab}' settings of its own")
        raise InputError(f"{what} '{lab}' has no setting '{ro}'", rw, hint)
    return ro


def _relabel(name, spec, path, w, outs, lab, lab_outcomes, ro) -> tuple[int, ...]:
    """``relabel[i]``: index of the lab's outcome shown when the observer has outcome i."""
    relabel_raw = spec.get("relabel")
    if relabel_raw is None:
        return _same_labels(name, w, outs, lab, lab_outcomes, ro is not None)
    rw = spec.where("relabel", f"{path}.relabel")
    if not isinstance(relabel_raw, dict):
        raise InputError("'relabel' maps each observer outcome to the lab's outcome it shows", rw)
    return _relabel_of(relabel_raw, rw, outs, lab, lab_outcomes)


def _same_labels(name, w, outs, lab, lab_outcomes, read_out: bool) -> tuple[int, ...]:
    """No ``relabel``: the observer shows its own label (matched by label, never by position)."""
    if read_out and (len(outs) != len(lab_outcomes) or set(outs) != set(lab_outcomes)):
        raise InputError(
            f"read-out needs a 'relabel' map: '{name}' has outcomes {', '.join(outs)}, "
            f"'{lab}' has {', '.join(lab_outcomes)}", w,
            "say which outcome of the lab each observer outcome shows, e.g. relabel: {0: +1, 1: -1}")
    return tuple(lab_outcomes.index(o) if o in lab_outcomes else i for i, o in enumerate(outs))


def _relabel_of(relabel_raw, rw: Where, outs, lab, lab_outcomes) -> tuple[int, ...]:
    m = _relabel_map(relabel_raw, rw)
    rel = []
    for o in outs:
        if o not in m:
            raise InputError(f"'relabel' says nothing of outcome '{o}'", rw)
        if m[o] not in lab_outcomes:
            raise InputError(f"'relabel' sends '{o}' to '{m[o]}', not an outcome of '{lab}'", rw,
                             suggest(m[o], lab_outcomes))
        rel.append(lab_outcomes.index(m[o]))
    extra = set(m) - set(outs)
    if extra:
        raise InputError(f"'relabel' names outcomes the observer does not have: {sorted(extra)}", rw)
    return tuple(rel)


def _relabels_at(name, spec, path, w, outs, lab, lab_outcomes, ats: list[str]) -> list[tuple[int, ...]]:
    """One relabelling per read-out setting (``read_out_at: [x, ...]``), each a permutation.

    ``relabel`` is absent (the observer's labels are the lab's), one outcome map (the same at
    every listed setting), or a map from listed settings to outcome maps (a listed setting it does
    not name shows the observer's labels unchanged).
    """
    raw = spec.get("relabel")
    rw = spec.where("relabel", f"{path}.relabel") if raw is not None else w
    if raw is not None and not isinstance(raw, dict):
        raise InputError("'relabel' maps each observer outcome to the lab's outcome it shows, or each "
                         "read-out setting to such a map", rw, "for example relabel: {3: {+1: -1, -1: +1}}")
    nested = raw is not None and any(isinstance(v, dict) for v in raw.values())
    if nested and not all(isinstance(v, dict) for v in raw.values()):
        raise InputError("'relabel' mixes outcome labels and per-setting maps", rw,
                         "either one map of outcomes, or {setting: {outcome: outcome}} for each setting")
    per: dict[str, tuple[int, ...]] = {}
    if nested:
        for k, v in raw.items():
            kw = raw.where(k, f"{path}.relabel.{k}") if hasattr(raw, "where") else rw
            if str(k) not in ats:
                raise InputError(f"'relabel' names setting {k}, which is not a read-out setting of '{name}'", kw,
                                 f"the read-out settings are {ats}")
            per[str(k)] = _relabel_of(v, kw, outs, lab, lab_outcomes)
    out = []
    for x in ats:
        if x in per:
            rel = per[x]
        elif raw is not None and not nested:
            rel = _relabel_of(raw, rw, outs, lab, lab_outcomes)
        else:
            rel = _same_labels(name, w, outs, lab, lab_outcomes, True)
        if sorted(rel) != list(range(len(lab_outcomes))):
            shown = [lab_outcomes[i] for i in rel]
            raise InputError(f"the relabelling of '{name}' at setting {x} is not a permutation of the outcomes of "
                             f"'{lab}': it shows {shown} for {list(outs)}", rw,
                             "at several read-out settings each lab outcome is shown by exactly one observer "
                             "outcome; write read_out_at: X (one setting) for a relabelling that merges outcomes")
        out.append(rel)
    return out


def _one_reader_per_setting(inner: list[InnerObserver], inner_raw) -> None:
    """Two observers read out at the same setting of the same lab would force contradictory
    (or redundant) equalities; refuse rather than guess (``always`` clashes with everything)."""
    seen: dict[str, list[tuple[str, str]]] = {}
    for o in inner:
        for x, _ in o.read_outs:
            for other, at in seen.get(o.lab, []):
                if at == x or ALWAYS in (at, x):
                    raise InputError(
                        f"inner observers '{other}' and '{o.name}' are both read out at setting {x} of '{o.lab}'"
                        if at == x != ALWAYS else
                        f"'{other}' and '{o.name}' are both read out by '{o.lab}', and one of them in every run",
                        inner_raw.where(o.name, f"scenario.inner_observers.{o.name}.read_out_at"),
                        "an outcome can follow only one observer at a given setting: read the other "
                        "observer out at a setting of its own")
        seen.setdefault(o.lab, []).extend((o.name, x) for x, _ in o.read_outs)
