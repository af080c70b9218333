"""Local agency generated from a declared light-cone structure (nogo/lightcone.py).

Check values and their sources:

* Local agency in the all-events form — every set of events outside a
  choice's future light cone is independent of that choice: K.-W. Bong et al.,
  Nature Physics 16, 1199 (2020), arXiv:1907.05607.  The generated form must
  give exactly the set of the hand-written local agency of every shipped
  local-friendliness theory (compared exactly: same columns, equal affine
  constraint spaces by exact rank).
* Three labs with an inner observer each, GHZ X/Y behaviour (D. M.
  Greenberger, M. A. Horne, A. Shimony, A. Zeilinger, Am. J. Phys. 58, 1131
  (1990)): the generated all-events form forbids it for both read-outs (inner
  observers measuring X or Y); the generated one-lab-at-a-time reading admits
  it when the inner observers measure X (the three-lab study of this
  project's shipped friends-3x2.yaml, tests/test_possibilistic.py, derived by
  hand, SAT and LP; not a published value as such).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import flint
import pytest

from nogo.compile import compile_bundle
from nogo.errors import InputError
from nogo.lightcone import default_light_cone, generate
from nogo.possibilistic import check_model, check_proof, decide_pattern, to_markdown
from nogo.theory import load_theory, load_theory_text

ROOT = Path(__file__).resolve().parent.parent
THEORIES = ROOT / "theories"
GEN = "\nlight_cone:\n  name: generated\n  weak: true\n"


def _with_light_cone(path: Path, extra: str = GEN):
    return load_theory_text(path.read_text(encoding="utf-8") + extra, str(path))


def _rank(rows, rhs, ncols):
    m = flint.fmpq_mat(len(rows), ncols + 1)
    for i, (r, b) in enumerate(zip(rows, rhs)):
        for j, v in r.items():
            m[i, j] = flint.fmpq(v.numerator, v.denominator)
        m[i, ncols] = flint.fmpq(b.numerator, b.denominator)
    return m.rank()


def same_set(m1, m2) -> bool:
    """Equal constraint systems on the same columns: {q >= 0: R1 q = b1} = {q >= 0: R2 q = b2}."""
    assert [(c.settings, c.values) for c in m1.columns] == [(c.settings, c.values) for c in m2.columns]
    n = len(m1.columns)
    r1, r2 = _rank(m1.rows, m1.rhs, n), _rank(m2.rows, m2.rhs, n)
    both = _rank(m1.rows + m2.rows, m1.rhs + m2.rhs, n)
    return r1 == r2 == both


def _lf_theories():
    out = []
    for p in sorted(THEORIES.glob("*.yaml")):
        th = load_theory(p)
        if "local-friendliness" in th.bundles and th.scenario.inner and th.light_cone is None:
            out.append(p)
    return out


@pytest.mark.parametrize("path", _lf_theories(), ids=lambda p: p.stem)
def test_generated_equals_hand_written(path):
    th = _with_light_cone(path)
    hand = th.bundles["local-friendliness"]
    absolute = [a for a in hand if any(type(c).__name__ == "Absolute" for c in th.assumptions[a].clauses)]
    assert absolute, "a local-friendliness bundle states absoluteness"
    gen = compile_bundle(th, "+".join(absolute + ["generated"]))
    written = compile_bundle(th, "local-friendliness")
    assert same_set(gen, written)
    # and the generation is a real statement: dropping one generated clause gives a different set
    if len(th.bundles["generated"]) > 1:
        fewer = compile_bundle(th, "+".join(absolute + list(th.bundles["generated"][1:])))
        assert not same_set(fewer, written)


def test_shipped_theories_found():
    names = {p.stem for p in _lf_theories()}
    assert {"friends-2x2", "friends-2x3", "friends-3x2"} <= names


def test_weak_reading_equals_hand_written_weak(theory):
    path = THEORIES / "friends-3x2.yaml"
    th = _with_light_cone(path)
    weak = compile_bundle(th, "absoluteness+generated-weak")
    assert same_set(weak, compile_bundle(th, "local-friendliness-weak"))
    assert not same_set(weak, compile_bundle(th, "local-friendliness"))


def test_two_labs_weak_is_the_full_form(theory):
    sc = theory("friends-2x2").scenario
    gen, bundles = generate(sc, default_light_cone(sc, weak=True))
    assert bundles["local-agency-weak"] == bundles["local-agency"] == ("local-agency-A", "local-agency-B")
    byname = {g.name: g for g in gen}
    assert byname["local-agency-A"].events == ("B", "A_in", "B_in") and byname["local-agency-A"].of == ("A",)


def test_future_declaration_moves_events_inside_the_cone():
    th = _with_light_cone(THEORIES / "friends-3x2.yaml",
                          "\nlight_cone:\n  name: g\n  future: {A.setting: [B]}\n  after_choice: [C_in]\n")
    byname = {g.name: g for g in th.generated}
    assert byname["g-A"].events == ("C", "A_in", "B_in", "C_in")  # B lies in A's future light cone
    assert byname["g-C"].events == ("A", "B", "A_in", "B_in")  # C_in measures after C's choice
    assert "C_in" in byname["g-B"].events


# -- GHZ, three labs -----------------------------------------------------------------------
FRIENDS_EXP = """
title: three sealed labs, inner observers measure {inner}
state: ghz
measurements:
  A: {{2: {outer}}}
  B: {{2: {outer}}}
  C: {{2: {outer}}}
inner_observers:
  A_in: {inner}
  B_in: {inner}
  C_in: {inner}
"""


def ghz_pattern(th, inner):
    from nogo.possibilistic.support import support_from_experiment
    from nogo.quantum import load_experiment_text

    outer = "Y" if inner == "X" else "X"
    return support_from_experiment(load_experiment_text(FRIENDS_EXP.format(inner=inner, outer=outer), th))


@pytest.fixture(scope="module")
def three_labs():
    return load_theory(THEORIES / "friends-3x2-light-cone.yaml")


@pytest.mark.parametrize("inner", ["X", "Y"])
def test_generated_all_events_form_forbids_ghz(three_labs, inner):
    # GHZ, Am. J. Phys. 58, 1131 (1990): contradiction with absoluteness + local agency (all-events form)
    th = three_labs
    pat = ghz_pattern(th, inner)
    assert pat.zero_test == "exact"
    r = decide_pattern(th, "local-friendliness", pat, time_limit=30)
    assert r.contradiction
    assert check_proof(th, "local-friendliness", pat, r.proof) == []
    assert set(r.assumptions_needed()) - {"absoluteness"} <= {"agency-A", "agency-B", "agency-C"}
    assert "agency-" in to_markdown(r.proof)


def test_generated_weak_reading_admits_ghz_with_x_inner(three_labs):
    th = three_labs
    rx = decide_pattern(th, "local-friendliness-weak", ghz_pattern(th, "X"))
    assert not rx.contradiction
    assert check_model(th, "local-friendliness-weak", ghz_pattern(th, "X"), rx.model) == []
    ry = decide_pattern(th, "local-friendliness-weak", ghz_pattern(th, "Y"), time_limit=30)
    assert ry.contradiction  # only one lab's outcome moves with the records at a time
    assert check_proof(th, "local-friendliness-weak", ghz_pattern(th, "Y"), ry.proof) == []


# -- errors and printing ----------------------------------------------------------------------
@pytest.mark.parametrize("extra, words", [
    ("\nlight_cone: {name: g, futur: {}}\n", "unknown key 'futur'"),
    ("\nlight_cone: {name: g, future: {A: [B]}}\n", "is not a choice"),
    ("\nlight_cone: {name: g, future: {A.setting: [D]}}\n", "no event named 'D'"),
    ("\nlight_cone: {name: g, after_choice: [A]}\n", "no inner observer named 'A'"),
    ("\nlight_cone: {name: g, reading: probable}\n", "unknown reading"),
    ("\nlight_cone: {name: agency}\n", "already in use"),
])
def test_input_errors(extra, words):
    with pytest.raises(InputError) as e:
        _with_light_cone(THEORIES / "friends-3x2.yaml", extra)
    assert words in str(e.value)
    assert "friends-3x2.yaml" in str(e.value)


def test_show_prints_generated_constraints():
    out = subprocess.run([sys.executable, "-m", "nogo", "show", str(THEORIES / "friends-3x2-light-cone.yaml")],
                         capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, out.stderr
    assert ("agency-A: p(B, C, A_in, B_in, C_in | A.setting, B.setting, C.setting) = "
            "p(B, C, A_in, B_in, C_in | B.setting, C.setting)") in out.stdout
    js = subprocess.run([sys.executable, "-m", "nogo", "show", "--json",
                         str(THEORIES / "friends-3x2-light-cone.yaml")], capture_output=True, text=True, cwd=ROOT)
    data = json.loads(js.stdout)
    assert data["light_cone"]["future"]["A"] == ["A"]
    assert set(data["light_cone"]["generated"]) >= {"agency-A", "agency-A-on-B"}
