"""Local agency generated from a declared light-cone structure.

Local agency, as published (K.-W. Bong et al., Nature Physics 16, 1199
(2020), arXiv:1907.05607; for many labs M. Haddara and E. G. Cavalcanti,
arXiv:2205.12223 and arXiv:2407.20346): a free choice is uncorrelated with
*every set of events* outside its future light cone.  For a choice X.setting
the largest such set is the joint of all events outside the cone, and the
independence of that joint implies the independence of every subset (its
marginals), so the published assumption is one independence clause per
choice::

    p(E_out(X) | settings) does not depend on X.setting,
    E_out(X) = every party outcome and inner record outside the future light cone of X.setting.

The weaker *one-lab-at-a-time* reading keeps, for each other lab's outcome Y
outside the cone, only the joint of Y with the inner records outside it
(``{name}-X-on-Y``).  In two labs the two readings coincide; in three they
differ (DESIGN.md §3: the weak one admits the three-lab GHZ behaviour when
the inner observers measure X).

The declaration (our own layout; every key optional)::

    light_cone:
      says: one line in words
      name: local-agency            # prefix of the generated assumptions and bundles
      after_choice: [A_in]          # inner observers that measure after their lab's choice
                                    # (nested: after the choice of the nearest enclosing lab that chooses)
      future:                       # further events inside a choice's future light cone
        A.setting: [B]              # (e.g. lab B lies in the causal future of A's choice)
      weak: true                    # also generate the one-lab-at-a-time reading
      reading: joint                # joint (probabilities) | supports (possibilistic) | both

By default the labs are pairwise space-like separated and every inner
observer measures before its lab's choice (the canonical local-friendliness
set-up), so the future light cone of X.setting holds X's outcome only.  An
inner observer F with settings of its own (a choice ``F.setting``) chooses
before it measures: the future light cone of F.setting holds F's record and
every lab around F (each lab's outcome is recorded after what is inside it);
every cone is closed under that "lab around" relation.

``reading: supports`` states possibilistic local agency (arXiv:2205.12223):
an intervention cannot change which events outside its future light cone are
*possible*.  Those clauses are :class:`nogo.theory.SupportIndependent`; the
possibilistic backend reads them, the probabilistic compilers refuse them
unless the bundle also holds the probabilistic form (:func:`nogo.supports.refuse_support_only`).

This module knows only the scenario: it returns :class:`Generated` specs, and
:func:`nogo.theory.theory_from_yaml` turns them into assumptions (so the
dependency runs one way, theory -> lightcone).

Generated names: ``{name}-X`` (one per choice), ``{name}-X-on-Y`` (weak),
``{name}-X-supports`` and ``{name}-X-on-Y-supports``; bundles ``{name}``,
``{name}-weak``, ``{name}-supports``, ``{name}-supports-weak`` holding them.
"""

from __future__ import annotations

from dataclasses import dataclass

from .errors import InputError, Where, suggest
from .scenario import Scenario

_KEYS = {"says", "source", "name", "after_choice", "future", "weak", "reading"}
SOURCE = ("local agency in the all-events form of K.-W. Bong et al., Nature Physics 16, 1199 (2020), "
          "arXiv:1907.05607; generated from the light-cone declaration")
WEAK_SOURCE = "a weakening of local agency (one lab at a time), generated for comparison only"
SUPPORT_SOURCE = ("possibilistic local agency, M. Haddara and E. G. Cavalcanti, arXiv:2205.12223; "
                  "generated from the light-cone declaration")


@dataclass(frozen=True)
class Generated:
    """One generated assumption: a single independence clause, on the joint or on supports."""

    name: str
    events: tuple[str, ...]
    of: tuple[str, ...]  # party names whose setting is meant
    supports: bool  # True: possibilistic (support-only) reading
    says: str
    source: str
    line: int | None = None


@dataclass(frozen=True)
class LightCone:
    """Which events lie in the future light cone of each choice (party name -> event names)."""

    future: dict[str, tuple[str, ...]]
    name: str = "local-agency"
    weak: bool = False
    readings: tuple[str, ...] = ("joint",)
    says: str = ""
    line: int | None = None

    def outside(self, scenario: Scenario, party: str) -> tuple[str, ...]:
        """Party outcomes and inner records outside the future light cone of *party*'s choice."""
        inside = set(self.future[party])
        events = [p.name for p in scenario.labs] + [o.name for o in scenario.inner]
        return tuple(e for e in events if e not in inside)


def _closed(scenario: Scenario, future: dict[str, list[str]]) -> dict[str, tuple[str, ...]]:
    """Each future light cone closed under "the lab measures after what is inside it".

    A party's outcome, or an outer observer's, is recorded after every
    observer inside its lab; so whatever lies in a choice's future light cone
    puts the labs around it there too (a nested observer's choice reaches the
    outer observers and the party).  Leaves the canonical cones unchanged.
    """
    lab_of = {o.name: o.lab for o in scenario.inner}
    out = {}
    for p, evs in future.items():
        seen = list(dict.fromkeys(evs))
        for e in seen:  # grows while it is walked
            if e in lab_of and lab_of[e] not in seen:
                seen.append(lab_of[e])
        out[p] = tuple(seen)
    return out


def _initial(scenario: Scenario) -> dict[str, list[str]]:
    """A party's choice: its own outcome; an observer's own choice: its own record."""
    return {p.name: [p.name if p.choice_of is None else p.choice_of] for p in scenario.parties}


def default_light_cone(scenario: Scenario, name: str = "local-agency", weak: bool = False,
                       readings: tuple[str, ...] = ("joint",)) -> LightCone:
    """Labs pairwise space-like, every inner observer before its lab's choice."""
    return LightCone(_closed(scenario, _initial(scenario)), name, weak, readings)


def _choice_around(scenario: Scenario, observer: str) -> str:
    """The choice an observer's "after its lab's choice" refers to: the nearest lab (outwards) that chooses."""
    o = scenario.observer(observer)
    while o.lab not in scenario.party_names:  # an observer lab without choices of its own
        o = scenario.observer(o.lab)
    return o.lab


def _names(raw, where: Where, pool: list[str], what: str) -> list[str]:
    if isinstance(raw, str):
        raw = [raw]
    if not isinstance(raw, list):
        raise InputError(f"expected a list of {what}", where)
    out = []
    for v in raw:
        if str(v) not in pool:
            raise InputError(f"no {what[:-1]} named '{v}'", where, suggest(str(v), pool))
        out.append(str(v))
    return out


def light_cone_from_yaml(raw, scenario: Scenario, where: Where) -> LightCone:
    """Read the ``light_cone:`` mapping of a theory file (see the module docstring)."""
    from .scenario import check_keys

    if raw is None:
        raw = {}
    if not isinstance(raw, dict):
        raise InputError("'light_cone' must be a mapping", where, "keys: " + ", ".join(sorted(_KEYS)))
    check_keys(raw, _KEYS, "light_cone")

    def at(key):
        return raw.where(key, f"light_cone.{key}") if hasattr(raw, "where") else where

    name = str(raw.get("name", "local-agency"))
    if not name or not all(ch.isalnum() or ch in "-_" for ch in name):
        raise InputError(f"'{name}' is not a usable name prefix", at("name"), "use letters, digits, '-' and '_'")
    inner = [o.name for o in scenario.inner]
    events = [p.name for p in scenario.labs] + inner
    future = _initial(scenario)
    for o in _names(raw.get("after_choice", []), at("after_choice"), inner, "inner observers"):
        future[_choice_around(scenario, o)].append(o)
    fut = raw.get("future") or {}
    if not isinstance(fut, dict):
        raise InputError("'future' maps a choice (PARTY.setting) to the events in its future light cone", at("future"))
    for k, evs in fut.items():
        w = fut.where(k, f"light_cone.future.{k}") if hasattr(fut, "where") else where
        key = str(k)
        party = key[:-len(".setting")] if key.endswith(".setting") else None
        if party not in scenario.party_names:
            raise InputError(f"'{key}' is not a choice", w, "write PARTY.setting (or OBSERVER.setting for an "
                             f"inner observer with settings of its own), e.g. '{scenario.party_names[0]}.setting'")
        future[party] += _names(evs, w, events, "events")
    weak = raw.get("weak", False)
    if not isinstance(weak, bool):
        raise InputError("'weak' is true or false", at("weak"))
    reading = str(raw.get("reading", "joint"))
    readings = {"joint": ("joint",), "supports": ("supports",), "both": ("joint", "supports")}.get(reading)
    if readings is None:
        raise InputError(f"unknown reading '{reading}'", at("reading"), suggest(reading, ["joint", "supports", "both"]))
    line = getattr(where, "line", None)
    return LightCone(_closed(scenario, future), name, weak, readings,
                     str(raw.get("says", "")), line)


def generate(scenario: Scenario, lc: LightCone) -> tuple[list[Generated], dict[str, tuple[str, ...]]]:
    """The generated assumptions (one per choice, and the weak ones on request) and their bundles."""
    out_list: list[Generated] = []
    bundles: dict[str, tuple[str, ...]] = {}
    inner = {o.name for o in scenario.inner}
    for reading in lc.readings:
        sup = reading == "supports"
        tag = "-supports" if sup else ""
        word = "possible or impossible independently of" if sup else "uncorrelated with"
        source = SUPPORT_SOURCE if sup else SOURCE
        strong, weak = [], []
        for p in scenario.party_names:
            out = lc.outside(scenario, p)
            if not out:
                continue
            n = f"{lc.name}-{p}{tag}"
            says = (f"every event outside the future light cone of {p}'s choice ({', '.join(out)}), jointly, "
                    f"is {word} {p}'s setting")
            out_list.append(Generated(n, out, (p,), sup, says, source, lc.line))
            strong.append(n)
            records = tuple(e for e in out if e in inner)
            labs = [e for e in out if e not in inner]
            if not lc.weak:
                continue
            if len(labs) <= 1:
                weak.append(n)  # nothing to split: the weak reading is the full one
                continue
            for y in labs:
                nw = f"{lc.name}-{p}-on-{y}{tag}"
                evs = (y,) + records
                out_list.append(Generated(nw, evs, (p,), sup,
                                          f"(one lab at a time) {', '.join(evs)}, jointly, is {word} {p}'s setting",
                                          WEAK_SOURCE, lc.line))
                weak.append(nw)
        bundles[f"{lc.name}{tag}"] = tuple(strong)
        if lc.weak:
            bundles[f"{lc.name}{tag}-weak"] = tuple(dict.fromkeys(weak))
    return out_list, bundles


def read_light_cone(data, scenario: Scenario, taken: set[str], file: str | None
                    ) -> tuple[LightCone, list[Generated], dict[str, tuple[str, ...]]]:
    """Hook for :func:`nogo.theory.theory_from_yaml`: read ``light_cone`` and generate.

    *taken*: the names of hand-written assumptions and bundles; a generated
    name that clashes with one is refused (a different ``name`` prefix fixes it).
    """
    where = data.where("light_cone", "light_cone") if hasattr(data, "where") else Where(file, None, "light_cone")
    if where.file is None:
        where = Where(file, where.line, where.key)
    lc = light_cone_from_yaml(data.get("light_cone"), scenario, where)
    gen, bundles = generate(scenario, lc)
    for n in [g.name for g in gen] + list(bundles):
        if n in taken:
            raise InputError(f"the light-cone declaration would generate '{n}', a name already in use", where,
                             "give the declaration another 'name' prefix")
    return lc, gen, bundles


# -- printing ------------------------------------------------------------------
def clause_text(scenario: Scenario, events, of, supports: bool = False) -> str:
    """An independence clause in the trade's notation."""
    evs = ", ".join(events)
    allset = ", ".join(f"{p}.setting" for p in scenario.party_names)
    rest = ", ".join(f"{p}.setting" for p in scenario.party_names if p not in of)
    moved = ", ".join(f"{p}.setting" for p in of)
    if supports:
        return f"supp p({evs} | {allset}) = supp p({evs} | {rest})   [which values are possible does not depend on {moved}]"
    return f"p({evs} | {allset}) = p({evs} | {rest})   [does not depend on {moved}]"


def describe(scenario: Scenario, lc: LightCone, generated: list[Generated]) -> list[str]:
    """Lines for ``nogo show``: the declared cones and every generated constraint."""
    lines = []
    for p in scenario.party_names:
        lines.append(f"future light cone of {p}.setting: {', '.join(lc.future[p])};"
                     f" outside it: {', '.join(lc.outside(scenario, p)) or '(nothing)'}")
    for g in generated:
        lines.append(f"{g.name}: {clause_text(scenario, g.events, g.of, g.supports)}")
    return lines
