"""Mixture model against the plain linear model for the same set.

Run: python benchmarks/bench_mixture.py [--repeat N]

The Bell-local set is reached by two routes (A. Fine, PRL 48, 291 (1982)):
the mixture route (hidden variable with parameter independence, outcome
independence and setting independence: bundle ``local-causality``) and the
linear route (joint existence of counterfactual outcomes plus setting
independence: bundle ``Bell-local``).  For the 2x2 and 2x3 scenarios this
prints, measured in one run, each model's size (rows x columns), the median
compile time and the median time to decide and re-check every CHSH version,
and the linear/mixture ratios.  The bench also times the local-friendliness
bundle with outcome independence (mixture only: it has no linear form).
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def timed(fn, repeat):
    out, ts = None, []
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        ts.append(time.perf_counter() - t)
    return out, statistics.median(ts)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args()

    from nogo.catalog import resolve_inequality
    from nogo.check import decide, recheck
    from nogo.compile import compile_bundle
    from nogo.mixture import group_vertices
    from nogo.symmetry import orbit
    from nogo.theory import load_theory

    def decide_all(model, versions):
        for v in versions:
            r = decide(model, v)
            assert recheck(model, r) is None and r.maximum == 2
    print(f"{'scenario':<10} {'route':<8} {'bundle':<17} {'rows x cols':>12} {'compile s':>10} {'CHSH all s':>11}")
    for name in ("hidden-2x2", "hidden-2x3"):
        th = load_theory(ROOT / "theories" / f"{name}.yaml")
        versions = orbit(resolve_inequality(th.scenario, "CHSH"))
        res = {}
        for route, bundle in (("mixture", "local-causality"), ("linear", "Bell-local")):
            def comp():
                group_vertices.cache_clear()
                return compile_bundle(th, bundle)
            model, tc = timed(comp, args.repeat)
            _, td = timed(lambda: decide_all(model, versions), max(1, args.repeat // 2))
            res[route] = (model.shape, tc, td)
            print(f"{name:<10} {route:<8} {bundle:<17} {model.shape[0]:>5} x {model.shape[1]:<5} {tc:>10.4f} {td:>11.3f}")
        (mr, mc), tcm, tdm = res["mixture"]
        (lr, lc), tcl, tdl = res["linear"]
        print(f"{name:<10} ratio linear/mixture: columns {lc / mc:.1f}, rows {lr / mr:.0f}, "
              f"compile {tcl / tcm:.2f}, decide {len(versions)} CHSH versions {tdl / tdm:.2f}")
    th = load_theory(ROOT / "theories" / "friends-2x3-hidden.yaml")
    versions = orbit(resolve_inequality(th.scenario, "CHSH"))

    def comp():
        group_vertices.cache_clear()
        return compile_bundle(th, "local-friendliness-outcome-indep")
    model, tc = timed(comp, args.repeat)
    _, td = timed(lambda: decide_all(model, versions), max(1, args.repeat // 2))
    print(f"{'friends':<10} {'mixture':<8} {'LF + outcome-indep':<17} {model.shape[0]:>5} x {model.shape[1]:<5} "
          f"{tc:>10.4f} {td:>11.3f}")


if __name__ == "__main__":
    main()
