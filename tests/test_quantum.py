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
