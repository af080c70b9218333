"""Symmetries of a support pattern: relabellings that map its facts onto its facts.

A map is a party permutation with, for every party, a permutation of its
settings and, for every (party, setting), a permutation of its outcomes (the
scenario's relabellings, DESIGN.md §3 "Polytopes, facets, comparisons").  Bell
locality is invariant under all of them.  Local friendliness with inner
observers is invariant only under maps that keep the read-out setting and
relabel a lab's outcomes alike at every setting (the record is relabelled
with them); :func:`pattern_symmetries` takes a flag for that.

Generators are found by testing candidates (transpositions of parties,
local relabellings of one or two parties) against the pattern; orbits are
closures under the generators found (breadth first, capped).  Used to pick
one witness per orbit and to add every image of a correction set in the
hitting-set search (the images of a correction set under a symmetry of
theory and pattern are correction sets).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

from ..scenario import Scenario
from .support import SupportPattern


@dataclass(frozen=True)
class Relabel:
    """perm[i] = image party of party i; sett[i][x] = image setting of i's setting x;
    outs[i][x][o] = image outcome (at the image setting) of outcome o of i at x."""

    perm: tuple[int, ...]
    sett: tuple[dict, ...]
    outs: tuple[dict, ...]

    def fact(self, coord):
        s, a = coord
        n = len(s)
        s2: list = [None] * n
        a2: list = [None] * n
        for i in range(n):
            j = self.perm[i]
            s2[j] = self.sett[i][s[i]]
            a2[j] = self.outs[i][s[i]][a[i]]
        return tuple(s2), tuple(a2)

    def latent(self, lam: dict) -> dict:
        """Image of an assignment {(party index, setting): outcome}."""
        return {(self.perm[i], self.sett[i][x]): self.outs[i][x][o] for (i, x), o in lam.items()}


def _identity_local(p):
    return {x: x for x in p.settings}, {x: {o: o for o in p.outcomes} for x in p.settings}


def _local_maps(p, uniform: bool):
    """All (setting map, outcome maps) of one party (uniform: settings fixed, one outcome perm for all)."""
    if uniform:
        for perm in itertools.permutations(p.outcomes):
            m = dict(zip(p.outcomes, perm))
            yield {x: x for x in p.settings}, {x: dict(m) for x in p.settings}
        return
    for sp in itertools.permutations(p.settings):
        sm = dict(zip(p.settings, sp))
        for ops in itertools.product(list(itertools.permutations(p.outcomes)), repeat=len(p.settings)):
            yield sm, {x: dict(zip(p.outcomes, op)) for x, op in zip(p.settings, ops)}


def pattern_symmetries(sc: Scenario, pattern: SupportPattern, uniform: bool = False,
                       max_tests: int = 4000, max_gens: int = 32) -> list[Relabel]:
    """Generators (a list of :class:`Relabel`) of symmetries of *pattern* found by testing candidates."""
    n = len(sc.parties)
    ident = [_identity_local(p) for p in sc.parties]
    imp, pos = pattern.impossible, pattern.possible

    complete = len(imp) + len(pos) == len(sc.setting_tuples()) * len(sc.outcome_tuples())
    sample = sorted(imp)[:64] + sorted(pos)[:64]

    def ok(r: Relabel) -> bool:
        # a bijection of coordinates that maps the impossible events onto themselves maps
        # the rest onto the rest; the possible ones need a check only when some are open
        if not all(r.fact(c) in (imp if c in imp else pos) for c in sample):
            return False
        return all(r.fact(c) in imp for c in imp) and (complete or all(r.fact(c) in pos for c in pos))

    def make(perm, local):
        return Relabel(tuple(perm), tuple(l[0] for l in local), tuple(l[1] for l in local))

    alike = [j for j in range(n) if (sc.parties[j].settings, sc.parties[j].outcomes) ==
             (sc.parties[0].settings, sc.parties[0].outcomes)]
    cands = []
    for j in alike[1:]:
        perm = list(range(n))
        perm[0], perm[j] = j, 0
        cands.append(make(perm, ident))
    if len(alike) == n and n > 2:
        cands.append(make([(i + 1) % n for i in range(n)], ident))
    for i in range(n):
        for loc in _local_maps(sc.parties[i], uniform):
            local = list(ident)
            local[i] = loc
            cands.append(make(range(n), local))
    for i, j in itertools.combinations(range(n), 2):
        if j != i + 1 and not (i == 0):
            continue
        for li in _local_maps(sc.parties[i], uniform):
            for lj in _local_maps(sc.parties[j], uniform):
                local = list(ident)
                local[i], local[j] = li, lj
                cands.append(make(range(n), local))
    gens = []
    for r in cands[:max_tests]:
        if all(r.sett[i][x] == x for i in range(n) for x in r.sett[i]) and r.perm == tuple(range(n)) and \
                all(r.outs[i][x][o] == o for i in range(n) for x in r.outs[i] for o in r.outs[i][x]):
            continue
        if ok(r):
            gens.append(r)
            if len(gens) >= max_gens:
                break
    return gens


def orbit(start, gens, act, cap: int = 256) -> list:
    """Breadth-first closure of *start* under *gens* (``act(g, x)``), at most *cap* elements."""
    seen = {start}
    out = [start]
    i = 0
    while i < len(out) and len(out) < cap:
        x = out[i]
        i += 1
        for g in gens:
            y = act(g, x)
            if y not in seen:
                seen.add(y)
                out.append(y)
                if len(out) >= cap:
                    break
    return out
