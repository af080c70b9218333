"""Verdict, smallest proof and checked evidence through the one-assignment reading.

Stage between :mod:`.latent` (the SAT form) and the common result type: the
model of a consistent pattern (the witnesses found, as supports per settings
tuple) and the proof of a contradiction are both handed to the independent
checker before they are returned.
"""

from __future__ import annotations

import time
from typing import Any

from .checker import check_model, check_proof
from .latent import LatentReading, LatentSolver, decide, minimal_facts, smallest
from .latentproof import latent_proof


def decide_latent(theory, spec, pattern, reading: LatentReading, minimise: str, time_limit, solver: str,
                  result_cls):
    t0 = time.monotonic()
    sc = theory.scenario
    ls = LatentSolver(sc, pattern, solver)
    try:
        t_build = time.monotonic() - t0
        v = decide(ls, pattern)
        stats: dict[str, Any] = {"reading": "one assignment per (party, setting)", "joint_booleans": ls.n_vars,
                                 "clauses": ls.n_clauses, "groups": len(pattern.impossible) + len(pattern.possible),
                                 "build_seconds": round(t_build, 3),
                                 "verdict_seconds": round(time.monotonic() - t0, 3)}
        res = result_cls(v.contradiction, reading.label, reading.names, sc.party_names, zero_test=pattern.zero_test)
        if not v.contradiction:
            model: dict = {}
            n = len(sc.parties)
            for s in sc.setting_tuples():
                rows = []
                for lam in v.witnesses:
                    e = tuple(lam[(i, s[i])] for i in range(n)) + tuple(
                        lam[(i, x)] for i, p in enumerate(sc.parties) for x in p.settings)
                    rows.append(e)
                model[s] = sorted(set(rows))
            bad = check_model(theory, spec, pattern, model)
            if bad:
                raise RuntimeError(f"the consistent model failed its independent check: {bad[0]}")
            res.model = model
            res.stats = {**stats, "sat_calls": ls.calls, "seconds": round(time.monotonic() - t0, 3),
                         "witnesses": len(v.witnesses)}
            return res
        witness, facts = v.witness, v.core
        first = facts
        if minimise in ("minimal", "smallest"):
            first = minimal_facts(ls, facts, witness)
            facts = first
        proven, lower = False, 0
        if minimise == "smallest":
            sm = smallest(ls, pattern, type(v)(True, witness, first), time_limit)
            witness, facts, proven, lower = sm.witness, sm.facts, sm.proven, sm.lower_bound
            stats.update({"search_iterations": sm.iterations, "search_seconds": round(sm.seconds, 3),
                          "witness_orbits": sm.orbits, "symmetry_generators": sm.symmetries})
        coords = [ls.impossible[k] for k in facts]
        proof, core = latent_proof(theory, reading, pattern, witness, coords, theory.file or "")
        for st in proof.steps:
            if st.kind == "transfer":
                st.says = theory.assumptions[st.assumption].says
        size = len(facts) + (witness is not None)
        proof.smallest = {"size": size, "proven": proven, "lower_bound": lower if proven is False else size,
                          "searched": minimise == "smallest", "counts": "observed facts"}
        bad = check_proof(theory, spec, pattern, proof)
        if bad:
            raise RuntimeError(f"the proof failed its independent check: {bad[0]}")
        res.proof = proof
        res.core = core
        res.first_core = core if first == facts else []
        stats["first_minimal_size"] = len(first) + (v.witness is not None)
        res.smallest_proven = proven
        res.lower_bound = proof.smallest["lower_bound"]
        res.needed = list(proof.assumptions_used)
        res.facts_size = size
        res.stats = {**stats, "sat_calls": ls.calls, "seconds": round(time.monotonic() - t0, 3)}
        return res
    finally:
        ls.close()
