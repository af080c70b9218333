"""Facets up to symmetry (adjacency decomposition) against published counts and the plain hull.

Check values and their sources:

* 3 parties x 2 settings x 2 outcomes, Bell-local: 53,856 facets in 46 classes.
  C. Śliwa, Phys. Lett. A 317, 165 (2003).
* 2 x 3 x 2, Bell-local: 684 facets in 3 classes (36 positivity, 72 CHSH,
  576 I3322).  D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004) (class sizes
  from memory).
* Local friendliness, two labs with one inner observer each read out at
  setting 1, three settings: 932 facets.  K.-W. Bong et al., Nature Physics
  16, 1199 (2020), arXiv:1907.05607.
* Group orders: relabelling outcomes per (party, setting), permuting the
  settings of a party and permuting parties generate a group of order
  (2^m · m!)^n · n! for n parties with m binary settings each (elementary
  counting, common practice); with a pinned read-out setting the setting
  permutations of that party fix it.
"""

from __future__ import annotations

import math

import pytest

from nogo.compile import compile_bundle
from nogo.polytope import derive_polytope, derive_symmetric
from nogo.symmetry import bundle_generators, generators, lift_to_model


def _symmetric(theory, name, bundle):
    th = theory(name)
    return derive_symmetric(compile_bundle(th, bundle), generators=bundle_generators(th, bundle))


def _keys(P):
    return {(f.a, f.b) for f in P.facets}


def test_bell_3x2_by_classes(theory):
    # Śliwa, Phys. Lett. A 317, 165 (2003): 53,856 facets in 46 classes
    P = _symmetric(theory, "bell-3x2", "Bell-local")
    assert P.status == "complete"
    assert len(P.facets) == 53_856
    assert len(P.classes) == 46
    assert len(_keys(P)) == 53_856  # the classes do not overlap
    assert P.group_order == (2**2 * 2) ** 3 * math.factorial(3) == 3072
    assert len(P.vertices) == 64  # the deterministic local strategies (Fine 1982)
    # every class representative has its own Farkas certificate, checked exactly
    for rep, members in P.classes:
        assert P.facets[rep].certificate is not None and P.facets[rep].verified
        assert rep in members


def test_bell_2x3_symmetric_equals_plain(theory):
    # Collins & Gisin, J. Phys. A 37, 1775 (2004): 684 facets in 3 classes (36 / 72 / 576, from memory)
    th = theory("bell-2x3")
    model = compile_bundle(th, "Bell-local")
    S = derive_symmetric(model, generators=bundle_generators(th, "Bell-local"))
    plain = derive_polytope(model)
    assert sorted(len(m) for _, m in S.classes) == [36, 72, 576]
    assert S.group_order == (2**3 * 6) ** 2 * 2 == 4608
    assert S.frame.kind == plain.frame.kind == "collins-gisin"
    assert _keys(S) == _keys(plain) and len(plain.facets) == 684


def test_local_friendliness_symmetric_equals_plain(theory):
    # Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607: 932 facets
    th = theory("friends-2x3")
    model = compile_bundle(th, "local-friendliness")
    S = derive_symmetric(model, generators=bundle_generators(th, "local-friendliness"))
    plain = derive_polytope(model)
    assert len(S.facets) == 932 == len(plain.facets)
    assert _keys(S) == _keys(plain)
    # read-out setting 1 pinned in each lab: outcome relabellings 2^6, settings 2 and 3 swapped per lab,
    # the labs exchanged: 64 * 2 * 2 * 2 = 512
    assert S.group_order == 512
    assert sum(len(m) for _, m in S.classes) == 932


def test_a_move_that_is_no_symmetry_does_not_lift(theory):
    """Exchanging the read-out setting with another is no symmetry of local friendliness (exact check)."""
    th = theory("friends-2x3")
    lf = compile_bundle(th, "local-friendliness")
    free = {g.label: g for g in generators(th.scenario)}  # nothing pinned
    cycle_a = [g for g in generators(th.scenario) if g.label == "permute settings of A"]
    assert cycle_a and all(lift_to_model(lf, g) is None for g in cycle_a)
    # ... but the same moves are symmetries of the Bell-local bundle of the same scenario
    bell = compile_bundle(th, "Bell-local")
    assert all(lift_to_model(bell, g) is not None for g in cycle_a)
    assert lift_to_model(lf, free["swap parties A and B"]) is not None


def test_mixture_models_take_the_plain_route(theory):
    # a hidden-variable (mixture) model has no column labels to lift a move to: the plain hull runs
    th = theory("hidden-2x2")
    model = compile_bundle(th, "local-causality")
    assert model.kind == "mixture"
    P = derive_symmetric(model, generators=bundle_generators(th, "local-causality"))
    assert P.classes is None and len(P.facets) == 24  # Fine (1982): 16 positivity + 8 CHSH
    assert any("plain hull" in n for n in P.notes)


def test_time_limit_inside_the_decomposition(theory):
    import time

    th = theory("friends-2x3")
    t0 = time.perf_counter()
    P = derive_symmetric(compile_bundle(th, "local-friendliness"), generators=bundle_generators(th, "local-friendliness"),
                         time_limit=1.0)
    assert time.perf_counter() - t0 < 6
    assert P.status == "partial"
    assert any("time limit" in n for n in P.notes)


@pytest.mark.slow
def test_bell_3x2_plain_hull_equals_classes(theory):
    # Śliwa (2003); the plain hull (cddlib on all 64 vertices) as the cross-check, about 20 minutes
    th = theory("bell-3x2")
    model = compile_bundle(th, "Bell-local")
    S = derive_symmetric(model, generators=bundle_generators(th, "Bell-local"))
    plain = derive_polytope(model)
    assert _keys(S) == _keys(plain)


def test_group_is_checked_on_the_vertex_set(theory):
    """A relabelling that does not permute the vertices is refused when the group is built (exact)."""
    from nogo.polytope.group import enumerate_group
    from nogo.symmetry import permutation

    P = _symmetric(theory, "friends-2x3", "local-friendliness")
    sc = P.scenario
    gens = [(g.label, permutation(sc, g.move)) for g in generators(sc)]  # the read-out setting not pinned
    group, refused = enumerate_group(P.vertices, P.frame, gens)
    # Bong et al. (2020): exchanging the read-out setting 1 with setting 2 or 3 is no symmetry of the set
    assert "permute settings of A" in refused and "permute settings of B" in refused
    # unpinned, the setting moves offered are (1 2) and (1 2 3), both refused; what is left is the outcome
    # relabellings and the exchange of the labs: 2^6 * 2 = 128, a subgroup of the pinned group of order 512
    assert group.order == 128 and P.group_order == 512
