"""Facet classes by a canonical coloured graph (nogo.polytope.canon) against the listed group and published counts.

Check values and their sources:

* Group order of the relabellings of two parties with m binary settings each
  (outcomes per setting, settings per party, exchange of the parties):
  (2^m · m!)^2 · 2; for m = 4: 294,912 (elementary counting, common practice).
* Lifting (S. Pironio, J. Math. Phys. 46, 062112 (2005)): a facet of the
  two-party Bell polytope with fewer settings stays a facet with more.  With
  four binary settings: positivity (64 facets), CHSH (8 per pair of settings
  of each party, 36 pairs: 288) and I3322 (576 per triple of settings,
  16 triples: 9,216) are three distinct classes.  The three-setting counts
  36 / 72 / 576 are from D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004)
  (from memory); the four-setting sizes follow by counting the unused settings.
* 2 x 3 Bell-local: 684 facets in 3 classes (Collins & Gisin 2004); local
  friendliness, three settings: 932 facets (K.-W. Bong et al., Nature
  Physics 16, 1199 (2020), arXiv:1907.05607); three parties: 53,856 facets
  in 46 classes (C. Śliwa, Phys. Lett. A 317, 165 (2003)).  The graph route
  must give exactly the facet list of the route that lists the group.
* Two parties, four binary settings: 175 classes of facets under the same
  group (E. Zambrini Cruzeiro and N. Gisin, Phys. Rev. A 99, 022104 (2019)).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

pytest.importorskip("pynauty")

from nogo.compile import compile_bundle  # noqa: E402
from nogo.polytope import derive_symmetric  # noqa: E402
from nogo.polytope.canon import GraphClasses, permutation_group_order  # noqa: E402
from nogo.symmetry import bundle_generators, generators, permutation  # noqa: E402


def _deterministic(sc) -> np.ndarray:
    """The local deterministic behaviours (Fine 1982) in the scenario's probability coordinates, as 0/1 rows."""
    coords = sc.coordinates()
    rows = []
    choices = [list(itertools.product(p.outcomes, repeat=len(p.settings))) for p in sc.parties]
    for f in itertools.product(*choices):
        out = {(i, x): f[i][j] for i, p in enumerate(sc.parties) for j, x in enumerate(p.settings)}
        rows.append([int(all(out[(i, s[i])] == a[i] for i in range(len(s)))) for s, a in coords])
    return np.array(rows, dtype=np.int64)


def _full(sc, terms: dict) -> list[int]:
    """Integer coefficients over the probability coordinates from {(settings, outcomes): value}."""
    return [int(terms.get(c, 0)) for c in sc.coordinates()]


def _graph(sc):
    perms = [permutation(sc, g.move) for g in generators(sc)]
    X = _deterministic(sc)
    return GraphClasses(sc, perms, X, np.eye(X.shape[1], dtype=np.int64)), perms


def test_bell_2x4_group_order_and_lifted_classes(theory):
    sc = theory("bell-2x4").scenario
    G, perms = _graph(sc)
    m = 4
    assert G.order == (2**m * math.factorial(m)) ** 2 * 2 == 294_912
    assert G.graph_order == G.order == permutation_group_order(perms, len(sc.coordinates()))
    A, B = "+1", "-1"
    s = {x: str(x) for x in range(1, 5)}

    def E(x, y):  # correlator <A_x B_y> in probabilities
        return {((s[x], s[y]), (a, b)): (1 if a == b else -1) for a in (A, B) for b in (A, B)}

    positivity = _full(sc, {((s[1], s[1]), (A, A)): -1})  # -p(++|11) <= 0
    chsh = {}
    for (x, y), sign in {(1, 1): 1, (1, 2): 1, (2, 1): 1, (2, 2): -1}.items():
        for k, v in E(x, y).items():
            chsh[k] = chsh.get(k, 0) + sign * v
    chsh = _full(sc, chsh)  # <= 2
    # I3322 in Collins–Gisin form (Collins & Gisin 2004, from memory), outcome '+1' counted:
    # -pA(1) - 2 pB(1) - pB(2) + p(11) + p(12) + p(13) + p(21) + p(22) - p(23) + p(31) - p(32) <= 0
    i3322: dict = {}

    def add(key, v):
        i3322[key] = i3322.get(key, 0) + v
    for b in (A, B):
        add(((s[1], s[1]), (A, b)), -1)  # pA(+|1), read at y = 1 (any y: the projection removes the choice)
    for a in (A, B):
        add(((s[1], s[1]), (a, A)), -2)  # pB(+|1)
        add(((s[1], s[2]), (a, A)), -1)  # pB(+|2)
    for (x, y), v in {(1, 1): 1, (1, 2): 1, (1, 3): 1, (2, 1): 1, (2, 2): 1, (2, 3): -1, (3, 1): 1,
                      (3, 2): -1}.items():
        add(((s[x], s[y]), (A, A)), v)
    i3322 = _full(sc, i3322)
    X = G.X
    for c, bound, tight in ((positivity, 0, 192), (chsh, 2, 128), (i3322, 0, 80)):
        vals = X @ np.array(c)
        assert vals.max() == bound and int(np.sum(vals == bound)) == tight  # valid and tight where expected
    keys = [G.key_full(c) for c in (positivity, chsh, i3322)]
    assert [orbit for _, orbit in keys] == [64, 288, 9216]
    assert len({k for k, _ in keys}) == 3
    # the key is a class invariant: a random product of relabellings leaves it unchanged
    rng = np.random.default_rng(7)
    for c, (key, _) in zip((positivity, chsh, i3322), keys):
        img = list(c)
        for _ in range(25):
            p = perms[int(rng.integers(len(perms)))]
            moved = [0] * len(img)
            for i, j in enumerate(p):
                moved[j] = img[i]
            img = moved
        assert G.key_full(img)[0] == key
    # exchanging A's outcomes at settings 1 and 2 turns every correlator <A_x B_y> there into its negative:
    # -CHSH <= 2 is in the CHSH class; -p(+-|23) <= 0 is a positivity facet
    assert G.key_full([-v for v in chsh])[0] == keys[1][0]
    assert G.key_full(_full(sc, {((s[2], s[3]), (A, B)): -1}))[0] == keys[0][0]


def test_stabiliser_listed_on_the_points(theory):
    sc = theory("bell-2x4").scenario
    G, _ = _graph(sc)
    positivity = _full(sc, {(("1", "1"), ("+1", "+1")): -1})
    a = G.canonical_full(positivity)
    stab = G.stabiliser_points_full(positivity)
    # each element maps the tight points (p(++|11) = 0) onto themselves
    tight = G.X @ np.array(positivity) == 0
    assert all(np.array_equal(tight[row], tight) for row in np.argsort(stab, axis=1))
    assert len(stab) * 64 == G.order  # orbit-stabiliser, exactly
    assert len(a) == len(sc.coordinates())


@pytest.mark.parametrize("name,bundle,count,how,by", [
    ("bell-2x3", "Bell-local", 684, "graph", "canonical graph"),
    ("friends-2x3", "local-friendliness", 932, "graph", "canonical graph"),
    # point sets with the bank of faces (nogo.polytope.faces); the local-friendliness points are not
    # 0/1 in probability coordinates, so that route hands over to the canonical graph
    ("bell-2x3", "Bell-local", 684, "faces", "canonical form of the point set"),
    ("friends-2x3", "local-friendliness", 932, "faces", "canonical graph"),
])
def test_graph_route_equals_listed_route(theory, name, bundle, count, how, by):
    # Collins & Gisin (2004): 684; Bong et al., arXiv:1907.05607: 932
    th = theory(name)
    model = compile_bundle(th, bundle)
    gens = bundle_generators(th, bundle)
    L = derive_symmetric(model, generators=gens, classes="list")
    G = derive_symmetric(model, generators=gens, classes=how)
    assert L.status == G.status == "complete"
    assert len(G.facets) == len(L.facets) == count
    assert {(f.a, f.b) for f in G.facets} == {(f.a, f.b) for f in L.facets}
    assert sorted(G.class_sizes) == sorted(L.class_sizes)
    assert G.group_order == L.group_order
    assert G.stats["classes by"].startswith(by)


@pytest.mark.slow
def test_bell_3x2_graph_route_equals_listed_route(theory):
    # Śliwa, Phys. Lett. A 317, 165 (2003): 53,856 facets in 46 classes
    th = theory("bell-3x2")
    model = compile_bundle(th, "Bell-local")
    gens = bundle_generators(th, "Bell-local")
    G = derive_symmetric(model, generators=gens, classes="graph")
    L = derive_symmetric(model, generators=gens, classes="list")
    assert len(G.facets) == 53_856 and len(G.classes) == 46
    assert {(f.a, f.b) for f in G.facets} == {(f.a, f.b) for f in L.facets}


@pytest.mark.slow
@pytest.mark.xfail(strict=True, reason="complete not reached: exploration meets all 175 classes in ~12 s "
                   "(tests/test_closure.py), but completeness needs the ridges of positivity (192 points), lifted "
                   "CHSH (128) and lifted I3322 (80); no stopping rule spares them (the group is transitive on the "
                   "vertices) and the closure proof does not finish (the 80-point face alone has 24,620 candidate "
                   "facets under a stabiliser of order 32; see DEVELOPERS.md, exploration and the closure proof)")
def test_bell_2x4_all_classes(theory):
    # Zambrini Cruzeiro & Gisin, Phys. Rev. A 99, 022104 (2019): 175 classes under relabellings of settings,
    # outcomes and the exchange of the parties (the group of order 294,912 used here)
    th = theory("bell-2x4")
    P = derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"),
                         time_limit=600)
    assert P.group_order == 294_912
    assert P.status == "complete"
    assert len(P.classes) == 175
