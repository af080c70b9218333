"""Pushing "impossible" through the constraints, round by round.

The possibilistic clauses are dual Horn (at most one negative literal each;
see :mod:`nogo.possibilistic.encode`), so unit propagation of negative
literals decides them (Dowling & Gallier, J. Logic Programming 1, 267 (1984),
for Horn formulas; dual Horn is the same with polarities swapped): start
from the impossible facts, and whenever every joint assignment with E = v
is impossible at one settings tuple of an independence pair, mark every
assignment with E = v impossible at the other.  The formula is
unsatisfiable exactly when this empties a positive clause (an observed
possible event, or "something happens" at some settings); otherwise the
assignments never marked form the largest support that satisfies
everything.

Rounds matter for proofs: a literal derived in round r uses only literals
of rounds < r, so grouping by (round, constraint) gives steps in a valid
order.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .encode import SupportSpace

# reason of a dead variable: ("fact", group) or ("transfer", round, group, direction, value)
#   direction 0: from the pair's second tuple to its first; 1: first to second.


@dataclass
class Propagation:
    dead: dict[int, tuple]
    conflict: tuple | None  # ("possible", group) | ("normalisation", settings) | None
    rounds: int
    active: frozenset[int] = field(default_factory=frozenset)

    @property
    def contradiction(self) -> bool:
        return self.conflict is not None


def _conflict(space: SupportSpace, dead, possible_groups) -> tuple | None:
    for g in possible_groups:
        if all(x in dead for x in space.fact_vars[g]):
            return ("possible", g)
    for s in space.settings:
        if all(x in dead for x in space.vars_at(s)):
            return ("normalisation", s)
    return None


def propagate(space: SupportSpace, active=None, stop_at_conflict: bool = True) -> Propagation:
    """Round-by-round propagation of impossibility over the *active* groups.

    Parameters
    ----------
    space: the support space; active: group indices to use (None = all).
    stop_at_conflict: stop at the first round that empties a positive clause.

    Returns a :class:`Propagation`: every variable proven false with its
    reason, and the conflict if one was reached.
    """
    active = frozenset(range(len(space.groups))) if active is None else frozenset(active)
    groups = [space.groups[i] for i in sorted(active)]
    dead: dict[int, tuple] = {}
    for g in groups:
        if g.kind == "impossible":
            for x in space.fact_vars[g.index]:
                dead.setdefault(x, ("fact", g.index))
    possible = [g.index for g in groups if g.kind == "possible"]
    links = [g.index for g in groups if g.kind == "independent"]
    conflict = _conflict(space, dead, possible)
    r = 0
    while not (conflict and stop_at_conflict):
        r += 1
        before = frozenset(dead)
        new: dict[int, tuple] = {}
        for gi in links:
            left, right = space.buckets[gi]
            for direction, (src, dst) in enumerate(((right, left), (left, right))):
                for v, to_vars in dst.items():
                    if all(x in before for x in src.get(v, ())):
                        for x in to_vars:
                            if x not in before and x not in new:
                                new[x] = ("transfer", r, gi, direction, v)
        if not new:
            r -= 1
            break
        dead.update(new)
        conflict = _conflict(space, dead, possible)
    return Propagation(dead, conflict, r, active)


def largest_support(space: SupportSpace, prop: Propagation) -> dict[tuple[str, ...], list[tuple[str, ...]]]:
    """The joint assignments never marked impossible, per settings tuple."""
    return {s: [e for e in space.joint[s] if space.var[(s, e)] not in prop.dead] for s in space.settings}
