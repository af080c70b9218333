"""The array compiler against an independent per-tuple encoding kept here.

The slow encoding below re-derives the semantics of DESIGN.md §3 (present
events, read-out rules as dropped columns, independence as equal marginals
at settings tuples that differ only in the named settings, with the rule of
projection) one outcome tuple at a time, sharing no code with
``nogo.linear`` beyond the parsed theory.  Random scenarios are invented
test inputs (seeded), not check values; the comparison is exact: same
columns, same rows (as sets of named entries) in the same order, same
right-hand sides, same observation map.
"""

from __future__ import annotations

import itertools
import random
from fractions import Fraction

import pytest

from nogo.compile import compile_linear
from nogo.sizes import estimate_linear
from nogo.theory import load_theory_text


def _random_theory(rng: random.Random) -> str:
    n_party = rng.choice([2, 2, 3])
    names = "ABC"[:n_party]
    parties, outs = {}, {}
    lines = ["scenario:", "  parties:"]
    for p in names:
        k = rng.choice([2, 2, 3]) if n_party == 2 else 2
        o = rng.choice([2, 2, 3]) if n_party == 2 else 2
        parties[p] = [str(i + 1) for i in range(k)]
        outs[p] = [f"o{i}" for i in range(o)]
        lines.append(f"    {p}: {{settings: [{', '.join(parties[p])}], outcomes: [{', '.join(outs[p])}]}}")
    inner = []
    lines.append("  inner_observers:")
    for p in names:
        if rng.random() < 0.6:
            name = f"{p}_in"
            at = rng.choice(parties[p])
            rel = list(outs[p])
            rng.shuffle(rel)
            relabel = ", ".join(f"{a}: {b}" for a, b in zip(outs[p], rel))
            lines.append(f"    {name}: {{lab: {p}, outcomes: [{', '.join(outs[p])}], read_out_at: {at}, "
                         f"relabel: {{{relabel}}}}}")
            inner.append(name)
    if not inner:
        lines.pop()
    lines.append("assumptions:")
    members = []
    if inner and rng.random() < 0.8:
        lines += ["  abs:", f"    absolute: [{', '.join(inner)}]"]
        members.append("abs")
    cf = [p for p in names if rng.random() < 0.4]
    if cf:
        lines += ["  cf:", f"    counterfactual: [{', '.join(cf)}]"]
        members.append("cf")
    events = list(names) + inner + [f"{p}@{x}" for p in cf for x in parties[p]]
    for k in range(rng.randint(1, 3)):
        ev = rng.sample(events, rng.randint(1, min(3, len(events))))
        of = rng.sample(list(names), rng.randint(1, n_party - 1))
        evs = ", ".join(f'"{e}"' for e in ev)
        lines += [f"  ind{k}:", f"    independent: {{events: [{evs}], of: [{', '.join(x + '.setting' for x in of)}]}}"]
        members.append(f"ind{k}")
    lines += ["bundles:", f"  all: [{', '.join(members)}]"]
    return "\n".join(lines) + "\n"


def _slow_encoding(theory, bundle):
    """Columns, rows and observation map built one tuple at a time (independent of nogo.linear)."""
    _, assumptions = theory.resolve(bundle)
    sc = theory.scenario
    absolute = {e for a in assumptions for c in a.clauses for e in getattr(c, "events", ())
                if type(c).__name__ == "Absolute"}
    cf = {p for a in assumptions for c in a.clauses if type(c).__name__ == "Counterfactual" for p in c.parties}
    ev = [(p.name, p.outcomes) for p in sc.parties]
    ev += [(o.name, o.outcomes) for o in sc.inner if o.name in absolute]
    ev += [(f"{p.name}@{x}", p.outcomes) for p in sc.parties if p.name in cf for x in p.settings]
    names = [n for n, _ in ev]
    pidx = {p.name: i for i, p in enumerate(sc.parties)}

    def allowed(s, e):
        val = dict(zip(names, e))
        for o in sc.inner:
            if o.name in val and o.read_out_at is not None and s[pidx[o.lab]] == o.read_out_at:
                party = sc.parties[pidx[o.lab]]
                if val[o.lab] != party.outcomes[o.relabel[o.outcomes.index(val[o.name])]]:
                    return False
        for n in names:
            if "@" in n:
                p, x = n.split("@")
                if s[pidx[p]] == x and val[p] != val[n]:
                    return False
        return True

    cols = [(s, e) for s in sc.setting_tuples() for e in itertools.product(*(o for _, o in ev)) if allowed(s, e)]
    rows = []
    for s in sc.setting_tuples():
        rows.append(({c: 1 for c in cols if c[0] == s}, 1))
    for a in assumptions:
        for c in a.clauses:
            if type(c).__name__ != "Independent":
                continue
            kept = [n for n in c.events if n in names]
            if not kept:
                continue
            moved = {pidx[p] for p in c.of}
            ki = [names.index(n) for n in kept]
            for s in sc.setting_tuples():
                base = tuple(sc.parties[i].settings[0] if i in moved else x for i, x in enumerate(s))
                if base == s:
                    continue
                for v in itertools.product(*(ev[i][1] for i in ki)):
                    row = {}
                    for col in cols:
                        if tuple(col[1][i] for i in ki) == v:
                            if col[0] == s:
                                row[col] = row.get(col, 0) + 1
                            elif col[0] == base:
                                row[col] = row.get(col, 0) - 1
                    row = {k: x for k, x in row.items() if x}
                    if row:
                        rows.append((row, 0))
    n_party = len(sc.parties)
    observe = {col: (col[0], col[1][:n_party]) for col in cols}
    return names, cols, rows, observe


@pytest.mark.parametrize("seed", range(40))
def test_array_compiler_matches_the_slow_encoding(seed):
    rng = random.Random(seed)
    th = load_theory_text(_random_theory(rng), f"random-{seed}")
    model = compile_linear(th, "all")
    names, cols, rows, observe = _slow_encoding(th, "all")
    got_cols = [(c.settings, c.values) for c in model.columns]
    assert [c.events for c in model.columns[:1]] == [tuple(names)]
    assert got_cols == cols
    assert model.shape == (len(rows), len(cols))
    for (row, b), mrow, mb in zip(rows, model.rows, model.rhs):
        assert {got_cols[j]: v for j, v in mrow.items()} == {k: Fraction(v) for k, v in row.items()}
        assert mb == b
    coords = th.scenario.coordinates()
    for j, obs in enumerate(model.observe):
        assert {coords[i]: w for i, w in obs.items()} == {observe[cols[j]]: 1}
    size = estimate_linear(th.scenario, th.resolve("all")[1])
    assert size.columns == len(cols)
    assert size.rows >= len(rows)
    assert size.nonzeros >= sum(len(r) for r, _ in rows)
    assert len(model.sources) == len(rows)
    assert all(isinstance(model.sources[i].detail, str) for i in range(len(rows)))


def test_size_estimate_without_building():
    # Bell-local 2 x m: m^2 * 4^m columns (one copy of the latent joint per settings tuple) before reductions
    from pathlib import Path

    text = (Path(__file__).resolve().parent.parent / "theories" / "bell-2x3.yaml").read_text()
    for m in (2, 3, 6, 8):
        th = load_theory_text(text.replace("settings: [1, 2, 3]", f"settings: [{', '.join(map(str, range(1, m + 1)))}]"))
        size = estimate_linear(th.scenario, th.resolve("Bell-local")[1])
        assert size.columns == m * m * 4 ** m
        if m <= 3:
            model = compile_linear(th, "Bell-local")
            assert model.shape[1] == size.columns and model.shape[0] <= size.rows
