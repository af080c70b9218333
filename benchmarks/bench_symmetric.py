"""Facets class by class (nogo.polytope.derive_symmetric) against a bare exact hull, in one run.

For each case:

* ``symmetric``: `derive_symmetric` from the compiled bundle (vertex search by the
  LP oracle, symmetries lifted to the model and checked exactly, adjacency
  decomposition, a Farkas certificate per class, the exact checks);
* ``bare hull``: cddlib (pycddlib 2.1, rationals) on the final vertex list
  alone, in probability coordinates: what a user would write by hand;
* ``--three-party``: the 53,856-facet set (Śliwa 2003) by classes, serially and
  on a 2-worker Dask ``LocalCluster`` (``nogo.fanout.engine``): the speed-up;
* ``--four-settings SECONDS``: two parties with four binary settings under a
  time limit (Zambrini Cruzeiro & Gisin, Phys. Rev. A 99, 022104 (2019): 175
  classes), with classes told apart by the canonical graph (nauty).

CPU seconds are given beside wall seconds: other work may share the machine.

    python benchmarks/bench_symmetric.py
    python benchmarks/bench_symmetric.py --three-party
    python benchmarks/bench_symmetric.py --four-settings 600
    python benchmarks/bench_symmetric.py --four-settings 600 --classes faces
    python benchmarks/bench_symmetric.py --four-settings 600 --explore   # all 175 classes found in ~12 s
    python benchmarks/bench_symmetric.py --three-party-only 1   # (or 2) one half of --three-party
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from nogo.compile import compile_bundle  # noqa: E402
from nogo.polytope import _exact_hull, choose_frame, derive_symmetric  # noqa: E402
from nogo.symmetry import bundle_generators  # noqa: E402
from nogo.theory import load_theory  # noqa: E402

from _timing import timed  # noqa: E402


def symmetric(theory: str, bundle: str, **kw):
    th = load_theory(ROOT / "theories" / f"{theory}.yaml")
    model = compile_bundle(th, bundle)
    return derive_symmetric(model, generators=bundle_generators(th, bundle), **kw)


def case(theory: str, bundle: str, expected: int, source: str, bare: bool = True) -> None:
    P, w, c = timed(lambda: symmetric(theory, bundle))
    ok = "OK" if len(P.facets) == expected else f"EXPECTED {expected}"
    print(f"\n{theory} / {bundle}: {len(P.facets)} facets ({ok}; {source}), {len(P.classes)} classes, "
          f"group order {P.group_order}, {P.stats.get('classes by')}")
    print(f"  symmetric route          : {w:8.2f} s wall {c:8.2f} s cpu   ({P.stats['oracle_calls']} LP calls, "
          f"{P.stats.get('ridge hulls', 0)} ridge hulls)")
    for stage, t in P.stats["times"].items():
        print(f"      {stage:<20} {t:8.2f} s")
    if not bare:
        return
    fr = choose_frame(P.scenario, P.vertices, "probabilities")
    h, hw, hc = timed(lambda: _exact_hull(fr, P.vertices))
    assert len(h) == len(P.facets)
    print(f"  bare hull (probabilities): {hw:8.2f} s wall {hc:8.2f} s cpu   ratio symmetric/bare (cpu) {c / hc:5.2f}"
          f"  (wall {w / hw:5.2f})")


def three_party() -> None:
    from nogo.fanout import engine

    import time

    P1, w1, c1 = timed(lambda: symmetric("bell-3x2", "Bell-local"))
    t0 = time.perf_counter()
    with engine(local_workers=2):
        start = time.perf_counter() - t0  # once per session, not part of the derivation
        P2, w2, _ = timed(lambda: symmetric("bell-3x2", "Bell-local"))
    same = {(f.a, f.b) for f in P1.facets} == {(f.a, f.b) for f in P2.facets}
    print(f"\nbell-3x2 / Bell-local (Śliwa, Phys. Lett. A 317, 165 (2003): 53,856 in 46): {len(P1.facets)} facets "
          f"in {len(P1.classes)} classes")
    print(f"  one process              : {w1:8.2f} s wall {c1:8.2f} s cpu")
    print(f"  2-worker Dask LocalCluster: {w2:8.2f} s wall   speed-up 1 -> 2 workers {w1 / w2:5.2f}   "
          f"same facets: {same}   (cluster start-up {start:.2f} s apart; 1-worker runs, the serial fraction "
          "and the machine's other load: benchmarks/bench_fanout.py)")


def three_party_one(workers: int) -> None:
    """One half of :func:`three_party` (each half under a minute, for a shared machine)."""
    from contextlib import nullcontext

    from nogo.fanout import engine

    with (engine(local_workers=workers) if workers > 1 else nullcontext()):
        P, w, c = timed(lambda: symmetric("bell-3x2", "Bell-local"))
    print(f"\nbell-3x2 / Bell-local, {workers} worker(s): {len(P.facets)} facets in {len(P.classes)} classes, "
          f"{w:.2f} s wall {c:.2f} s cpu (this process)")


def four_settings(limit: float, how: str = "auto", explore: bool = False) -> None:
    kw = dict(classes=how)
    if explore:  # sampled large faces, from I4422 (Collins & Gisin 2004); the closure proof within the limit
        from nogo.catalog import load_catalog

        th = load_theory(ROOT / "theories" / "bell-2x4.yaml")
        kw = dict(explore=True, start=[load_catalog()["I4422"].inequality(th.scenario).canonical()])
    P, w, c = timed(lambda: symmetric("bell-2x4", "Bell-local", time_limit=limit, **kw))
    sizes = sorted(P.class_sizes or [])
    print(f"\nbell-2x4 / Bell-local (Zambrini Cruzeiro & Gisin, Phys. Rev. A 99, 022104 (2019): 175 classes): "
          f"{P.status}, {len(P.classes)} classes ({sum(sizes):,} facets), group order {P.group_order}, "
          f"{w:.1f} s wall {c:.1f} s cpu (limit {limit:.0f} s), classes by {P.stats.get('classes by')}")
    print("  counters: " + ", ".join(f"{k} {P.stats[k]}" for k in ("ridge hulls", "recursive faces", "wraps",
                                                                    "bank hits", "skipped orbits", "sampled faces")
                                   if k in P.stats))
    for n in P.notes:
        print(f"  note: {n}")
    print(f"  class sizes: {sizes}")
    for stage, t in P.stats["times"].items():
        print(f"      {stage:<20} {t:8.2f} s")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--three-party", action="store_true", help="the 53,856-facet set, 1 and 2 Dask workers")
    ap.add_argument("--four-settings", type=float, metavar="SECONDS", help="two parties, four settings")
    ap.add_argument("--classes", default="auto", choices=["auto", "graph", "faces"],
                    help="how --four-settings tells classes apart (faces: point sets and a bank of faces)")
    ap.add_argument("--explore", action="store_true",
                    help="--four-settings by exploration from I4422 (large faces sampled, closure proof in the limit)")
    ap.add_argument("--three-party-only", type=int, metavar="WORKERS", help="only the 53,856-facet set, 1 or 2 workers")
    args = ap.parse_args()
    if args.three_party_only:
        three_party_one(args.three_party_only)
        return
    case("bell-2x3", "Bell-local", 684, "Collins & Gisin, J. Phys. A 37, 1775 (2004)")
    case("friends-2x3", "local-friendliness", 932, "Bong et al., Nature Physics 16, 1199 (2020)")
    if args.three_party:
        three_party()
    if args.four_settings:
        four_settings(args.four_settings, args.classes, args.explore)


if __name__ == "__main__":
    main()
