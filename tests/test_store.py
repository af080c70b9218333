"""The result store cannot lie: stored facet lists are re-verified before they are used.

Corruptions (issue: "cache entries that cannot lie"): an entry copied from another
bundle onto this key, a loosened bound (with the content hash recomputed so that
only the exact checks can notice), content altered without a new hash, an
unwritable store, two writers at once.  In each case the answer must equal a
fresh derivation.  Published value used: the CHSH scenario's local polytope has
24 facets, 16 positivity + 8 CHSH (A. Fine, PRL 48, 291 (1982); M. Froissart,
Nuovo Cimento B 64, 241 (1981)); local friendliness with two settings equals it
(K.-W. Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607).
"""

from __future__ import annotations

import json
import sqlite3

from nogo.facets import facets
from nogo.store import Store, content_hash


def _rows(path):
    con = sqlite3.connect(str(path))
    try:
        return con.execute("SELECT key, fingerprint, payload FROM entries").fetchall()
    finally:
        con.close()


def _write(path, key, fp, payload, rehash=True):
    con = sqlite3.connect(str(path))
    with con:
        h = content_hash(payload) if rehash else "0" * 64
        con.execute("UPDATE entries SET fingerprint = ?, payload = ?, content_hash = ? WHERE key = ?",
                    (fp, payload, h, key))
    con.close()


def _same(r1, r2) -> bool:
    return sorted((f.a, f.b) for f in r1.facets) == sorted((f.a, f.b) for f in r2.facets)


def test_stored_result_is_reverified(theory, tmp_path):
    th = theory("bell-2x2")
    fresh = facets(th, "Bell-local", cache=tmp_path)
    assert not fresh.from_cache and fresh.cache_file.endswith(".sqlite3")
    again = facets(th, "Bell-local", cache=tmp_path)
    assert again.from_cache and again.reverified and not again.warnings
    assert _same(fresh, again) and {c.name: c.size for c in again.classes} == {"positivity": 16, "CHSH": 8}


def test_copied_entry_is_detected(theory, tmp_path):
    # no-signalling's entry copied onto local friendliness's key, fingerprint and hash made consistent
    th = theory("friends-2x2")
    lf = facets(th, "local-friendliness", cache=tmp_path)
    ns = facets(th, "no-signalling", cache=tmp_path)
    rows = {fp: (key, payload) for key, fp, payload in _rows(tmp_path / "nogo-store.sqlite3")}
    lf_key = rows[lf.polytope.fingerprint][0]
    ns_payload = rows[ns.polytope.fingerprint][1]
    _write(tmp_path / "nogo-store.sqlite3", lf_key, lf.polytope.fingerprint, ns_payload)
    again = facets(th, "local-friendliness", cache=tmp_path)
    assert not again.from_cache
    assert any("failed re-verification" in w for w in again.warnings)
    assert _same(again, lf) and len(again.facets) == 24  # Bong et al. (2020): equals the Bell-local set


def test_altered_bound_is_detected_by_the_exact_checks(theory, tmp_path):
    th = theory("bell-2x2")
    fresh = facets(th, "Bell-local", cache=tmp_path)
    path = tmp_path / "nogo-store.sqlite3"
    key, fp, payload = _rows(path)[0]
    data = json.loads(payload)
    data["classes"][0]["b"] += 1  # a loosened bound; the hash is recomputed below
    _write(path, key, fp, json.dumps(data, sort_keys=True, separators=(",", ":")))
    again = facets(th, "Bell-local", cache=tmp_path)
    assert not again.from_cache
    assert any("failed re-verification" in w for w in again.warnings)
    assert _same(again, fresh)


def test_dropped_vertex_and_bad_hash_are_detected(theory, tmp_path):
    th = theory("bell-2x2")
    fresh = facets(th, "Bell-local", cache=tmp_path)
    path = tmp_path / "nogo-store.sqlite3"
    key, fp, payload = _rows(path)[0]
    data = json.loads(payload)
    data["vertices"] = data["vertices"][1:]
    _write(path, key, fp, json.dumps(data, sort_keys=True, separators=(",", ":")))
    again = facets(th, "Bell-local", cache=tmp_path)
    assert not again.from_cache and _same(again, fresh)
    # content changed without a new hash
    key, fp, payload = _rows(path)[0]
    _write(path, key, fp, payload.replace('"status":"complete"', '"status":"complete" '), rehash=False)
    again = facets(th, "Bell-local", cache=tmp_path)
    assert not again.from_cache and any("content hash" in w for w in again.warnings)
    for junk in ("", "{", '{"format": 1}', "[" * 500, '{"format":"nogo-polytope-2","fingerprint":"x"}'):
        _write(path, key, fp, junk)
        r = facets(th, "Bell-local", cache=tmp_path)
        assert not r.from_cache and _same(r, fresh)


def test_unwritable_store_warns_and_still_answers(theory, tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    r = facets(theory("bell-2x2"), "Bell-local", cache=blocker / "store")
    assert len(r.facets) == 24
    assert r.warnings and "could not be" in r.warnings[0]


def _derive_count(args):
    from pathlib import Path

    from nogo.theory import load_theory

    theory_path, folder = args
    return len(facets(load_theory(theory_path), "Bell-local", cache=Path(folder)).facets)


def test_concurrent_writers(theory, tmp_path):
    # three processes derive and write the same entry at once: sqlite transactions keep it whole
    import multiprocessing as mp

    from conftest import THEORIES

    with mp.get_context("fork").Pool(3) as pool:
        counts = pool.map(_derive_count, [(str(THEORIES / "bell-2x2.yaml"), str(tmp_path))] * 3)
    assert counts == [24, 24, 24]
    assert len(_rows(tmp_path / "nogo-store.sqlite3")) == 1
    assert facets(theory("bell-2x2"), "Bell-local", cache=tmp_path).reverified


def test_store_pieces_round_trip(tmp_path):
    s = Store(tmp_path)
    assert s.put_piece("run", "points=3", {"closed": [[[1, 2], 3]], "known": []})
    assert s.pieces("run") == {"points=3": {"closed": [[[1, 2], 3]], "known": []}}
    s.drop_run("run")
    assert s.pieces("run") == {}


def test_interrupted_run_resumes_from_its_closed_classes(theory, tmp_path):
    # local friendliness, 932 facets (Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607).
    # The interruption is made deterministic: the store stops the run after two closed classes.
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_symmetric
    from nogo.polytope.adjacency import OutOfTime
    from nogo.store import RunPieces, Store
    from nogo.symmetry import bundle_generators

    th = theory("friends-2x3")
    model = compile_bundle(th, "local-friendliness")
    gens = bundle_generators(th, "local-friendliness")
    fresh = derive_symmetric(model, generators=gens)
    final = fresh.stats["points"]

    class Interrupting(RunPieces):
        saved = 0

        def save(self, n_points, closed, orbit, known):
            super().save(n_points, closed, orbit, known)
            if n_points == final:
                Interrupting.saved += 1
                if Interrupting.saved == 2:
                    raise OutOfTime()

    store = Store(tmp_path)
    cut = derive_symmetric(model, generators=gens, store=Interrupting(store, "run"))
    assert cut.status == "partial" and any("time limit" in n for n in cut.notes)
    assert len(store.pieces("run")[f"points={final}"]["closed"]) == 2
    resumed = derive_symmetric(model, generators=gens, store=RunPieces(store, "run"))
    assert resumed.status == "complete" and resumed.stats["classes resumed"] == 2
    assert {(f.a, f.b) for f in resumed.facets} == {(f.a, f.b) for f in fresh.facets}
    assert len(resumed.facets) == 932
    assert resumed.stats["ridge hulls"] < fresh.stats["ridge hulls"]  # the closed classes were not redone
