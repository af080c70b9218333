"""Facets from declarations: what the derivation costs against a bare exact hull.

For each case, in one run:

* ``derive``: `nogo.facets.facets` from the theory file (compile, LP-oracle vertex
  discovery, affine hull proof, facets class by class under the verified symmetries,
  a Farkas certificate per class representative, exact checks), store off;
* ``bare hull``: cddlib (pycddlib 2.1, rational arithmetic) on the final vertex
  list alone, what a user would write by hand, in probability and Collins–Gisin
  coordinates;
* ``re-verify``: `nogo.facets.facets` again on the stored result: compile, read,
  every exact check of `nogo.polytope.certify` (vertex preimages, Farkas multipliers
  of the equations and class representatives, the group, class expansion, tightness
  rank), class names from the catalog (target <= 0.1 x derive for the 932-facet set);
  the median of three loads, each from a freshly read theory with the oracle's
  per-process caches emptied;
* with ``--workers``: the same derivation on a 2-worker Dask LocalCluster.

CPU seconds are reported beside wall seconds because other work may share the
machine.

    python benchmarks/bench_facets.py                # 684- and 932-facet sets
    python benchmarks/bench_facets.py --three-party  # also the 53,856-facet set by classes
    python benchmarks/bench_facets.py --bare-three   # ... and its bare hull (about 20 minutes)
    python benchmarks/bench_facets.py --workers      # 1 against 2 Dask workers (684-facet set)
"""

from __future__ import annotations

import argparse
import resource
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from nogo.facets import facets  # noqa: E402
from nogo.polytope import _exact_hull, choose_frame  # noqa: E402
from nogo.theory import load_theory  # noqa: E402

from _timing import timed  # noqa: E402


def case(theory: str, bundle: str, expected: int, source: str, bare: bool = True) -> None:
    th = load_theory(ROOT / "theories" / f"{theory}.yaml")
    with tempfile.TemporaryDirectory() as folder:
        r, w, c = timed(lambda: facets(th, bundle, cache=Path(folder)))
        loads = []
        for _ in range(3):  # each load from a freshly read theory, with the per-process model caches emptied
            _forget_models()
            loads.append(timed(lambda: facets(load_theory(ROOT / "theories" / f"{theory}.yaml"), bundle,
                                              cache=Path(folder))))
    loads.sort(key=lambda t: t[2])
    again, rw, rc = loads[1]  # the median of three loads (cpu)
    assert again.reverified and not again.warnings and len(again.facets) == len(r.facets)
    assert sorted((f.a, f.b, f.class_name) for f in again.facets) == sorted((f.a, f.b, f.class_name) for f in r.facets)
    ok = "OK" if len(r.facets) == expected else f"EXPECTED {expected}"
    st = r.polytope.stats
    print(f"\n{theory} / {bundle}: {len(r.facets)} facets ({ok}; {source}), {len(r.classes)} classes, "
          f"{len(r.vertices)} vertices, dimension {r.dim}, group order {r.group_order}")
    print(f"  derive from declarations : {w:8.2f} s wall {c:8.2f} s cpu   "
          f"({st['oracle_calls']} LP calls, {st.get('ridge hulls', 0)} ridge hulls, "
          f"{st.get('recursive faces', 0)} faces by recursion)")
    for stage, t in st["times"].items():
        print(f"      {stage:<20} {t:8.2f} s")
    print(f"  re-verify stored result  : {rw:8.2f} s wall {rc:8.2f} s cpu   ratio re-verify/derive (cpu) "
          f"{rc / c:5.3f}  (median of 3 loads; the whole facets() call: compile, read, every exact check, names)")
    if not bare:
        return
    for kind in ("probabilities", "collins-gisin"):
        fr = choose_frame(r.scenario, r.vertices, kind)
        h, hw, hc = timed(lambda: _exact_hull(fr, r.vertices))
        assert len(h) == len(r.facets)
        print(f"  bare hull ({kind:<13}): {hw:8.2f} s wall {hc:8.2f} s cpu   ratio derive/bare (cpu) "
              f"{c / hc:5.2f}")


def _forget_models() -> None:
    """Empty the oracle's per-process caches, so a load pays for the model data it needs (as a new process would)."""
    from nogo.polytope import oracle

    oracle._ORACLES.clear()
    oracle._DATA.clear()


def workers_case() -> None:
    """The 684-facet set on 2 Dask workers: about a second of work, too little to gain from workers (the
    start-up is timed apart; benchmarks/bench_fanout.py measures workloads big enough to fan out)."""
    import time

    from nogo.fanout import engine

    th = load_theory(ROOT / "theories" / "bell-2x3.yaml")
    _, w1, _ = timed(lambda: facets(th, "Bell-local", cache=False))
    t0 = time.perf_counter()
    with engine(local_workers=2):
        start = time.perf_counter() - t0
        r, w2, _ = timed(lambda: facets(th, "Bell-local", cache=False))
    print(f"\nbell-2x3 on 1 process: {w1:.2f} s wall; on a 2-worker Dask LocalCluster: {w2:.2f} s wall "
          f"(start-up {start:.2f} s apart); ratio {w1 / w2:.2f} ({len(r.facets)} facets; "
          "too small a job to fan out, see bench_fanout.py)")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--three-party", action="store_true", help="also the three-party Bell polytope by classes")
    ap.add_argument("--bare-three", action="store_true", help="also its bare hull (about 20 minutes)")
    ap.add_argument("--workers", action="store_true", help="1 against 2 Dask workers")
    args = ap.parse_args()
    case("bell-2x3", "Bell-local", 684, "Collins & Gisin, J. Phys. A 37, 1775 (2004)")
    case("friends-2x3", "local-friendliness", 932, "Bong et al., Nature Physics 16, 1199 (2020)")
    if args.three_party or args.bare_three:
        case("bell-3x2", "Bell-local", 53_856, "Śliwa, Phys. Lett. A 317, 165 (2003)", bare=args.bare_three)
    if args.workers:
        workers_case()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(f"\npeak memory (max resident set size): {rss / 1024:.0f} MB")


if __name__ == "__main__":
    main()
