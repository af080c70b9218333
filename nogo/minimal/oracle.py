"""Minimal sets, stage 1: one oracle answer (a subset decided, guarded, re-checked) and the guard memory."""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Iterable

from ..check import CheckResult, decide, marginal_guard, recheck
from ..compile import compile_bundle
from ..errors import InputError
from ..inequality import Inequality
from ..model import LinearModel
from ..theory import Theory


IMPLYING = ("implied", "contradictory")
STATUSES = ("implied", "contradictory", "not implied", "refused")


# -- one oracle answer ----------------------------------------------------
@dataclass
class Answer:
    """The oracle's answer for one subset of the pool.

    ``status``: "implied" (certificate in ``result``), "not implied"
    (counterexample in ``result``), "refused" (the inequality has no single
    meaning under this subset; ``message`` says why) or "contradictory"
    (the bundle admits no behaviour).  ``recheck`` is None when the
    evidence passed the independent exact re-check of
    :func:`nogo.check.recheck`, else the reason it failed.
    """

    subset: frozenset[str]
    status: str
    maximum: Fraction | None = None
    result: CheckResult | None = None
    recheck: str | None = None
    message: str = ""
    seconds: float = 0.0

    @property
    def implies(self) -> bool:
        return self.status in IMPLYING


@dataclass
class GuardMemory:
    """Marginal-guard answers of one search, reused by monotonicity.

    A set that passes the guard (implies no-signalling for the inequality's
    marginals) passes it with every superset, whose set of behaviours is
    smaller; a refused set is refused with every subset.  The pool, the
    background and the inequality are fixed within one search.
    """

    passed: list[frozenset] = field(default_factory=list)
    refused: list[tuple[frozenset, str]] = field(default_factory=list)
    computed: int = 0  # guards actually computed (the rest were inherited)

    def lookup(self, s: frozenset) -> tuple[bool, str] | None:
        if any(t <= s for t in self.passed):
            return True, ""
        for t, msg in self.refused:
            if s <= t:
                return False, msg
        return None


def ask(theory: Theory, members: Iterable[str], background: Iterable[str], ineq: Inequality,
        options: dict | None = None, models: dict | None = None, guards: GuardMemory | None = None) -> Answer:
    """Decide whether ``members`` (plus ``background``) imply ``ineq``; exact evidence, re-checked.

    Parameters: the theory; pool members of the subset; background
    assumptions added to every bundle; the inequality; options passed to
    :func:`nogo.compile.compile_bundle` (e.g. ``max_columns``); an optional
    dict used as a cache of compiled models keyed by the name tuple (the
    same subset, another inequality); an optional :class:`GuardMemory`
    shared by the calls of one search.  Returns an :class:`Answer`.
    Raises InputError for problems that are not about this subset (a model
    too large, a missing compiler).
    """
    t0 = time.perf_counter()
    subset = frozenset(members)
    names = [n for n in theory.assumptions if n in subset or n in set(background)]
    key = tuple(names)
    model: LinearModel | None = models.get(key) if models is not None else None
    if model is None:
        try:
            model = compile_bundle(theory, names, **(options or {}))
        except InputError as exc:
            # not an answer about this subset: the search cannot go on exactly without it
            raise type(exc)(f"the set {{{', '.join(n for n in names if n in subset) or 'no assumption'}}} "
                            f"cannot be compiled, so the search cannot decide it: {exc.message}",
                            exc.where, exc.hint or "choose a pool without this combination (--pool)") from None
        if models is not None:
            models[key] = model
    known = guards.lookup(subset) if guards is not None and ineq.marginals else None
    if known is not None and not known[0]:
        return Answer(subset, "refused", message=known[1] + " (inherited: a larger set of this search is refused)",
                      seconds=time.perf_counter() - t0)
    try:
        r = decide(model, ineq, guard=False)  # the guard below may then refuse from this answer's exact point
    except InputError as exc:
        if "admits no behaviour" in exc.message:  # no behaviour: no-signalling holds vacuously, the guard passes
            return Answer(subset, "contradictory", message=exc.message, seconds=time.perf_counter() - t0)
        raise
    if ineq.marginals and known is None:
        try:
            marginal_guard(model, ineq, r.point)
            if guards is not None:
                guards.passed.append(subset)
                guards.computed += 1
        except InputError as exc:
            if guards is not None:
                guards.refused.append((subset, exc.message))
                guards.computed += 1
            return Answer(subset, "refused", message=exc.message, seconds=time.perf_counter() - t0)
    return Answer(subset, "implied" if r.implied else "not implied", r.maximum, r,
                  recheck(model, r), seconds=time.perf_counter() - t0)
