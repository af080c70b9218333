"""The checker's own compiler: rows of a linear bundle rebuilt from the theory file.

Written apart from :mod:`nogo.compile` on purpose (a second implementation of
the same semantics, DESIGN.md §3): the unknown is q(e | s) over the present
events (party outcomes; inner observers declared absolute; latent ``A@x``
under counterfactual outcomes), read-out rules remove the entries that break
them, every settings tuple is normalised, and "events E independent of the
settings of P" equates the marginal of E's present events at s with that at
the tuple where P's settings are moved to their first value.  Only the
theory reader (:mod:`nogo.theory`, validation only) is shared.

Nested observers, observers' own choices and several read-outs are read
apart from the compiler (:func:`nogo.readout_walk.walk_read_outs`, not
:mod:`nogo.events`): an observer's choice
is a setting variable held after the parties' settings with one outcome
``c`` (its event named ``NAME.choice``), and a present observer's read-out
rules are the compositions of the links up to the first present lab, one
per combination of read-out settings whose conditions can hold together
(the rule of projection applied to deterministic equalities; DEVELOPERS.md,
"Nested observers and observers' choices").

Hidden-variable kinds are not rebuilt here: :class:`NotRebuilt` says so, and
the checker reports those checks as not covered.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from fractions import Fraction

from ..readout_walk import walk_read_outs


class NotRebuilt(Exception):
    """The bundle uses a kind this checker does not rebuild."""


@dataclass
class OwnModel:
    events: list[str]
    columns: list[tuple]  # linear: (settings, values over events); mixture: the response's support
    index: dict[tuple, int]
    rows: list[dict[int, Fraction]]
    rhs: list[Fraction]
    coord: list[int]  # linear: coordinate index of each column (mixture: unused)
    n_coords: int
    coords: list[tuple] = None  # (settings, outcomes) in index order
    observe: list[dict[int, Fraction]] = None  # per column: {coordinate index: weight}
    kind: str = "linear"

    def __post_init__(self):
        if self.observe is None:
            self.observe = [{c: Fraction(1)} for c in self.coord]


def _present(scenario, assumptions) -> list[tuple[str, str, object]]:
    """(name, kind, info) of the present events in the order parties, inner observers, latent outcomes."""
    from ..theory import Absolute, Counterfactual, Factorise, Hidden, Independent, Predetermined

    absolute, cf = set(), set()
    for a in assumptions:
        for c in a.clauses:
            if isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given):
                raise NotRebuilt(f"assumption '{a.name}' needs a hidden variable (not rebuilt by this checker)")
            if isinstance(c, Absolute):
                absolute |= set(c.events)
            if isinstance(c, Counterfactual):
                cf |= set(c.parties)
    out = [(p.name if p.choice_of is None else f"{p.name}.choice", "party", p) for p in scenario.parties]
    out += [(o.name, "inner", (o.outcomes, walk_read_outs(scenario, o, absolute)))
            for o in scenario.inner if o.name in absolute]
    for p in scenario.parties:
        if p.name in cf:
            out += [(f"{p.name}@{x}", "latent", (p, x)) for x in p.settings]
    return out


def _outcomes(kind, info, scenario) -> tuple[str, ...]:
    if kind == "party":
        return info.outcomes
    if kind == "inner":
        return info[0]
    return info[0].outcomes


def rebuild(theory, names: list[str], facts: list[tuple[tuple[str, ...], tuple[str, ...]]] = ()) -> OwnModel:
    """Rows of the bundle made of the assumptions *names*, plus a zero row per impossible fact."""
    sc = theory.scenario
    missing = [n for n in names if n not in theory.assumptions]
    if missing:
        raise NotRebuilt(f"the theory copy has no assumption {missing[0]}")
    assumptions = [theory.assumptions[n] for n in names]
    ev = _present(sc, assumptions)
    pnames = [p.name for p in sc.parties]
    pos = {name: i for i, (name, _, _) in enumerate(ev)}
    settings = list(itertools.product(*(p.settings for p in sc.parties)))
    outs = list(itertools.product(*(p.outcomes for p in sc.parties)))
    coords = {(s, a): i for i, (s, a) in enumerate((s, a) for s in settings for a in outs)}

    def allowed(s, e) -> bool:
        for name, kind, info in ev:
            if kind == "inner":
                for lab, cond, shown in info[1]:
                    if all(s[i] == x for i, x in cond) and e[pos[lab]] != shown[e[pos[name]]]:
                        return False
            if kind == "latent":
                p, x = info
                li = pnames.index(p.name)
                if s[li] == x and e[li] != e[pos[name]]:
                    return False
        return True

    columns, index, coord = [], {}, []
    for s in settings:
        for e in itertools.product(*(_outcomes(k, i, sc) for _, k, i in ev)):
            if allowed(s, e):
                index[(s, e)] = len(columns)
                columns.append((s, e))
                coord.append(coords[(s, e[:len(pnames)])])
    rows: list[dict[int, Fraction]] = []
    rhs: list[Fraction] = []
    for s in settings:
        rows.append({index[(s2, e)]: Fraction(1) for (s2, e) in columns if s2 == s})
        rhs.append(Fraction(1))
    from ..theory import Independent

    for a in assumptions:
        for c in a.clauses:
            if not isinstance(c, Independent):
                continue
            kept = [pos[n] for n in c.events if n in pos]
            if not kept:
                continue
            moved = [pnames.index(p) for p in c.of]
            marg: dict[tuple, dict[tuple, list[int]]] = {}
            for j, (s, e) in enumerate(columns):
                marg.setdefault(s, {}).setdefault(tuple(e[i] for i in kept), []).append(j)
            for s in settings:
                base = tuple(sc.parties[i].settings[0] if i in moved else x for i, x in enumerate(s))
                if base == s:
                    continue
                vals = set(marg.get(s, {})) | set(marg.get(base, {}))
                for val in sorted(vals):
                    row: dict[int, Fraction] = {}
                    for j in marg.get(s, {}).get(val, []):
                        row[j] = row.get(j, 0) + 1
                    for j in marg.get(base, {}).get(val, []):
                        row[j] = row.get(j, 0) - 1
                    row = {j: Fraction(v) for j, v in row.items() if v}
                    if row:
                        rows.append(row)
                        rhs.append(Fraction(0))
    for s, a in facts:
        i = coords.get((tuple(s), tuple(a)))
        if i is None:
            raise NotRebuilt(f"the fact at settings {s}, outcomes {a} is not a coordinate of the scenario")
        rows.append({j: Fraction(1) for j, ci in enumerate(coord) if ci == i})
        rhs.append(Fraction(0))
    return OwnModel([n for n, _, _ in ev], columns, index, rows, rhs, coord, len(coords), list(coords))


def rebuild_mixture(theory, names: list[str]) -> OwnModel:
    """Every extreme response of a deterministic hidden-variable bundle, and the weights' normalisation.

    Covered: a hidden variable independent of all settings; per party, either a factor of its own
    (``factorise`` into single-party groups) or a predetermined outcome; independence given λ of a
    party's outcome from other parties' settings.  Then each party's response given λ is a
    distribution over its outcomes for each tuple of the settings it may depend on — a product of
    simplices, whose extreme points are the deterministic assignments — and the mixture's set is the
    convex hull of the products of those (multilinearity).  Anything else raises NotRebuilt.
    """
    sc = theory.scenario
    pnames = [p.name for p in sc.parties]
    indep, determined = _mixture_structure(theory, names, pnames)
    settings = list(itertools.product(*(p.settings for p in sc.parties)))
    outs = list(itertools.product(*(p.outcomes for p in sc.parties)))
    coords = [(s, a) for s in settings for a in outs]
    cindex = {c: i for i, c in enumerate(coords)}
    # the settings each party's response may depend on
    dep = {}
    for p in pnames:
        d = set(pnames) - indep[p]
        if p in determined:
            d &= determined[p]
        dep[p] = [j for j, q2 in enumerate(pnames) if q2 in d]
    per_party = []
    for p in sc.parties:
        keys = sorted({tuple(s[j] for j in dep[p.name]) for s in settings})
        per_party.append([dict(zip(keys, vals)) for vals in itertools.product(p.outcomes, repeat=len(keys))])
    columns, index, observe = [], {}, []
    for combo in itertools.product(*per_party):
        support = []
        for s in settings:
            a = tuple(f[tuple(s[j] for j in dep[p.name])] for f, p in zip(combo, sc.parties))
            support.append(cindex[(s, a)])
        key = tuple(sorted(support))
        if key in index:
            continue
        index[key] = len(columns)
        columns.append(key)
        observe.append({i: Fraction(1) for i in key})
    rows = [{j: Fraction(1) for j in range(len(columns))}]
    return OwnModel([], columns, index, rows, [Fraction(1)], [], len(coords), coords, observe, "mixture")


def _mixture_structure(theory, names: list[str], pnames: list[str]):
    """Read the covered hidden-variable clauses: per party, the settings it is independent of
    given λ, and the parties whose outcome is predetermined (with what it may depend on)."""
    from ..theory import Absolute, Counterfactual, Factorise, Hidden, Independent, Predetermined

    hidden, free, factor, determined = set(), False, set(), {}
    indep: dict[str, set[str]] = {p: set() for p in pnames}
    for n in names:
        a = theory.assumptions.get(n)
        if a is None:
            raise NotRebuilt(f"the theory copy has no assumption {n}")
        for c in a.clauses:
            if isinstance(c, Hidden):
                hidden.add(c.name)
            elif isinstance(c, (Absolute, Counterfactual)):
                raise NotRebuilt(f"'{n}': inner or latent events in a hidden-variable model are not rebuilt here")
    for n in names:
        for c in theory.assumptions[n].clauses:
            if isinstance(c, Hidden):
                continue
            if isinstance(c, Independent) and not c.given:
                if set(c.events) <= hidden and set(c.of) == set(pnames):
                    free = True
                    continue
                raise NotRebuilt(f"'{n}': a clause on the mixture is not rebuilt here")
            if isinstance(c, Independent):
                ev = [e for e in c.events if e in pnames]  # absent events drop out (rule of projection)
                if len(ev) != 1:
                    raise NotRebuilt(f"'{n}': independence of several parties' outcomes given λ is not rebuilt here")
                indep[ev[0]] |= set(c.of) - {ev[0]}
            elif isinstance(c, Factorise):
                groups = [[e for e in g if e in pnames] for g in c.groups]
                groups = [g for g in groups if g]
                if any(len(g) != 1 for g in groups) or sorted(x for g in groups for x in g) != sorted(pnames):
                    raise NotRebuilt(f"'{n}': only a factorisation into single parties is rebuilt here")
                factor |= {g[0] for g in groups}
            elif isinstance(c, Predetermined):
                for e in c.events:
                    if e not in pnames:
                        raise NotRebuilt(f"'{n}': predetermination of a non-party event is not rebuilt here")
                    determined[e] = set(c.depends_on) if c.depends_on is not None else set(pnames)
            else:
                raise NotRebuilt(f"'{n}': clause {type(c).__name__} is not rebuilt here")
    if not hidden or not free:
        raise NotRebuilt("a hidden variable that may depend on the settings is not rebuilt here")
    for p in pnames:
        if p not in factor and p not in determined:
            raise NotRebuilt(f"party {p}'s response is neither its own factor nor predetermined: not rebuilt here")
    return indep, determined


def _outcome_set(raw, scenario, outs_all):
    from ..scenario import outcome_label

    if raw is None or raw == []:
        return set()
    if raw == "rest":
        return "rest"
    if isinstance(raw, dict) and set(raw) == {"product"}:
        want = Fraction(str(raw["product"]))
        out = set()
        for a in outs_all:
            prod = Fraction(1)
            for x in a:
                prod *= Fraction(x)
            if prod == want:
                out.add(a)
        return out
    if isinstance(raw, list):
        out = set()
        for item in raw:
            if isinstance(item, str):
                item = item.replace(",", " ").split()
            if not isinstance(item, list):
                raise NotRebuilt(f"pattern entry {item!r} is not read by this checker")
            out.add(tuple(outcome_label(x) for x in item))
        return out
    raise NotRebuilt(f"pattern entry {raw!r} is not read by this checker")


def pattern_facts(path: str, scenario) -> list[tuple[tuple[str, ...], tuple[str, ...]]]:
    """The impossible facts of a pattern file, read with plain YAML (the checker's own reading).

    Understands outcome lists, ``rest``, ``{product: v}`` and ``unlisted``; anything else is
    reported as not rebuilt rather than guessed.
    """
    import yaml

    with open(path, encoding="utf-8") as fh:
        data = yaml.safe_load(fh)
    outs_all = list(itertools.product(*(p.outcomes for p in scenario.parties)))
    possible, impossible = set(), set()
    for run in data.get("runs", []) or []:
        raw_s = run.get("settings", [])
        if isinstance(raw_s, str):
            raw_s = raw_s.replace(",", " ").split()
        s = tuple(str(x) for x in raw_s)
        pos = _outcome_set(run.get("possible"), scenario, outs_all)
        imp = _outcome_set(run.get("impossible"), scenario, outs_all)
        if pos == "rest":
            pos = set(outs_all) - imp
        if imp == "rest":
            imp = set(outs_all) - pos
        possible |= {(s, a) for a in pos}
        impossible |= {(s, a) for a in imp}
    unlisted = str(data.get("unlisted", "open"))
    if unlisted == "impossible":
        for s in itertools.product(*(p.settings for p in scenario.parties)):
            for a in outs_all:
                if (s, a) not in possible:
                    impossible.add((s, a))
    return sorted(impossible)
