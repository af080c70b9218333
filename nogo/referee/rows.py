"""The checker's own compiler: rows of a linear bundle rebuilt from the theory file.

Written apart from :mod:`nogo.compile` on purpose (a second implementation of
the same semantics, DESIGN.md §3): the unknown is q(e | s) over the present
events (party outcomes; inner observers declared absolute; latent ``A@x``
under counterfactual outcomes), read-out rules remove the entries that break
them, every settings tuple is normalised, and "events E independent of the
settings of P" equates the marginal of E's present events at s with that at
the tuple where P's settings are moved to their first value.  Only the
theory reader (:mod:`nogo.theory`, validation only) is shared.

Hidden-variable kinds are not rebuilt here: :class:`NotRebuilt` says so, and
the checker reports those checks as not covered.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from fractions import Fraction


class NotRebuilt(Exception):
    """The bundle uses a kind this checker does not rebuild."""


@dataclass
class OwnModel:
    events: list[str]
    columns: list[tuple[tuple[str, ...], tuple[str, ...]]]  # (settings, values over events)
    index: dict[tuple, int]
    rows: list[dict[int, Fraction]]
    rhs: list[Fraction]
    coord: list[int]  # coordinate index of each column
    n_coords: int


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
    out = [(p.name, "party", p) for p in scenario.parties]
    out += [(o.name, "inner", o) for o in scenario.inner if o.name in absolute]
    for p in scenario.parties:
        if p.name in cf:
            out += [(f"{p.name}@{x}", "latent", (p, x)) for x in p.settings]
    return out


def _outcomes(kind, info, scenario) -> tuple[str, ...]:
    if kind == "party":
        return info.outcomes
    if kind == "inner":
        return info.outcomes
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
            if kind == "inner" and info.read_out_at is not None:
                li = pnames.index(info.lab)
                if s[li] == info.read_out_at:
                    shown = sc.parties[li].outcomes[info.relabel[info.outcomes.index(e[pos[name]])]]
                    if e[li] != shown:
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
    return OwnModel([n for n, _, _ in ev], columns, index, rows, rhs, coord, len(coords))


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
