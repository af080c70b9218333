"""The decomposition on point sets with a bank of faces (nogo.polytope.faces) against published counts and the listed route.

Check values and their sources:

* Two parties, two binary settings: 24 facets in 2 classes (16 CHSH, 8
  positivity); A. Fine, Phys. Rev. Lett. 48, 291 (1982) (common practice).
* Two parties, three binary settings: 684 facets in 3 classes (positivity 36,
  CHSH 72, I3322 576); D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004)
  (class sizes from memory, as in tests/test_symmetric_graph.py).
* Local friendliness, three settings: 932 facets; K.-W. Bong et al., Nature
  Physics 16, 1199 (2020), arXiv:1907.05607.

The faces route must give exactly the facet list of the route that lists the
group (an independent canonical form: smallest image of the incidence set).
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("pynauty")

from nogo.compile import compile_bundle  # noqa: E402
from nogo.polytope import derive_symmetric  # noqa: E402
from nogo.polytope.canon import GraphClasses  # noqa: E402
from nogo.polytope.faces import FaceBank, PointGraph, orbit  # noqa: E402
from nogo.symmetry import bundle_generators, generators, permutation  # noqa: E402

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


@pytest.mark.parametrize("name,bundle,count,by", [
    ("bell-2x3", "Bell-local", 684, "canonical form of the point set"),
    # points that are not 0/1 in probability coordinates: the faces route hands over to the canonical graph
    ("friends-2x3", "local-friendliness", 932, "canonical graph"),
])
def test_faces_route_equals_listed_route(theory, name, bundle, count, by):
    th = theory(name)
    model = compile_bundle(th, bundle)
    gens = bundle_generators(th, bundle)
    L = derive_symmetric(model, generators=gens, classes="list")
    F = derive_symmetric(model, generators=gens, classes="faces")
    assert L.status == F.status == "complete"
    assert len(F.facets) == len(L.facets) == count
    assert {(f.a, f.b) for f in F.facets} == {(f.a, f.b) for f in L.facets}
    assert sorted(F.class_sizes) == sorted(L.class_sizes)
    assert F.stats["classes by"].startswith(by)
