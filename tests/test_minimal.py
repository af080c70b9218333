"""Minimal implicating / maximal non-implying sets (nogo.minimal, `nogo minimal`).

Check values are derived by hand in the comments beside them, from the
published theorems they rest on; the tool must reproduce them, and every
verdict's evidence is re-checked exactly with nogo.check.recheck.
"""

from __future__ import annotations

import itertools
import json
from fractions import Fraction
from pathlib import Path

import pytest

from nogo.catalog import resolve_inequality
from nogo.check import recheck
from nogo.cli import main
from nogo.compile import compile_bundle
from nogo.minimal import ask, check_claim, find_for_many, find_minimal_sets, split_pool, summarise
from nogo.symmetry import orbit

FRIENDS = str(Path(__file__).resolve().parent.parent / "theories" / "friends-2x2.yaml")
LF_POOL = ["absoluteness", "agency-A", "agency-B", "agency-inner"]
LAM_POOL = LF_POOL + ["hidden", "lam-free", "agency-A-given-lam", "agency-B-given-lam", "outcome-indep"]


def sets(answers):
    return {frozenset(a.subset) for a in answers}


def fs(*names):
    return frozenset(names)


def assert_rechecked(theory, result):
    """Every oracle answer of a search re-checked independently, on a freshly compiled model."""
    assert result.answers, "the search made no oracle call"
    for s, a in result.answers.items():
        assert a.recheck is None, (sorted(s), a.recheck)
        if a.result is not None:
            model = compile_bundle(theory, [n for n in theory.assumptions if n in s or n in result.background])
            assert recheck(model, a.result) is None, sorted(s)


# -- local friendliness, two settings ------------------------------------------------
def test_friends_2x2_local_agency_parts(theory):
    # Scenario and assumptions: K.-W. Bong et al., Nature Physics 16, 1199 (2020),
    # arXiv:1907.05607 (absoluteness + local agency give the LF inequalities; for
    # two settings with read-out at setting 1 they are the Bell inequalities).
    #
    # Hand derivation.  Write A1 := A_in, B1 := B_in (the read-out makes A's
    # setting-1 outcome equal A_in, B's equal B_in).
    # * {absoluteness, agency-A, agency-B} implies CHSH: take the joint
    #   P(a1, b1, a2, b2) := q(A_in=a1, B_in=b1, A=a2, B=b2 | x=2, y=2).
    #   Its (a2,b2) marginal is p(ab|22).  Its (a1,b2) marginal is
    #   q(A_in, B | 2,2) = q(A_in, B | 1,2) by agency-B (B, A_in independent of
    #   A's setting) = p(ab|12) by the read-out; likewise (a2,b1) = p(ab|21) by
    #   agency-A; and (a1,b1) = q(A_in,B_in|2,2) = q(A_in,B_in|1,1) by agency-A
    #   (y: 2->1) then agency-B (x: 2->1) = p(ab|11).  A joint of all four
    #   +-1 variables with the observed pair marginals obeys CHSH <= 2 (Fine,
    #   PRL 48, 291 (1982)).  agency-inner is not needed: it follows from
    #   agency-A + agency-B.
    # * {absoluteness, agency-A, agency-inner} does not: A_in = B_in uniform,
    #   A = A_in at both settings, B = B_in at y=1 and at y=2 B = A_in when x=1,
    #   B = -A when x=2.  Records and A ignore the settings (agency-A,
    #   agency-inner hold); E11 = E12 = E21 = 1, E22 = -1: CHSH = 4.  Mirror
    #   image for {absoluteness, agency-B, agency-inner}.
    # * without absoluteness the records are absent, agency-A/B reduce to
    #   no-signalling (rule of projection) and the PR box reaches 4
    #   (Popescu & Rohrlich, Found. Phys. 24, 379 (1994)).
    # So: one minimal set, three maximal sets (the complements of its members'
    # singletons, by hitting-set duality), each reaching 4.
    th = theory("friends-2x2")
    chsh = resolve_inequality(th.scenario, "CHSH")
    r = find_minimal_sets(th, chsh, LF_POOL)
    assert r.complete
    assert sets(r.minimal) == {fs("absoluteness", "agency-A", "agency-B")}
    assert sets(r.maximal) == {fs("absoluteness", "agency-A", "agency-inner"),
                               fs("absoluteness", "agency-B", "agency-inner"),
                               fs("agency-A", "agency-B", "agency-inner")}
    assert all(a.maximum == 2 and a.result.certificate is not None for a in r.minimal)
    assert all(a.maximum == 4 and a.result.counterexample.value == 4 for a in r.maximal)
    assert r.essential() == ["absoluteness", "agency-A", "agency-B"]
    assert r.idle() == ["agency-inner"]
    assert r.oracle_calls < 2 ** 4
    assert len(r.answers) == r.oracle_calls  # no subset decided twice
    assert_rechecked(th, r)


def test_search_agrees_with_brute_force(theory):
    # Every one of the 2^4 subsets decided directly must agree with the status
    # the search infers by monotonicity (common practice: a brute-force oracle).
    th = theory("friends-2x2")
    chsh = resolve_inequality(th.scenario, "CHSH")
    r = find_minimal_sets(th, chsh, LF_POOL)
    for k in range(len(LF_POOL) + 1):
        for s in itertools.combinations(LF_POOL, k):
            direct = ask(th, s, (), chsh)
            assert direct.status == r.status_of(s), s


@pytest.mark.slow  # about 21 s: a mixture model per subset
def test_friends_2x2_with_hidden_variable(theory):
    # Pool: the three parts of local agency and absoluteness, plus a hidden
    # variable lam (background), lam-free (setting independence), local agency
    # given lam for A and for B, outcome independence by lab given lam.
    #
    # Hand derivation (monotone, so it suffices to find the minimal sets M and
    # check the maximal ones as complements of the minimal hitting sets of M):
    #   M1 {absoluteness, agency-A, agency-B}: as in the test above.
    #   M2 {absoluteness, lam-free, agency-A-given-lam, agency-B-given-lam}:
    #      averaging over lam with setting-independent weights turns agency
    #      given lam into agency-A and agency-B on the mixture; then M1.
    #   M3 {absoluteness, agency-A, lam-free, agency-B-given-lam} and
    #   M4 {absoluteness, agency-B, lam-free, agency-A-given-lam}: the same,
    #      one half unconditioned.
    #   M5 {lam-free, agency-A-given-lam, agency-B-given-lam, outcome-indep}:
    #      without absoluteness the records drop out, these are parameter
    #      independence + outcome independence + setting independence, Bell's
    #      local causality (Jarrett, Nous 18, 569 (1984); Fine, PRL 48, 291
    #      (1982)): CHSH holds.  So absoluteness is NOT needed once outcome
    #      independence is in the pool.
    #   agency-inner is in none (it follows from agency-A + agency-B, and the
    #   counterexamples below satisfy it).  Nothing smaller works: without
    #   lam-free the weights may depend on the settings and per-lam constraints
    #   restrict nothing observable; without outcome independence and
    #   absoluteness a PR box per lam is allowed; a one-way-signalling model
    #   (A = a_x from lam, B = a_x XOR xy) is product-form, setting-independent
    #   and no-signalling on average, and reaches 4 when only one half of
    #   agency given lam holds.
    # Minimal hitting sets of {M1..M5}: {abs, lam-free}, {abs, A|lam},
    # {abs, B|lam}, {abs, outcome-indep}, {agency-A, lam-free},
    # {agency-A, A|lam}, {agency-B, lam-free}, {agency-B, B|lam}; the maximal
    # non-implying sets are their 8 complements in the 8-member pool.
    th = theory("friends-2x2-hidden")
    chsh = resolve_inequality(th.scenario, "CHSH")
    r = find_minimal_sets(th, chsh, LAM_POOL)
    assert r.complete
    assert r.background == ("hidden",)
    pool = frozenset(r.pool)
    assert pool == frozenset(LAM_POOL) - {"hidden"}
    minimal = {fs("absoluteness", "agency-A", "agency-B"),
               fs("absoluteness", "lam-free", "agency-A-given-lam", "agency-B-given-lam"),
               fs("absoluteness", "agency-A", "lam-free", "agency-B-given-lam"),
               fs("absoluteness", "agency-B", "lam-free", "agency-A-given-lam"),
               fs("lam-free", "agency-A-given-lam", "agency-B-given-lam", "outcome-indep")}
    hitting = [("absoluteness", "lam-free"), ("absoluteness", "agency-A-given-lam"),
               ("absoluteness", "agency-B-given-lam"), ("absoluteness", "outcome-indep"),
               ("agency-A", "lam-free"), ("agency-A", "agency-A-given-lam"),
               ("agency-B", "lam-free"), ("agency-B", "agency-B-given-lam")]
    assert sets(r.minimal) == minimal
    assert sets(r.maximal) == {pool - set(h) for h in hitting}
    assert all(a.maximum == 4 for a in r.maximal)
    assert r.idle() == ["agency-inner"]
    assert r.essential() == []
    assert r.oracle_calls < 2 ** 8 // 4
    assert_rechecked(th, r)


# -- Bell's hidden-variable assumptions ----------------------------------------------
def test_bell_hidden_variable_assumptions(theory):
    # Standard Bell scenario, pool {PI, OI, SI, PD}; `hidden` is background.
    # Hand derivation:
    #  * PI + OI + SI: deterministic extreme responses, Fine's theorem (Fine,
    #    PRL 48, 291 (1982)); Bell local: CHSH <= 2.
    #  * PI + PD + SI: deterministic responses with PI are local deterministic,
    #    again Bell local (Bell, Physics 1, 195 (1964)).  (PD makes OI redundant.)
    #  * {OI, PD, SI}: deterministic but signalling responses (B's outcome may
    #    depend on A's setting): a single one reaches 4.
    #  * {PI, OI, PD}: lam may depend on the settings: any behaviour, 4.
    #  * {PI, SI}: per lam any no-signalling response, the PR box reaches 4
    #    (Jarrett, Nous 18, 569 (1984): PI without OI is not enough;
    #    Popescu & Rohrlich, Found. Phys. 24, 379 (1994)).
    th = theory("hidden-2x2")
    chsh = resolve_inequality(th.scenario, "CHSH")
    pool = ["hidden", "param-indep", "outcome-indep", "lam-free", "predetermined"]
    members, background, notes = split_pool(th, pool)
    assert background == ("hidden",) and "hidden" not in members and notes
    r = find_minimal_sets(th, chsh, pool)
    assert r.complete
    assert sets(r.minimal) == {fs("param-indep", "outcome-indep", "lam-free"),
                               fs("param-indep", "predetermined", "lam-free")}
    assert sets(r.maximal) == {fs("outcome-indep", "predetermined", "lam-free"),
                               fs("param-indep", "outcome-indep", "predetermined"),
                               fs("param-indep", "lam-free")}
    assert all(a.maximum == 2 for a in r.minimal)
    assert all(a.maximum == 4 for a in r.maximal)
    pr = next(a for a in r.maximal if a.subset == fs("param-indep", "lam-free"))
    b = pr.result.counterexample.behaviour
    # A PR box (up to relabelling): no-signalling, uniform marginals, every
    # correlator +-1 with CHSH 4 (Popescu & Rohrlich 1994).
    for s in th.scenario.setting_tuples():
        same = b[(s, ("+1", "+1"))] + b[(s, ("-1", "-1"))]
        assert same in (0, 1)
        for a in ("+1", "-1"):
            assert b[(s, (a, "+1"))] + b[(s, (a, "-1"))] == Fraction(1, 2)
            assert b[(s, ("+1", a))] + b[(s, ("-1", a))] == Fraction(1, 2)
    assert r.essential() == ["lam-free", "param-indep"]
    assert_rechecked(th, r)


# -- several inequalities, claims, marginals, time limit ---------------------------
def test_every_version_of_chsh(theory):
    # 8 versions of CHSH in the 2x2 scenario (Fine, PRL 48, 291 (1982): 8 CHSH
    # facets); LF with two settings equals the local polytope (Bong et al.
    # 2020), so every version has the same single minimal set.
    th = theory("friends-2x2")
    versions = orbit(resolve_inequality(th.scenario, "CHSH"))
    assert len(versions) == 8
    results = find_for_many(th, versions, LF_POOL)
    for r in results:
        assert sets(r.minimal) == {fs("absoluteness", "agency-A", "agency-B")}, r.inequality.display()
    s = summarise(results)
    assert s.essential == ["absoluteness", "agency-A", "agency-B"]
    assert s.idle == ["agency-inner"]
    assert s.complete


def test_claims(theory):
    th = theory("friends-2x2")
    chsh = resolve_inequality(th.scenario, "CHSH")
    ok = check_claim(th, chsh, ["absoluteness", "agency-A", "agency-B"])
    assert ok.verdict == "confirmed"
    assert ok.whole.maximum == 2 and all(a.maximum == 4 for a in ok.drops.values())
    too_big = check_claim(th, chsh, LF_POOL)
    assert too_big.verdict == "refuted"
    assert too_big.smaller.subset == fs("absoluteness", "agency-A", "agency-B")
    assert too_big.smaller.result.certificate is not None
    too_small = check_claim(th, chsh, ["absoluteness", "agency-A"])
    assert too_small.verdict == "refuted" and too_small.whole.maximum == 4
    for c in (ok, too_big, too_small):
        for a in [c.whole, *c.drops.values(), *([c.smaller] if c.smaller else [])]:
            assert a.recheck is None


def test_marginal_inequality_refused_by_signalling_sets(theory):
    # I3322 in Collins-Gisin form (Collins & Gisin, J. Phys. A 37, 1775 (2004))
    # uses single-party marginals; counterfactual + setting-independence gives
    # the local polytope, where it holds (local bound 0).  A set that lets B's
    # marginal depend on A's setting gives the written inequality no single
    # meaning: it is refused and counted as not implying.
    th = theory("bell-2x3")
    i3322 = resolve_inequality(th.scenario, "I3322")
    r = find_minimal_sets(th, i3322, ["counterfactual", "setting-independence", "no-signal-A"])
    assert sets(r.minimal) == {fs("counterfactual", "setting-independence")}
    assert sets(r.maximal) == {fs("counterfactual", "no-signal-A"), fs("setting-independence", "no-signal-A")}
    assert all(a.status == "refused" and "marginal of B" in a.message for a in r.maximal)
    assert r.status_of(["no-signal-A"]) == "refused"


def test_time_limit_gives_partial_result(theory):
    th = theory("friends-2x2")
    chsh = resolve_inequality(th.scenario, "CHSH")
    r = find_minimal_sets(th, chsh, LF_POOL, time_limit=1e-9)
    assert not r.complete
    assert any("partial" in n for n in r.notes)
    assert r.status_of(["absoluteness"]) == "unknown"


# -- command line --------------------------------------------------------------
def test_cli_json_and_picture(tmp_path, capsys):
    pic = tmp_path / "lattice.svg"
    code = main(["minimal", FRIENDS, "CHSH", "--pool", ",".join(LF_POOL),
                 "--json", "--picture", str(pic)])
    assert code == 0
    d = json.loads(capsys.readouterr().out)
    res = d["results"][0]
    assert [m["set"] for m in res["minimal"]] == [["absoluteness", "agency-A", "agency-B"]]
    assert all(m["recheck"] == "ok" and "certificate" in m for m in res["minimal"])
    assert all(m["maximum"] == "4" and "counterexample" in m for m in res["maximal"])
    assert pic.read_text().lstrip().startswith("<?xml")


def test_cli_text_claim_and_errors(capsys):
    assert main(["minimal", FRIENDS, "CHSH", "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "minimal implicating sets" in out and "oracle calls" in out
    assert main(["minimal", FRIENDS, "CHSH",
                 "--claim", "absoluteness,agency-A,agency-B,agency-inner"]) == 1
    assert "REFUTED" in capsys.readouterr().out
    assert main(["minimal", FRIENDS, "CHSH", "--pool", "absolutenes"]) == 2
    assert "did you mean 'absoluteness'" in capsys.readouterr().err
