"""Possibilistic (probability-free) no-go arguments: supports, SAT, proofs.

Flow: theory + bundle + support pattern → a reading over supports (for
Bell locality one assignment per (party, setting), :mod:`.latent`; else
booleans "q(e|s) > 0" per joint assignment, :func:`~.encode.build_space`,
on growing layers of settings tuples when large) → python-sat verdict and
minimal / smallest sets of facts (:mod:`.latent`, :mod:`.solve`,
:mod:`.hitting`, :mod:`.bounds`) → a proof of numbered local steps
(:mod:`.proof`, :mod:`.latentproof`) or a consistent support → re-checked by
:mod:`.checker` → printed (:mod:`.render`); logs for SAT checkers in
:mod:`.prooflog`; n-party families and automatic search in :mod:`.families`
and :mod:`.hunt`.

Public API::

    from nogo.possibilistic import load_pattern, support_from_behaviour, decide_pattern
    result = decide_pattern(theory, "Bell-local", pattern, time_limit=20)
    result.contradiction, result.proof, result.model, result.core_names()
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Any

from ..errors import InputError
from ..theory import Absolute, Counterfactual, Theory
from .bounds import bell_lower_bound
from .checker import check_model, check_proof
from .encode import Group, SupportSpace, build_space
from .latent import latent_reading
from .latentrun import decide_latent
from .layers import settings_layers
from .proof import Proof, build_proof
from .propagate import largest_support, propagate
from .render import to_latex, to_markdown
from .solve import Oracle, minimal_core, smallest_facts
from .support import SupportPattern, load_pattern, load_pattern_text, support_from_behaviour

__all__ = ["PossibilisticResult", "decide_pattern", "load_pattern", "load_pattern_text", "support_from_behaviour",
           "check_proof", "check_model", "to_markdown", "to_latex", "Proof", "SupportPattern", "build_space"]


@dataclass
class PossibilisticResult:
    """The verdict with its evidence, in the user's names.

    contradiction: True when no support satisfies the bundle and the pattern.
    proof: for a contradiction, a proof over the smallest core found.
    core: that core's groups (facts and assumption instances).
    smallest_proven: whether no smaller unsatisfiable subset exists (False
    when the search hit its time limit).
    model: for a consistent pattern, the largest support per settings tuple
    (joint assignments over ``events``), accepted by the independent checker.
    """

    contradiction: bool
    label: str
    events: tuple[str, ...]
    parties: tuple[str, ...]
    proof: Proof | None = None
    core: list[Group] = field(default_factory=list)
    first_core: list[Group] = field(default_factory=list)
    smallest_proven: bool = False
    lower_bound: int = 0
    model: dict[tuple[str, ...], list[tuple[str, ...]]] | None = None
    stats: dict[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    zero_test: str = "declared"
    facts_size: int = 0  # observed facts in the core (possible and impossible)

    @property
    def verdict(self) -> str:
        return "contradiction" if self.contradiction else "consistent"

    def core_names(self) -> list[str]:
        return [g.name(self.parties) for g in self.core]

    needed: list[str] = field(default_factory=list)

    def assumptions_needed(self) -> list[str]:
        """Assumptions the core uses: its independence clauses, and those that make their events present."""
        return list(self.needed)

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {"verdict": self.verdict, "bundle": self.label, "events": list(self.events),
                             "zero_test": self.zero_test, "stats": self.stats, "notes": self.notes}
        if self.contradiction:
            d["core"] = {"facts_and_assumption_instances": self.core_names(),
                         "assumptions_needed": self.assumptions_needed(),
                         "size": len(self.core), "smallest_proven": self.smallest_proven,
                         "lower_bound": self.lower_bound,
                         "first_minimal_size": self.stats.get("first_minimal_size", len(self.first_core))}
            d["proof"] = self.proof.to_dict() if self.proof else None
        else:
            d["model"] = [{"settings": list(s), "possible": [dict(zip(self.events, e)) for e in es]}
                          for s, es in (self.model or {}).items()]
        return d


def _needed(theory: Theory, space: SupportSpace, core: list[Group]) -> list[str]:
    used_events = {e for g in core if g.kind == "independent" for e in g.events}
    linking = {g.assumption for g in core if g.kind == "independent"}
    out = []
    for name in space.assumptions:
        a = theory.assumptions[name]
        brings = set()
        for c in a.clauses:
            if isinstance(c, Absolute):
                brings.update(c.events)
            elif isinstance(c, Counterfactual):
                brings.update(f"{p}@{x}" for p in c.parties for x in theory.scenario.party(p).settings)
        if name in linking or brings & used_events:
            out.append(name)
    return out


def decide_pattern(theory: Theory, spec, pattern: SupportPattern, minimise: str = "smallest",
                   time_limit: float | None = 30.0, solver: str = "g4", engine: str = "auto",
                   layer_limit: int | None = 20000, max_booleans: int | None = 600000) -> PossibilisticResult:
    """Is the support *pattern* possible under the bundle *spec*?

    Parameters
    ----------
    theory: loaded theory; spec: bundle name or assumption names;
    pattern: possible / impossible observed events.
    minimise: "smallest" (implicit hitting sets, up to *time_limit*
    seconds), "minimal" (one minimal unsatisfiable subset) or "none"
    (the solver's core as it comes).
    time_limit: seconds for the smallest-subset search (None = no limit).
    engine: "auto" (the one-assignment reading of :mod:`.latent` for Bell
    locality in counterfactual form, else joint supports), "latent" or
    "joint" (the direct encoding, also for Bell locality).
    layer_limit: above this many joint booleans the joint reading is built
    on growing layers of settings tuples (:func:`settings_layers`); None =
    always whole.
    max_booleans: refuse (InputError, no verdict) rather than build a part
    of the joint model larger than this when no smaller part was
    contradictory ("consistent" needs the whole model).

    Sizes count observed facts (possible and impossible); the assumption
    instances a proof uses are listed in ``core`` beside them.

    Returns a :class:`PossibilisticResult`; its evidence (proof or model)
    has passed :func:`check_proof` / :func:`check_model`.

    Example
    -------
    >>> r = decide_pattern(load_theory("theories/bell-2x2.yaml"), "Bell-local", hardy)  # doctest: +SKIP
    >>> r.verdict, len(r.proof.steps)  # doctest: +SKIP
    ('contradiction', 5)

    References: DESIGN.md §3 (possibilistic backend); Ignatiev et al.,
    CP 2015 (smallest MUS); Hardy, PRL 71, 1665 (1993); Mermin, PRL 65,
    1838 (1990).
    """
    if engine in ("auto", "latent"):
        reading = latent_reading(theory, spec)
        if reading is not None:
            return decide_latent(theory, spec, pattern, reading, minimise, time_limit, solver, PossibilisticResult)
        if engine == "latent":
            raise InputError("this bundle is not Bell locality in the counterfactual form; the one-assignment "
                             "reading does not apply", hint="use the default engine")
    t0 = time.monotonic()
    layers = settings_layers(theory, spec, pattern, layer_limit)
    for k, tuples in layers:  # k: a Layer (what part of the model), tuples: its settings tuples
        if max_booleans is not None and k.booleans > max_booleans:
            tried = [layer.says for layer, t in layers if t is not None and layer.booleans <= max_booleans]
            raise InputError(
                f"no contradiction on the {len(tried)} parts of the model tried"
                f"{' (the largest: the settings tuples ' + tried[-1] + ')' if tried else ''}, and the next part "
                f"has {k.booleans} joint booleans, more than the limit of {max_booleans}: no verdict",
                hint="a 'consistent' answer needs the whole model: raise the limit (max_booleans) if memory "
                     "allows, or give fewer parties")
        space = build_space(theory, spec, pattern, tuples)
        oracle = Oracle(space, solver)
        ok, res = oracle.solve([g.index for g in space.groups])
        if not ok or tuples is None:
            break
        oracle.close()
    try:
        return _finish(theory, spec, pattern, space, oracle, ok, res, k, layers, minimise, time_limit, solver, t0)
    finally:
        oracle.close()


CROSS_CHECK_LIMIT = 20000


def _finish(theory, spec, pattern, space, oracle, ok, res, k, layers, minimise, time_limit, solver, t0):
    all_groups = [g.index for g in space.groups]
    whole = k.whole
    if space.n_vars <= CROSS_CHECK_LIMIT:  # two deciders, one answer (propagation is linear but slow in Python)
        prop = propagate(space, None, stop_at_conflict=True)
        if ok == prop.contradiction:
            raise RuntimeError("the SAT solver and unit propagation disagree; this is a bug in nogo")
    stats: dict[str, Any] = {"reading": "joint assignments per settings tuple", "joint_booleans": space.n_vars,
                             "clauses": oracle.n_clauses, "groups": len(space.groups),
                             "settings_tuples": len(space.settings),
                             "verdict_seconds": round(time.monotonic() - t0, 3)}
    notes = list(space.notes)
    if not whole:
        notes.append(f"decided on the settings tuples {k.says} ({len(space.settings)} of "
                     f"{len(space.scenario.setting_tuples())}); a contradiction there is one of the whole model, "
                     "and smallest means smallest among proofs on those tuples")
        stats["layer"] = k.says
    result = PossibilisticResult(not ok, space.label, space.names, space.scenario.party_names,
                                 notes=notes, zero_test=pattern.zero_test)
    if ok:
        full = propagate(space, None, stop_at_conflict=False)
        model = largest_support(space, full)
        bad = check_model(theory, spec, pattern, model)
        if bad:
            raise RuntimeError(f"the consistent model failed its independent check: {bad[0]}")
        result.model = model
    else:
        first = res
        if minimise in ("minimal", "smallest"):
            first = minimal_core(oracle, res)
        core, proven, lower = first, False, 0
        if minimise == "smallest":
            search = smallest_facts(theory, space, first, time_limit, solver)
            wl = [] if search.witness is None else [search.witness]
            inst = [g.index for g in space.groups if g.kind == "independent"]
            core = _shrink_instances(oracle, search.facts + wl, inst)
            proven, lower = search.proven, search.lower_bound
            size = len(search.facts) + (search.witness is not None)
            if not (proven and whole):  # borrow the bound of Bell locality (see .bounds)
                bl = bell_lower_bound(theory, spec, pattern, time_limit)
                stats["bell_local_lower_bound"] = bl
                if bl is not None and bl > (lower if proven is False else 0):
                    lower = max(lower, bl)
                if bl is not None and bl >= size:
                    proven, whole, lower = True, True, size
                    notes.append(f"proven smallest over the whole model: every Bell-local model is a model of "
                                 f"this bundle, and the smallest Bell-local proof also has {bl} facts")
            stats.update({"search_iterations": search.iterations, "search_seconds": round(search.seconds, 3),
                          "witness_orbits": search.orbits, "symmetry_generators": search.symmetries})
        result.core = [space.groups[g] for g in core]
        result.needed = _needed(theory, space, result.core)
        result.first_core = [space.groups[g] for g in first]
        stats["first_minimal_size"] = sum(g.kind != "independent" for g in result.first_core)
        result.facts_size = sum(g.kind != "independent" for g in result.core)
        result.smallest_proven = proven
        result.lower_bound = lower
        proof = build_proof(space, core, theory.file or "")
        for st in proof.steps:
            if st.kind == "transfer":
                st.says = theory.assumptions[st.assumption].says
        proof.assumptions_used = tuple(result.needed)
        proof.smallest = {"size": result.facts_size, "proven": proven, "lower_bound": lower,
                          "searched": minimise == "smallest", "counts": "observed facts",
                          "scope": "whole model" if whole else f"settings tuples {k.says}"}
        bad = check_proof(theory, spec, pattern, proof)
        if bad:
            raise RuntimeError(f"the proof failed its independent check: {bad[0]}")
        result.proof = proof
    stats["sat_calls"] = oracle.calls
    stats["seconds"] = round(time.monotonic() - t0, 3)
    result.stats = stats
    return result


def _shrink_instances(oracle: Oracle, facts: list[int], inst: list[int]) -> list[int]:
    """Facts kept, assumption instances shrunk by deletion to those the contradiction needs."""
    ok, res = oracle.solve(facts + inst)
    if ok:
        raise RuntimeError("a smallest set of facts is not contradictory; this is a bug in nogo")
    keep = [g for g in inst if g in set(res)]
    i = 0
    while i < len(keep):
        ok, res = oracle.solve(facts + keep[:i] + keep[i + 1:])
        if ok:
            i += 1
        else:
            keep = [g for g in keep[:i] + keep[i + 1:] if g in set(res)]
    return sorted(facts + keep)
