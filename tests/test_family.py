"""Families of scenarios (nogo/family.py, nogo family).

Check values and their sources:

* Two labs, one inner observer each read out at setting 1: with two
  settings per party the local-friendliness set equals the Bell-local set;
  with three settings it is strictly larger, 932 facets against 684 — K.-W.
  Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607 (684:
  Collins & Gisin, J. Phys. A 37, 1775 (2004)).
* Which canonical scenarios have local friendliness equal to the Bell-local
  set: M. Haddara and E. G. Cavalcanti, arXiv:2407.20346.  The criterion used
  below is our statement of that classification, *from memory* and checked
  against the partially deterministic characterisation (local friendliness =
  mixtures of no-signalling behaviours deterministic at the read-out
  settings; Bong et al. 2020): the sets are equal exactly when at most one lab
  has two or more settings besides its read-out setting (a lab without an
  inner observer has no read-out setting).  nogo does not use the criterion:
  it computes every answer, and the test compares.
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
    """Our statement of the arXiv:2407.20346 classification (from memory; see the module docstring)."""
    free = [s - (1 if f else 0) for s, f in zip(m.settings, m.friends)]
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


def test_classification_on_members_in_reach():
    # arXiv:2407.20346 (classification from memory, see above)
    t = Template(labs=(2, 3), settings=("2", "3/2"), outcomes=(2,), friends=("each",))
    fr = run_family(t, "lf-equals-bell", time_limit=120, route="facets")  # the oracle route: results/families
    assert len(fr.results) == 3 + 4 + 4  # (2,2): AB, A, none; (3,2): AB, A, B, none; (2,2,2): ABC, AB, A, none
    decided = 0
    for r in fr.results:
        m = r.member
        if r.answer in ("equal", "not equal"):
            decided += 1
            assert (r.answer == "equal") == expected_equal(m), m.key
        else:
            # only an equal member beyond the exact hull may stay open; it must say why
            assert r.answer == "out of reach" and expected_equal(m) and not r.estimate["hull_in_reach"], m.key
            assert any("not attempted" in n for n in r.notes)
        if m.labs == 2:
            assert r.answer in ("equal", "not equal") and r.facets  # every two-lab member here is in reach
    assert decided >= 9
    # a two-lab member without inner observers: local friendliness is no-signalling, PR boxes included
    none = next(r for r in fr.results if r.member.key == "2labs-s2x2-o2-friends-none")
    assert none.facets == {"local-friendliness": 16, "Bell-local": 24}  # the no-signalling polytope has 16 facets (positivity)


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


def test_table_says_the_classification_is_from_memory():
    from nogo.family_output import CRITERION, NOTE, markdown_table

    fr = run_family(Template(labs=(2,), settings=("2",), friends=("all",)), "lf-equals-bell")
    md = markdown_table(fr)
    assert CRITERION in md.splitlines()[0] and "from memory" in CRITERION
    assert "not checked against the paper" in NOTE and NOTE in md
    assert md.splitlines()[2].rstrip(" |").endswith("equal")  # the recalled criterion agrees here
