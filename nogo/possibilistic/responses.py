"""Possibilistic reading of hidden-variable bundles: sets of possible responses.

A bundle with a hidden variable compiles (:mod:`nogo.mixture`) to mixtures of
extreme responses r, one weight per response (per weight class when λ may
depend on some settings).  The support of a mixture is the union of the
supports of the responses with positive weight, and the weights are free, so
over supports the model reads:

* a response that gives positive probability to an event the pattern
  declares impossible must have weight zero (it is *excluded*);
* every event the pattern declares possible needs a response, in the weight
  class of its settings, that gives it positive probability and is not
  excluded.

So the pattern is consistent exactly when the responses that survive the
impossible events cover every possible event; the surviving set is then an
explicit possibilistic model.  Otherwise some possible event E has every
response that could produce it excluded: the proof names E and, for each of
those responses (in the user's names), one impossible event it would produce.
The fact set is kept small by a greedy set cover (Chvátal, Math. Oper. Res.
4, 233 (1979)); it is minimal for E but not proven smallest over all events.

This reading is exact for pure mixtures: the compiled model may carry no rows
beyond the normalisation of the weights (a clause that holds on the mixture
itself, such as local agency on the joint, is refused here with a clear
message).  The checker :func:`check_response_proof` re-derives every claim
from the compiled responses in exact arithmetic, without a SAT solver.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from ..compile import compile_bundle
from ..errors import InputError
from ..model import LinearModel
from ..theory import Theory
from .support import SupportPattern


@dataclass
class Exclusion:
    response: str  # the response, described in the user's names
    settings: tuple[str, ...]
    outcomes: tuple[str, ...]  # the impossible event it would produce


@dataclass
class ResponseResult:
    contradiction: bool
    label: str
    parties: tuple[str, ...]
    event: tuple[tuple[str, ...], tuple[str, ...]] | None = None  # the possible event left uncovered
    exclusions: list[Exclusion] = field(default_factory=list)
    facts: list[tuple[tuple[str, ...], tuple[str, ...]]] = field(default_factory=list)  # impossible events used
    model: list[str] = field(default_factory=list)  # surviving responses (consistent case)
    notes: list[str] = field(default_factory=list)
    zero_test: str = "declared"

    @property
    def verdict(self) -> str:
        return "contradiction" if self.contradiction else "consistent"

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {"verdict": self.verdict, "bundle": self.label, "reading": "responses of the mixture",
                             "zero_test": self.zero_test, "notes": self.notes}
        if self.contradiction:
            s, a = self.event
            d["possible_event"] = {"settings": list(s), "outcomes": list(a)}
            d["impossible_events_used"] = [{"settings": list(s), "outcomes": list(a)} for s, a in self.facts]
            d["exclusions"] = [{"response": x.response, "settings": list(x.settings), "outcomes": list(x.outcomes)}
                               for x in self.exclusions]
        else:
            d["surviving_responses"] = self.model
        return d


def _weights(model: LinearModel) -> list[dict[tuple, Any]]:
    coords = model.scenario.coordinates()
    return [{coords[i]: w for i, w in obs.items() if w} for obs in model.observe]


def mixture_model(theory: Theory, spec) -> LinearModel:
    model = compile_bundle(theory, spec)
    if model.kind != "mixture":
        raise InputError("this bundle compiles to a plain linear model; use the joint-support reading")
    extra = [s for s in model.sources if s.kind != "normalisation" and s.assumption != "normalisation"]
    if extra:
        raise InputError(
            f"the possibilistic reading of '{model.label}' needs a pure mixture, but '{extra[0].assumption}' "
            "constrains the mixture itself; its support reading is not available yet",
            hint="drop that assumption or state it given the hidden variable")
    return model


def decide_responses(theory: Theory, spec, pattern: SupportPattern) -> ResponseResult:
    """Is *pattern* possible as the support of a mixture the bundle allows?"""
    model = mixture_model(theory, spec)
    sc = model.scenario
    weights = _weights(model)
    impossible = set(pattern.impossible)
    names = [c.describe(sc) for c in model.columns]
    excluded: dict[int, tuple] = {}
    for j, w in enumerate(weights):
        hits = sorted(k for k in w if k in impossible)
        if hits:
            excluded[j] = hits
    res = ResponseResult(False, model.label, sc.party_names, notes=list(model.notes), zero_test=pattern.zero_test)
    for ev in sorted(pattern.possible):
        makers = [j for j, w in enumerate(weights) if ev in w]
        if any(j not in excluded for j in makers):
            continue
        # every response that could produce ev is excluded: cover them with few impossible facts
        left, chosen = set(makers), []
        while left:
            counts: dict[tuple, int] = {}
            for j in left:
                for f in excluded[j]:
                    counts[f] = counts.get(f, 0) + 1
            best = max(sorted(counts), key=lambda f: counts[f])
            chosen.append(best)
            left = {j for j in left if best not in excluded[j]}
        exclusions = []
        for j in makers:
            f = next(f for f in chosen if f in excluded[j])
            exclusions.append(Exclusion(names[j], f[0], f[1]))
        cand = ResponseResult(True, model.label, sc.party_names, ev, exclusions, chosen, notes=list(model.notes),
                              zero_test=pattern.zero_test)
        if not res.contradiction or len(cand.facts) < len(res.facts):
            res = cand
    if not res.contradiction:
        res.model = [names[j] for j in range(len(weights)) if j not in excluded]
    bad = check_response_proof(theory, spec, pattern, res)
    if bad:
        raise RuntimeError(f"the possibilistic evidence failed its check: {bad}")
    return res


def check_response_proof(theory: Theory, spec, pattern: SupportPattern, res: ResponseResult) -> str | None:
    """Re-check a verdict from the compiled responses alone (exact; no SAT). None = accepted."""
    model = mixture_model(theory, spec)
    sc = model.scenario
    weights = _weights(model)
    names = [c.describe(sc) for c in model.columns]
    impossible = set(pattern.impossible)
    if res.contradiction:
        if res.event not in pattern.possible:
            return "the event said to be possible is not declared possible"
        listed = {x.response: (x.settings, x.outcomes) for x in res.exclusions}
        for j, w in enumerate(weights):
            if res.event not in w:
                continue
            if names[j] not in listed:
                return f"response '{names[j]}' produces the possible event but is not excluded"
            f = listed[names[j]]
            if f not in impossible or f not in w or not w[f] > 0:
                return f"response '{names[j]}' is not excluded by the event it names"
        return None
    alive = [j for j, n in enumerate(names) if n in set(res.model)]
    for j in alive:
        if any(k in impossible for k in weights[j]):
            return f"surviving response '{names[j]}' produces an impossible event"
    for ev in pattern.possible:
        if not any(ev in weights[j] for j in alive):
            return f"no surviving response produces the possible event {ev}"
    return None


def response_proof_markdown(res: ResponseResult, theory_file: str = "") -> str:
    """The proof as numbered steps a person can follow."""
    pn = res.parties

    def ev(s, a):
        return f"p({', '.join(a)} | {', '.join(s)})"

    lines = [f"### Possibilistic contradiction under `{res.label}` (responses of the hidden variable)", ""]
    if theory_file:
        lines.append(f"Theory: `{theory_file}`. Settings and outcomes in party order ({', '.join(pn)}).")
    lines.append("Given the hidden variable, the behaviour is a mixture of the responses below with free weights, "
                 "so an event is possible exactly when some response with positive weight produces it.")
    lines.append("")
    s, a = res.event
    n = 1
    lines.append(f"{n}. **Observed** (the pattern): {ev(s, a)} > 0, so some response that produces it has positive weight.")
    fact_step = {}
    for f in res.facts:
        n += 1
        fact_step[f] = n
        lines.append(f"{n}. **Observed** (the pattern): {ev(*f)} = 0, so every response that produces it has weight 0.")
    for x in res.exclusions:
        n += 1
        lines.append(f"{n}. The response {x.response} produces {ev(s, a)} and also {ev(x.settings, x.outcomes)}: "
                     f"weight 0 by step {fact_step[(x.settings, x.outcomes)]}.")
    n += 1
    lines.append(f"{n}. **Contradiction**: the responses of steps {len(res.facts) + 2}–{n - 1} are all the responses "
                 f"that produce {ev(s, a)}, and all have weight 0, against step 1. ∎")
    return "\n".join(lines)
