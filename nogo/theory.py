"""Theory files: one scenario, a library of named atomic assumptions, bundles.

An assumption is a list of *clauses*; each clause is one constraint kind of
the design (absoluteness, independence from settings, joint existence of
counterfactual outcomes, a hidden variable, factorisation and
predetermination given it).  This module only reads and validates; what a
clause means as mathematics is decided by the compilers
(:mod:`nogo.compile` for the linear kinds).

File layout (our own)::

    scenario: {parties: {...}, inner_observers: {...}}
    assumptions:
      NAME:
        says: one line in words
        source: where it is published
        absolute: [EVENT, ...]
        independent: {events: [...], of: [PARTY.setting, ...], given: [HIDDEN]}
        counterfactual: [PARTY, ...]
        hidden: NAME
        factorise: {groups: [[...], [...]], given: [HIDDEN]}
        predetermined: {events: [...], given: [HIDDEN], depends_on: [PARTY.setting, ...]}
    bundles:
      NAME: [ASSUMPTION, ...]
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from .errors import InputError, Where, suggest
from .scenario import Scenario, check_keys, check_name, scenario_from_yaml
from .yamlread import YList, YMap, read_yaml_file, read_yaml_text


# -- clause kinds ---------------------------------------------------------
@dataclass(frozen=True)
class Absolute:
    """The events have single values in every run, jointly with all others."""

    events: tuple[str, ...]


@dataclass(frozen=True)
class Independent:
    """The marginal of ``events`` does not change with the ``of`` settings.

    With ``given`` (hidden variables) it holds for each value of them.
    """

    events: tuple[str, ...]
    of: tuple[str, ...]  # party names whose setting is meant
    given: tuple[str, ...] = ()


@dataclass(frozen=True)
class SupportIndependent(Independent):
    """Possibilistic independence: which values of ``events`` are possible does not change with ``of``.

    Implied by :class:`Independent` (equal marginals have equal supports), not
    convex: the probabilistic compilers refuse it (:mod:`nogo.supports`).
    """


@dataclass(frozen=True)
class Counterfactual:
    """Joint existence of an outcome for every setting of each party (``A@x``)."""

    parties: tuple[str, ...]


@dataclass(frozen=True)
class Hidden:
    """A hidden variable of unspecified finite size."""

    name: str


@dataclass(frozen=True)
class Factorise:
    """Given the hidden variables (and the settings) the groups are independent."""

    groups: tuple[tuple[str, ...], ...]
    given: tuple[str, ...]


@dataclass(frozen=True)
class Predetermined:
    """The events are functions of the hidden variables and the named settings."""

    events: tuple[str, ...]
    given: tuple[str, ...]
    depends_on: tuple[str, ...] | None  # party names; None = all settings


Clause = Absolute | Independent | Counterfactual | Hidden | Factorise | Predetermined


@dataclass(frozen=True)
class Assumption:
    name: str
    clauses: tuple[Clause, ...]
    says: str = ""
    source: str = ""
    line: int | None = None


@dataclass
class Theory:
    scenario: Scenario
    assumptions: dict[str, Assumption]
    bundles: dict[str, tuple[str, ...]]
    file: str | None = None
    title: str = ""
    text: str = field(default="", repr=False)  # the file's text, for cache keys
    light_cone: object = None  # nogo.lightcone.LightCone when declared
    generated: tuple = ()  # nogo.lightcone.Generated specs behind generated assumptions

    def resolve(self, spec: str | list[str] | tuple[str, ...]) -> tuple[str, tuple[Assumption, ...]]:
        """A bundle name, or assumption names joined by '+' or ',' → (label, assumptions)."""
        if isinstance(spec, (list, tuple)):
            names, label = list(spec), "+".join(spec)
        elif spec in self.bundles:
            return spec, tuple(self.assumptions[a] for a in self.bundles[spec])
        else:
            names = [n.strip() for n in spec.replace(",", "+").split("+") if n.strip()]
            label = spec
        out = []
        for n in names:
            if n in self.bundles and len(names) > 1:
                out.extend(self.assumptions[a] for a in self.bundles[n])
                continue
            if n in self.bundles:
                return n, tuple(self.assumptions[a] for a in self.bundles[n])
            if n not in self.assumptions:
                raise InputError(f"no bundle or assumption named '{n}' in this theory",
                                 Where(self.file), suggest(n, list(self.bundles) + list(self.assumptions)))
            out.append(self.assumptions[n])
        return label, tuple(dict.fromkeys(out))


_ASSUMPTION_KEYS = {"says", "source", "absolute", "independent", "counterfactual", "hidden",
                    "factorise", "predetermined"}


class _Names:
    """Checks event and setting names used by clauses against the scenario."""

    def __init__(self, scenario: Scenario, hidden: set[str]):
        self.scenario = scenario
        self.hidden = hidden
        self.events = scenario.all_event_names()

    def event_list(self, raw, where: Where, allow_hidden=True) -> tuple[str, ...]:
        if isinstance(raw, str):
            raw = [raw]
        if not isinstance(raw, list) or not raw:
            raise InputError("expected a non-empty list of event names", where,
                             "events are party names, inner observers, latent outcomes like A@1, or A@*")
        out: list[str] = []
        for i, v in enumerate(raw):
            w = raw.where(i, where.key) if isinstance(raw, YList) else where
            name = str(v)
            if name.endswith("@*"):
                party = name[:-2]
                labs = [p.name for p in self.scenario.labs]
                if party not in labs:
                    raise InputError(f"no party named '{party}' in '{name}'", w, suggest(party, labs))
                out += [e.name for e in self.scenario.latent_events(party)]
            elif name in self.events or (allow_hidden and name in self.hidden):
                out.append(name)
            else:
                pool = self.events + (sorted(self.hidden) if allow_hidden else [])
                raise InputError(f"no event named '{name}'", w, suggest(name, pool))
        return tuple(dict.fromkeys(out))

    def settings_list(self, raw, where: Where) -> tuple[str, ...]:
        if isinstance(raw, str):
            raw = [raw]
        if not isinstance(raw, list) or not raw:
            raise InputError("expected a non-empty list of settings such as [A.setting]", where)
        out = []
        for i, v in enumerate(raw):
            w = raw.where(i, where.key) if isinstance(raw, YList) else where
            name = str(v)
            party = name[:-len(".setting")] if name.endswith(".setting") else None
            if party is None:
                hint = f"write '{name}.setting'" if name in self.scenario.party_names else "settings are written PARTY.setting"
                raise InputError(f"'{name}' is not a setting", w, hint)
            if party not in self.scenario.party_names:
                if party in {o.name for o in self.scenario.inner}:
                    raise InputError(f"inner observer '{party}' chooses no setting of its own", w,
                                     f"give '{party}' settings, e.g. settings: [1, 2], to make {name} a choice")
                raise InputError(f"no party named '{party}'", w, suggest(party, self.scenario.party_names))
            out.append(party)
        return tuple(dict.fromkeys(out))

    def hidden_list(self, raw, where: Where) -> tuple[str, ...]:
        if isinstance(raw, str):
            raw = [raw]
        if not isinstance(raw, list) or not raw:
            raise InputError("'given' lists hidden variables", where)
        out = []
        for v in raw:
            if str(v) not in self.hidden:
                raise InputError(f"'{v}' is not a hidden variable declared in this theory", where,
                                 suggest(str(v), sorted(self.hidden)) or "declare it with 'hidden: NAME'")
            out.append(str(v))
        return tuple(out)


def _mapping(raw, where: Where, keys: set[str], path: str) -> YMap:
    if not isinstance(raw, dict):
        raise InputError("expected a mapping", where, "keys: " + ", ".join(sorted(keys)))
    check_keys(raw, keys, path)
    return raw


def _parse_assumption(name: str, spec, amap: YMap, names: _Names) -> Assumption:
    path = f"assumptions.{name}"
    w = amap.where(name, path)
    if not isinstance(spec, dict):
        raise InputError(f"assumption '{name}' must be a mapping of constraint kinds", w,
                         "for example {independent: {events: [A], of: [B.setting]}}")
    check_keys(spec, _ASSUMPTION_KEYS, path)
    clauses: list[Clause] = []

    def at(key):
        return spec.where(key, f"{path}.{key}")

    for key, raw in spec.items():
        if key in ("says", "source"):
            continue
        items = raw if (key in ("independent", "factorise", "predetermined") and isinstance(raw, list)) else [raw]
        for item in items:
            if key == "absolute":
                evs = names.event_list(item if isinstance(item, list) else [item], at(key), allow_hidden=False)
                clauses.append(Absolute(evs))
            elif key == "independent":
                m = _mapping(item, at(key), {"events", "of", "given", "reading"}, f"{path}.independent")
                for req in ("events", "of"):
                    if req not in m:
                        raise InputError(f"'independent' needs '{req}'", at(key))
                given = names.hidden_list(m["given"], m.where("given", f"{path}.independent.given")) if "given" in m else ()
                kind = _independence_kind(m, given, m.where("reading", f"{path}.independent.reading"))
                clauses.append(kind(names.event_list(m["events"], m.where("events", f"{path}.independent.events")),
                                    names.settings_list(m["of"], m.where("of", f"{path}.independent.of")),
                                    given))
            elif key == "counterfactual":
                plist = item if isinstance(item, list) else [item]
                parties = []
                labs = [q.name for q in names.scenario.labs]
                for p in plist:
                    if str(p) not in labs:  # an observer's choice records no outcome of its own
                        raise InputError(f"no party named '{p}'", at(key), suggest(str(p), labs))
                    parties.append(str(p))
                clauses.append(Counterfactual(tuple(parties)))
            elif key == "hidden":
                clauses.append(Hidden(str(item)))
            elif key == "factorise":
                m = _mapping(item, at(key), {"groups", "given"}, f"{path}.factorise")
                groups_raw = m.get("groups")
                gw = m.where("groups", f"{path}.factorise.groups")
                if not isinstance(groups_raw, list) or len(groups_raw) < 2:
                    raise InputError("'groups' must list at least two groups of events", gw)
                groups = tuple(names.event_list(g, gw, allow_hidden=False) for g in groups_raw)
                if "given" not in m:
                    raise InputError("'factorise' needs 'given' (the hidden variables it conditions on)", at(key))
                clauses.append(Factorise(groups, names.hidden_list(m["given"], m.where("given"))))
            elif key == "predetermined":
                m = _mapping(item, at(key), {"events", "given", "depends_on"}, f"{path}.predetermined")
                if "events" not in m or "given" not in m:
                    raise InputError("'predetermined' needs 'events' and 'given'", at(key))
                dep = names.settings_list(m["depends_on"], m.where("depends_on")) if "depends_on" in m else None
                clauses.append(Predetermined(names.event_list(m["events"], m.where("events"), allow_hidden=False),
                                             names.hidden_list(m["given"], m.where("given")), dep))
    if not clauses:
        raise InputError(f"assumption '{name}' has no constraint", w,
                         "give at least one of: absolute, independent, counterfactual, hidden, factorise, predetermined")
    return Assumption(name, tuple(clauses), str(spec.get("says", "")), str(spec.get("source", "")), w.line)


# -- one namespace -------------------------------------------------------------------
def _where_of(m, key, path: str, file: str | None) -> Where:
    return m.where(key, path) if isinstance(m, YMap) else Where(file, None, path)


def _namespace(data, amap, bmap, file: str | None) -> set[str]:
    """Check the names of a theory: every one valid, none used twice within its namespace.

    Two namespaces, one for each place a name is read: event variables
    (parties, inner observers, hidden variables; latent outcomes ``A@x``
    cannot collide since '@' is reserved), read inside clauses; and
    declarations (assumptions, bundles), read by ``Theory.resolve`` and the
    command line.  Every name must be valid (:func:`nogo.scenario.check_name`);
    a hidden variable declared by several assumptions is one variable; an
    assumption may share the name of the hidden variable it declares
    (``lam: {hidden: lam}``), since the two are never read in the same place.
    Returns the hidden variables' names.
    """
    seen: dict[tuple[str, str], tuple[str, Where]] = {}
    space = {"party": "event", "inner observer": "event", "hidden variable": "event",
             "assumption": "declaration", "bundle": "declaration"}

    def add(name: str, what: str, where: Where) -> None:
        key = (space[what], name)
        if key in seen:
            other, ow = seen[key]
            first = f"line {ow.line}" if ow.line is not None else "elsewhere"
            hint = ("parties, inner observers and hidden variables need names of their own"
                    if space[what] == "event" else "assumptions and bundles need names of their own")
            raise InputError(f"'{name}' names both the {other} ({first}) and this {what}", where, hint)
        seen[key] = (what, where)

    sc = data["scenario"]
    for name in sc.get("parties") or {}:
        add(str(name), "party", _where_of(sc["parties"], name, f"scenario.parties.{name}", file))
    inner = sc.get("inner_observers") or {}
    for name in inner:
        add(str(name), "inner observer", _where_of(inner, name, f"scenario.inner_observers.{name}", file))
    hidden: set[str] = set()
    for aname, spec in amap.items():
        if isinstance(spec, dict) and "hidden" in spec:
            w = _where_of(spec, "hidden", f"assumptions.{aname}.hidden", file)
            h = spec["hidden"]
            if isinstance(h, (list, dict)):
                raise InputError("'hidden' names one hidden variable", w, "for example 'hidden: lam'")
            h = check_name(h, w, "hidden variable")
            if h not in hidden:
                add(h, "hidden variable", w)
                hidden.add(h)
    for aname in amap:
        w = _where_of(amap, aname, f"assumptions.{aname}", file)
        add(check_name(aname, w, "assumption"), "assumption", w)
    if isinstance(bmap, dict):
        for bname in bmap:
            w = _where_of(bmap, bname, f"bundles.{bname}", file)
            add(check_name(bname, w, "bundle"), "bundle", w)
    return hidden

def _independence_kind(m, given, where: Where):
    """``reading: joint`` (default) or ``reading: supports`` (possibilistic, without 'given')."""
    on = str(m.get("reading", "joint"))
    if on not in ("joint", "supports"):
        raise InputError(f"unknown reading '{on}'", where, suggest(on, ["joint", "supports"]))
    if on == "supports" and given:
        raise InputError("a support-only clause takes no 'given'", where)
    return SupportIndependent if on == "supports" else Independent


def theory_from_yaml(data, file: str | None = None, text: str = "") -> Theory:
    if not isinstance(data, dict):
        raise InputError("a theory file is a mapping with 'scenario', 'assumptions' and 'bundles'", Where(file, 1))
    check_keys(data, {"scenario", "assumptions", "bundles", "title", "says", "source", "light_cone"}, "")
    if "scenario" not in data:
        raise InputError("the theory has no 'scenario'", Where(file, 1))
    scenario = scenario_from_yaml(data["scenario"], file)
    amap = data.get("assumptions") or YMap()
    if not isinstance(amap, dict):
        raise InputError("'assumptions' must be a mapping of names to constraints", data.where("assumptions", "assumptions"))
    bmap = data.get("bundles") or YMap()
    hidden = _namespace(data, amap, bmap, file)
    names = _Names(scenario, hidden)
    assumptions = {str(n): _parse_assumption(str(n), spec, amap, names) for n, spec in amap.items()}
    light_cone, generated, generated_bundles = None, [], {}
    if "light_cone" in data:  # local agency generated from a declared light-cone structure
        from .lightcone import read_light_cone  # noqa: PLC0415 - one-way: lightcone never imports theory
        light_cone, generated, generated_bundles = read_light_cone(
            data, scenario, set(assumptions) | set(map(str, data.get("bundles") or {})), file)
        for g in generated:
            kind = SupportIndependent if g.supports else Independent
            assumptions[g.name] = Assumption(g.name, (kind(g.events, g.of),), g.says, g.source, g.line)
    bundles: dict[str, tuple[str, ...]] = {}
    if not isinstance(bmap, dict):
        raise InputError("'bundles' must be a mapping of names to lists of assumptions", data.where("bundles", "bundles"))
    for bname, members in bmap.items():
        w = bmap.where(bname, f"bundles.{bname}")
        if str(bname) in assumptions:
            raise InputError(f"bundle '{bname}' has the name of an assumption", w, "give it a name of its own")
        if not isinstance(members, list) or not members:
            raise InputError("a bundle is a non-empty list of assumption names", w)
        for i, m in enumerate(members):
            if str(m) not in assumptions:
                raise InputError(f"no assumption named '{m}'", members.where(i, f"bundles.{bname}"),
                                 suggest(str(m), assumptions))
        bundles[str(bname)] = tuple(str(m) for m in members)
    bundles.update(generated_bundles)
    return Theory(scenario, assumptions, bundles, file, str(data.get("title", "")), text, light_cone, tuple(generated))


def load_theory(path: str | Path) -> Theory:
    """Read and validate a theory file; a name such as ``bell-2x2`` finds a shipped theory."""
    p = Path(path)
    if not p.exists():
        from .shipped import shipped_theory, shipped_theory_names  # noqa: PLC0415

        found = shipped_theory(str(path))
        if found is None:
            raise InputError("no such file", Where(str(path)),
                             suggest(p.stem, shipped_theory_names()) if p.stem else None)
        p = found
    data = read_yaml_file(p)
    return theory_from_yaml(data, str(path), p.read_text(encoding="utf-8"))


def load_theory_text(text: str, name: str = "<text>") -> Theory:
    return theory_from_yaml(read_yaml_text(text, name), name, text)
