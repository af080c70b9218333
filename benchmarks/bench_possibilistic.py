"""GHZ contradictions for n = 3…8 parties: verdict and smallest proof, against the direct encoding.

    python benchmarks/bench_possibilistic.py [--max-parties 8] [--time-limit 60] [--baseline-max 5]

For n parties sharing the GHZ state (|0…0> + |1…1>)/sqrt(2), setting 1 = X
and setting 2 = Y (Greenberger, Horne, Shimony, Zeilinger, Am. J. Phys. 58,
1131 (1990); Mermin, PRL 65, 1838 (1990)), against

* Bell locality (counterfactual outcomes + setting independence), and
* local friendliness with an inner observer in every lab, read out at
  setting 1 (absoluteness + local agency in its published, joint form).

Theories are generated (nogo.possibilistic.families) and the support is exact
(Gaussian-integer amplitudes).  Printed per case: booleans and clauses of the
encoding nogo uses, time to the verdict (with a minimal proof, checked),
time, size, proven flag and lower bound of the smallest proof (the search is
given --time-limit seconds), proof steps.  Local friendliness for n >= 6 is
decided on part of the settings tuples (a relaxation; the reading column
says which);
its smallest proof is proven over the whole model when the Bell-local lower
bound (nogo.possibilistic.bounds) meets it, as the last column says.

The baseline is what a user would write by hand: one boolean per joint
assignment and settings tuple, every independence instance, one SAT call
(nogo's previous encoding; ``engine="joint", layer_limit=None``), run for
n <= --baseline-max; the ratio column is baseline verdict time / nogo's.
The last line names the largest n whose verdict and proven-smallest proof
both came within 60 s.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from nogo.possibilistic import decide_pattern  # noqa: E402
from nogo.possibilistic.families import family_theory, ghz_xy_pattern  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--max-parties", type=int, default=8)
    ap.add_argument("--time-limit", type=float, default=60.0, help="seconds for each smallest-proof search")
    ap.add_argument("--baseline-max", type=int, default=5, help="largest n for the direct (hand) encoding")
    args = ap.parse_args()
    head = (f"{'n':>2} {'bundle':<19} {'booleans':>9} {'clauses':>9} {'verdict s':>9} {'base s':>8} "
            f"{'ratio':>6} {'smallest s':>10} {'facts':>5} {'proven':>6} {'lower':>5} {'steps':>5}  reading")
    print(head)
    largest = {}
    for n in range(3, args.max_parties + 1):
        pat = ghz_xy_pattern(n)
        for bundle, labs in (("Bell-local", ()), ("local-friendliness", "ABCDEFGH"[:n])):
            th = family_theory(n, labs)
            t0 = time.monotonic()
            quick = decide_pattern(th, bundle, pat, minimise="minimal")
            t_verdict = time.monotonic() - t0
            base_s = ratio = ""
            if n <= args.baseline_max:
                t1 = time.monotonic()
                base = decide_pattern(th, bundle, pat, minimise="none", engine="joint", layer_limit=None)
                tb = time.monotonic() - t1
                assert base.contradiction == quick.contradiction
                base_s, ratio = f"{tb:.2f}", f"{tb / max(t_verdict, 1e-3):.1f}"
            t2 = time.monotonic()
            r = decide_pattern(th, bundle, pat, minimise="smallest", time_limit=args.time_limit)
            t_small = time.monotonic() - t2
            reading = r.stats.get("reading", "")
            if "layer" in r.stats:
                reading += f" (settings tuples {r.stats['layer']})"
            print(f"{n:>2} {bundle:<19} {quick.stats['joint_booleans']:>9} {quick.stats['clauses']:>9} "
                  f"{t_verdict:>9.2f} {base_s:>8} {ratio:>6} {t_small:>10.2f} {r.facts_size:>5} "
                  f"{str(r.smallest_proven):>6} {r.lower_bound:>5} {len(r.proof.steps):>5}  {reading}", flush=True)
            whole = r.proof.smallest.get("scope", "whole model") == "whole model"
            if not whole:
                reading += "; smallest only among proofs on those tuples"
            if quick.contradiction and t_verdict < 60 and r.smallest_proven and whole and t_small < 60:
                largest[bundle] = n
    for bundle, n in largest.items():
        print(f"largest n with verdict and proven-smallest proof within 60 s, {bundle}: {n}")


if __name__ == "__main__":
    main()
