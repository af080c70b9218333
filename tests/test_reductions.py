"""Reductions before the solver: same exact answers, smaller LPs, and broken reductions caught.

Published values (source beside each):
* CHSH local bound 2 — Clauser, Horne, Shimony, Holt, PRL 23, 880 (1969).
* I3322 local bound 0 (Collins–Gisin form) — Collins & Gisin, J. Phys. A 37, 1775 (2004).
* A local hidden-variable model is a distribution over the deterministic
  strategies (4^m of them for two parties with m two-outcome settings) —
  Fine, PRL 48, 291 (1982).
Random scenarios and inequalities below are seeded test inputs, not check values.
"""

from __future__ import annotations

import random
import sys
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from nogo.catalog import load_catalog, resolve_inequality
from nogo.check import decide, recheck
from nogo.compile import compile_bundle
from nogo.errors import InputError
from nogo.exact import check_duals, check_point
from nogo.inequality import Inequality
from nogo.intarith import ExactVector
from nogo.reduce import Reduced, reduce_model
from nogo.theory import load_theory, load_theory_text

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_compile_arrays import _random_theory  # noqa: E402


def _bell(m: int):
    text = (ROOT / "theories" / "bell-2x3.yaml").read_text()
    return load_theory_text(text.replace("settings: [1, 2, 3]", f"settings: [{', '.join(map(str, range(1, m + 1)))}]"),
                            f"bell-2x{m}")


def _answer(model, ineq, reducer):
    try:
        r = decide(model, ineq, reducer=reducer)
    except InputError as exc:
        return ("refused", exc.message)
    assert recheck(model, r) is None
    return (r.verdict, r.maximum)


def _shipped_cases():
    cat = load_catalog()
    for f in sorted((ROOT / "theories").glob("*.yaml")):
        th = load_theory(f)
        for b in th.bundles:
            for name in cat:
                yield f.name, b, name


@pytest.mark.parametrize("theory,bundle,ineq_name", list(_shipped_cases()))
def test_same_verdicts_and_maxima_with_and_without_reductions(theory, bundle, ineq_name):
    th = load_theory(ROOT / "theories" / theory)
    try:
        ineq = resolve_inequality(th.scenario, ineq_name)
    except InputError:
        pytest.skip("inequality is for another scenario")
    try:
        model = compile_bundle(th, bundle)
    except InputError:
        pytest.skip("bundle refused at compile (size guard, or support-only clauses)")
    if model.shape[1] > 5000:
        pytest.skip("large mixture (covered by test_mixture)")
    with_r = _answer(model, ineq, None)
    without = _answer(compile_bundle(th, bundle), ineq, False)
    assert with_r == without


@pytest.mark.parametrize("m", [2, 3, 4, 5])
def test_bell_local_reduces_to_one_distribution_over_deterministic_strategies(m):
    th = _bell(m)
    model = compile_bundle(th, "Bell-local")
    assert model.shape[1] == m * m * 4 ** m  # one copy of the latent joint per settings tuple
    red = reduce_model(model)
    # 2^(2m) latent columns, one row (the weights sum to 1): Fine (1982)
    assert red.model.shape == (1, 2 ** (2 * m))
    r = decide(model, resolve_inequality(th.scenario, "CHSH"))
    assert r.implied and r.maximum == 2  # Clauser, Horne, Shimony, Holt, PRL 23, 880 (1969)
    assert r.solved_shape == (1, 2 ** (2 * m))
    assert any(n.startswith("reduction merge") for n in r.notes)
    assert recheck(model, r) is None
    # the certificate is one of the compiled (unreduced) model: its length and checks say so
    assert len(r.certificate.duals) == model.shape[0]
    assert check_duals(model, model.cost_vector(r.inequality), r.certificate.duals) is None


def test_i3322_local_bound_on_the_reduced_model():
    th = _bell(3)
    model = compile_bundle(th, "Bell-local")
    r = decide(model, resolve_inequality(th.scenario, "I3322"))
    assert r.implied and r.maximum == 0  # Collins & Gisin, J. Phys. A 37, 1775 (2004)
    assert r.solved_shape == (1, 64)
    assert recheck(model, r) is None


def test_not_implied_counterexample_lifts_to_the_unreduced_model():
    th = _bell(2)
    model = compile_bundle(th, "Bell-local")
    chsh = resolve_inequality(th.scenario, "CHSH")
    tight = Inequality(th.scenario, dict(chsh.coeffs), Fraction(1))  # bound 1 < 2: not implied
    r = decide(model, tight)
    assert not r.implied and r.maximum == 2
    assert len(r.counterexample.point) == model.shape[1]
    assert check_point(model, r.counterexample.point) is None
    assert recheck(model, r) is None


@pytest.mark.parametrize("seed", range(30))
def test_random_scenarios_same_maxima_with_and_without_reductions(seed):
    rng = random.Random(1000 + seed)
    th = load_theory_text(_random_theory(rng), f"random-{seed}")
    model = compile_bundle(th, "all")
    coords = th.scenario.coordinates()
    for _ in range(3):
        coeffs = {c: Fraction(rng.randint(-2, 2)) for c in rng.sample(coords, min(6, len(coords)))}
        ineq = Inequality(th.scenario, {k: v for k, v in coeffs.items() if v}, Fraction(0))
        a = _answer(model, ineq, None)
        b = _answer(compile_bundle(th, "all"), ineq, False)
        assert a == b


# -- broken reductions (test doubles) are caught ------------------------------------
class _HalfCost(Reduced):
    """Claims the reduced objective is half the real one: its duals cannot certify the real bound."""

    def reduce_cost(self, cost):
        c = super().reduce_cost(cost)
        return ExactVector(c.num, c.den * 2)


class _ShiftedPoint(Reduced):
    """Lifts the point wrongly: moves weight between two columns of one settings tuple."""

    def lift_point(self, x):
        y = super().lift_point(x)
        num = np.array(y.num, dtype=object)
        nz = [int(j) for j in np.flatnonzero(num)]
        num[nz[0]] -= 1
        num[nz[0] + 1 if nz[0] + 1 not in nz else nz[0] - 1] += 1
        return ExactVector(num, y.den)


def _broken(cls):
    def reducer(model):
        good = reduce_model(model)
        return cls(good.original, good.model, good.steps)
    return reducer


def test_a_broken_cost_map_is_caught_by_the_evidence_check():
    th = _bell(2)
    model = compile_bundle(th, "Bell-local")
    chsh = resolve_inequality(th.scenario, "CHSH")
    red = _broken(_HalfCost)(model)
    from nogo.exact import exact_optimum

    ro = exact_optimum(red.model, red.reduce_cost(model.cost_vector(chsh)))
    assert ro.value == 1  # the broken reduction alone would report 1 as the maximum
    y = red.lift_duals(ro.duals, model.cost_vector(chsh))
    assert check_duals(model, model.cost_vector(chsh), y) is not None
    r = decide(model, chsh, reducer=_broken(_HalfCost))
    assert r.maximum == 2 and r.implied  # the true answer, from the unreduced model
    assert any("failed its exact check on the unreduced model" in n for n in r.notes)
    assert r.solved_shape == model.shape
    assert recheck(model, r) is None


def test_a_broken_point_map_is_caught_by_the_evidence_check():
    th = _bell(2)
    model = compile_bundle(th, "Bell-local")
    chsh = resolve_inequality(th.scenario, "CHSH")
    tight = Inequality(th.scenario, dict(chsh.coeffs), Fraction(1))
    r = decide(model, tight, reducer=_broken(_ShiftedPoint))
    assert any("failed its exact check on the unreduced model" in n for n in r.notes)
    assert not r.implied and r.maximum == 2
    assert recheck(model, r) is None


def test_reductions_are_computed_once_per_model():
    th = _bell(3)
    model = compile_bundle(th, "Bell-local")
    assert reduce_model(model) is reduce_model(model)


def test_marginal_guard_once_per_model_and_inherited_in_a_search():
    # I3322 (Collins & Gisin, J. Phys. A 37, 1775 (2004)) uses marginals: refused below no-signalling.
    from nogo.minimal import ask, find_minimal_sets, split_pool

    th = load_theory(ROOT / "theories" / "friends-2x3.yaml")
    ineq = resolve_inequality(th.scenario, "I3322")
    res = find_minimal_sets(th, ineq, None)
    pool, background, _ = split_pool(th, None)
    # every subset, decided alone (fresh guard, no inheritance), agrees with the search's statuses
    import itertools

    for k in range(len(pool) + 1):
        for sub in itertools.combinations(pool, k):
            a = ask(th, sub, background, ineq)
            got = res.status_of(sub)
            if a.status == "refused":
                assert got in ("refused", "not implied")
            else:
                assert got == a.status
    model = compile_bundle(th, ["agency-A", "agency-B"])
    from nogo.check import marginal_guard

    marginal_guard(model, ineq)
    assert list(model.extra["_guard"].values()) == [None]  # stored with the model


def test_array_models_pickle_and_keep_their_names():
    import pickle

    th = _bell(2)
    model = compile_bundle(th, "Bell-local")
    back = pickle.loads(pickle.dumps(model))
    assert back.shape == model.shape
    assert back.columns[5] == model.columns[5]
    assert back.sources[7].detail == model.sources[7].detail
    r = decide(back, resolve_inequality(th.scenario, "CHSH"))
    assert r.maximum == 2 and recheck(back, r) is None
