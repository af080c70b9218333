"""Families of scenarios (nogo/family.py, nogo family).

Check values and their sources:

* Two labs, one inner observer each read out at setting 1: with two
  settings per party the local-friendliness set equals the Bell-local set;
  with three settings it is strictly larger, 932 facets against 684 — K.-W.
  Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607 (684:
  Collins & Gisin, J. Phys. A 37, 1775 (2004)).
* Which canonical scenarios have local friendliness equal to the Bell-local
  set: M. Haddara and E. G. Cavalcanti, arXiv:2407.20346.  The stored copy
  of the paper read for this project (arxiv.org/html/2407.20346v1) holds the
  abstract only: the authors identify *all* canonical local-friendliness
  scenarios, with arbitrary finite numbers of superobservers, friends,
  measurements and outcomes, in which the LF correlations admit a local
  hidden-variable model, and those in which they do not, with a constructive
  proof.  The theorem's wording and number were not available, so the
  criterion below is the classification *in the form derived in
  results/families/README.md* (ours): under the published local agency LF
  equals the partially deterministic set (outcomes fixed at the read-out
  settings; Bong et al. 2020 for two labs; arXiv:2510.25127), and that set
  is Bell-local exactly when at most one lab has two or more settings that
  are not read out (a vertex is a deterministic part times a no-signalling
  box in which at most one lab has several inputs, hence local; otherwise a
  PR box, Popescu & Rohrlich, Found. Phys. 24, 379 (1994), between two labs'
  free settings violates a lifted CHSH inequality).  nogo does not use the
  criterion: it computes every answer, and the tests compare.
* Three labs, two settings, friends everywhere: the Bell-local set has
  53,856 facets in 46 classes (C. Śliwa, Phys. Lett. A 317, 165 (2003)).
* Mermin's inequality under local friendliness in three labs: bound 2 (N. D.
  Mermin, PRL 65, 1838 (1990); the three-lab study of this project's shipped
  friends-3x2.yaml); under no-signalling (no inner observers) 4.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from nogo.family import Job, Member, Template, estimate, run_family, run_job

ROOT = Path(__file__).resolve().parent.parent


def expected_equal(m: Member) -> bool:
    """The classification of arXiv:2407.20346 in the form stated in the module docstring (published agency)."""
    free = [s - (m.sequence if f else 0) for s, f in zip(m.settings, m.friends)]
    return sum(1 for x in free if x >= 2) <= 1


def test_fixed_point_two_settings_equal():
    r = run_job(Job(Member((2, 2), 2, (True, True)), "lf-equals-bell"))
    assert r.answer == "equal"  # Bong et al. (2020); arXiv:2407.20346
    assert r.facets == {"local-friendliness": 24, "Bell-local": 24}  # Fine (1982): 16 positivity + 8 CHSH
    assert r.witness is None


def test_fixed_point_three_settings_not_equal():
    r = run_job(Job(Member((3, 3), 2, (True, True)), "lf-equals-bell", time_limit=300))
    assert r.answer == "not equal"
    assert r.facets == {"local-friendliness": 932, "Bell-local": 684}  # Bong et al. (2020); Collins & Gisin (2004)
    assert r.relation == "Bell-local inside local friendliness, strictly"
    w = r.witness  # a lifted CHSH on the settings besides the read-out, both maxima exact
    assert w["bell_local_maximum"] == "2" and w["local_friendliness_maximum"] == "4"


def test_classification_on_every_two_lab_member_in_reach():
    # arXiv:2407.20346 (criterion as in the module docstring); fixed points Bong et al. (2020)
    # (three settings each: the fixed points below; without friends there the no-signalling hull is large)
    t = Template(labs=(2,), settings=("2", "3/2"), outcomes=(2,), friends=("each",), sequence=(1, 2))
    fr = run_family(t, "lf-equals-bell", time_limit=120)
    assert len(fr.results) == 3 + 4 + 2 + 3  # friend patterns (2/2: AB, A, none; 3/2: AB, A, B, none), sequential
    for r in fr.results:
        assert r.answer in ("equal", "not equal") and r.facets, r.member.key  # every one decided here
        assert (r.answer == "equal") == expected_equal(r.member), r.member.key
    # a two-lab member without inner observers: local friendliness is no-signalling, PR boxes included
    none = next(r for r in fr.results if r.member.key == "2labs-s2x2-o2-friends-none")
    assert none.facets == {"local-friendliness": 16, "Bell-local": 24}  # the no-signalling polytope has 16 facets (positivity)


@pytest.mark.slow
def test_classification_on_three_labs_with_two_settings():
    # arXiv:2407.20346 (criterion as in the module docstring): friends in all three labs or in two: equal
    # (each lab but at most one has a single free setting); in one lab or none: not equal.  53,856 Bell-local
    # facets (Śliwa 2003).  About a minute: the oracle route, one exact LP per orbit.
    t = Template(labs=(3,), settings=("2",), friends=("each",))
    fr = run_family(t, "lf-equals-bell", time_limit=300)
    got = {r.member.key: r.answer for r in fr.results}
    assert got == {"3labs-s2x2x2-o2-friends-ABC": "equal", "3labs-s2x2x2-o2-friends-AB": "equal",
                   "3labs-s2x2x2-o2-friends-A": "not equal", "3labs-s2x2x2-o2-friends-none": "not equal"}
    for r in fr.results:
        assert (r.answer == "equal") == expected_equal(r.member)
        if r.answer == "equal":
            assert r.facets == {"Bell-local": 53856, "local-friendliness": 53856}
            assert "orbit representatives decided with exactly checked Farkas certificates" in r.evidence[0]
            assert r.seconds <= 300


def test_implies_and_facets_questions():
    t3 = Template(labs=(3,), settings=("2",), friends=("all", "none"))
    fr = run_family(t3, "implies", inequality="Mermin")
    ans = {r.member.key: r.answer for r in fr.results}
    assert ans == {"3labs-s2x2x2-o2-friends-ABC": "implied",  # Mermin bound 2 under local friendliness
                   "3labs-s2x2x2-o2-friends-none": "not implied"}  # no-signalling reaches 4 (Mermin 1990)
    fr = run_family(Template(labs=(2,), settings=("2",), friends=("all",)), "facets", bundle="Bell-local")
    assert fr.results[0].answer == "24 facets"


def test_estimates_decide_reach_before_running():
    e = estimate(Member((2, 2, 2), 2, (True, True, True)))
    assert e["dimension"] == 26 and e["bell_vertices"] == 64 and not e["hull_in_reach"]
    assert estimate(Member((3, 3), 2, (True, True)))["hull_in_reach"]


def test_fan_out_gives_the_same_answers():
    t = Template(labs=(2,), settings=("2",), friends=("all", "none"))
    one = [r.answer for r in run_family(t, "lf-equals-bell").results]
    two = [r.answer for r in run_family(t, "lf-equals-bell", workers=2).results]
    assert one == two == ["equal", "not equal"]


def test_cli_writes_table_plot_json(tmp_path):
    out = subprocess.run([sys.executable, "-m", "nogo", "family", "--labs", "2", "--settings", "2",
                          "--friends", "all,first", "--out", str(tmp_path)], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, out.stderr
    assert "2labs-s2x2-o2-friends-AB" in out.stdout and "| equal |" in out.stdout
    data = json.loads((tmp_path / "results.json").read_text())
    assert [m["answer"] for m in data["members"]] == ["equal", "equal"]
    assert (tmp_path / "plot.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert (tmp_path / "table.csv").read_text().startswith("member,")
    est = subprocess.run([sys.executable, "-m", "nogo", "family", "--labs", "3", "--estimate-only"],
                         capture_output=True, text=True, cwd=ROOT)
    assert est.returncode == 0 and "beyond reach" in est.stdout


@pytest.mark.parametrize("argv, words", [
    (["--settings", "two"], "is not a settings spec"),
    (["--friends", "some"], "unknown friends pattern"),
    (["--labs", "1"], "2 to 8 labs"),
])
def test_cli_errors(argv, words):
    out = subprocess.run([sys.executable, "-m", "nogo", "family", *argv], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 2 and words in out.stderr and "Traceback" not in out.stderr


def test_sequential_friends_give_the_bell_local_set():
    # arXiv:2305.09102 (Proc. R. Soc. A (2024)): with sequential friends local friendliness equals the
    # Bell-local set.  Here two labs, three settings, the friend measuring twice (read out at settings 1
    # and 2); with one friend measurement the same sizes give 932 facets (Bong et al. 2020).
    r = run_job(Job(Member((3, 3), 2, (True, True), 2), "lf-equals-bell", time_limit=300))
    assert r.answer == "equal"
    assert r.facets == {"local-friendliness": 684, "Bell-local": 684}  # Collins & Gisin (2004)
    th = Member((3, 3), 2, (True, True), 2).theory()
    assert [o.read_out_at for o in th.scenario.inner] == ["1", "2", "1", "2"]


def test_local_friendliness_equals_partly_determined():
    # Partially deterministic polytopes (arXiv:2510.25127; Bong et al. 2020, from memory): local friendliness
    # with one friend per lab read out at one setting equals the mixtures of no-signalling behaviours whose
    # read-out outcomes the hidden variable fixes.  Both sets from their own declarations, compared exactly
    # (the 3/3 case with 932 facets is tests/test_facets.py::test_local_friendliness_equals_partly_determined).
    t = Template(labs=(2,), settings=("2", "3/2"), friends=("all", "none"))
    fr = run_family(t, "lf-equals-pd", time_limit=200)
    assert [r.answer for r in fr.results] == ["equal"] * 4
    pd = {r.member.key: r.facets["partly-determined"] for r in fr.results}
    # two settings each: the Bell-local count (Fine 1982); no inner observers: no-signalling (positivity only)
    assert pd["2labs-s2x2-o2-friends-AB"] == 24 and pd["2labs-s2x2-o2-friends-none"] == 16


def test_oracle_route_agrees_with_the_facet_route():
    # two labs, two settings, friends in both: equal (Bong et al. 2020, arXiv:1907.05607), by either route
    m = Member((2, 2), 2, (True, True))
    by_oracle = run_job(Job(m, "lf-equals-bell", route="oracle"))
    by_facets = run_job(Job(m, "lf-equals-bell", route="facets"))
    assert by_oracle.answer == by_facets.answer == "equal"
    assert by_oracle.facets == by_facets.facets == {"local-friendliness": 24, "Bell-local": 24}
    assert "with exactly checked Farkas certificates" in by_oracle.evidence[0]


def test_oracle_comparison_finds_a_failing_bell_facet_when_the_sets_differ():
    # three settings each: local friendliness is strictly larger (932 vs 684 facets, Bong et al. 2020);
    # without the witness search the oracle route must find a Bell-local facet that fails on it
    from nogo.family import MemberResult, estimate
    from nogo.family_oracle import equal_by_oracle

    m = Member((3, 3), 2, (True, True))
    res = MemberResult(m, "lf-equals-bell", "", estimate(m))
    equal_by_oracle(m.theory(), res, None)
    assert res.answer == "not equal" and res.facets == {"Bell-local": 684}
    assert "fails on local friendliness" in res.evidence[0]


def test_table_states_where_the_criterion_comes_from():
    from nogo.family_output import CRITERION, NOTE, criterion, markdown_table

    fr = run_family(Template(labs=(2,), settings=("2", "3"), friends=("all",)), "lf-equals-bell", time_limit=120)
    md = markdown_table(fr)
    assert CRITERION in md.splitlines()[0] and "arXiv:2407.20346" in CRITERION
    assert "abstract" in NOTE and "not available" in NOTE and NOTE in md
    for r in fr.results:  # the column holds the criterion of the module docstring, beside the computed answer
        assert criterion(r.member) == ("equal" if expected_equal(r.member) else "not equal") == r.answer
