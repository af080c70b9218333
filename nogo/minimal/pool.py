"""Minimal sets, stage 0: the pool and the background every bundle holds."""

from __future__ import annotations

from typing import Iterable

from ..errors import InputError
from ..theory import Hidden, Independent, Factorise, Predetermined, Theory


# -- pool and background ------------------------------------------------------
def _declares_only(a) -> bool:
    return bool(a.clauses) and all(isinstance(c, Hidden) for c in a.clauses)


def _mentions_hidden(a) -> set[str]:
    out: set[str] = set()
    for c in a.clauses:
        if isinstance(c, (Independent, Factorise, Predetermined)):
            out.update(c.given)
        if isinstance(c, Independent):
            out.update(c.events)  # "lam independent of the settings" names lam as an event
    return out


def split_pool(theory: Theory, pool: Iterable[str] | None = None,
               fixed: Iterable[str] = ()) -> tuple[tuple[str, ...], tuple[str, ...], list[str]]:
    """(pool, background, notes): the searched members and what every bundle also holds.

    ``pool`` defaults to every assumption of the theory.  Bundle names are
    expanded.  Declarations of hidden variables move to the background
    (they constrain nothing alone); so does any declaration that a member
    mentions, even when the caller left it out.
    """
    def expand(names) -> list[str]:
        out: list[str] = []
        for n in names:
            _, assumptions = theory.resolve([n])
            out += [a.name for a in assumptions]
        return list(dict.fromkeys(out))

    members = expand(pool) if pool is not None else list(theory.assumptions)
    fixed_l = expand(fixed)
    notes: list[str] = []
    background = [n for n in fixed_l]
    for n in list(members):
        if _declares_only(theory.assumptions[n]):
            members.remove(n)
            if n not in background:
                background.append(n)
            notes.append(f"'{n}' only declares a hidden variable; it is part of every bundle (background)")
    members = [n for n in members if n not in background]
    declared = {c.name: n for n, a in theory.assumptions.items() if _declares_only(a) for c in a.clauses}
    for n in members + background:
        for h in sorted(_mentions_hidden(theory.assumptions[n])):
            d = declared.get(h)
            if d and d not in background:
                background.append(d)
                notes.append(f"'{d}' declares {h}, which '{n}' speaks of; added to every bundle (background)")
    if not members:
        raise InputError("the pool is empty", hint="name assumptions of the theory with --pool a,b,c")
    order = list(theory.assumptions)
    return (tuple(sorted(members, key=order.index)), tuple(sorted(background, key=order.index)), notes)
