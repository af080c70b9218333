"""Structure-held rows and the `fixed` reduction: exact products, exact lifts, broken doubles caught.

Published values (source beside each):
* CHSH local bound 2 — Clauser, Horne, Shimony, Holt, PRL 23, 880 (1969).
* Under no-signalling alone CHSH reaches 4 (the PR box) — Popescu & Rohrlich,
  Found. Phys. 24, 379 (1994).
* A local hidden-variable model is a distribution over the 4^m deterministic
  strategies — Fine, PRL 48, 291 (1982).
Random scenarios, random inequalities and the pinned values 1/6, 1/5 below
are seeded or invented test inputs, not check values: the checks compare
answers with and without reductions, and evidence against the original model.
"""

from __future__ import annotations

import random
import sys
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from nogo.catalog import resolve_inequality
from nogo.check import decide, recheck
from nogo.compile import compile_bundle, compile_linear
from nogo.exact import check_duals, check_point
from nogo.inequality import Inequality
from nogo.intarith import ExactVector, IntCSR, reduced_costs
from nogo.model import LinearModel, ModelArrays, RowSource
from nogo.reduce import FixedStep, Reduced, reduce_model
from nogo.theory import load_theory, load_theory_text

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_compile_arrays import _random_theory  # noqa: E402
from test_reductions import _bell  # noqa: E402 - Bell-local with m settings per party


# -- products from the structure equal those of the built matrix ---------------------
@pytest.mark.parametrize("seed", range(25))
def test_structure_products_equal_the_matrix_products(seed):
    rng = random.Random(500 + seed)
    th = load_theory_text(_random_theory(rng), f"random-{seed}")
    model = compile_linear(th, "all")
    rows = model.arrays.A
    M = rows.matrix()
    assert isinstance(M, IntCSR) and M.shape == rows.shape and M.nnz == rows.nnz
    assert rows.row_abs_bound() >= M.row_abs_bound()
    n, m = rows.shape[1], rows.shape[0]
    for _ in range(3):
        x = np.array([rng.randint(-5, 5) for _ in range(n)], dtype=np.int64)
        y = np.array([rng.randint(-5, 5) for _ in range(m)], dtype=np.int64)
        assert np.array_equal(rows.dot_int64(x), M.dot_int64(x))
        assert np.array_equal(rows.rdot(y), M.rdot(y))
    # and Python-int vectors beyond int64 go through the matrix, still exactly
    big = np.array([3 ** 50] * m, dtype=object)
    assert list(rows.rdot(big)) == list(M.rdot(big))


def test_structure_rows_pickle_and_rebuild():
    import pickle

    model = compile_linear(_bell(2), "Bell-local")
    back = pickle.loads(pickle.dumps(model))
    assert back.arrays.A.shape == model.arrays.A.shape
    assert np.array_equal(back.arrays.A.indptr, model.arrays.A.indptr)  # the matrix, built on demand
    assert back.sources[3].detail == model.sources[3].detail


@pytest.mark.parametrize("m", [2, 3, 4])
def test_bell_local_is_decided_without_building_the_matrix(m):
    th = _bell(m)
    model = compile_bundle(th, "Bell-local")
    r = decide(model, resolve_inequality(th.scenario, "CHSH"))
    assert r.implied and r.maximum == 2  # Clauser, Horne, Shimony, Holt (1969)
    assert recheck(model, r) is None
    assert model.arrays.A._csr is None  # evidence checked on the compiled rows, from their structure
    # the same certificate holds against the matrix itself
    M = model.arrays.A.matrix()
    plain = LinearModel(model.scenario, model.label, model.assumptions, model.columns, None, None, model.sources,
                        None, arrays=ModelArrays(M, np.asarray(model.arrays.row_den), model.arrays.rhs_num,
                                                 np.asarray(model.arrays.rhs_den), model.arrays.O, 1))
    cost = plain.cost_vector(r.inequality)
    assert check_duals(plain, cost, r.certificate.duals) is None


def test_structural_merge_equals_the_scanned_merge():
    th = _bell(3)
    model = compile_bundle(th, "Bell-local")
    a = model.arrays
    plain = LinearModel(model.scenario, model.label, model.assumptions, model.columns, None, None, model.sources,
                        None, arrays=ModelArrays(a.A.matrix(), np.asarray(a.row_den), a.rhs_num,
                                                 np.asarray(a.rhs_den), a.O, 1))
    r1, r2 = reduce_model(model), reduce_model(plain)
    assert r1.model.shape == r2.model.shape == (1, 64)  # Fine (1982): 4^3 strategies, one row
    s1, s2 = r1.steps[0], r2.steps[0]
    assert np.array_equal(s1.cls, s2.cls)
    assert np.array_equal(s1.kept_rows, s2.kept_rows)


# -- the `fixed` reduction -----------------------------------------------------------
def _pinned(values=(Fraction(1, 6), Fraction(1, 5))):
    """Bell 2x2 no-signalling with two joint entries pinned by rows of one entry (2·q0 = 1/3, q5 = 1/5)."""
    th = load_theory(ROOT / "theories" / "bell-2x2.yaml")
    base = compile_bundle(th, "no-signalling")
    rows = list(base.rows) + [{0: Fraction(2)}, {5: Fraction(1)}]
    rhs = list(base.rhs) + [2 * values[0], values[1]]
    src = list(base.sources) + [RowSource("pin", "pin", 0, (), "2 q0 = 1/3"),
                                RowSource("pin", "pin", 0, (), "q5 = 1/5")]
    return th, LinearModel(base.scenario, "pinned", ("no-signalling", "pin"), list(base.columns), rows, rhs, src,
                           list(base.observe), [])


def test_fixed_columns_leave_the_model_and_answers_stay_exact():
    th, model = _pinned()
    red = reduce_model(model)
    assert any(isinstance(st, FixedStep) for st in red.steps)
    assert red.model.shape[1] == model.shape[1] - 2
    rng = random.Random(7)
    coords = th.scenario.coordinates()
    ineqs = [resolve_inequality(th.scenario, "CHSH")]
    for _ in range(6):
        coeffs = {c: Fraction(rng.randint(-3, 3)) for c in rng.sample(coords, 8)}
        ineqs.append(Inequality(th.scenario, {k: v for k, v in coeffs.items() if v}, Fraction(rng.randint(-1, 1))))
    for ineq in ineqs:
        r = decide(model, ineq)
        plain = decide(_pinned()[1], ineq, reducer=False)
        assert (r.verdict, r.maximum) == (plain.verdict, plain.maximum)
        assert any(t.startswith("fixed:") for t in r.reductions)
        assert any(n.startswith("reduction fixed") for n in r.notes)
        assert not any("failed its exact check" in n for n in r.notes)
        assert recheck(model, r) is None
        if r.implied:
            assert len(r.certificate.duals) == model.shape[0]
        else:
            x = r.counterexample.point
            assert x[0] == Fraction(1, 6) and x[5] == Fraction(1, 5)


def test_fixed_dual_lift_makes_fixed_reduced_costs_zero():
    th, model = _pinned()
    red = reduce_model(model)
    st = next(s for s in red.steps if isinstance(s, FixedStep))
    cost = model.cost_vector(resolve_inequality(th.scenario, "CHSH"))
    from nogo.exact import exact_optimum

    c_after = red.reduce_cost(cost)
    ro = exact_optimum(red.model, c_after)
    y = red.lift_duals(ro.duals, cost)
    R, _ = reduced_costs(model.arrays, None, cost, y)
    assert all(R[j] == 0 for j in st.fixed_cols.tolist())
    assert check_duals(model, cost, y) is None
    assert check_point(model, red.lift_point(ro.point)) is None


class _WrongValues(Reduced):
    """Lifts the fixed columns to wrong values (as a buggy step would)."""

    def lift_point(self, x):
        y = super().lift_point(x)
        num = np.array(y.num, dtype=object)
        num[0] += 1
        return ExactVector(num, y.den)


def test_wrong_fixed_values_are_caught_by_the_evidence_check():
    th, model = _pinned()
    chsh = resolve_inequality(th.scenario, "CHSH")
    tight = Inequality(th.scenario, dict(chsh.coeffs), Fraction(-4))  # not implied: a counterexample is needed

    def reducer(mod):
        good = reduce_model(mod)
        return _WrongValues(good.original, good.model, good.steps)

    r = decide(model, tight, reducer=reducer)
    assert any("failed its exact check on the unreduced model" in n for n in r.notes)
    assert not r.implied and recheck(model, r) is None


def test_negative_fixed_value_is_left_for_the_solver():
    # 2·q0 = −1/3 has no non-negative solution: the step does not hide that, the model is reported empty
    from nogo.errors import InputError

    th, model = _pinned((Fraction(-1, 6), Fraction(1, 5)))
    red = reduce_model(model)
    st = [s for s in red.steps if isinstance(s, FixedStep)]
    assert all(0 not in s.fixed_cols.tolist() for s in st)
    with pytest.raises(InputError, match="admits no behaviour"):
        decide(model, resolve_inequality(th.scenario, "CHSH"))


# -- the marginal guard's witness ------------------------------------------------------
def test_guard_refusal_from_a_point_agrees_with_the_full_guard():
    # I3322 in Collins–Gisin form (Collins & Gisin, J. Phys. A 37, 1775 (2004)) uses marginals; every subset of
    # the friends-2x3 pool: the guard told the decision's exact point refuses exactly when the full guard does
    import itertools

    from nogo.check import marginal_guard, signalling_witness
    from nogo.errors import InputError
    from nogo.minimal import split_pool

    th = load_theory(ROOT / "theories" / "friends-2x3.yaml")
    ineq = resolve_inequality(th.scenario, "I3322")
    pool, background, _ = split_pool(th, None)
    seen = set()
    for k in range(len(pool) + 1):
        for sub in itertools.combinations(pool, k):
            names = list(sub) + list(background)
            answers = []
            for use_point in (False, True):
                model = compile_bundle(th, names)
                try:
                    r = decide(model, ineq, guard=False)
                except InputError:
                    break  # no behaviour at all: nothing to witness
                try:
                    marginal_guard(model, ineq, r.point if use_point else None)
                    answers.append("pass")
                except InputError as exc:
                    answers.append("refused: " + exc.message.split("'")[2][:40])
                if use_point and signalling_witness(model, ineq, r.point) is not None:
                    assert answers[-1].startswith("refused")  # a witness is never overruled
            if len(answers) == 2:
                assert answers[0].split(":")[0] == answers[1].split(":")[0], sub
                seen.add(answers[0].split(":")[0])
    assert seen == {"pass", "refused"}  # both kinds occur, so the comparison is not vacuous


def test_guard_from_clause_rows_agrees_with_the_general_span_test(monkeypatch):
    # the rows of one clause (agency: A independent of B's setting) give the no-signalling combination directly;
    # every subset of the friends-2x3 pool gets the same guard answer with that shortcut and without it
    import itertools

    import nogo.check as chk
    from nogo.errors import InputError
    from nogo.minimal import split_pool

    th = load_theory(ROOT / "theories" / "friends-2x3.yaml")
    ineq = resolve_inequality(th.scenario, "I3322")  # Collins & Gisin, J. Phys. A 37, 1775 (2004)
    pool, background, _ = split_pool(th, None)
    key = tuple(sorted({m.parties for m in ineq.marginals}))
    probes = chk.marginal_probes(th.scenario, key)
    shown = 0

    def answer(names):
        model = compile_bundle(th, names)
        try:
            chk.marginal_guard(model, ineq)
            return "pass"
        except InputError:
            return "refused"

    real = chk._span_from_blocks
    for k in range(len(pool) + 1):
        for sub in itertools.combinations(pool, k):
            names = list(sub) + list(background)
            model = compile_bundle(th, names)
            shown += sum(real(model, probes, [model.cost_vector(p) for _, p in probes]))
            with_blocks = answer(names)
            monkeypatch.setattr(chk, "_span_from_blocks", lambda m, p, c: [False] * len(p))
            without = answer(names)
            monkeypatch.setattr(chk, "_span_from_blocks", real)
            assert with_blocks == without, sub
    assert shown > 0  # the shortcut did show probes (the comparison is not vacuous)
