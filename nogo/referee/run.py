"""Deciding a whole claims file: read, check names, decide each claim in order."""

from __future__ import annotations

import time
from pathlib import Path

from .claims import ClaimsFile, check_names, read_claims
from .evidence import Verdict


def referee(path: str | Path, progress=None, workers: int = 1) -> tuple[ClaimsFile, list[Verdict], float]:
    """Read the claims file, check every name (InputError on a typo), decide every claim."""
    from .decide import Context, decide_claim

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
