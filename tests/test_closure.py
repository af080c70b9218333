"""Completeness by closure (nogo.polytope.closure) after an exploration that sampled large faces.

Check values and their sources:

* Two parties, three binary settings: 684 facets in 3 classes (positivity 36,
  CHSH 72, I3322 576); D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004)
  (class sizes from memory, as in tests/test_symmetric_graph.py).
* Two parties, four binary settings: 175 classes under relabellings of
  settings, outcomes and the exchange of the parties; E. Zambrini Cruzeiro
  and N. Gisin, Phys. Rev. A 99, 022104 (2019).  I4422 (the four-setting
  member of the I_mm22 family, Collins & Gisin 2004) is the start.

The proof itself is a theorem (module docstring); these tests show it
accepts a complete list it did not decompose and refuses one with a class
taken out.
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("pynauty")

from nogo.polytope.closure import ClosureProof, NotClosed  # noqa: E402

from test_bell24_faces import _bank  # noqa: E402


def _explored(theory, name, excess, start="I3322"):
    from nogo.catalog import load_catalog

    sc = theory(name).scenario
    fb, X = _bank(sc, leaf_excess=excess, sample_above=excess, rays=8)
    a, b = load_catalog()[start].inequality(sc).canonical()
    reps = fb.decompose(np.ones(len(X), dtype=bool), start=[(np.array(a, dtype=np.int64), b)])
    return fb, X, reps


def test_exploration_samples_the_large_faces_of_the_three_setting_set(theory):
    # faces more than 14 points beyond a simplex are sampled: positivity (48 points in dimension 14) and
    # CHSH (32); I3322 (20 points) is expanded by one hull
    fb, X, reps = _explored(theory, "bell-2x3", 14)
    assert sorted(o for _, o in reps) == [36, 72, 576]
    assert sorted(int(R.sum()) for R in fb.unexpanded) == [32, 48]
    assert len(fb.expansions) == 1


def test_closure_proves_the_explored_list_complete(theory):
    fb, X, reps = _explored(theory, "bell-2x3", 14)
    proof = ClosureProof(fb, fb.expansions, 14)
    proof.prove(fb.unexpanded, fb.graph.gens)  # raises NotClosed if a facet of a sampled face were unmet
    assert proof.stats["faces checked"] >= 2 and proof.stats["faces expanded"] >= 1


def test_closure_refuses_a_list_with_a_class_taken_out(theory):
    # without I3322's expansion its ridges with positivity and CHSH are unmet: the proof must fail
    fb, X, reps = _explored(theory, "bell-2x3", 14)
    proof = ClosureProof(fb, [], 14)
    with pytest.raises(NotClosed):
        proof.prove(fb.unexpanded, fb.graph.gens)


def test_derive_symmetric_explore_proves_the_three_setting_set_complete(theory, monkeypatch):
    # the whole route: faces over 14 points beyond a simplex sampled, the classes certified by the oracle,
    # then the closure proof turns the result complete, with all 684 facets listed
    import nogo.polytope.symmetric as S
    from nogo.catalog import load_catalog
    from nogo.compile import compile_bundle
    from nogo.symmetry import bundle_generators

    monkeypatch.setattr(S, "_EXPLORE_EXCESS", 14)
    th = theory("bell-2x3")
    start = load_catalog()["I3322"].inequality(th.scenario).canonical()
    P = S.derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"),
                           explore=True, start=[start])
    assert P.stats["sampled faces"] == 2
    assert P.status == "complete" and len(P.facets) == 684 and len(P.classes) == 3
    assert any("proven complete" in n for n in P.notes)
    Q = S.derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"),
                           explore=True, start=[start], prove=False)
    assert Q.status == "partial" and len(Q.classes) == 3


def test_explore_meets_all_175_classes_of_the_four_setting_set(theory):
    # Zambrini Cruzeiro & Gisin, PRA 99, 022104 (2019): 175 classes (group of order 294,912: settings,
    # outcomes, exchange of the parties).  Started from I4422; three faces are sampled, so without the
    # closure proof (which does not finish here) the result is partial, yet each class is an exact facet.
    from nogo.catalog import load_catalog
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_symmetric
    from nogo.symmetry import bundle_generators

    th = theory("bell-2x4")
    start = load_catalog()["I4422"].inequality(th.scenario).canonical()
    P = derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"),
                         explore=True, start=[start], prove=False)
    assert P.group_order == 294_912
    assert len(P.classes) == 175
    assert P.status == "partial" and P.stats["sampled faces"] == 3
    assert any("classes may be missing" in n for n in P.notes)
    for rep_at, _ in P.classes:  # every representative carries a Farkas certificate from the model
        f = P.facets[rep_at]
        assert f.verified is True and f.bound == f.b


def test_a_failed_closure_proof_gives_a_missing_facet_and_the_search_goes_on(theory, monkeypatch):
    # started from positivity alone, sampling finds no I3322: the proof meets a facet that no class found
    # accounts for, lifts it to a facet of the whole set, and the search continues from it until complete
    import nogo.polytope.symmetric as S
    from nogo.compile import compile_bundle
    from nogo.symmetry import bundle_generators

    monkeypatch.setattr(S, "_EXPLORE_EXCESS", 14)
    th = theory("bell-2x3")
    sc = th.scenario
    pos = [0] * len(sc.coordinates())
    pos[0] = -1  # -p(+1 +1|1 1) <= 0
    P = S.derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"),
                           explore=True, start=[(pos, 0)])
    assert P.stats.get("closure rounds", 1) >= 2
    assert P.status == "complete" and len(P.facets) == 684 and sorted(P.class_sizes) == [36, 72, 576]


def test_shipped_four_setting_list_is_175_facets_of_the_deterministic_points():
    # results/facets/bell-2x4-explored/classes.json, checked without nogo: every representative, over the
    # Collins–Gisin coordinates (first outcome +1), holds on the 256 deterministic behaviours with equality
    # on points of affine rank 23 (a facet; Fine, PRL 48, 291 (1982): the Bell-local set is their hull),
    # and the classes are the published 175 (Zambrini Cruzeiro & Gisin, PRA 99, 022104 (2019))
    import itertools
    import json
    from pathlib import Path

    d = json.loads((Path(__file__).resolve().parent.parent / "results" / "facets" / "bell-2x4-explored"
                    / "classes.json").read_text())
    assert d["coordinates"]["kind"] == "collins-gisin" and d["group order"] == 294_912
    assert len(d["classes"]) == 175 and sum(c["size"] for c in d["classes"]) == 36_391_264
    assert d["counts"] == {"facets": 36_391_264, "classes": 175, "vertices": 256, "facets listed": 175}
    pts = []
    for a in itertools.product([1, 0], repeat=4):  # 1: outcome +1 at that setting
        for b in itertools.product([1, 0], repeat=4):
            pts.append(list(a) + list(b) + [a[x] * b[y] for x in range(4) for y in range(4)])
    V = np.array(pts, dtype=np.int64)
    assert len(d["facets"]) == 175
    for f in d["facets"]:
        vals = V @ np.array(f["coefficients"], dtype=np.int64)
        assert vals.max() == f["bound"] and int(np.sum(vals == f["bound"])) == f["vertices on it"]
        T = V[vals == f["bound"]]
        assert np.linalg.matrix_rank((T[1:] - T[0]).astype(float)) == 23


@pytest.mark.slow
def test_closure_proves_the_three_party_set_complete(theory, monkeypatch):
    # Śliwa, Phys. Lett. A 317, 165 (2003): 53,856 facets in 46 classes.  With the threshold at 24 the
    # positivity face (48 points) is sampled; the first proof meets a missing facet, the search goes on from
    # it, and the second proof goes through (about 70 s here)
    import nogo.polytope.symmetric as S
    from nogo.compile import compile_bundle
    from nogo.symmetry import bundle_generators

    monkeypatch.setattr(S, "_EXPLORE_EXCESS", 24)
    th = theory("bell-3x2")
    P = S.derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"),
                           explore=True)
    assert P.stats["sampled faces"] >= 1
    assert P.status == "complete" and len(P.facets) == 53_856 and len(P.classes) == 46
    assert any("proven complete" in n for n in P.notes)
