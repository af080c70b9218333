"""The quantum side: Born-rule behaviours, inner observers, violations,
noise thresholds, optimised settings and NPA bounds, against published values."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import sympy

from nogo.catalog import resolve_inequality
from nogo.errors import InputError
from nogo.quantum import behaviour, exact_behaviour, explicit_behaviour, load_experiment, load_experiment_text

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples" / "experiments"


def exact_value(ineq, exact_b):
    return sympy.simplify(sum(sympy.Rational(c.numerator, c.denominator) * exact_b[k] for k, c in ineq.coeffs.items()))


# -- Born rule -------------------------------------------------------------------
def test_chsh_maximally_entangled_reaches_tsirelson():
    # Tsirelson, Lett. Math. Phys. 4, 93 (1980): the quantum maximum of CHSH is 2*sqrt(2),
    # reached by the maximally entangled pair with A in {Z, X}, B at +-45 degrees.
    exp = load_experiment(EXAMPLES / "larch-birch-chsh.yaml")
    chsh = resolve_inequality(exp.scenario, "CHSH")
    assert exact_value(chsh, exact_behaviour(exp)) == 2 * sympy.sqrt(2)
    assert abs(float(chsh.value({k: v for k, v in behaviour(exp).items()})) - 2 * np.sqrt(2)) < 1e-12


def test_mermin_on_ghz_is_four():
    # Mermin, PRL 65, 1838 (1990): the GHZ state with X (setting 1) and Y (setting 2) gives 4.
    exp = load_experiment(EXAMPLES / "three-huts-ghz.yaml")
    mermin = resolve_inequality(exp.scenario, "Mermin")
    assert exact_value(mermin, exact_behaviour(exp)) == 4


def _random_experiment(theory, rng, dims=(2, 2)):
    from scipy.stats import unitary_group

    from nogo.quantum.experiment import Experiment
    from nogo.quantum.measurements import from_unitary
    from nogo.quantum.states import from_numpy

    sc = theory.scenario
    D = int(np.prod(dims))
    G = rng.normal(size=(D, D)) + 1j * rng.normal(size=(D, D))
    rho = G @ G.conj().T
    st = from_numpy(rho / np.trace(rho), dims)
    meas = {}
    for i, p in enumerate(sc.parties):
        for x in p.settings:
            if any(o.lab == p.name and o.read_out_at == x for o in sc.inner):
                continue
            k = len(p.outcomes)
            meas[(p.name, x)] = from_unitary(unitary_group.rvs(dims[i], random_state=rng),
                                             [list(range(g, dims[i], k)) for g in range(k)])
    inner = {}
    for o in sc.inner:
        i = sc.party_index(o.lab)
        k = len(o.outcomes)
        inner[o.name] = from_unitary(unitary_group.rvs(dims[i], random_state=rng),
                                     [list(range(g, dims[i], k)) for g in range(k)])
    exp = Experiment(sc, st, meas, inner)
    exp.check()
    return exp


@pytest.mark.parametrize("seed", range(5))
def test_explicit_inner_observer_equals_effective(theory, seed):
    # The register model (record unitary, read memory or undo) must give the
    # effective behaviour: a consistency check of the two models (common practice).
    rng = np.random.default_rng(seed)
    exp = _random_experiment(theory("friends-2x3"), rng)
    eff, expl = behaviour(exp), explicit_behaviour(exp)
    assert max(abs(eff[k] - expl[k]) for k in eff) < 1e-12
    # the inner observers matter: their basis changes the read-out columns
    assert sum(eff.values()) == pytest.approx(9.0)


def test_explicit_with_two_observers_in_one_lab_and_relabelling(rng_seed=7):
    # A lab with two inner observers (read out at different settings) and a relabelled read-out.
    from nogo.theory import load_theory_text

    th = load_theory_text("""
scenario:
  parties:
    A: {settings: [1, 2, 3], outcomes: [+1, -1]}
    B: {settings: [1, 2], outcomes: [+1, -1]}
  inner_observers:
    F: {lab: A, outcomes: [+1, -1], read_out_at: 1, relabel: {+1: -1, -1: +1}}
    G: {lab: A, outcomes: [+1, -1], read_out_at: 2}
assumptions: {}
bundles: {}
""")
    rng = np.random.default_rng(rng_seed)
    exp = _random_experiment(th, rng, dims=(4, 2))
    eff, expl = behaviour(exp), explicit_behaviour(exp)
    assert max(abs(eff[k] - expl[k]) for k in eff) < 1e-12


# -- input checks ------------------------------------------------------------------
BAD = {
    "not normalised density": ("state: {density: [[1, 0, 0, 0], [0, 0, 0, 0], [0, 0, 0, 0], [0, 0, 0, 1]]}", "trace"),
    "not positive": ("state: {density: [[1.5, 0, 0, 0], [0, -0.5, 0, 0], [0, 0, 0, 0], [0, 0, 0, 0]]}", "not positive"),
    "mixture weights": ("state: {mix: [{weight: 0.5, state: singlet}, {weight: 0.6, state: white}]}", "add up"),
    "bad number": ("state: {vector: [1, 0, 0, foo]}", "unknown name"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_states_are_clear_input_errors(theory, case):
    text, words = BAD[case]
    with pytest.raises(InputError, match=words) as err:
        load_experiment_text(text + "\nmeasurements: {A: {1: Z, 2: X}, B: {1: Z, 2: X}}\n", theory("bell-2x2"))
    assert err.value.where.line == 1


def test_bad_measurements_are_clear_input_errors(theory):
    th = theory("bell-2x2")
    with pytest.raises(InputError, match="not complete|not a projector"):
        load_experiment_text("state: singlet\nmeasurements:\n  A: {1: Z, 2: {projectors: [[[1, 0], [0, 0]], "
                             "[[1, 0], [0, 0]]]}}\n  B: {1: Z, 2: X}\n", th)
    with pytest.raises(InputError, match="no measurement for B at setting 2"):
        load_experiment_text("state: singlet\nmeasurements: {A: {1: Z, 2: X}, B: {1: Z}}\n", th)
    with pytest.raises(InputError, match="norm"):
        load_experiment_text("state: singlet\nmeasurements: {A: {1: Z, 2: {basis: [[1, 1], [1, -1]]}}, "
                             "B: {1: Z, 2: X}}\n", th)
    th2 = theory("friends-2x3")
    with pytest.raises(InputError, match="reads out inner observer A_in"):
        load_experiment_text("state: singlet\nmeasurements: {A: {1: Z, 2: X, 3: X}, B: {2: X, 3: Z}}\n"
                             "inner_observers: {A_in: Z, B_in: Z}\n", th2)


# -- noise thresholds -------------------------------------------------------------
def test_critical_visibility_of_singlet_is_one_over_sqrt2(theory):
    # Standard result (from memory): the singlet with CHSH-optimal settings leaves the
    # Bell-local set below visibility 1/sqrt(2) against white noise.
    from nogo.check import recheck
    from nogo.compile import compile_bundle
    from nogo.quantum.visibility import robustness

    th = theory("bell-2x2")
    exp = load_experiment_text("state: singlet\nmeasurements:\n  A: {1: Z, 2: X}\n"
                               "  B: {1: {bloch: [5*pi/4]}, 2: {bloch: [3*pi/4]}}\n", th)
    model = compile_bundle(th, "Bell-local")
    r = robustness(model, exp)
    assert r.inside is False
    assert r.visibility == pytest.approx(1 / np.sqrt(2), abs=1e-8)
    sep = r.separation
    assert sep.check.implied and recheck(model, sep.check) is None  # valid for Bell-local, exact Farkas
    # certified: above 1/sqrt(2) the mixture violates the certified inequality
    assert sep.visibility_bound.upper() < 1 / np.sqrt(2) + 1e-9
    assert sep.visibility_bound.lower() > 1 / np.sqrt(2) - 1e-12
    # inside the no-signalling set (Popescu & Rohrlich 1994: quantum behaviours do not signal)
    assert robustness(compile_bundle(th, "no-signalling"), exp).inside is True


def test_sweep_and_plot(tmp_path, theory):
    from nogo.compile import compile_bundle
    from nogo.quantum.visibility import plot_sweep, sweep

    th = theory("bell-2x2")
    exp = load_experiment(EXAMPLES / "larch-birch-chsh.yaml")
    chsh = resolve_inequality(th.scenario, "CHSH")
    data = sweep(compile_bundle(th, "Bell-local"), exp, [chsh], steps=11)
    # membership flips once, between 0.7 and 0.8 (1/sqrt(2) ~ 0.7071)
    assert data["inside"][:8] == [True] * 8 and data["inside"][8:] == [False] * 3
    out = tmp_path / "sweep.png"
    plot_sweep(data, str(out), critical=0.7071)
    assert out.stat().st_size > 1000


# -- NPA ----------------------------------------------------------------------------
def test_npa_level1_chsh_is_tsirelson(theory):
    # Navascués, Pironio, Acín, PRL 98, 010401 (2007): level 1 already gives 2*sqrt(2) for CHSH.
    from nogo.quantum.npa import npa_bound

    chsh = resolve_inequality(theory("bell-2x2").scenario, "CHSH")
    b = npa_bound(chsh, "1")
    assert b.value == pytest.approx(2 * np.sqrt(2), abs=1e-6)
    # the certified bound is rigorous, so it cannot lie below the attained 2*sqrt(2)
    assert 2 * sympy.sqrt(2) <= sympy.Rational(b.certified.numerator, b.certified.denominator) < 2 * np.sqrt(2) + 1e-6


@pytest.mark.parametrize("level, value", [("1", 0.375), ("1+AB", 0.2515), ("2", 0.2509)])
def test_npa_i3322_levels(theory, level, value):
    # I3322 (Collins & Gisin, J. Phys. A 37, 1775 (2004)); level values computed independently
    # with cvxpy and two conic solvers (agreeing to 1e-6); higher levels approach ~0.250875 (from memory).
    from nogo.quantum.npa import npa_bound

    i3322 = resolve_inequality(theory("bell-2x3").scenario, "I3322")
    b = npa_bound(i3322, level)
    assert b.value == pytest.approx(value, abs=2e-4)
    assert b.value - 1e-6 <= float(b.certified) <= b.value + 1e-5
    assert float(b.certified) >= 0.25  # a valid bound stays above the qubit value 1/4


def test_npa_mermin_needs_three_party_moments(theory):
    # Mermin, PRL 65, 1838 (1990): quantum maximum 4 (GHZ); level 1 lacks <ABC>.
    from nogo.quantum.npa import npa_bound

    mermin = resolve_inequality(theory("bell-3x2").scenario, "Mermin")
    with pytest.raises(InputError, match="higher level"):
        npa_bound(mermin, "1")
    assert npa_bound(mermin, "1+AB").value == pytest.approx(4, abs=1e-5)


# -- optimisation ---------------------------------------------------------------------
def test_i3322_qubit_optimum_is_one_quarter(theory):
    # Collins & Gisin, J. Phys. A 37, 1775 (2004): two qubits reach I3322 = 1/4.
    from nogo.quantum.certify import evaluate
    from nogo.quantum.npa import npa_bound
    from nogo.quantum.optimise import optimise

    th = theory("bell-2x3")
    exp = load_experiment_text("state: singlet\nmeasurements: {A: {1: Z, 2: X, 3: Y}, B: {1: Z, 2: X, 3: Y}}\n", th)
    i3322 = resolve_inequality(th.scenario, "I3322")
    opt = optimise(exp, i3322, starts=4, seed=2, over_state=True)
    assert opt.value == pytest.approx(0.25, abs=1e-6)
    v, = evaluate(opt.experiment, [i3322])
    assert v.verdict == "violated"  # certified by interval arithmetic, not by the float
    again = optimise(exp, i3322, starts=4, seed=2, over_state=True)
    assert again.value == opt.value  # reproducible with a seed
    gap = npa_bound(i3322, "2").value - opt.value
    assert 0 < gap < 1e-3


def test_hardy_paradox_maximum(theory):
    # Hardy, PRL 71, 1665 (1993): the largest probability of the paradoxical event is
    # (5*sqrt(5) - 11)/2 ~ 0.0902, found here over two-qubit states and settings with the
    # three Hardy zeros imposed.
    from nogo.inequality import parse_inequality
    from nogo.quantum.optimise import optimise

    th = theory("bell-2x2")
    exp = load_experiment_text("state: singlet\nmeasurements: {A: {1: Z, 2: X}, B: {1: Z, 2: X}}\n", th)
    event = parse_inequality(th.scenario, "p(+1 +1|1 1) <= 0")
    zeros = [(("1", "2"), ("+1", "-1")), (("2", "1"), ("-1", "+1")), (("2", "2"), ("+1", "+1"))]
    opt = optimise(exp, event, starts=6, seed=3, over_state=True, zeros=zeros)
    assert opt.value == pytest.approx((5 * np.sqrt(5) - 11) / 2, abs=1e-6)
    p = behaviour(opt.experiment)
    assert max(p[z] for z in zeros) < 1e-9


# -- local friendliness ----------------------------------------------------------------
@pytest.mark.slow  # about 45 s: derives the 932-facet polytope
def test_genuine_local_friendliness_facet_is_violated(theory):
    # K.-W. Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607: quantum theory
    # violates local-friendliness inequalities that are not Bell inequalities.  One facet of
    # the LF polytope (derived exactly by nogo.polytope) that is no facet of the Bell-local
    # polytope is picked (the first in canonical order); the optimiser is aimed at it alone.
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_polytope
    from nogo.quantum.certify import evaluate
    from nogo.quantum.optimise import optimise
    from nogo.quantum.visibility import robustness

    th = theory("friends-2x3")
    lf = derive_polytope(compile_bundle(th, "local-friendliness"))
    bell = derive_polytope(compile_bundle(th, "Bell-local"))
    assert lf.status == bell.status == "complete"
    bell_facets = {bell.inequality(f).canonical() for f in bell.facets}
    genuine = sorted((lf.inequality(f, "LF facet") for f in lf.facets if f.verified),
                     key=lambda q: q.canonical())
    genuine = [q for q in genuine if q.canonical() not in bell_facets]
    assert genuine
    target = genuine[0]
    exp = load_experiment_text("state: singlet\nmeasurements: {A: {2: X, 3: Y}, B: {2: X, 3: Y}}\n"
                               "inner_observers: {A_in: Z, B_in: Z}\n", th)
    opt = optimise(exp, target, starts=4, seed=1, over_state=True)
    v, = evaluate(opt.experiment, [target])
    assert v.verdict == "violated" and v.excess > 0.1
    r = robustness(compile_bundle(th, "local-friendliness"), opt.experiment)
    assert r.inside is False and r.separation is not None and r.separation.margin > 0


def test_quantum_command(capsys):
    # End to end: CHSH violated (certified) and Bell-local left with a certified separating inequality.
    from nogo.cli import main

    rc = main(["quantum", str(EXAMPLES / "larch-birch-chsh.yaml"), "-i", "CHSH", "-b", "Bell-local"])
    out = capsys.readouterr().out
    assert rc == 0
    assert "CHSH" in out and "VIOLATED" in out and "2*sqrt(2)" in out
    assert "OUTSIDE" in out and "Farkas" in out
    rc = main(["quantum", str(EXAMPLES / "larch-birch-chsh.yaml"), "-b", "Bell-locale"])
    assert rc == 2 and "did you mean" in capsys.readouterr().err
