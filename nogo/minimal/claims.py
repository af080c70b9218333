"""Minimal sets, stage 3: summaries across inequalities and the claims a referee checks."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterable

from ..inequality import Inequality
from ..theory import Theory
from .oracle import Answer
from .pool import split_pool
from .search import SearchResult, _Knowledge, _shrink


@dataclass
class Summary:
    """Across several inequalities: which members are always needed, which never."""

    pool: tuple[str, ...]
    essential: list[str]  # in every minimal set of every inequality
    idle: list[str]  # in no minimal set of any inequality
    per_inequality: list[tuple[str, list[str], list[str]]]  # (name, essential, idle)
    oracle_calls: int
    complete: bool


def summarise(results: list[SearchResult]) -> Summary:
    pool = results[0].pool
    ess = [p for p in pool if all(p in r.essential() for r in results)]
    idle = [p for p in pool if all(p in r.idle() for r in results)]
    per = [(r.inequality.name or r.inequality.display(), r.essential(), r.idle()) for r in results]
    return Summary(pool, ess, idle, per, sum(r.oracle_calls for r in results), all(r.complete for r in results))


# -- claims a referee checks ------------------------------------------------------
@dataclass
class ClaimResult:
    """Verdict on "``claimed`` implies the inequality and is minimal".

    ``verdict``: "confirmed" or "refuted".  Evidence: ``whole`` (the claimed
    set's certificate, or its counterexample when it does not imply), and
    ``drops``: for each member, the answer for the set without it (each a
    counterexample when confirmed).  When a smaller set implies,
    ``smaller`` is a minimal implicating subset, with its certificate.
    """

    claimed: frozenset[str]
    background: tuple[str, ...]
    verdict: str
    reason: str
    whole: Answer
    drops: dict[str, Answer]
    smaller: Answer | None
    oracle_calls: int


def check_claim(theory: Theory, ineq: Inequality, claimed: Iterable[str], *, fixed: Iterable[str] = (),
                options: dict | None = None) -> ClaimResult:
    """Referee a claim "this set implies I and is minimal", with exact evidence either way.

    Minimality needs only the sets with one member removed: by
    monotonicity every proper subset lies below one of them.

    Example: ``check_claim(th, chsh, ["absoluteness", "agency-A", "agency-B"])``
    on theories/friends-2x2.yaml is confirmed; adding "agency-inner" is
    refuted with the smaller set.
    """
    members, background, _ = split_pool(theory, list(claimed), fixed)
    know = _Knowledge(theory, background, ineq, options, {}, None, None)
    whole = know.call(frozenset(members))
    if not whole.implies:
        why = ("the inequality has no single meaning under it: " + whole.message) if whole.status == "refused" \
            else f"it allows a behaviour reaching {whole.maximum}, above the bound {ineq.bound}"
        return ClaimResult(frozenset(members), background, "refuted", "the set does not imply the inequality: " + why,
                           whole, {}, None, know.calls)
    drops = {}
    for p in members:
        drops[p] = know.call(frozenset(members) - {p})
        if drops[p].implies:
            small, _ = _shrink(know, frozenset(members) - {p}, theory, True)
            smaller = know.call(small)
            return ClaimResult(frozenset(members), background, "refuted",
                               f"it is not minimal: without '{p}' it still implies the inequality; "
                               f"a minimal implicating subset is {{{', '.join(sorted(small))}}}",
                               whole, drops, smaller, know.calls)
    return ClaimResult(frozenset(members), background, "confirmed",
                       "the set implies the inequality (certificate) and each set with one member removed "
                       "does not (counterexample each)", whole, drops, None, know.calls)
