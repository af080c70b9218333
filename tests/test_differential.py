"""Differential test: nogo's compiled models against an independent encoding written here.

Seeded random scenarios (two or three parties, two or three settings, two
or three outcomes, inner observers read out through a random relabelling)
and random bundles (absoluteness, independence of random event sets from
random settings, joint existence of counterfactual outcomes) are written as
theory files and decided by nogo (``nogo.theory`` → ``compile_bundle`` →
``decide``, exact).  The same declaration, kept here as plain Python data,
is encoded independently — the encoding below uses neither ``nogo.compile``
nor ``nogo.mixture`` nor nogo's ``Theory`` objects — as a floating-point LP over q(e | s) with the read-out
rules as dropped columns and *every* pair of settings tuples that differ in
the named settings equated (nogo equates each tuple with one hub), solved
with scipy's HiGHS.  The largest value of a random inequality must agree.

Hidden-variable bundles (a hidden variable, free of the settings, with every
present event predetermined as a function of it and of chosen settings; or,
without inner observers, parameter and outcome independence given it) are
checked against brute-force enumeration of the deterministic responses: the
set of mixtures is the convex hull of them (with outcome and parameter
independence by Fine's theorem: A. Fine, PRL 48, 291 (1982)), so the
largest value is the largest over the enumerated responses.

The semantics encoded are those of DESIGN.md §3 (rule of projection,
read-out rules, counterfactual outcomes ``A@x`` read out at setting x).
"""

from __future__ import annotations

import itertools
import random

import numpy as np
import pytest
from scipy.optimize import linprog

from nogo.check import decide
from nogo.compile import compile_bundle as _nogo_compile  # nogo's side only
from nogo.inequality import parse_inequality
from nogo.theory import load_theory_text

OUTCOME_SETS = {2: ["+1", "-1"], 3: ["0", "1", "2"]}


# -- random declarations, as plain data ---------------------------------------------------
def random_scenario(rng: random.Random) -> dict:
    n = rng.choice([2, 2, 2, 3])
    names = ["A", "B", "C"][:n]
    parties = {}
    for p in names:
        k = rng.choice([2, 2, 3]) if n == 2 else 2
        d = rng.choice([2, 2, 2, 3]) if n == 2 else 2
        parties[p] = {"settings": [str(i + 1) for i in range(k)], "outcomes": OUTCOME_SETS[d]}
    inner = {}
    for p in names:
        if rng.random() < 0.5:
            outs = parties[p]["outcomes"]
            if rng.random() < 0.3:  # an observer with more outcomes than the party shows: relabel is many-to-one
                mine = ["u", "v", "w", "z"][:len(outs) + 1]
                shown = outs + [rng.choice(outs)]
            else:
                mine, shown = outs, outs[:]
                rng.shuffle(shown)
            inner[f"{p}_in"] = {"lab": p, "outcomes": mine, "read_out_at": rng.choice(parties[p]["settings"]),
                                "relabel": dict(zip(mine, shown))}
    return {"parties": parties, "inner": inner}


def random_linear_bundle(rng: random.Random, sc: dict) -> list[dict]:
    parties, inner = sc["parties"], sc["inner"]
    clauses: list[dict] = []
    absolute = [o for o in inner if rng.random() < 0.7]
    if absolute:
        clauses.append({"absolute": absolute})
    cf = [p for p in parties if rng.random() < 0.3]
    if cf:
        clauses.append({"counterfactual": cf})
    latent = [f"{p}@{x}" for p in cf for x in parties[p]["settings"]]
    pool = list(parties) + list(inner) + latent  # absent events may be named too: projection drops them
    for _ in range(rng.randint(1, 4)):
        events = rng.sample(pool, rng.randint(1, min(3, len(pool))))
        of = rng.sample(list(parties), rng.randint(1, len(parties) - 1))
        clauses.append({"independent": {"events": events, "of": [f"{p}.setting" for p in of]}})
    return clauses


def random_hidden_bundle(rng: random.Random, sc: dict) -> tuple[list[dict], str]:
    parties, inner = sc["parties"], sc["inner"]
    clauses: list[dict] = [{"hidden": "lam"}, {"independent": {"events": ["lam"], "of": [f"{p}.setting" for p in parties]}}]
    if not inner and rng.random() < 0.4:
        # parameter independence and outcome independence given lam: Fine's theorem
        for p in parties:
            others = [f"{q}.setting" for q in parties if q != p]
            clauses.append({"independent": {"events": [p], "of": others, "given": ["lam"]}})
        clauses.append({"factorise": {"groups": [[p] for p in parties], "given": ["lam"]}})
        return clauses, "fine"
    absolute = [o for o in inner if rng.random() < 0.7]
    if absolute:
        clauses.append({"absolute": absolute})
    pred = []
    for e in list(parties) + absolute:
        lab = e if e in parties else inner[e]["lab"]
        dep = [lab] if rng.random() < 0.7 else rng.sample(list(parties), rng.randint(1, len(parties)))
        if lab not in dep and e in parties:
            dep.append(lab)
        pred.append({"events": [e], "given": ["lam"], "depends_on": [f"{p}.setting" for p in sorted(dep)]})
    clauses.append({"predetermined": pred})
    return clauses, "predetermined"


def theory_text(sc: dict, clauses: list[dict]) -> str:
    def flow(v):
        if isinstance(v, dict):
            return "{" + ", ".join(f"{flow(k)}: {flow(x)}" for k, x in v.items()) + "}"
        if isinstance(v, list):
            return "[" + ", ".join(flow(x) for x in v) + "]"
        return f"'{v}'" if isinstance(v, str) and v[:1] in "+-0123456789" else str(v)

    lines = ["scenario:", "  parties:"]
    for p, spec in sc["parties"].items():
        lines.append(f"    {p}: {flow(spec)}")
    if sc["inner"]:
        lines.append("  inner_observers:")
        for o, spec in sc["inner"].items():
            lines.append(f"    {o}: {flow(spec)}")
    lines.append("assumptions:")
    for i, c in enumerate(clauses):
        (key, val), = c.items()
        lines.append(f"  a{i}:\n    {key}: {flow(val)}")
    lines.append("bundles:")
    lines.append(f"  test: [{', '.join(f'a{i}' for i in range(len(clauses)))}]")
    return "\n".join(lines) + "\n"


def random_inequality(rng: random.Random, sc: dict) -> tuple[dict, str]:
    names = list(sc["parties"])
    coeffs: dict = {}
    settings = list(itertools.product(*(sc["parties"][p]["settings"] for p in names)))
    outcomes = list(itertools.product(*(sc["parties"][p]["outcomes"] for p in names)))
    for s in settings:
        for a in outcomes:
            if rng.random() < 0.4:
                coeffs[(s, a)] = rng.randint(-3, 3)
    coeffs = {k: v for k, v in coeffs.items() if v} or {(settings[0], outcomes[0]): 1}
    text = " ".join(f"{'-' if v < 0 else '+'} {abs(v)} p({' '.join(a)}|{' '.join(s)})"
                    for (s, a), v in coeffs.items()).lstrip("+ ") + " <= 0"
    return coeffs, text


# -- the independent encoding -----------------------------------------------------------
def _variables(sc: dict, clauses: list[dict]) -> list[tuple[str, str, list[str]]]:
    """(name, lab, outcomes) of the present event variables: parties, absolute observers, latent outcomes."""
    parties, inner = sc["parties"], sc["inner"]
    absolute = {e for c in clauses for e in c.get("absolute", [])}
    cf = {p for c in clauses for p in c.get("counterfactual", [])}
    out = [(p, p, parties[p]["outcomes"]) for p in parties]
    out += [(o, inner[o]["lab"], inner[o]["outcomes"]) for o in inner if o in absolute]
    out += [(f"{p}@{x}", p, parties[p]["outcomes"]) for p in parties if p in cf for x in parties[p]["settings"]]
    return out


def _allowed(sc: dict, variables, s: dict, e: dict) -> bool:
    for name, lab, _ in variables:
        if name in sc["inner"]:
            o = sc["inner"][name]
            if s[lab] == o["read_out_at"] and e[lab] != o["relabel"][e[name]]:
                return False
        elif "@" in name:
            x = name.split("@")[1]
            if s[lab] == x and e[lab] != e[name]:
                return False
    return True


def independent_maximum(sc: dict, clauses: list[dict], coeffs: dict) -> float:
    names = list(sc["parties"])
    variables = _variables(sc, clauses)
    vnames = [v[0] for v in variables]
    settings = [dict(zip(names, t)) for t in itertools.product(*(sc["parties"][p]["settings"] for p in names))]
    cols = []
    for si, s in enumerate(settings):
        for vals in itertools.product(*(v[2] for v in variables)):
            e = dict(zip(vnames, vals))
            if _allowed(sc, variables, s, e):
                cols.append((si, e))
    A, b = [], []
    for si in range(len(settings)):
        A.append([1.0 if c[0] == si else 0.0 for c in cols])
        b.append(1.0)
    for c in clauses:
        if "independent" not in c:
            continue
        events = c["independent"]["events"]
        kept = [e for e in events if e in vnames]
        of = [x.split(".")[0] for x in c["independent"]["of"]]
        if not kept:
            continue
        for i, s in enumerate(settings):
            for j, t in enumerate(settings):
                if j <= i or any(s[p] != t[p] for p in names if p not in of):
                    continue
                for vals in itertools.product(*(variables[vnames.index(k)][2] for k in kept)):
                    row = []
                    for ci, e in cols:
                        match = all(e[k] == v for k, v in zip(kept, vals))
                        row.append((1.0 if ci == i and match else 0.0) - (1.0 if ci == j and match else 0.0))
                    if any(row):
                        A.append(row)
                        b.append(0.0)
    cost = []
    for si, e in cols:
        key = (tuple(settings[si][p] for p in names), tuple(e[p] for p in names))
        cost.append(-float(coeffs.get(key, 0)))
    res = linprog(cost, A_eq=np.array(A), b_eq=np.array(b), bounds=(0, None), method="highs")
    assert res.status == 0, res.message
    return -res.fun


def _dependence(sc: dict, clauses: list[dict], kind: str) -> tuple[dict, dict]:
    names = list(sc["parties"])
    if kind == "fine":
        return {p: [p] for p in names}, {p: sc["parties"][p]["outcomes"] for p in names}
    pred = next(c["predetermined"] for c in clauses if "predetermined" in c)
    deps = {d["events"][0]: [x.split(".")[0] for x in d["depends_on"]] for d in pred}
    outcomes = {e: (sc["parties"][e]["outcomes"] if e in sc["parties"] else sc["inner"][e]["outcomes"]) for e in deps}
    return deps, outcomes


def response_count(sc: dict, clauses: list[dict], kind: str) -> int:
    """How many deterministic responses the brute force enumerates (read-out rules not yet applied)."""
    deps, outcomes = _dependence(sc, clauses, kind)
    n = 1
    for e, dep in deps.items():
        n *= len(outcomes[e]) ** int(np.prod([len(sc["parties"][p]["settings"]) for p in dep]))
    return n


def brute_force_maximum(sc: dict, clauses: list[dict], kind: str, coeffs: dict) -> float:
    """Largest value over deterministic responses (the extreme points of the mixture set)."""
    names = list(sc["parties"])
    settings = list(itertools.product(*(sc["parties"][p]["settings"] for p in names)))
    deps, outcomes = _dependence(sc, clauses, kind)
    events = list(deps)
    slots = []  # (event, key of the settings it depends on)
    for e in events:
        idx = [names.index(p) for p in deps[e]]
        for key in dict.fromkeys(tuple(s[i] for i in idx) for s in settings):
            slots.append((e, tuple(idx), key))
    best = -np.inf
    for values in itertools.product(*(outcomes[e] for e, _, _ in slots)):
        f = {(e, key): v for (e, _, key), v in zip(slots, values)}

        def val(e, s):
            idx = [names.index(p) for p in deps[e]]
            return f[(e, tuple(s[i] for i in idx))]

        ok, total = True, 0.0
        for s in settings:
            sd = dict(zip(names, s))
            for o, spec in sc["inner"].items():
                if o in deps and sd[spec["lab"]] == spec["read_out_at"] and val(spec["lab"], s) != spec["relabel"][val(o, s)]:
                    ok = False
                    break
            if not ok:
                break
            total += coeffs.get((s, tuple(val(p, s) for p in names)), 0)
        if ok:
            best = max(best, total)
    return best


# -- the comparison -----------------------------------------------------------------------
def _nogo_maximum(text: str, ineq_text: str):
    th = load_theory_text(text, "random.yaml")
    model = _nogo_compile(th, "test")
    ineq = parse_inequality(th.scenario, ineq_text)
    return decide(model, ineq, guard=False), model


@pytest.mark.parametrize("seed", range(6))
def test_linear_models_agree_with_an_independent_encoding(seed):
    rng = random.Random(1000 + seed)
    n = 0
    while n < 25:
        sc = random_scenario(rng)
        clauses = random_linear_bundle(rng, sc)
        text = theory_text(sc, clauses)
        coeffs, ineq_text = random_inequality(rng, sc)
        variables = _variables(sc, clauses)
        if np.prod([len(v[2]) for v in variables]) * np.prod([len(p["settings"]) for p in sc["parties"].values()]) > 1500:
            continue  # keep the independent LP small
        r, model = _nogo_maximum(text, ineq_text)
        expected = independent_maximum(sc, clauses, coeffs)
        assert abs(float(r.maximum) - expected) < 1e-6, (text, ineq_text, r.maximum, expected)
        n += 1


@pytest.mark.parametrize("seed", range(4))
def test_hidden_variable_models_agree_with_brute_force(seed):
    rng = random.Random(2000 + seed)
    n = 0
    while n < 12:
        sc = random_scenario(rng)
        clauses, kind = random_hidden_bundle(rng, sc)
        text = theory_text(sc, clauses)
        coeffs, ineq_text = random_inequality(rng, sc)
        if response_count(sc, clauses, kind) > 4096:
            continue  # keep the brute force (and the mixture model) small
        r, model = _nogo_maximum(text, ineq_text)
        expected = brute_force_maximum(sc, clauses, kind, coeffs)
        assert model.kind in ("mixture", "linear")
        assert abs(float(r.maximum) - expected) < 1e-9, (text, ineq_text, r.maximum, expected)
        n += 1


def test_the_independent_encoding_can_tell_models_apart():
    """Sanity of the checker itself: CHSH under no-signalling reaches 4, under local determinism 2.

    Popescu & Rohrlich, Found. Phys. 24, 379 (1994); Clauser, Horne, Shimony, Holt, PRL 23, 880 (1969).
    """
    sc = {"parties": {p: {"settings": ["1", "2"], "outcomes": ["+1", "-1"]} for p in "AB"}, "inner": {}}
    coeffs = {}
    for x, y in itertools.product("12", repeat=2):
        sign = -1 if (x, y) == ("2", "2") else 1
        for a, b in itertools.product(["+1", "-1"], repeat=2):
            coeffs[((x, y), (a, b))] = sign * (1 if a == b else -1)
    ns = [{"independent": {"events": ["A"], "of": ["B.setting"]}}, {"independent": {"events": ["B"], "of": ["A.setting"]}}]
    assert abs(independent_maximum(sc, ns, coeffs) - 4) < 1e-9
    hidden, kind = [{"hidden": "lam"}], "fine"
    assert brute_force_maximum(sc, hidden, kind, coeffs) == 2
