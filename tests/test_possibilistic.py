"""Possibilistic (probability-free) contradictions: SAT verdicts, proofs, checker.

Check values and their sources:

* GHZ: the three-party GHZ state measured in X or Y has a support pattern no
  local hidden-variable model reproduces — Greenberger, Horne, Shimony,
  Zeilinger, Am. J. Phys. 58, 1131 (1990); Mermin, PRL 65, 1838 (1990).
  Quantum behaviour (no-signalling) is consistent with no-signalling.
* Hardy: the four conditions of Hardy's argument contradict Bell locality and
  are possible under no-signalling — L. Hardy, PRL 71, 1665 (1993).
* PR box: consistent with no-signalling, contradicts Bell locality —
  S. Popescu and D. Rohrlich, Found. Phys. 24, 379 (1994).
* Three labs with inner observers (theories/friends-3x2.yaml): a
  possibilistic local-friendliness argument of this kind is published in
  arXiv:2205.12223.  The split between published (joint) local agency and
  the weaker one-lab-at-a-time reading, and the Mermin values 2 and 4, were
  derived independently by hand, SAT and LP (not published values as such);
  the hand derivation is written beside the tests below.
"""

from __future__ import annotations

import copy
import json
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest

from nogo.errors import InputError
from nogo.possibilistic import (check_model, check_proof, decide_pattern, load_pattern, load_pattern_text,
                                support_from_behaviour, to_latex, to_markdown)
from nogo.possibilistic.proof import Proof
from nogo.theory import load_theory_text

ROOT = Path(__file__).resolve().parent.parent
PATTERNS = ROOT / "examples" / "patterns"


def pattern(theory_obj, name):
    return load_pattern(PATTERNS / f"{name}.yaml", theory_obj.scenario)


def assert_proof_ok(th, bundle, pat, r):
    assert r.contradiction
    assert check_proof(th, bundle, pat, r.proof) == []
    # a JSON round trip is what a referee would receive
    again = json.loads(json.dumps(r.proof.to_dict()))
    assert check_proof(th, bundle, pat, again) == []


def assert_model_ok(th, bundle, pat, r):
    assert not r.contradiction
    assert check_model(th, bundle, pat, r.model) == []


# -- GHZ against Bell locality ------------------------------------------------
def test_ghz_contradicts_bell_local(theory):
    # GHZ, Am. J. Phys. 58, 1131 (1990); Mermin, PRL 65, 1838 (1990):
    # XXX = +1 and XYY = YXY = YYX = -1 admit no predetermined values.
    th = theory("bell-3x2")
    pat = pattern(th, "ghz3-x1-y2")
    r = decide_pattern(th, "Bell-local", pat, time_limit=30)
    assert_proof_ok(th, "Bell-local", pat, r)
    assert r.smallest_proven
    # one possible event, the perfect correlations at the four GHZ settings,
    # and setting independence linking them: a handful of instances
    assert len(r.core) <= 10
    kinds = {g.kind for g in r.core}
    assert kinds == {"possible", "impossible", "independent"}
    assert set(r.assumptions_needed()) == {"counterfactual", "setting-independence"}
    assert sum(g.kind == "possible" for g in r.core) == 1  # dual Horn: one positive fact closes the proof


def test_ghz_quantum_support_matches_pattern_and_is_no_signalling(theory):
    # the YAML pattern is the exact support of the Born-rule behaviour (nogo.quantum)
    from nogo.possibilistic.support import support_from_experiment
    from nogo.quantum import load_experiment

    th = theory("bell-3x2")
    exp = load_experiment(ROOT / "examples" / "experiments" / "three-huts-ghz.yaml", th)
    pat = support_from_experiment(exp)
    assert pat.zero_test == "exact"
    ref = pattern(th, "ghz3-x1-y2")
    assert pat.possible == ref.possible and pat.impossible == ref.impossible
    assert len(pat.impossible) == 16  # 4 settings tuples x 4 outcomes of the wrong parity
    r = decide_pattern(th, "no-signalling", pat)
    assert_model_ok(th, "no-signalling", pat, r)


# -- Hardy and PR box ---------------------------------------------------------------
def test_hardy_contradicts_bell_local_not_no_signalling(theory):
    # Hardy, PRL 71, 1665 (1993)
    th = theory("bell-2x2")
    pat = pattern(th, "hardy")
    r = decide_pattern(th, "Bell-local", pat)
    assert_proof_ok(th, "Bell-local", pat, r)
    assert r.smallest_proven
    # Hardy's argument uses exactly its four conditions
    facts = sorted(g.name(th.scenario.party_names) for g in r.core if g.kind != "independent")
    assert facts == ["p(+1,+1|1,1) > 0", "p(+1,+1|2,2) = 0", "p(+1,-1|1,2) = 0", "p(-1,+1|2,1) = 0"]
    ns = decide_pattern(th, "no-signalling", pat)
    assert_model_ok(th, "no-signalling", pat, ns)


def test_pr_box_no_signalling_but_not_bell_local(theory):
    # Popescu & Rohrlich, Found. Phys. 24, 379 (1994)
    th = theory("bell-2x2")
    pat = pattern(th, "pr-box")
    assert_model_ok(th, "no-signalling", pat, decide_pattern(th, "no-signalling", pat))
    r = decide_pattern(th, "Bell-local", pat)
    assert_proof_ok(th, "Bell-local", pat, r)


def test_pr_box_from_an_exact_behaviour(theory):
    th = theory("bell-2x2")
    pr = {}
    for (s, a) in th.scenario.coordinates():
        want_equal = s != ("2", "2")
        pr[(s, a)] = Fraction(1, 2) if (a[0] == a[1]) == want_equal else Fraction(0)
    pat = support_from_behaviour(th.scenario, pr)
    assert pat.zero_test == "exact"
    assert pat.impossible == pattern(th, "pr-box").impossible


# -- three labs with inner observers --------------------------------------------------
# Setup (friends-3x2: setting 1 reads out the inner observer).  "Inner
# observers measure X": inner = X read out at setting 1, outer setting 2 = Y,
# so the observed pattern is the GHZ pattern with 1 = X, 2 = Y
# (ghz3-x1-y2.yaml).  "Inner observers measure Y": inner = Y read out at
# setting 1, outer setting 2 = X: the GHZ pattern with 1 = Y, 2 = X
# (ghz3-y1-x2.yaml).  Both choices let the GHZ argument run.
#
# Hand derivation, Y inner: at (2,1,1) every run has A = -B_in C_in (the
# XYY anti-correlation with B, C showing their records); local agency
# carries (A, records) to (2,2,2), likewise B = -A_in C_in, C = -A_in B_in;
# so A B C = -1 at (2,2,2), against XXX = +1.  Only one lab's outcome with
# the records moves each time: the weak reading suffices.
# X inner: the records' joint has product +1 (XXX, at (1,1,1)); the joint of
# two outer outcomes with the records must move from (1,2,2) to (2,2,2) to
# combine the three anti-correlations: the published (joint) reading does
# it, the one-lab-at-a-time reading does not, and a model exists.
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


def friends_pattern(th, inner):
    from nogo.possibilistic.support import support_from_experiment
    from nogo.quantum import load_experiment_text

    outer = "Y" if inner == "X" else "X"
    exp = load_experiment_text(FRIENDS_EXP.format(inner=inner, outer=outer), th)
    return support_from_experiment(exp)


@pytest.mark.parametrize("inner, file", [("X", "ghz3-x1-y2"), ("Y", "ghz3-y1-x2")])
def test_friends_published_agency_contradiction(theory, inner, file):
    th = theory("friends-3x2")
    pat = friends_pattern(th, inner)
    ref = pattern(th, file)
    assert pat.possible == ref.possible and pat.impossible == ref.impossible
    r = decide_pattern(th, "local-friendliness", pat, time_limit=30)
    assert_proof_ok(th, "local-friendliness", pat, r)
    assert len(r.proof.steps) <= 12  # a handful of steps
    assert "absoluteness" in r.assumptions_needed()
    assert {"agency-A", "agency-B", "agency-C"} >= set(r.assumptions_needed()) - {"absoluteness"}


def test_friends_weak_agency_split(theory):
    th = theory("friends-3x2")
    weak = "local-friendliness-weak"
    rx = decide_pattern(th, weak, friends_pattern(th, "X"))
    assert_model_ok(th, weak, friends_pattern(th, "X"), rx)  # X inner: a possibilistic model exists
    ry = decide_pattern(th, weak, friends_pattern(th, "Y"))
    assert_proof_ok(th, weak, friends_pattern(th, "Y"), ry)  # Y inner: the contradiction survives


def test_friends_mermin_lp(theory):
    # LP (exact evidence) on the Mermin catalog entry, settings 1 = X, 2 = Y:
    # bounded by 2 under published local friendliness, 4 (the GHZ value,
    # Mermin PRL 65, 1838 (1990)) under the weak reading.
    from nogo.catalog import resolve_inequality
    from nogo.check import decide, recheck
    from nogo.compile import compile_bundle

    th = theory("friends-3x2")
    ineq = resolve_inequality(th.scenario, "Mermin")
    for bundle, value, implied in (("local-friendliness", 2, True), ("local-friendliness-weak", 4, False)):
        model = compile_bundle(th, bundle)
        r = decide(model, ineq)
        assert recheck(model, r) is None
        assert r.maximum == value and r.implied == implied


# -- the checker ------------------------------------------------------------------------
@pytest.fixture
def ghz_lf(theory):
    th = theory("friends-3x2")
    pat = pattern(th, "ghz3-x1-y2")
    r = decide_pattern(th, "local-friendliness", pat)
    return th, pat, r.proof.to_dict()


def test_checker_rejects_any_removed_step(ghz_lf):
    th, pat, proof = ghz_lf
    assert check_proof(th, "local-friendliness", pat, proof) == []
    for k in range(len(proof["steps"])):
        cut = copy.deepcopy(proof)
        del cut["steps"][k]
        for i, st in enumerate(cut["steps"]):  # renumber, as a careless editor would
            st["number"] = i + 1
        assert check_proof(th, "local-friendliness", pat, cut), f"removing step {k + 1} went unnoticed"


def test_checker_rejects_altered_steps(ghz_lf):
    th, pat, proof = ghz_lf
    transfer = next(i for i, st in enumerate(proof["steps"]) if st["kind"] == "transfer")
    observed = next(i for i, st in enumerate(proof["steps"]) if st["kind"] == "observed")

    def flip(v):
        return "-1" if v == "+1" else "+1"

    alterations = []
    p = copy.deepcopy(proof)  # a transferred value flipped
    ev = p["steps"][transfer]["statements"][0]["excluded"]
    k = next(iter(ev))
    ev[k] = flip(ev[k])
    alterations.append(p)
    p = copy.deepcopy(proof)  # an observed fact the pattern does not state
    ev = p["steps"][observed]["statements"][0]["excluded"]
    ev["A"] = flip(ev["A"])
    alterations.append(p)
    p = copy.deepcopy(proof)  # the wrong assumption cited
    p["steps"][transfer]["assumption"] = "absoluteness"
    alterations.append(p)
    p = copy.deepcopy(proof)  # a transfer between settings the assumption does not link
    st = p["steps"][transfer]
    st["from_settings"] = ["2" if x == "1" else "1" for x in st["settings"]]
    alterations.append(p)
    p = copy.deepcopy(proof)  # citing no earlier step
    p["steps"][transfer]["uses"] = []
    alterations.append(p)
    p = copy.deepcopy(proof)  # the final event changed to one the pattern calls impossible
    p["steps"][-1]["outcomes"] = ["+1", "-1", "+1"]
    p["steps"][-1]["settings"] = ["1", "1", "1"]
    alterations.append(p)
    p = copy.deepcopy(proof)  # the proof stops before the contradiction
    p["steps"].pop()
    alterations.append(p)
    for i, bad in enumerate(alterations):
        assert check_proof(th, "local-friendliness", pat, bad), f"alteration {i} went unnoticed"
    # and the weaker bundle does not license the published proof's transfers
    assert check_proof(th, "local-friendliness-weak", pat, proof)


def test_checker_rejects_a_broken_model(theory):
    th = theory("bell-2x2")
    pat = pattern(th, "pr-box")
    r = decide_pattern(th, "no-signalling", pat)
    assert check_model(th, "no-signalling", pat, r.model) == []
    broken = dict(r.model)
    s = ("1", "1")
    broken[s] = broken[s][:1]  # drop a possible event at (1,1): B's marginal support now differs
    assert check_model(th, "no-signalling", pat, broken)


# -- limits, input errors, output ----------------------------------------------------------
def test_time_limit_marks_result_not_proven(theory):
    th = theory("bell-3x2")
    pat = pattern(th, "ghz3-x1-y2")
    r = decide_pattern(th, "Bell-local", pat, time_limit=0.0)
    assert r.contradiction and not r.smallest_proven
    assert check_proof(th, "Bell-local", pat, r.proof) == []
    assert "NOT proven smallest" in to_markdown(r.proof)


def test_bad_patterns_are_input_errors(theory):
    th = theory("bell-2x2")
    with pytest.raises(InputError, match="both possible and impossible"):
        load_pattern_text("runs:\n  - {settings: [1, 1], possible: [[+1, +1]], impossible: [[+1, +1]]}\n", th.scenario)
    with pytest.raises(InputError, match="not an outcome"):
        load_pattern_text("runs:\n  - {settings: [1, 1], possible: [[+1, 0]]}\n", th.scenario)
    with pytest.raises(InputError, match="parties"):
        load_pattern_text("parties: [B, A]\nruns:\n  - {settings: [1, 1], possible: all}\n", th.scenario)
    floats = {c: 0.25 for c in th.scenario.coordinates()}
    with pytest.raises(InputError, match="tolerance"):
        support_from_behaviour(th.scenario, floats)
    assert support_from_behaviour(th.scenario, floats, tolerance=1e-9).zero_test == "|p| <= 1e-09"


def test_hidden_kinds_are_refused_clearly():
    th = load_theory_text("""
scenario:
  parties:
    A: {settings: [1, 2], outcomes: [+1, -1]}
    B: {settings: [1, 2], outcomes: [+1, -1]}
assumptions:
  lam: {hidden: lam}
  oi: {factorise: {groups: [[A], [B]], given: [lam]}}
bundles:
  hv: [lam, oi]
""")
    pat = load_pattern_text("runs:\n  - {settings: [1, 1], possible: all}\n", th.scenario)
    with pytest.raises(InputError, match="possibilistic reading"):
        decide_pattern(th, "hv", pat)


def test_renderings_name_steps_and_assumptions(theory):
    th = theory("bell-2x2")
    pat = pattern(th, "hardy")
    r = decide_pattern(th, "Bell-local", pat)
    md, tex = to_markdown(r.proof), to_latex(r.proof)
    n = len(r.proof.steps)
    assert f"{n}. **Contradiction**" in md and "setting-independence" in md
    assert tex.count("\\item") == n and "\\qed" in tex
    assert Proof.from_dict(r.proof.to_dict()).steps[-1].kind == "contradiction"


def test_cli_exit_codes(tmp_path):
    def run(*args):
        return subprocess.run([sys.executable, "-m", "nogo.cli", *args], capture_output=True, text=True, cwd=ROOT)

    hardy = str(PATTERNS / "hardy.yaml")
    out = run("proof", "theories/bell-2x2.yaml", "Bell-local", hardy, "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["verdict"] == "contradiction"
    saved = tmp_path / "proof.json"
    saved.write_text(json.dumps(data["proof"]))
    assert run("proof", "theories/bell-2x2.yaml", "Bell-local", hardy, "--check", str(saved)).returncode == 0
    data["proof"]["steps"].pop(0)
    saved.write_text(json.dumps(data["proof"]))
    assert run("proof", "theories/bell-2x2.yaml", "Bell-local", hardy, "--check", str(saved)).returncode == 1
    assert run("proof", "theories/bell-2x2.yaml", "no-signalling", hardy).returncode == 1
    assert run("proof", "theories/bell-2x2.yaml", "Bell-locl", hardy).returncode == 2


def test_search_finds_ghz_settings(theory):
    # among X/Y assignments the GHZ choice (each party with X and Y) is found;
    # giving every party the same basis twice is never tried
    from nogo.possibilistic.search import named_bases, search
    from nogo.quantum import load_experiment

    th = theory("bell-3x2")
    exp = load_experiment(ROOT / "examples" / "experiments" / "three-huts-ghz.yaml", th)
    res = search(th, "Bell-local", exp, named_bases(["X", "Y"]), same_for_all=True, keep=1)
    assert res.complete and res.points == 2
    assert len(res.contradictions) == 2  # (X, Y) and (Y, X) orders both work
    (point, best), = res.best
    assert best.smallest_proven
    assert check_proof(th, "Bell-local", _variant_pattern(th, exp, point), best.proof) == []


def _variant_pattern(th, exp, point):
    from nogo.possibilistic.search import _variant, named_bases
    from nogo.possibilistic.support import support_from_experiment

    return support_from_experiment(_variant(exp, point.choice, named_bases(["X", "Y"])))
