"""Nested observers (a friend of a friend) and inner observers with choices of their own.

Check values and their sources:

* Local friendliness, two labs, three settings each, one friend per lab read
  out at setting 1: 932 facets (K.-W. Bong et al., Nature Physics 16, 1199
  (2020), arXiv:1907.05607); two settings each: equal to the Bell-local set,
  24 facets (same paper; Fine, PRL 48, 291 (1982)).  A nested scenario whose
  read-out chain collapses (the outer friend copies the inner one in every
  run, or an observer "chooses" among one setting only) must give the very
  same set: same facets, same verdicts, exactly.
* Hardy's support pattern (L. Hardy, PRL 71, 1665 (1993)) contradicts
  absoluteness with possibilistic local agency in two labs with one friend
  each (M. Haddara and E. G. Cavalcanti, arXiv:2205.12223); with the friend
  replaced by a collapsing chain the contradiction and its checked proof stay.
* An independent brute-force encoding, written in this file from the
  semantics in DEVELOPERS.md and solved with scipy's LP, agrees with the
  compiled model of a small scenario with a choosing friend and a friend of
  that friend (no published value; the check is the second encoding).
"""

from __future__ import annotations

import itertools
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from nogo.check import decide, recheck
from nogo.compile import compile_bundle
from nogo.errors import InputError
from nogo.events import present_events, read_out_rules
from nogo.inequality import parse_inequality
from nogo.theory import load_theory, load_theory_text

ROOT = Path(__file__).resolve().parent.parent
T = ROOT / "theories"

HEAD_2x2 = """
scenario:
  parties:
    A: {settings: [1, 2], outcomes: [+1, -1]}
    B: {settings: [1, 2], outcomes: [+1, -1]}
  inner_observers:
"""


def _theory(observers: str, tail: str = "") -> str:
    return HEAD_2x2 + observers + tail


# -- declarations refused -------------------------------------------------------------
@pytest.mark.parametrize("observers, words, line", [
    ("    F: {lab: G, read_out_at: always}\n    G: {lab: F, read_out_at: always}\n",
     "inside each other's labs: F -> G -> F", 7),
    ("    F: {lab: F, read_out_at: always}\n", "inside each other's labs: F -> F", 7),
    ("    F: {lab: Z, read_out_at: 1}\n", "no party or inner observer named 'Z'", 7),
    ("    F: {lab: A, read_out_at: always}\n", "not 'always'", 7),
    ("    F: {lab: A, read_out_at: 1}\n    G: {lab: F, read_out_at: 1}\n", "chooses no setting", 8),
    ("    F: {lab: A, settings: [1, 2], read_out_at: 1}\n    G: {lab: F, read_out_at: 3}\n",
     "has no setting '3'", 8),
    ("    F: {lab: A, read_out_at: 1}\n    G: {lab: F, read_out_at: always}\n    H: {lab: F, read_out_at: always}\n",
     "one of them in every run", 9),
])
def test_malformed_chains_are_refused_with_file_and_line(observers, words, line):
    with pytest.raises(InputError) as exc:
        load_theory_text(_theory(observers, "assumptions: {}\nbundles: {}\n"), "chain.yaml")
    assert words in str(exc.value)
    assert exc.value.where.file == "chain.yaml" and exc.value.where.line == line


def test_choice_setting_is_a_setting_variable_of_the_clauses():
    th = load_theory_text(_theory("    F: {lab: A, settings: [x, z], read_out_at: 1}\n", """
assumptions:
  f-free: {independent: {events: [B], of: [F.setting]}}
bundles: {}
"""), "ok.yaml")
    assert th.scenario.party_names == ("A", "B", "F")  # the choice is held after the parties' settings
    assert th.scenario.party("F").choice_of == "F"
    assert "F.choice" not in th.scenario.all_event_names()
    assert th.assumptions["f-free"].clauses[0].of == ("F",)
    with pytest.raises(InputError) as exc:
        load_theory_text(_theory("    F: {lab: A, read_out_at: 1}\n", """
assumptions:
  bad: {independent: {events: [B], of: [F.setting]}}
bundles: {}
"""), "bad.yaml")
    assert "'F' chooses no setting of its own" in exc.value.message and exc.value.where.line == 10


# -- the chain itself -------------------------------------------------------------------
def test_chain_through_an_absent_observer_composes():
    th = load_theory(T / "friends-2x2-choice.yaml")
    sc = th.scenario
    _, outer_only = th.resolve("local-friendliness-outer")
    _, everything = th.resolve("local-friendliness")
    whole = {(r.target, r.source, r.when) for r in read_out_rules(sc, present_events(sc, everything))}
    i_a, i_f = sc.party_index("A"), sc.party_index("A_f")
    assert whole == {("A", "A_f", ((i_a, "1"),)), ("A_f", "A_g", ((i_f, "1"),)), ("B", "B_in", ((1, "1"),))}
    # A_f absent: A = A_g when A's setting and A_f's setting are both 1 (the projection of the chain)
    th2 = load_theory_text((T / "friends-2x2-choice.yaml").read_text().replace(
        "absolute: [A_f, B_in]", "absolute: [A_g, B_in]"), "absent.yaml")
    _, ab = th2.resolve("local-friendliness-outer")
    rules = read_out_rules(sc, present_events(th2.scenario, ab))
    assert {(r.target, r.source, r.when, r.via) for r in rules} == {
        ("A", "A_g", ((i_a, "1"), (i_f, "1")), ("A_f",)), ("B", "B_in", ((1, "1"),), ())}
    assert outer_only  # the bundle resolves


# -- collapse to the un-nested scenario: same verdicts, same facets -------------------------
def _lifted_family(sc, n_settings: int) -> list[str]:
    out = []
    pairs = list(itertools.combinations(range(1, n_settings + 1), 2))
    for (x1, x2), (y1, y2) in itertools.product(pairs, pairs):
        terms = [(x1, y1), (x1, y2), (x2, y1), (x2, y2)]
        for minus in range(4):
            parts = [("-" if k == minus else "+") + f" <A{x} B{y}>" for k, (x, y) in enumerate(terms)]
            out.append(" ".join(parts).lstrip("+ ") + " <= 2")
    return out


def _maxima(th, bundle, texts):
    model = compile_bundle(th, bundle)
    out = []
    for t in texts:
        r = decide(model, parse_inequality(th.scenario, t))
        assert recheck(model, r) is None
        out.append(r.maximum)
    return out


def test_nested_chain_collapses_to_one_friend_per_lab_same_verdicts():
    flat = load_theory(T / "friends-2x3.yaml")
    nested = load_theory(T / "friends-2x3-nested.yaml")
    texts = _lifted_family(flat.scenario, 3) + [
        # I3322 in Collins-Gisin form, local bound 0 (Collins & Gisin, J. Phys. A 37, 1775 (2004))
        "p_AB(+1 +1|1 1) + p_AB(+1 +1|1 2) + p_AB(+1 +1|1 3) + p_AB(+1 +1|2 1) + p_AB(+1 +1|2 2)"
        " - p_AB(+1 +1|2 3) + p_AB(+1 +1|3 1) - p_AB(+1 +1|3 2) - p_A(+1|1) - 2 p_B(+1|1) - p_B(+1|2) <= 0"]
    want = _maxima(flat, "local-friendliness", texts)
    assert _maxima(nested, "local-friendliness", texts) == want
    assert _maxima(nested, "local-friendliness-deep", texts) == want
    # and the chain matters: a CHSH at the read-out pair is bounded, one away from it is not
    assert want[texts.index("- <A1 B1> + <A1 B2> + <A2 B1> + <A2 B2> <= 2")] == 2
    assert max(want) == 4


NESTED_2x2 = _theory("""    A_out: {lab: A, read_out_at: 1}
    A_deep: {lab: A_out, read_out_at: always}
    B_in: {lab: B, read_out_at: 1}
""", """light_cone: {name: agency}
assumptions:
  absoluteness: {absolute: [A_out, A_deep, B_in]}
  absoluteness-deep: {absolute: [A_deep, B_in]}
bundles:
  lf: [absoluteness, agency-A, agency-B]
  lf-deep: [absoluteness-deep, agency-A, agency-B]
""")

CHOICE_ONE = _theory("""    A_f: {lab: A, settings: [1], read_out_at: 1}
    A_g: {lab: A_f, read_out_at: 1}
    B_in: {lab: B, read_out_at: 1}
""", """light_cone: {name: agency}
assumptions:
  absoluteness: {absolute: [A_f, A_g, B_in]}
bundles:
  lf: [absoluteness, agency-A, agency-B, agency-A_f]
""")


@pytest.mark.parametrize("text, bundle", [(NESTED_2x2, "lf"), (NESTED_2x2, "lf-deep"), (CHOICE_ONE, "lf")])
def test_collapsing_chain_has_the_facets_of_the_flat_scenario(text, bundle):
    from nogo.facets import facets

    flat = facets(load_theory(T / "friends-2x2.yaml"), "local-friendliness", cache=False)
    nested = facets(load_theory_text(text, "nested.yaml"), bundle, cache=False)
    assert len(flat.facets) == len(nested.facets) == 24  # equal to the local polytope (Bong et al. 2020)
    # the frames list the same coordinates in the same order (a one-setting choice adds a constant
    # setting and outcome 'c'), so facets and vertices compare as integer rows, exactly
    assert flat.frame.kind == nested.frame.kind and flat.dim == nested.dim
    assert {(f.a, f.b) for f in flat.facets} == {(f.a, f.b) for f in nested.facets}
    assert {tuple(flat.frame.coords_of(v)) for v in flat.vertices} == \
        {tuple(nested.frame.coords_of(v)) for v in nested.vertices}


# -- an independent brute-force encoding (scipy LP) ------------------------------------------
def _brute_force_choice_model():
    """friends-2x2-choice.yaml written out by hand from the semantics: q(a, b, f, g, r | x, y, z)."""
    pm = ("+1", "-1")
    S = list(itertools.product(("1", "2"), ("1", "2"), ("1", "2")))  # x (A), y (B), z (A_f's choice)
    E = list(itertools.product(pm, pm, pm, pm, pm))  # a, b, f (A_f), g (A_g), r (B_in)
    cols = [(s, e) for s in S for e in E
            if not (s[0] == "1" and e[0] != e[2])  # A = A_f at x = 1
            and not (s[2] == "1" and e[2] != e[3])  # A_f = A_g at z = 1
            and not (s[1] == "1" and e[1] != e[4])]  # B = B_in at y = 1
    idx = {c: i for i, c in enumerate(cols)}
    rows, rhs = [], []
    for s in S:
        rows.append({idx[(s, e)]: 1 for e in E if (s, e) in idx})
        rhs.append(1)

    def marg(s, keep, val):
        return {idx[(s, e)]: 1 for e in E if (s, e) in idx and tuple(e[k] for k in keep) == val}

    # local agency: events outside each choice's future light cone, jointly, independent of it
    for moved, keep in ((0, (1, 2, 3, 4)), (1, (0, 2, 3, 4)), (2, (1, 3, 4))):
        for s in S:
            t = tuple("1" if i == moved else v for i, v in enumerate(s))
            if t == s:
                continue
            for val in itertools.product(pm, repeat=len(keep)):
                row = dict(marg(s, keep, val))
                for j, c in marg(t, keep, val).items():
                    row[j] = row.get(j, 0) - c
                if any(row.values()):
                    rows.append(row)
                    rhs.append(0)
    A = np.zeros((len(rows), len(cols)))
    for i, r in enumerate(rows):
        for j, v in r.items():
            A[i, j] = v
    return cols, A, np.array(rhs, dtype=float)


def test_choice_model_agrees_with_an_independent_encoding():
    from scipy.optimize import linprog

    th = load_theory(T / "friends-2x2-choice.yaml")
    model = compile_bundle(th, "local-friendliness")
    cols, A, b = _brute_force_choice_model()
    assert len(cols) == model.shape[1]  # the same joint assignments survive the read-out chain
    rng = np.random.default_rng(7)
    coords = th.scenario.coordinates()
    for _ in range(6):
        w = {c: Fraction(int(rng.integers(-3, 4))) for c in coords}
        text = " ".join(f"{'+' if v > 0 else '-'} {abs(int(v))} p({' '.join(a)}|{' '.join(s)})"
                        for (s, a), v in w.items() if v).lstrip("+ ") + " <= 0"
        r = decide(model, parse_inequality(th.scenario, text))
        assert recheck(model, r) is None
        c = np.array([-float(w[(s, e[:2] + ("c",))]) for s, e in cols])
        lp = linprog(c, A_eq=A, b_eq=b, bounds=(0, None), method="highs")
        assert lp.status == 0
        assert abs(-lp.fun - float(r.maximum)) < 1e-7


# -- the possibilistic backend on a chain --------------------------------------------------
def test_hardy_contradiction_survives_a_collapsing_chain():
    from nogo.possibilistic import check_proof, decide_pattern, load_pattern

    text = (T / "friends-2x2-supports.yaml").read_text().replace(
        "A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1}",
        "A_mid: {lab: A, outcomes: [+1, -1], read_out_at: 1}\n    A_in: {lab: A_mid, outcomes: [+1, -1], read_out_at: always}")
    th = load_theory_text(text, "nested-supports.yaml")
    hardy = load_pattern(ROOT / "examples" / "patterns" / "hardy.yaml", th.scenario)
    r = decide_pattern(th, "possibilistic-local-friendliness", hardy, time_limit=30)
    assert r.contradiction  # arXiv:2205.12223, with A_in now read out through A_mid (absent)
    assert check_proof(th, "possibilistic-local-friendliness", hardy, r.proof) == []
    assert not decide_pattern(th, "absoluteness-only", hardy).contradiction


# -- the z3 cross-check: chains walked afresh, support-only clauses refused ---------------------
def _chsh_at(z: int) -> str:
    """<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2 at A_f's setting z, written in joint probabilities."""
    terms = []
    for k, (x, y) in enumerate([(1, 1), (1, 2), (2, 1), (2, 2)]):
        for a, b in itertools.product((1, -1), repeat=2):
            sign = a * b * (-1 if k == 3 else 1)
            terms.append(f"{'+' if sign > 0 else '-'} p({a:+d} {b:+d} c|{x} {y} {z})")
    return " ".join(terms).lstrip("+ ") + " <= 2"


def test_smt_reads_the_choice_chain_like_the_linear_model():
    from nogo.smt import implies_z3

    th = load_theory(T / "friends-2x2-choice.yaml")
    model = compile_bundle(th, "local-friendliness")
    verdicts = []
    for text in ("p(+1 -1 c|1 1 1) + p(-1 +1 c|1 1 1) <= 0",  # A = A_f = A_g at x = z = 1; nothing ties B
                 _chsh_at(1),  # CHSH at A_f's setting 1, in joint probabilities
                 "p(+1 +1 c|1 1 2) - p(+1 +1 c|1 1 1) <= 0",  # A_f's choice signals to A (A is in its cone)
                 "p(+1 +1 c|1 1 2) + p(+1 -1 c|1 1 2) - p(+1 +1 c|2 1 2) - p(+1 -1 c|2 1 2) <= 1"):
        ineq = parse_inequality(th.scenario, text)
        z3_says = implies_z3(th, "local-friendliness", ineq)
        assert z3_says == decide(model, ineq).implied
        verdicts.append(z3_says)
    assert verdicts == [False, True, False, True]


def test_smt_refuses_support_only_clauses_unless_implied():
    from nogo.smt import implies_z3

    th = load_theory(T / "friends-2x2-supports.yaml")
    chsh = parse_inequality(th.scenario, "<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2")
    with pytest.raises(InputError) as exc:
        implies_z3(th, "possibilistic-local-friendliness", chsh)
    assert "supports only" in exc.value.message and exc.value.where.line is not None
    # with the probabilistic form beside it the support-only clause is implied, hence redundant:
    # local friendliness in two labs with two settings is the Bell-local set, CHSH holds
    # (K.-W. Bong et al., Nature Physics 16, 1199 (2020))
    assert implies_z3(th, "both-forms", chsh) is True
    assert implies_z3(th, "local-friendliness", chsh) is True


def test_show_prints_the_resolved_chains_and_the_choice_cone():
    import subprocess
    import sys

    out = subprocess.run([sys.executable, "-m", "nogo", "show", str(T / "friends-2x3-nested.yaml")],
                         capture_output=True, text=True, cwd=ROOT).stdout
    assert "read-out: A's outcome equals A_deep's when A's setting is 1 (through A_out" in out
    out = subprocess.run([sys.executable, "-m", "nogo", "show", str(T / "friends-2x2-choice.yaml")],
                         capture_output=True, text=True, cwd=ROOT).stdout
    assert "future light cone of A_f.setting: A_f, A; outside it: B, A_g, B_in" in out
    assert "chooses among settings ['1', '2'] (setting variable A_f.setting)" in out


def test_light_cone_places_an_observers_choice():
    text = (T / "friends-2x2-choice.yaml").read_text().replace(
        "  name: agency\n", "  name: agency\n  after_choice: [A_g]\n  future: {A_f.setting: [B]}\n")
    th = load_theory_text(text, "placed.yaml")
    # A_g now measures after A_f's choice; B lies in that choice's future; A is recorded after A_f
    assert th.light_cone.future["A_f"] == ("A_f", "A_g", "B", "A")
    assert th.assumptions["agency-A_f"].clauses[0].events == ("B_in",)
    assert th.assumptions["agency-A"].clauses[0].events == ("B", "A_f", "A_g", "B_in")


def test_mixture_model_reads_a_chain_through_an_absent_observer():
    # the partially deterministic set of a family member (arXiv:2510.25127), with A's friend read out
    # through an absent middle observer: the same exact maxima as the flat member
    from nogo.family import Member

    flat_text = Member((3, 3), 2, (True, True)).theory_text()
    nested_text = flat_text.replace(
        "    A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1}",
        "    A_mid: {lab: A, outcomes: [+1, -1], read_out_at: 1}\n"
        "    A_in: {lab: A_mid, outcomes: [+1, -1], read_out_at: always}")
    assert nested_text != flat_text
    flat, nested = load_theory_text(flat_text, "flat.yaml"), load_theory_text(nested_text, "nested.yaml")
    assert compile_bundle(nested, "partly-determined").kind == "mixture"
    texts = _lifted_family(flat.scenario, 3)[::5]
    assert _maxima(nested, "partly-determined", texts) == _maxima(flat, "partly-determined", texts)


@pytest.mark.slow  # about 15 s of CPU, more on a shared machine
def test_collapsing_chain_in_three_settings_keeps_the_932_facets():
    # K.-W. Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607: 932 facets
    from nogo.facets import facets

    flat = facets(load_theory(T / "friends-2x3.yaml"), "local-friendliness", cache=False)
    nested_th = load_theory(T / "friends-2x3-nested.yaml")
    rows = {(f.a, f.b) for f in flat.facets}
    assert len(rows) == 932
    for bundle in ("local-friendliness", "local-friendliness-deep"):
        nested = facets(nested_th, bundle, cache=False)
        assert {(f.a, f.b) for f in nested.facets} == rows, bundle
