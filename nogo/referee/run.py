"""Deciding a whole claims file: read, check names, decide each claim in order."""

from __future__ import annotations

import time
from pathlib import Path

from typing import Callable

from ..errors import InputError
from .claims import ClaimsFile, check_names, read_claims
from .evidence import Verdict


def referee(path: str | Path, progress=None, workers: int = 1) -> tuple[ClaimsFile, list[Verdict], float]:
    """Read the claims file, check every name (InputError on a typo), decide every claim."""
    from .decide import Context

    t0 = time.perf_counter()
    cf = read_claims(path)
    ctx = Context(workers)

    def experiment_theory(exp_path: str):
        from ..quantum.experiment import load_experiment

        exp = load_experiment(exp_path)
        return ctx.theory(str(exp.theory_file)) if exp.theory_file else None

    check_names(cf, ctx.theory, experiment_theory)
    verdicts = []
    for i, c in enumerate(cf.claims):
        if progress:
            progress(i, len(cf.claims), c.id)
        verdicts.append(decide_claim(ctx, c))
    return cf, verdicts, time.perf_counter() - t0


def claims_meta(cf: ClaimsFile) -> dict[str, dict]:
    """What the evidence files say of each claim (the manuscript's words, the kind's keys)."""
    import os

    base = str(Path(cf.path).resolve().parent) + os.sep

    def rel(v):
        return v[len(base):] if isinstance(v, str) and v.startswith(base) else v
    return {c.id: {"where": c.where_text, "says": c.says,
                   "params": {k: rel(v) for k, v in c.params.items() if not k.startswith("_")}} for c in cf.claims}


def deciders() -> dict[str, Callable]:
    """Claim kind -> decider (the set, pattern and quantum modules build on the helpers of :mod:`.decide`)."""
    from .decide import decide_implication, decide_minimal, decide_not_needed
    from .patterns import decide_pattern_claim
    from .quantum import QUANTUM
    from .sets import decide_facet, decide_facet_count, decide_sets

    return {"implies": decide_implication, "does_not_imply": decide_implication, "minimal": decide_minimal,
            "not_needed": decide_not_needed, "same_set": decide_sets, "contained_in": decide_sets,
            "not_contained_in": decide_sets, "facet": decide_facet, "facet_count": decide_facet_count,
            "contradiction": decide_pattern_claim, "contradiction_within": decide_pattern_claim, **QUANTUM}


def decide_claim(ctx, claim) -> Verdict:
    """Decide one claim; a claim the declarations cannot give one meaning is ILL-POSED, not an error."""
    t0 = time.perf_counter()
    v = Verdict(claim.id, claim.kind, "NOT DECIDED", "", "")
    if claim.theory:
        v.files["theory"] = claim.theory
    fn = deciders()[claim.kind]
    try:
        fn(ctx, claim, v)
    except InputError as exc:
        v.status, v.summary = "ILL-POSED", exc.message.split(";")[0]
        v.account = f"The claim cannot be given one meaning under the declarations: {exc.message}."
        if exc.hint:
            v.account += f" ({exc.hint}.)"
        v.checks, v.models = [], {}
    except Exception as exc:  # noqa: BLE001 - one claim's failure must not hide the verdicts of the others
        import os

        if os.environ.get("NOGO_DEBUG"):
            raise
        v.status, v.summary = "NOT DECIDED", f"nogo could not decide it ({type(exc).__name__})"
        v.account = (f"Deciding this claim stopped with an internal error ({type(exc).__name__}: {exc}); no verdict "
                     "is given. This is a defect of nogo, not of the claim: please report it (NOGO_DEBUG=1 shows "
                     "where it happened).")
        v.checks, v.models = [], {}
    v.seconds = time.perf_counter() - t0
    return v
