"""Proofs from the one-assignment (Bell-local) reading, in the common step format.

A core (a witness event (a | s0) or normalisation at s0, and impossible
events F) becomes the proof

1. **observed** at every settings tuple t of F: no run at t shows the
   listed outcomes;
2. **transfer** from each t != s0 to s0 by the setting-independence clause:
   the counterfactual outcomes (A@t_A, B@t_B, …) = a never occur at t (at t
   they are the observed outcomes), so they never occur at s0;
3. **contradiction** at s0: every joint assignment at s0 with outcomes a is
   excluded by the statements of steps 1–2 (a case split over the
   counterfactual outcomes the witness leaves open).

Each step is then re-checked by :mod:`nogo.possibilistic.checker`, which
knows nothing of this construction.
"""

from __future__ import annotations

from .encode import Group
from .proof import Proof, Statement, Step


def _case_leaves(names, target: dict, cubes: list[tuple[dict, int]], domain: dict) -> list:
    """Leaves of a case split: (partial assignment, step) pairs that cover *target*."""
    out = []

    def walk(t):
        live = [(c, k) for c, k in cubes if all(t.get(x, v) == v for x, v in c.items())]
        for c, k in live:
            if all(t.get(x) == v for x, v in c.items()):
                out.append((tuple((x, t[x]) for x in names if x in t), k))
                return
        if not live:
            raise AssertionError("a latent proof under construction does not cover a case")
        counts: dict = {}
        for c, _ in live:
            for x in c:
                if x not in t:
                    counts[x] = counts.get(x, 0) + 1
        var = max(sorted(counts), key=lambda x: counts[x])
        for val in domain[var]:
            walk({**t, var: val})

    walk(dict(target))
    return out


def latent_proof(theory, reading, pattern, witness, facts: list[tuple], theory_file: str = "") -> tuple[Proof, list[Group]]:
    """The proof of a core, and the core as named groups (facts, witness, independence instances)."""
    sc = theory.scenario
    pn = sc.party_names
    n = len(pn)
    by_t: dict[tuple, list[tuple]] = {}
    for t, a in facts:
        by_t.setdefault(t, []).append(a)
    if witness is not None:
        s0, a0 = witness
    else:
        s0 = max(sorted(by_t), key=lambda t: len(by_t[t]))
        a0 = ()
    steps: list[Step] = []
    obs_step: dict[tuple, int] = {}
    for t in sorted(by_t):
        k = len(steps) + 1
        obs_step[t] = k
        steps.append(Step(k, "observed", t, [Statement(t, tuple(zip(pn, a))) for a in sorted(by_t[t])]))
    assumption, clause = reading.independence
    groups: list[Group] = []
    cubes: list[tuple[dict, int]] = []  # at s0, over latent names / party names
    for t in sorted(by_t):
        if t == s0:
            for a in by_t[t]:
                cubes.append(({f"{pn[i]}@{s0[i]}": a[i] for i in range(n)}, obs_step[t]))
            continue
        k = len(steps) + 1
        stmts = [Statement(s0, tuple((f"{pn[i]}@{t[i]}", a[i]) for i in range(n))) for a in sorted(by_t[t])]
        cases = [(tuple(zip(pn, a)) + tuple((f"{pn[i]}@{t[i]}", a[i]) for i in range(n)), obs_step[t])
                 for a in sorted(by_t[t])]
        steps.append(Step(k, "transfer", s0, stmts, [obs_step[t]], assumption, clause, "", t, cases=cases))
        for a in by_t[t]:
            cubes.append(({f"{pn[i]}@{t[i]}": a[i] for i in range(n)}, k))
        groups.append(Group(-1, "independent", t, (), s0, assumption, clause, reading.latents, pn))
    domain = {f"{p.name}@{x}": p.outcomes for p in sc.parties for x in p.settings}
    target = {f"{pn[i]}@{s0[i]}": a0[i] for i in range(n)} if a0 else {}
    leaves = _case_leaves(reading.latents, target, cubes, domain)
    uses = sorted({k for _, k in leaves})
    steps.append(Step(len(steps) + 1, "contradiction", s0, [], uses, outcomes=tuple(a0), cases=leaves))
    fact_groups = [Group(-1, "impossible", t, a) for t, a in sorted(facts)]
    if witness is not None:
        fact_groups.append(Group(-1, "possible", s0, a0))
    read_outs = [f"{p} = {p}@{x} when {p}'s setting is {x}" for p in pn for x in sc.party(p).settings]
    proof = Proof(theory_file, reading.label, reading.names, pn, steps, read_outs, pattern.title, pattern.zero_test,
                  (assumption,) + tuple(a for a in reading.assumptions if a != assumption and
                                        any(type(c).__name__ == "Counterfactual"
                                            for c in theory.assumptions[a].clauses)),
                  len(facts) + (witness is not None))
    core = [Group(i, g.kind, g.settings, g.outcomes, g.other, g.assumption, g.clause, g.events, g.of)
            for i, g in enumerate(fact_groups + groups)]
    return proof, core
