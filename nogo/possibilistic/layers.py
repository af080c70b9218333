"""Which parts of the joint-support model to build first (a counterexample-guided order).

A part is a set of settings tuples closed under the hub map of every
independence clause (each kept instance has both its tuples).  The model
restricted to a part is a relaxation: a model of the whole restricts to a
model of the part, so a contradiction found on a part is a contradiction of
the whole (:func:`nogo.possibilistic.encode.build_space`).  A part that stays
consistent sends the search to the next, larger one, up to the whole model,
which alone decides "consistent".

Order: the sub-cubes in which only a few parties move (pairs, then triples,
those with the most impossible events first: GHZ-type arguments live on
three parties' settings), then the layers with at most k parties away from
their first setting, then everything.  Small models are built whole at once.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

from ..compile import present_events
from ..events import read_out_rules
from ..theory import Theory
from .support import SupportPattern


@dataclass(frozen=True)
class Layer:
    says: str  # "in which only A, B, C move", "with at most 2 parties moved", "" (whole)
    whole: bool = False
    booleans: int = 0  # joint booleans of this part


def _weight(sc, s) -> int:
    return sum(x != p.settings[0] for x, p in zip(s, sc.parties))


def settings_layers(theory: Theory, spec, pattern: SupportPattern, limit: int | None,
                    subsets_per_size: int = 8) -> list[tuple[Layer, list | None]]:
    """[(layer, settings tuples or None = all)] in the order to try.

    *limit*: joint booleans above which the model is split (None = never).
    """
    sc = theory.scenario
    _, assumptions = theory.resolve(spec)
    events = present_events(sc, assumptions)
    per: dict = {}
    rules = read_out_rules(sc, events)  # chains of nested observers resolved
    for s in sc.setting_tuples():
        free = 1
        tied = {r.source for r in rules if r.active(s)}
        for ev in events:
            free *= 1 if ev.name in tied else len(ev.outcomes)
        per[s] = free
    size = sum(per.values())
    whole = [(Layer("", True, size), None)]
    if limit is None or size <= limit:
        return whole
    n = len(sc.parties)
    tuples = sc.setting_tuples()
    imp_at: dict = {}
    for s, _ in pattern.impossible:
        imp_at[s] = imp_at.get(s, 0) + 1
    out: list = []
    for m in (2, 3):
        if m >= n:
            break
        scored = []
        for sub in itertools.combinations(range(n), m):
            part = [s for s in tuples if all(s[j] == sc.parties[j].settings[0] for j in range(n) if j not in sub)]
            scored.append((-sum(imp_at.get(s, 0) for s in part), sub, part))
        scored.sort()
        for score, sub, part in scored[:subsets_per_size]:
            if score == 0:
                break
            names = ", ".join(sc.party_names[j] for j in sub)
            out.append((Layer(f"in which only {names} move", False, sum(per[s] for s in part)), part))
    for k in range(1, n):
        part = [s for s in tuples if _weight(sc, s) <= k]
        out.append((Layer(f"with at most {k} parties away from their first setting", False,
                          sum(per[s] for s in part)), part))
    return out + whole
