"""Quantum behaviours of nested observers and of observers with choices of their own
(nogo/quantum/labs.py, registers.py), against the outside world and against each other."""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
import sympy

from nogo.catalog import resolve_inequality
from nogo.errors import InputError
from nogo.quantum import behaviour, exact_behaviour, load_experiment, load_experiment_text
from nogo.quantum.registers import register_behaviour
from nogo.theory import load_theory_text

ROOT = Path(__file__).resolve().parent.parent
CHOICE_EXP = ROOT / "examples" / "experiments" / "friends-q-choice.yaml"
TSIRELSON_CH = (1 + sympy.sqrt(2)) / 2  # CHSH's 2*sqrt(2) in Clauser–Horne (probability) form, bound 1


def exact_value(ineq, eb):
    return sympy.radsimp(sympy.simplify(sum(sympy.Rational(c.numerator, c.denominator) * eb[k]
                                            for k, c in ineq.coeffs.items())))


def _choice(theory, text):
    return load_experiment_text(text, theory("friends-2x2-choice"))


# -- one friend read out at one setting: the two-party values -----------------------------
def test_friend_read_out_at_one_setting_reproduces_the_bell_behaviour(theory):
    # Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607: at the read-out setting the
    # super-observer reports the friend's record, so the friend's measurement plays that setting.
    # The behaviour equals the two-party one exactly, and CHSH reaches Tsirelson's 2*sqrt(2)
    # (B. S. Cirel'son, Lett. Math. Phys. 4, 93 (1980)).
    from nogo.quantum.npa import npa_bound

    friends = load_experiment_text("state: singlet\nmeasurements: {A: {2: X}, B: {2: {bloch: -pi/4}}}\n"
                                   "inner_observers: {A_in: Z, B_in: {bloch: pi/4}}\n", theory("friends-2x2"))
    bell = load_experiment_text("state: singlet\nmeasurements: {A: {1: Z, 2: X}, "
                                "B: {1: {bloch: pi/4}, 2: {bloch: -pi/4}}}\n", theory("bell-2x2"))
    ef, eb = exact_behaviour(friends), exact_behaviour(bell)
    assert list(ef) == list(eb) and all(sympy.simplify(ef[k] - eb[k]) == 0 for k in ef)
    chsh = resolve_inequality(friends.scenario, "CHSH")
    assert abs(exact_value(chsh, ef)) == 2 * sympy.sqrt(2)
    b = npa_bound(chsh, "1")  # rigorous: no quantum value exceeds the certified rational
    assert b.certified is not None and 2 * np.sqrt(2) <= float(b.certified) < 2 * np.sqrt(2) + 1e-6


# -- the lab model: the effective form equals the register model ---------------------------
def _random(theory_text_or_th, rng, spec):
    """An experiment with random qubit measurements (Bloch angles) on a random pure state."""
    th = theory_text_or_th
    sc = th.scenario
    angle = lambda: f"{{bloch: [{rng.uniform(0, np.pi):.6f}, {rng.uniform(-np.pi, np.pi):.6f}]}}"  # noqa: E731
    amps = rng.normal(size=2 ** len(sc.labs)) + 1j * rng.normal(size=2 ** len(sc.labs))
    amps /= np.linalg.norm(amps)
    vec = ", ".join(f"'{z.real:.6f} + {z.imag:.6f}*i'" for z in amps)
    meas = {p: "{" + ", ".join(f"{x}: {angle()}" for x in xs) + "}" for p, xs in spec["parties"].items()}
    inner = {o: (angle() if xs is None else "{" + ", ".join(f"{x}: {angle()}" for x in xs) + "}")
             for o, xs in spec["inner"].items()}
    text = (f"state: {{vector: [{vec}]}}\nmeasurements: {{{', '.join(f'{k}: {v}' for k, v in meas.items())}}}\n"
            f"inner_observers: {{{', '.join(f'{k}: {v}' for k, v in inner.items())}}}\n")
    return load_experiment_text(text, th)


DEPHASED = """
scenario:
  parties:
    A: {settings: [1, 2], outcomes: [+1, -1]}
    B: {settings: [1, 2], outcomes: [+1, -1]}
  inner_observers:
    A_f: {lab: A, settings: [1, 2, 3], outcomes: [+1, -1], read_out_at: 1, relabel: {+1: -1, -1: +1}}
    A_g: {lab: A_f, outcomes: [0, 1], read_out_at: 1, relabel: {0: -1, 1: +1}}
    A_h: {lab: A_f, outcomes: [+1, -1], read_out_at: 2}
    B_in: {lab: B, outcomes: [+1, -1], read_out_at: 2}
"""


@pytest.mark.parametrize("case, seed", [("choice", 0), ("choice", 1), ("nested", 2), ("dephased", 3),
                                        ("dephased", 4)])
def test_register_model_equals_effective_form(theory, case, seed):
    # The definition in nogo/quantum/labs.py run literally (memories, record and copy unitaries,
    # undoing; Bong et al. 2020) against the effective POVMs: relabelled chains, own choices, and an
    # observer (A_h) that measures after a sibling (A_g) that is not undone (dephasing).
    rng = np.random.default_rng(seed)
    if case == "choice":
        exp = _random(theory("friends-2x2-choice"), rng,
                      {"parties": {"A": ["2"], "B": ["2"]}, "inner": {"A_g": None, "A_f": ["2"], "B_in": None}})
    elif case == "nested":
        exp = _random(theory("friends-2x3-nested"), rng,
                      {"parties": {"A": ["2", "3"], "B": ["2", "3"]}, "inner": {"A_deep": None, "B_in": None}})
    else:
        exp = _random(load_theory_text(DEPHASED), rng,
                      {"parties": {"A": ["2"], "B": ["1"]}, "inner": {"A_f": ["3"], "A_g": None, "A_h": None,
                                                                       "B_in": None}})
        assert any(r.before == ("A_g",) for r in exp.plan.labs[0].readings)
    p, q = behaviour(exp), register_behaviour(exp)
    assert max(abs(p[k] - q[k]) for k in p) < 1e-10
    assert abs(sum(p.values()) - len(exp.scenario.setting_tuples())) < 1e-10


def test_a_chain_read_out_always_equals_the_unnested_friend(theory):
    # friends-2x3-nested.yaml: A_out reads A_deep in every run, so A at setting 1 reports A_deep's
    # record; the quantum behaviour is that of friends-2x3.yaml with A_in measuring as A_deep,
    # exactly (and the 932-facet LF polytopes agree: tests/test_nested.py; Bong et al. 2020).
    common = "state: singlet\nmeasurements: {A: {2: X, 3: {bloch: pi/3}}, B: {2: {bloch: pi/4}, 3: Y}}\n"
    nested = load_experiment_text(common + "inner_observers: {A_deep: Z, B_in: {bloch: -pi/4}}\n",
                                  theory("friends-2x3-nested"))
    flat = load_experiment_text(common + "inner_observers: {A_in: Z, B_in: {bloch: -pi/4}}\n", theory("friends-2x3"))
    en, ef = exact_behaviour(nested), exact_behaviour(flat)
    assert list(en) == list(ef) and all(sympy.simplify(en[k] - ef[k]) == 0 for k in en)
    assert nested.plan.labs[0].readings[0].chain == ("A_deep", "A_out")


# -- a friend with a choice of its own ----------------------------------------------------
def _marginal(eb, s, keep, value):
    """Exact marginal of the parties at positions *keep* taking *value*, at settings s."""
    return sum(v for (t, a), v in eb.items() if t == s and tuple(a[i] for i in keep) == value)


def test_choice_behaviour_no_signalling_exactly_where_it_must(theory):
    # Local agency, as a constraint on the observed behaviour (Bong et al. 2020): B's outcome lies
    # outside the future light cones of A's setting and of A_f's choice, A's outside B's.  The Born
    # rule must therefore give exactly setting-independent marginals there (sympy, = 0), while A's
    # outcome, recorded after A_f's choice, may and here does depend on it (ball arithmetic, != 0).
    from nogo.quantum.born import ball_behaviour

    exp = _choice(theory, "state: {vector: [cos(pi/8), 0, 0, sin(pi/8)]}\n"
                          "measurements: {A: {2: Y}, B: {2: X}}\ninner_observers: {A_g: Z, A_f: {2: X}, B_in: Z}\n")
    eb = exact_behaviour(exp)
    sc = exp.scenario
    S = sc.setting_tuples()
    for b in ("+1", "-1"):
        for y in ("1", "2"):
            vals = {_marginal(eb, s, (1,), (b,)) for s in S if s[1] == y}
            assert len({sympy.nsimplify(sympy.simplify(v)) for v in vals}) == 1
    for a in ("+1", "-1"):
        for x, z in itertools.product(("1", "2"), ("1", "2")):
            vals = [_marginal(eb, s, (0,), (a,)) for s in S if s[0] == x and s[2] == z]
            assert all(sympy.simplify(v - vals[0]) == 0 for v in vals)  # independent of B's setting
        at2 = [_marginal(eb, s, (0,), (a,)) for s in S if s[0] == "2"]
        assert all(sympy.simplify(v - at2[0]) == 0 for v in at2)  # A undoes everything: no trace of A_f's choice
    balls = ball_behaviour(exp)
    diff = (sum(balls[(("1", "1", "1"), ("+1", b, "c"))] for b in ("+1", "-1"))
            - sum(balls[(("1", "1", "2"), ("+1", b, "c"))] for b in ("+1", "-1")))
    assert not diff.contains(0)  # cos^2(pi/8) (Z on A_g) against 1/2 (X at A_f's setting 2)


def test_maximal_violation_of_a_local_friendliness_facet_of_the_choice_theory(theory):
    # The LF polytope of friends-2x2-choice (derived exactly by nogo.polytope) has Clauser–Horne
    # facets pairing A_g's record (A_f's setting 1) with A_f's own measurement (its setting 2).  The
    # demo experiment reaches (1 + sqrt 2)/2 on one of them exactly (sympy); the NPA bound on the
    # Bell scenario of the labs' readings (A: A_g, A_f=2, A=2; B: B_in, B=2) certifies that no
    # quantum behaviour exceeds it by more than the dual's slack (Navascués, Pironio, Acín,
    # PRL 98, 010401 (2007)); Tsirelson's bound in CH form (Cirel'son 1980).
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_polytope
    from nogo.quantum.certify import evaluate
    from nogo.quantum.npa import npa_bound

    th = theory("friends-2x2-choice")
    lf = derive_polytope(compile_bundle(th, "local-friendliness"))
    assert lf.status == "complete"
    exp = load_experiment(CHOICE_EXP)
    facets = [lf.inequality(f, f"LF facet {k + 1}") for k, f in enumerate(lf.facets)]
    values = evaluate(exp, facets)
    violated = [v for v in values if v.violated]
    assert violated
    target = violated[0].inequality
    assert sympy.simplify(exact_value(target, exact_behaviour(exp)) - TSIRELSON_CH) == 0
    b = npa_bound(target, "1")
    assert b.notes and "A_f=2" in b.notes[0] and "exactly" in b.notes[0]
    assert float(TSIRELSON_CH) <= float(b.certified) < float(TSIRELSON_CH) + 1e-6


@pytest.mark.slow  # about 6 s: one NPA bound per facet of the choice theory's LF polytope
def test_quantum_maxima_of_every_local_friendliness_facet_of_the_choice_theory(theory):
    # Beyond the published values (this project's own sweep): of the 80 facets, NPA level 1+AB on
    # the readings' Bell scenario certifies for 40 a quantum maximum at most 1e-6 above the bound
    # (positivity among them: level 1 alone is too weak for those), and for the other 40 at most
    # (sqrt 2 - 1)/2 + 1e-6 above it, the SDP optimum agreeing with Tsirelson's excess in CH form.
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_polytope
    from nogo.quantum.npa import npa_bound

    lf = derive_polytope(compile_bundle(theory("friends-2x2-choice"), "local-friendliness"))
    facets = [lf.inequality(f) for f in lf.facets]
    bounds = [(npa_bound(q, "1+AB"), q) for q in facets]
    excess = [float(b.certified) - float(q.bound) for b, q in bounds]
    tsirelson_excess = float(TSIRELSON_CH) - 1
    assert len(excess) == 80
    assert sum(e < 1e-6 for e in excess) == 40
    assert all(e < tsirelson_excess + 1e-6 for e in excess)
    assert all(abs(b.value - float(q.bound) - tsirelson_excess) < 1e-6 for (b, q), e in zip(bounds, excess) if e > 1e-6)


# -- refusals and input errors ------------------------------------------------------------
def test_an_earlier_observer_with_a_lab_of_its_own_is_refused():
    th = load_theory_text(DEPHASED.replace("A_h: {lab: A_f, outcomes: [+1, -1], read_out_at: 2}",
                                           "A_h: {lab: A_f, outcomes: [+1, -1], read_out_at: 2}\n"
                                           "    A_k: {lab: A_g, outcomes: [0, 1]}"))
    with pytest.raises(InputError, match="A_g measures before A_h.*observers inside its lab"):
        load_experiment_text("state: singlet\nmeasurements: {A: {2: X}, B: {1: X}}\n"
                             "inner_observers: {A_f: {3: X}, A_g: Z, A_h: Z, B_in: Z, A_k: Z}\n", th)


@pytest.mark.parametrize("inner, message", [
    ("{A_f: X, A_g: Z, B_in: Z}", "A_f chooses among settings"),
    ("{A_f: {1: X, 2: X}, A_g: Z, B_in: Z}", "A_f at its setting 1 reads out inner observer A_g"),
    ("{A_g: Z, B_in: Z}", "A_f needs a measurement at its setting 2"),
])
def test_choice_experiment_errors_say_what_is_wrong(theory, inner, message):
    with pytest.raises(InputError, match=message):
        _choice(theory, f"state: singlet\nmeasurements: {{A: {{2: X}}, B: {{2: X}}}}\ninner_observers: {inner}\n")


def test_an_observer_read_out_always_has_no_measurement_of_its_own(theory):
    with pytest.raises(InputError, match="A_out reads out inner observer A_deep in every run"):
        load_experiment_text("state: singlet\nmeasurements: {A: {2: X, 3: Y}, B: {2: X, 3: Y}}\n"
                             "inner_observers: {A_out: Z, A_deep: Z, B_in: Z}\n", theory("friends-2x3-nested"))


# -- where users look: nogo quantum, qbound, optimise ---------------------------------------
def test_quantum_command_on_the_choice_theory(capsys):
    # End to end, in the user's names: the facets of local-friendliness are derived, one is violated
    # (certified), the bundle is left with a certified separating inequality; critical visibility
    # 1/sqrt(2), the CHSH threshold for white noise on a singlet (common practice).
    import json

    from nogo.cli import main

    rc = main(["quantum", str(CHOICE_EXP), "--facets-of", "local-friendliness", "-b", "local-friendliness",
               "--json"])
    data = json.loads(capsys.readouterr().out)
    assert rc == 0
    assert any(v["verdict"] == "violated" for v in data["inequalities"])
    bundle, = data["bundles"]
    assert bundle["inside"] is False and "separating" in bundle
    assert abs(bundle["critical_visibility"] - 2 ** -0.5) < 1e-6
    assert "A's outcome at A=1, A_f.setting=1: A_g's measurement, its record read out through A_f" in data["readings"]
    assert {tuple(row["settings"]) for row in data["behaviour"]} == {("1", "1", "1"), ("1", "1", "2"),
                                                                       ("1", "2", "1"), ("1", "2", "2"),
                                                                       ("2", "1", "1"), ("2", "1", "2"),
                                                                       ("2", "2", "1"), ("2", "2", "2")}


def test_qbound_and_optimise_on_the_choice_theory(tmp_path, capsys):
    from nogo.cli import main

    # a Clauser–Horne facet of the choice theory's LF polytope (derived by nogo.polytope)
    ch = ("p(+1 +1 c|1 1 1) + p(+1 -1 c|1 1 1) + p(-1 +1 c|1 1 1) - p(+1 +1 c|1 1 2) - p(+1 +1 c|1 2 1) "
          "+ p(+1 +1 c|1 2 2) <= 1")
    rc = main(["qbound", str(ROOT / "theories" / "friends-2x2-choice.yaml"), ch, "--level", "1"])
    out = capsys.readouterr().out
    assert rc == 0 and "A: A_g, A_f=2, A=2" in out
    best = tmp_path / "best.yaml"
    rc = main(["optimise", str(CHOICE_EXP), ch, "--starts", "3", "--seed", "2", "--write", str(best)])
    out = capsys.readouterr().out
    assert rc == 0 and "violated" in out
    again = load_experiment(best)  # the observer's own setting is written back as A_f: {2: ...}
    assert ("A_f", "2") in again.inner_at
    from nogo.inequality import parse_inequality
    from nogo.quantum.certify import evaluate

    v, = evaluate(again, [parse_inequality(again.scenario, ch)])
    assert v.violated and v.float_value > float(TSIRELSON_CH) - 1e-4


def test_observer_read_out_at_two_settings_shows_its_record_relabelled(theory):
    # theories/friends-2x3-two-readouts.yaml: A_in is read out at A's settings 1 and 3, with the sign
    # flipped at 3.  Quantum account (Bong et al., Nature Physics 16, 1199 (2020)): at a read-out setting
    # the super-observer reports the friend's (relabelled) record, so exactly p(a b|3 y) = p(-a b|1 y);
    # the register model (memories, copies, undoing) agrees numerically.
    exp = load_experiment_text("state: singlet\nmeasurements: {A: {2: X}, B: {2: {bloch: [3*pi/4]}, "
                               "3: {bloch: [-3*pi/4]}}}\ninner_observers: {A_in: Z, B_in: {bloch: [pi/4]}}\n",
                               theory("friends-2x3-two-readouts"))
    eb = exact_behaviour(exp)
    flip = {"+1": "-1", "-1": "+1"}
    for y in ("1", "2", "3"):
        for a, b in itertools.product(("+1", "-1"), repeat=2):
            assert sympy.simplify(eb[(("3", y), (a, b))] - eb[(("1", y), (flip[a], b))]) == 0
    # and setting 3 is not a copy of the undone setting 2 (the check above could not pass by accident)
    assert any(sympy.simplify(eb[(("3", "1"), (a, "+1"))] - eb[(("2", "1"), (a, "+1"))]) != 0 for a in flip)
    rb = register_behaviour(exp)
    assert all(abs(float(eb[k]) - rb[k]) < 1e-10 for k in eb)
