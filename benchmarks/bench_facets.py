"""Facets from declarations: what the derivation costs against a bare exact hull.

For each case, in one run:

* ``derive``: `nogo.facets.facets` from the theory file (compile, LP-oracle vertex
  discovery, affine hull proof, exact hull with cddlib, exact Farkas check of every
  facet, symmetry classes), with the cache off;
* ``bare hull``: cddlib (pycddlib 2.1, rational arithmetic) on the final vertex
  list alone, in the same coordinates the derivation hands to cddlib, and in
  Collins–Gisin coordinates.

The ratio derive / bare hull shows what the derivation adds to the hull itself.
CPU seconds are reported beside wall seconds because other work may share the
machine.

    python benchmarks/bench_facets.py               # 684- and 932-facet sets
    python benchmarks/bench_facets.py --three-party # also the 53,856-facet set (minutes)
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from nogo.facets import facets  # noqa: E402
from nogo.polytope import _exact_hull, choose_frame  # noqa: E402
from nogo.theory import load_theory  # noqa: E402


def timed(fn):
    w, c = time.perf_counter(), time.process_time()
    out = fn()
    return out, time.perf_counter() - w, time.process_time() - c


def case(theory: str, bundle: str, expected: int, source: str) -> None:
    th = load_theory(ROOT / "theories" / f"{theory}.yaml")
    r, w, c = timed(lambda: facets(th, bundle, cache=False))
    ok = "OK" if len(r.facets) == expected else f"EXPECTED {expected}"
    print(f"\n{theory} / {bundle}: {len(r.facets)} facets ({ok}; {source}), {len(r.classes)} classes, "
          f"{len(r.vertices)} vertices, dimension {r.dim}")
    print(f"  derive from declarations : {w:8.2f} s wall {c:8.2f} s cpu   "
          f"({r.polytope.stats['oracle_calls']} LP calls, {r.polytope.stats['hull_rounds']} hull rounds)")
    for stage, t in r.polytope.stats["times"].items():
        print(f"      {stage:<20} {t:8.2f} s")
    for kind in ("probabilities", "collins-gisin"):
        fr = choose_frame(r.scenario, r.vertices, kind)
        h, hw, hc = timed(lambda: _exact_hull(fr, r.vertices))
        assert len(h) == len(r.facets)
        print(f"  bare hull ({kind:<13}): {hw:8.2f} s wall {hc:8.2f} s cpu   ratio derive/bare (cpu) "
              f"{c / hc:5.2f}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--three-party", action="store_true", help="also the three-party Bell polytope (minutes)")
    args = ap.parse_args()
    case("bell-2x3", "Bell-local", 684, "Collins & Gisin, J. Phys. A 37, 1775 (2004)")
    case("friends-2x3", "local-friendliness", 932, "Bong et al., Nature Physics 16, 1199 (2020)")
    if args.three_party:
        case("bell-3x2", "Bell-local", 53_856, "Śliwa, Phys. Lett. A 317, 165 (2003)")
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(f"\npeak memory (max resident set size): {rss / 1024:.0f} MB")


if __name__ == "__main__":
    main()
