"""Facets derived from declarations, checked against published facet counts.

Every polytope here is derived from the theory file's declarations
(compile_bundle -> LinearModel -> LP oracle + exact hull), never from a
hand-written characterisation.  The check values and their sources:

* 2 parties x 2 settings x 2 outcomes, Bell-local: 24 facets = 16 positivity
  + 8 CHSH.  A. Fine, Phys. Rev. Lett. 48, 291 (1982); M. Froissart,
  Nuovo Cimento B 64, 241 (1981).
* 2 x 3 x 2, Bell-local: 684 facets in 3 classes, 36 positivity, 72 CHSH,
  576 I3322.  D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004) (class
  sizes from memory).
* Local friendliness, two labs with one inner observer each, 3 settings per
  party: 932 facets.  K.-W. Bong et al., Nature Physics 16, 1199 (2020),
  arXiv:1907.05607.  It contains the Bell-local polytope (same paper).
* Same with 2 settings per party: the local-friendliness set equals the
  Bell-local set.  Bong et al. (2020); arXiv:2407.20346.
* 3 parties x 2 x 2, Bell-local: 53,856 facets in 46 classes.  C. Śliwa,
  Phys. Lett. A 317, 165 (2003).  (slow)
"""

from __future__ import annotations

import json
from fractions import Fraction

import pytest

from nogo.check import decide
from nogo.compile import compile_bundle
from nogo.facetexport import export, to_dict
from nogo.facets import classify, compare, compare_results, facets
from nogo.inequality import parse_inequality
from nogo.symmetry import generators
from nogo.theory import load_theory_text

_CACHE: dict = {}


@pytest.fixture
def derived(theory, tmp_path_factory):
    """Derive once per test session (the derivations are the expensive part)."""
    folder = tmp_path_factory.getbasetemp() / "facet-cache"

    def get(name: str, bundle: str, **kw):
        key = (name, bundle, tuple(sorted(kw.items())))
        if key not in _CACHE:
            _CACHE[key] = facets(theory(name), bundle, cache=folder, **kw)
        return _CACHE[key]
    return get


def sizes(r) -> dict[str, int]:
    return {c.name: c.size for c in r.classes}


# -- published counts ------------------------------------------------------------------------------
def test_bell_2x2_facets(derived):
    r = derived("bell-2x2", "Bell-local")
    # Fine, PRL 48, 291 (1982); Froissart, Nuovo Cimento B 64, 241 (1981): 16 positivity + 8 CHSH
    assert r.status == "complete"
    assert len(r.facets) == 24
    assert sizes(r) == {"positivity": 16, "CHSH": 8}
    assert len(r.vertices) == 16  # the deterministic local strategies (Fine 1982)
    assert r.frame.kind == "collins-gisin" and r.dim == 8  # no-signalling holds, checked exactly


def test_bell_2x3_facets(derived):
    r = derived("bell-2x3", "Bell-local")
    # Collins & Gisin, J. Phys. A 37, 1775 (2004): 684 facets, 3 classes (36 / 72 / 576, from memory)
    assert len(r.facets) == 684
    assert sizes(r) == {"positivity": 36, "CHSH": 72, "I3322": 576}
    assert len(r.vertices) == 64 and r.dim == 15


def test_local_friendliness_2x3_facets(derived):
    r = derived("friends-2x3", "local-friendliness")
    # Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607: 932 facets
    assert r.status == "complete"
    assert len(r.facets) == 932
    assert sum(c.size for c in r.classes) == 932
    # the read-out setting is pinned: only settings 2 and 3 are exchanged, and every move kept is
    # an exact symmetry of the set (it permutes the vertices)
    assert r.symmetries.count("permute settings of A") == 1
    assert r.dropped_symmetries == []


def test_local_friendliness_2x3_contains_bell(derived):
    lf = derived("friends-2x3", "local-friendliness")
    bell = derived("friends-2x3", "Bell-local")
    c = compare_results(lf, bell)
    # Bong et al. (2020): the Bell-local polytope lies strictly inside the local-friendliness one
    assert c.relation == "second inside first"
    assert c.same_hull
    assert not c.second_outside and c.first_outside
    # every witness is exact: a local-friendliness vertex breaking a Bell facet
    for w in c.first_outside:
        f = bell.facets[w.facet]
        assert f.inequality.value(dict(zip(bell.scenario.coordinates(), w.behaviour))) == w.value > f.b
    # the Bell facets that local friendliness violates are exactly the Bell facets it does not share
    assert set(c.violated_facets_of_second) == set(c.second_only_facets)
    # counting: LF facets = Bell facets kept + facets new to LF
    shared = len(bell.facets) - len(c.second_only_facets)
    assert len(lf.facets) == shared + len(c.first_only_facets)
    assert c.new_facets() and all(f.class_name for f in c.new_facets())
    # a facet new to local friendliness holds for the Bell-local bundle (it contains less)...
    new = c.new_facets()[0]
    res = decide(compile_bundle(bell_theory(), "Bell-local"), parse_inequality(bell.scenario, new.text))
    assert res.implied
    # ...but is not one of its facets
    assert bell.facet_of(new.inequality) is None


def bell_theory():
    from pathlib import Path

    from nogo.theory import load_theory

    return load_theory(Path(__file__).resolve().parent.parent / "theories" / "friends-2x3.yaml")


def test_local_friendliness_2x2_equals_bell(derived):
    # Bong et al. (2020); arXiv:2407.20346: with two settings per party LF = Bell-local
    lf = derived("friends-2x2", "local-friendliness")
    bell = derived("friends-2x2", "Bell-local")
    c = compare_results(lf, bell)
    assert c.relation == "equal"
    assert not c.first_only_facets and not c.second_only_facets
    assert len(lf.facets) == len(bell.facets) == 24  # Fine (1982); Froissart (1981)


@pytest.mark.slow  # about 30 s: two 932-facet derivations
def test_local_friendliness_equals_partly_determined(theory):
    # Literature on partially deterministic polytopes (from memory): the local-friendliness set
    # (3 settings, one read-out per lab) equals the set of mixtures of no-signalling behaviours
    # whose read-out outcome is fixed by the hidden variable.  Both sets come from their own
    # declarations (a linear model and a mixture model), and are compared exactly.
    pd_model = compile_bundle(theory("partly-determined-2x3"), "partly-determined")
    assert pd_model.kind == "mixture"
    lf = facets(theory("friends-2x3"), "local-friendliness", cache=False)
    pd = facets(theory("partly-determined-2x3"), "partly-determined", cache=False)
    assert compare_results(lf, pd).relation == "equal"
    assert len(pd.facets) == 932  # Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607


@pytest.mark.slow
def test_bell_3x2_facets(derived):
    r = derived("bell-3x2", "Bell-local")
    # Śliwa, Phys. Lett. A 317, 165 (2003): 53,856 facets in 46 classes
    assert len(r.facets) == 53_856
    assert len(r.classes) == 46


# -- the evidence holds up independently -------------------------------------------------------------
def test_every_facet_checked_independently(derived, theory):
    """Each CHSH-scenario facet, re-parsed from its text, has exact maximum == bound under the bundle."""
    r = derived("bell-2x2", "Bell-local")
    model = compile_bundle(theory("bell-2x2"), "Bell-local")
    for f in r.facets:
        assert f.verified
        ineq = parse_inequality(r.scenario, f.text)
        assert r.facet_of(ineq) is f  # the printed text is the facet itself
        res = decide(model, ineq)
        assert res.implied and res.maximum == ineq.bound  # tight: the maximum is reached
        assert len(f.vertices) >= r.dim  # a facet of an 8-dimensional polytope touches >= 8 vertices


def test_lf_facets_spot_checked_by_decide(derived, theory):
    r = derived("friends-2x3", "local-friendliness")
    model = compile_bundle(theory("friends-2x3"), "local-friendliness")
    for c in r.classes:
        f = r.facets[c.representative]
        ineq = parse_inequality(r.scenario, f.text)
        res = decide(model, ineq)
        assert res.implied and res.maximum == ineq.bound, c.name


def test_symmetry_moves_that_are_not_symmetries_are_dropped(derived):
    """Exchanging the read-out setting with another is no symmetry of local friendliness (exact check)."""
    r = derived("friends-2x3", "local-friendliness")
    orbits, kept, dropped = classify(r.polytope, generators(r.scenario))  # nothing pinned
    # the cycle (1 2 3) moves the read-out setting; the swap (1 2) does too
    assert "permute settings of A" in dropped and "permute settings of B" in dropped
    assert "swap parties A and B" in kept
    assert sum(len(o) for o in orbits) == 932
    # with two settings LF = Bell-local, so there the exchange of settings is a symmetry after all
    r2 = derived("friends-2x2", "local-friendliness")
    _, kept2, dropped2 = classify(r2.polytope, generators(r2.scenario))
    assert not dropped2 and "permute settings of A" in kept2


def test_signalling_bundle_uses_probabilities():
    text = """
scenario:
  parties:
    A: {settings: [1, 2], outcomes: [+1, -1]}
    B: {settings: [1, 2], outcomes: [+1, -1]}
assumptions:
  one-way:
    says: A's outcome does not depend on B's setting
    independent: {events: [A], of: [B.setting]}
bundles:
  A-silent: [one-way]
"""
    th = load_theory_text(text)
    r = facets(th, "A-silent", cache=False)
    assert r.frame.kind == "probabilities"  # B's marginal may depend on A's setting: no-signalling fails
    # the set is the non-negative orthant cut by equations, so every facet is a positivity p(ab|xy) >= 0
    # (elementary polyhedral fact, common practice)
    d = len(r.scenario.coordinates())
    positivity = set(r.frame.reduce_many([[-int(i == j) for j in range(d)] for i in range(d)], [0] * d))
    assert r.facets and all((f.a, f.b) in positivity for f in r.facets)
    from nogo.errors import InputError

    with pytest.raises(InputError):
        facets(th, "A-silent", frame="collins-gisin", cache=False)


def test_correlator_coordinates(theory):
    r = facets(theory("bell-2x2"), "Bell-local", frame="correlators", cache=False)
    assert len(r.facets) == 24
    chsh = next(r.facets[c.representative] for c in r.classes if c.name == "CHSH")
    assert "<A" in chsh.text and "p(" not in chsh.text
    assert r.facet_of(parse_inequality(r.scenario, "<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2")) is not None


# -- exports, cache, time limit, command line ------------------------------------------------------
def test_exports_and_cache(theory, tmp_path):
    th = theory("bell-2x2")
    r = facets(th, "Bell-local", cache=tmp_path)
    assert not r.from_cache and r.cache_file
    again = facets(th, "Bell-local", cache=tmp_path)
    assert again.from_cache
    assert [(f.a, f.b, f.class_name) for f in again.facets] == [(f.a, f.b, f.class_name) for f in r.facets]
    d = json.loads(export(r, "json"))
    assert d["counts"] == {"facets": 24, "classes": 2, "vertices": 16}
    import yaml

    assert yaml.safe_load(export(r, "yaml"))["counts"]["facets"] == 24
    rows = export(r, "csv").strip().splitlines()
    assert len(rows) == 25 and rows[0].startswith("class,")
    assert len(export(r, "csv", "vertices").strip().splitlines()) == 17
    tex = export(r, "latex")
    assert r"\begin{align*}" in tex and "CHSH" in tex
    assert "tabular" in export(r, "latex", "vertices")
    assert len(to_dict(r)["vertices"]) == 16


def test_time_limit_gives_marked_partial_result(theory):
    r = facets(theory("bell-2x3"), "Bell-local", cache=False, time_limit=0.0)
    assert r.status == "partial"
    assert any("time limit" in n for n in r.polytope.notes)
    assert not all(f.verified for f in r.facets) or not r.facets


def test_cli(tmp_path, capsys, monkeypatch):
    from nogo.cli import main

    monkeypatch.setenv("NOGO_CACHE", str(tmp_path))
    root = __import__("pathlib").Path(__file__).resolve().parent.parent / "theories"
    assert main(["facets", str(root / "bell-2x2.yaml"), "Bell-local", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["counts"]["facets"] == 24
    assert main(["compare", str(root / "friends-2x2.yaml"), "local-friendliness", "Bell-local"]) == 0
    assert "local-friendliness = Bell-local" in capsys.readouterr().out
    assert main(["facets", str(root / "bell-2x2.yaml"), "no-such-bundle"]) == 2
