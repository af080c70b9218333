"""The decomposition on point sets with a bank of faces (nogo.polytope.faces) against published counts and the listed route.

Check values and their sources:

* Two parties, two binary settings: 24 facets in 2 classes (16 CHSH, 8
  positivity); A. Fine, Phys. Rev. Lett. 48, 291 (1982) (common practice).
* Three parties, two binary settings: 53,856 facets in 46 classes; C. Śliwa,
  Phys. Lett. A 317, 165 (2003) (slow test).
* Two parties, three binary settings: 684 facets in 3 classes (positivity 36,
  CHSH 72, I3322 576); D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004)
  (class sizes from memory, as in tests/test_symmetric_graph.py).

The whole symmetric route with ``classes="faces"`` is compared with the route
that lists the group in tests/test_symmetric_graph.py.
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("pynauty")

from nogo.polytope.canon import GraphClasses  # noqa: E402
from nogo.polytope.faces import FaceBank, PointGraph, orbit  # noqa: E402
from nogo.symmetry import generators, permutation  # noqa: E402

from test_symmetric_graph import _deterministic  # noqa: E402


def _bank(sc, **kw):
    perms = [permutation(sc, g.move) for g in generators(sc)]
    X = _deterministic(sc)
    G = GraphClasses(sc, perms, X, np.eye(X.shape[1], dtype=np.int64))
    return FaceBank(PointGraph(G.st, X, G.order), **kw), X


@pytest.mark.parametrize("name,classes,total,sizes", [
    ("bell-2x2", 2, 24, [8, 16]),
    ("bell-2x3", 3, 684, [36, 72, 576]),
])
def test_bank_counts(theory, name, classes, total, sizes):
    fb, X = _bank(theory(name).scenario)
    reps = fb.decompose(np.ones(len(X), dtype=bool))
    assert len(reps) == classes
    assert sum(o for _, o in reps) == total
    assert sorted(o for _, o in reps) == sizes
    for (m, c, beta), _ in reps:  # each representative: valid on every point, tight exactly on its mask
        vals = X @ c
        assert np.all(vals <= beta) and np.array_equal(vals == beta, m)


def test_bank_orbits_match_orbit_sizes(theory):
    fb, X = _bank(theory("bell-2x3").scenario)
    gens = fb.graph.gens
    for f, size in fb.decompose(np.ones(len(X), dtype=bool)):
        assert len(orbit(f, gens)) == size  # orbit listed by the generators = |G| / |stabiliser| from nauty


def test_leaf_threshold_does_not_change_the_result(theory):
    # all recursion (threshold 0) against one hull per face (a large threshold): the same classes
    fb0, X = _bank(theory("bell-2x3").scenario, leaf_excess=0)
    fb1, _ = _bank(theory("bell-2x3").scenario, leaf_excess=100)
    r0 = fb0.decompose(np.ones(len(X), dtype=bool))
    r1 = fb1.decompose(np.ones(len(X), dtype=bool))
    assert fb0.stats["recursive faces"] > 0 and fb1.stats["recursive faces"] == 0
    assert sorted((int(f[0].sum()), o) for f, o in r0) == sorted((int(f[0].sum()), o) for f, o in r1)


def test_interrupted_run_keeps_only_top_level_classes(theory):
    # a deadline met deep in the recursion: the classes kept for a partial result are facets of the whole set
    from nogo.polytope.adjacency import OutOfTime, affine_rank

    fb, X = _bank(theory("bell-2x3").scenario, leaf_excess=0)
    calls = {"n": 0}

    def tick():
        calls["n"] += 1
        if calls["n"] > 6:
            raise OutOfTime()
    fb._check_time = tick
    with pytest.raises(OutOfTime):
        fb.decompose(np.ones(len(X), dtype=bool))
    assert fb.stats["recursive faces"] > 0  # the deadline was met below the top level
    dim = affine_rank(X)
    assert fb.reps
    for (m, c, beta), _ in fb.reps.values():
        vals = X @ c
        assert np.all(vals <= beta) and np.array_equal(vals == beta, m)
        assert affine_rank(X[m]) == dim - 1


@pytest.mark.slow
def test_faces_route_three_parties(theory):
    # Śliwa, Phys. Lett. A 317, 165 (2003): 53,856 facets in 46 classes (about 130 s here on one core)
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_symmetric
    from nogo.symmetry import bundle_generators

    th = theory("bell-3x2")
    P = derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"),
                         classes="faces")
    assert P.status == "complete"
    assert P.stats["classes by"].startswith("canonical form of the point set")
    assert len(P.facets) == 53_856 and len(P.classes) == 46
