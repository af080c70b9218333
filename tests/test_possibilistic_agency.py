"""Possibilistic local agency: independence declared on supports only.

Check values and their sources:

* M. Haddara and E. G. Cavalcanti, "A possibilistic no-go theorem on the
  Wigner's friend paradox", arXiv:2205.12223: absoluteness of observed
  events with *possibilistic* local agency (an intervention cannot change
  which events outside its future light cone are possible) contradicts a
  Hardy-type support pattern in two labs with one friend each.  The pattern
  is Hardy's (L. Hardy, PRL 71, 1665 (1993)) with the friends read out at
  setting 1.  With local agency dropped the same pattern is consistent.
* Equal marginals have equal supports, so the probabilistic clause implies
  the support-only one (common practice); support equalities are not convex,
  so the probabilistic compilers refuse them on their own.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from nogo.compile import compile_bundle
from nogo.errors import InputError
from nogo.possibilistic import check_model, check_proof, decide_pattern, load_pattern, to_markdown
from nogo.theory import SupportIndependent, load_theory, load_theory_text

ROOT = Path(__file__).resolve().parent.parent
FILE = ROOT / "theories" / "friends-2x2-supports.yaml"


@pytest.fixture(scope="module")
def th():
    return load_theory(FILE)


@pytest.fixture(scope="module")
def hardy(th):
    return load_pattern(ROOT / "examples" / "patterns" / "hardy.yaml", th.scenario)


def test_hardy_contradiction_from_absoluteness_and_possibilistic_agency(th, hardy):
    # arXiv:2205.12223: Hardy-type contradiction, two labs with one friend each
    r = decide_pattern(th, "possibilistic-local-friendliness", hardy, time_limit=30)
    assert r.contradiction
    assert check_proof(th, "possibilistic-local-friendliness", hardy, r.proof) == []
    assert set(r.assumptions_needed()) == {"absoluteness", "possible-agency-A", "possible-agency-B"}
    text = to_markdown(r.proof)
    print(text)  # the printed proof
    assert "By `possible-agency-A`" in text and "Contradiction" in text
    # the proof does not hold under a bundle without the support-level agency
    assert check_proof(th, "absoluteness-only", hardy, r.proof)


@pytest.mark.parametrize("bundle", ["absoluteness-only", "possible-agency-only"])
def test_dropping_either_ingredient_is_consistent(th, hardy, bundle):
    r = decide_pattern(th, bundle, hardy)
    assert not r.contradiction
    assert check_model(th, bundle, hardy, r.model) == []


def test_generated_support_reading_matches_hand_written(th, hardy):
    gen = {a: th.assumptions[a].clauses[0] for a in th.bundles["cone-supports"]}
    assert all(isinstance(c, SupportIndependent) for c in gen.values())
    hand = {th.assumptions[a].clauses[0] for a in ("possible-agency-A", "possible-agency-B")}
    assert {(tuple(sorted(c.events)), c.of) for c in gen.values()} == {(tuple(sorted(c.events)), c.of) for c in hand}
    r = decide_pattern(th, "absoluteness+cone-supports", hardy, time_limit=30)
    assert r.contradiction and check_proof(th, "absoluteness+cone-supports", hardy, r.proof) == []


def test_probabilistic_compilers_refuse_support_only(th):
    with pytest.raises(InputError) as e:
        compile_bundle(th, "possibilistic-local-friendliness")
    msg = str(e.value)
    assert "supports only" in msg and "friends-2x2-supports.yaml" in msg and "probabilistic form" in msg


def test_refused_in_hidden_variable_bundles_too(th):
    text = FILE.read_text() + ""
    text = text.replace("bundles:\n", "  hidden:\n    hidden: lam\n  lam-free:\n    independent: {events: [lam], "
                        "of: [A.setting, B.setting]}\n  pi:\n    independent: {events: [A], of: [B.setting], "
                        "given: [lam]}\nbundles:\n  mixed: [hidden, lam-free, pi, possible-agency-A]\n", 1)
    t = load_theory_text(text, "mixed.yaml")
    with pytest.raises(InputError, match="supports only"):
        compile_bundle(t, "mixed")


def test_bundle_with_the_probabilistic_form_compiles_to_local_friendliness(th):
    both = compile_bundle(th, "both-forms")
    lf = compile_bundle(th, "local-friendliness")
    assert any("implied by the bundle's probabilistic clauses" in n for n in both.notes)
    from nogo.catalog import resolve_inequality
    from nogo.check import decide, recheck

    chsh = resolve_inequality(th.scenario, "CHSH")
    for m in (both, lf):  # two labs, two settings: local friendliness = Bell-local (Bong et al. 2020)
        r = decide(m, chsh)
        assert recheck(m, r) is None and r.implied and r.maximum == 2


def test_cli_check_refuses_with_one_line(tmp_path):
    out = subprocess.run([sys.executable, "-m", "nogo", "check", str(FILE), "possibilistic-local-friendliness",
                          "CHSH"], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 2
    assert "supports only" in out.stderr and "Traceback" not in out.stderr
    proof = subprocess.run([sys.executable, "-m", "nogo", "proof", str(FILE), "possibilistic-local-friendliness",
                            str(ROOT / "examples" / "patterns" / "hardy.yaml")], capture_output=True, text=True,
                           cwd=ROOT)
    assert proof.returncode == 0, proof.stderr
    assert "Contradiction" in proof.stdout


@pytest.mark.parametrize("clause, words", [
    ("{events: [B], of: [A.setting], reading: sometimes}", "unknown reading 'sometimes'"),
    ("{events: [B], of: [A.setting], reading: supports, given: [lam]}", "takes no 'given'"),
])
def test_reading_errors(clause, words):
    text = FILE.read_text().replace("bundles:\n", f"  hidden:\n    hidden: lam\n  odd:\n    independent: {clause}\nbundles:\n", 1)
    with pytest.raises(InputError, match=words):
        load_theory_text(text, "odd.yaml")


def test_implication_chains_over_settings():
    # E independent of S1 and (separately) of S2 implies E independent of S1 and S2 together,
    # so a support-only clause on E of both is implied; one of them alone does not imply it.
    base = (ROOT / "theories" / "bell-3x2.yaml").read_text()
    extra = """
  on-supports:
    independent: {events: [B], of: [A.setting, C.setting], reading: supports}
  b-free-of-a:
    independent: {events: [B, C], of: [A.setting]}
  b-free-of-c:
    independent: {events: [A, B], of: [C.setting]}
"""
    text = base.replace("bundles:\n", extra.lstrip("\n") + "bundles:\n", 1)
    t = load_theory_text(text, "chain.yaml")
    m = compile_bundle(t, "on-supports+b-free-of-a+b-free-of-c")
    assert any("on-supports" in n and "implied" in n for n in m.notes)
    with pytest.raises(InputError, match="supports only"):
        compile_bundle(t, "on-supports+b-free-of-a")
