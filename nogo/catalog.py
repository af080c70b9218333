"""The catalog of published inequalities (``catalog/*.yaml``).

Each entry has a name, the text of the inequality in the trade's notation,
the party names that text uses, words, and its published source.  An entry
is applied to a theory's scenario by name; its relabelled versions come from
:func:`nogo.symmetry.orbit`.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError, Where, suggest
from fractions import Fraction

from .inequality import Inequality, Marginal, parse_inequality
from .scenario import Scenario, check_keys
from .yamlread import read_yaml_file

_KEYS = {"name", "says", "source", "parties", "expression", "known"}


@dataclass(frozen=True)
class CatalogEntry:
    name: str
    expression: str
    source: str
    says: str
    parties: tuple[str, ...]
    file: str
    line: int | None
    known: tuple[dict, ...] = ()

    def inequality(self, scenario: Scenario, match: str | None = None) -> Inequality:
        """This entry read in ``scenario``: parties, settings and outcomes matched (see :func:`read_entry`)."""
        return read_entry(self, scenario, match)


# -- reading an entry in a scenario of the same shape ---------------------------------
def _parse_match(text: str | None, where: Where) -> dict[str, str]:
    out: dict[str, str] = {}
    for item in (text or "").replace(";", ",").split(","):
        item = item.strip()
        if not item:
            continue
        if "=" not in item:
            raise InputError(f"'{item}' in the match is not of the form ENTRY=SCENARIO", where,
                             "for example --match 'A=Bob,B=Alice,+1=0,-1=1'")
        k, v = (t.strip() for t in item.split("=", 1))
        if not k or not v:
            raise InputError(f"'{item}' in the match leaves a side empty", where)
        if k in out:
            raise InputError(f"the match names '{k}' twice", where)
        out[k] = v
    return out


def _entry_outcomes(n: int) -> tuple[str, ...]:
    return ("+1", "-1") if n == 2 else tuple(str(k) for k in range(n))


def read_entry(entry: CatalogEntry, scenario: Scenario, match: str | None = None) -> Inequality:
    """Read a catalog entry in a scenario with the same shape, under any names.

    The entry speaks of its own parties (``entry.parties``), settings 1, 2, ...
    and outcomes +1, -1 (two outcomes; 0, 1, ... otherwise).  They are matched
    to the scenario's: parties by name when every entry party is a scenario
    party, else by position (first party with first party); settings by label
    when the scenario has the labels 1, 2, ..., else by position; outcomes by
    label when a party's outcomes are the entry's, else by position (first
    outcome with +1).  ``match`` ("A=Bob,B=Alice,+1=0,-1=1") gives parties and
    outcome labels explicitly.  Only a different shape is refused.  The text is
    then shown in the entry's own notation with the scenario's names, and the
    mapping is kept in ``origin`` to be printed once.

    Stages: the party map (:func:`_party_map`), each party's setting and
    outcome maps with a proxy scenario in the entry's own labels
    (:func:`_label_maps`), the text parsed there and carried over
    (:func:`_carry_over`).
    """
    where = Where(entry.file, entry.line)
    mw = Where("command line", key="--match")
    explicit = _parse_match(match, mw)
    pmap, omap_x = _party_map(entry, scenario, explicit, where, mw)
    proxy, maps = _label_maps(entry, scenario, pmap, omap_x, mw)
    notes = _mapping_words(entry.parties, pmap, maps)
    ew = Where(entry.file, entry.line, "expression")
    try:
        base = parse_inequality(proxy, entry.expression, entry.name, entry.source, ew)
    except InputError as exc:
        raise InputError(f"catalog entry '{entry.name}' does not fit this scenario's shape: {exc.message}", where,
                         "choose an entry for this many settings and outcomes") from None
    if not notes:
        return parse_inequality(scenario, entry.expression, entry.name, entry.source, ew)
    from .notation import render

    shown = render(_carry_over(entry, scenario, base, pmap, maps)).inequality
    shown.origin = (f"catalog entry {entry.name} read here with " + "; ".join(notes)
                    + (" (as given by --match)" if explicit else " (matched by position; --match chooses)"))
    return shown


def _party_map(entry: CatalogEntry, scenario: Scenario, explicit: dict[str, str], where: Where,
               mw: Where) -> tuple[dict[str, str], dict[str, str]]:
    """Entry party -> scenario party (by --match, by name, else by position); the outcome part of --match."""
    names = scenario.party_names
    if len(entry.parties) != len(names):
        raise InputError(
            f"catalog entry '{entry.name}' is written for {len(entry.parties)} parties {list(entry.parties)}; "
            f"the scenario has {len(names)}: {list(names)}", where,
            "choose an entry written for this many parties")
    pmap_x = {k: v for k, v in explicit.items() if k in entry.parties}
    omap_x = {k: v for k, v in explicit.items() if k not in entry.parties}
    for v in pmap_x.values():
        if v not in names:
            raise InputError(f"--match names '{v}', not a party of the scenario", mw, suggest(v, names))
    if pmap_x:
        if len(pmap_x) != len(entry.parties) or len(set(pmap_x.values())) != len(names):
            raise InputError("--match must send every entry party to a different scenario party "
                             f"(entry parties {list(entry.parties)})", mw)
        return pmap_x, omap_x
    if set(entry.parties) == set(names):
        return {p: p for p in entry.parties}, omap_x
    return dict(zip(entry.parties, names)), omap_x


def _label_maps(entry: CatalogEntry, scenario: Scenario, pmap: dict[str, str], omap_x: dict[str, str],
                mw: Where) -> tuple[Scenario, list[tuple[dict, dict]]]:
    """A scenario in the entry's own labels, and per entry party (setting map, outcome map) to the scenario's."""
    from .scenario import Party

    proxy_parties, maps = [], []
    for ep in entry.parties:
        party = scenario.party(pmap[ep])
        n_out = len(party.outcomes)
        e_outs = _entry_outcomes(n_out)
        e_sets = tuple(str(k) for k in range(1, len(party.settings) + 1))
        if set(e_sets) <= set(party.settings):
            smap = {x: x for x in e_sets}
        else:
            smap = dict(zip(e_sets, party.settings))
        if omap_x:
            omap = _explicit_outcomes(entry, party, e_outs, omap_x, mw)
        elif set(e_outs) == set(party.outcomes):
            omap = {o: o for o in e_outs}
        else:
            omap = dict(zip(e_outs, party.outcomes))
        vals = tuple(Fraction(o) for o in e_outs) if n_out == 2 else None
        proxy_parties.append(Party(ep, e_sets, e_outs, vals))
        maps.append((smap, omap))
    return Scenario(tuple(proxy_parties)), maps


def _explicit_outcomes(entry: CatalogEntry, party, e_outs: tuple[str, ...], omap_x: dict[str, str],
                       mw: Where) -> dict[str, str]:
    bad = [o for o in omap_x if o not in e_outs]
    if bad:
        raise InputError(f"--match names '{bad[0]}', neither an entry party {list(entry.parties)} "
                         f"nor an entry outcome {list(e_outs)}", mw)
    from .inequality import _match_outcome

    omap = {k: _match_outcome(v, party.outcomes) or v for k, v in omap_x.items()}
    if set(omap) != set(e_outs) or set(omap.values()) != set(party.outcomes):
        raise InputError(f"--match must send the entry's outcomes {list(e_outs)} one to one onto "
                         f"party '{party.name}''s outcomes {list(party.outcomes)}", mw)
    return omap


def _carry_over(entry: CatalogEntry, scenario: Scenario, base: Inequality, pmap: dict[str, str],
                maps: list[tuple[dict, dict]]) -> Inequality:
    """The inequality parsed in the proxy scenario, moved coordinate by coordinate to the scenario's."""
    names = scenario.party_names
    pos = [names.index(pmap[ep]) for ep in entry.parties]
    coeffs: dict = {}
    for (s, a), c in base.coeffs.items():
        s2, a2 = [None] * len(names), [None] * len(names)
        for k, (x, o) in enumerate(zip(s, a)):
            smap, omap = maps[k]
            s2[pos[k]], a2[pos[k]] = smap[x], omap[o]
        key = (tuple(s2), tuple(a2))
        coeffs[key] = coeffs.get(key, Fraction(0)) + c
    marg = frozenset(Marginal(tuple(sorted((pmap[p] for p in m.parties), key=names.index))) for m in base.marginals)
    return Inequality(scenario, coeffs, base.bound, entry.name, "", entry.source, marg, base.sense, base.shift,
                      base.notation)


def _mapping_words(parties, pmap, maps) -> list[str]:
    """'parties Alice, Bob for A, B; settings x, y for 1, 2; outcomes 0, +1 for +1, -1'."""
    words = []
    if any(pmap[p] != p for p in parties):
        words.append(f"parties {', '.join(pmap[p] for p in parties)} for {', '.join(parties)}")
    for k, what in ((0, "settings"), (1, "outcomes")):
        per = [(p, m[k]) for p, m in zip(parties, maps) if any(x != y for x, y in m[k].items())]
        if not per:
            continue
        if len(per) == len(parties) and all(m == per[0][1] for _, m in per):
            m = per[0][1]
            words.append(f"{what} {', '.join(m.values())} for {', '.join(m)}")
        else:
            for p, m in per:
                words.append(f"{pmap[p]}'s {what} {', '.join(m.values())} for {', '.join(m)}")
    return words


def versions(ineq: Inequality) -> list[Inequality]:
    """Every relabelled version of ``ineq`` (:func:`nogo.symmetry.orbit`), each shown in
    the notation and sense it was written in; numbers then refer to the text shown."""
    from .notation import render, render_text
    from .symmetry import orbit

    out, seen, texts = [], set(), set()
    for k, v in enumerate(orbit(ineq)):
        if k == 0 and ineq.text:
            shown = ineq
        else:
            v = Inequality(v.scenario, v.coeffs, v.bound, v.name, "", v.source, v.marginals, ineq.sense,
                           ineq.shift, ineq.notation, ineq.origin)
            text, exact = render_text(v)
            if not exact and text in texts:  # the same version under the no-signalling reading
                continue
            texts.add(text)
            shown = render(v).inequality
        key = shown.canonical()
        if key in seen:  # versions equal under the no-signalling reading of their marginals
            continue
        seen.add(key)
        out.append(shown)
    return out


def catalog_dir() -> Path:
    """The catalog folder: $NOGO_CATALOG, else the shipped one (package data, or the source tree's)."""
    env = os.environ.get("NOGO_CATALOG")
    if env:
        return Path(env)
    from .shipped import shipped_dir  # noqa: PLC0415

    return shipped_dir("catalog") or Path(__file__).resolve().parent.parent / "catalog"


def _entries_from_file(path: Path) -> list[CatalogEntry]:
    data = read_yaml_file(path)
    out = []
    for raw in (data if isinstance(data, list) else [data]):
        if not isinstance(raw, dict):
            raise InputError("a catalog entry is a mapping", Where(str(path)))
        check_keys(raw, _KEYS, "")
        for req in ("name", "expression", "source", "parties"):
            if req not in raw:
                raise InputError(f"catalog entry has no '{req}'", raw.where(None))
        out.append(CatalogEntry(str(raw["name"]), str(raw["expression"]), str(raw["source"]),
                                str(raw.get("says", "")), tuple(str(p) for p in raw["parties"]), str(path),
                                raw.line, tuple(raw.get("known") or ())))
    return out


def load_catalog(folder: str | Path | None = None) -> dict[str, CatalogEntry]:
    folder = Path(folder) if folder else catalog_dir()
    out: dict[str, CatalogEntry] = {}
    for path in sorted(folder.glob("*.yaml")):
        for entry in _entries_from_file(path):
            if entry.name in out:
                raise InputError(f"catalog entry '{entry.name}' is defined twice", Where(entry.file, entry.line))
            out[entry.name] = entry
    return out


def resolve_inequality(scenario: Scenario, spec: str, catalog: dict[str, CatalogEntry] | None = None,
                       match: str | None = None) -> Inequality:
    """A catalog name (case-insensitive), an inline expression, or a YAML file with one entry.

    ``match`` gives a catalog entry's parties and outcomes explicitly (see :func:`read_entry`)."""
    catalog = load_catalog() if catalog is None else catalog
    by_lower = {k.lower(): v for k, v in catalog.items()}
    if spec.lower() in by_lower:
        return by_lower[spec.lower()].inequality(scenario, match)
    looks_written = any(t in spec for t in ("<=", ">=", "≤", "≥", "(", "<", "⟨"))
    if looks_written and not spec.endswith((".yaml", ".yml")):
        return parse_inequality(scenario, spec, "", "", Where("command line", key="inequality"))
    p = Path(spec)
    if p.suffix in (".yaml", ".yml") and p.exists():
        return load_catalog_file(p).inequality(scenario, match)
    raise InputError(f"'{spec}' is neither a catalog entry nor an inequality", Where("command line", key="inequality"),
                     suggest(spec, catalog) or "write it out, e.g. '<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2'")


def load_catalog_file(path: Path) -> CatalogEntry:
    entries = _entries_from_file(path)
    if len(entries) != 1:
        raise InputError("the file must hold exactly one inequality", Where(str(path)))
    return entries[0]
