"""One `nogo check` on the three-setting two-lab scenario, stage by stage.

Run: python benchmarks/bench_check.py [--repeat N]

Prints the median time of each stage (load, compile, float solve, exact
optimum and certificate, independent re-check) and the ratio of the whole to
the bare HiGHS solve of the same matrix, all measured in one run.  Ratios,
not absolute times, are what to compare across machines.
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=20)
    ap.add_argument("--inequality", default="I3322")
    args = ap.parse_args()

    from nogo.catalog import load_catalog, resolve_inequality
    from nogo.check import decide, marginal_guard, recheck
    from nogo.compile import compile_bundle
    from nogo.lp import make_highs
    from nogo.theory import load_theory

    cat = load_catalog()
    times: dict[str, list[float]] = {k: [] for k in ("load", "compile", "parse", "guard", "decide", "recheck", "bare HiGHS")}
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        th = load_theory(ROOT / "theories" / "friends-2x3.yaml")
        t1 = time.perf_counter()
        model = compile_bundle(th, "local-friendliness")
        t2 = time.perf_counter()
        ineq = resolve_inequality(th.scenario, args.inequality, cat)
        t3 = time.perf_counter()
        if ineq.marginals:
            marginal_guard(model, ineq)
        t4 = time.perf_counter()
        r = decide(model, ineq, guard=False)
        t5 = time.perf_counter()
        assert recheck(model, r) is None
        t6 = time.perf_counter()
        h = make_highs(model, model.cost(ineq))
        t7 = time.perf_counter()
        h.run()
        t8 = time.perf_counter()
        for k, v in zip(times, (t1 - t0, t2 - t1, t3 - t2, t4 - t3, t5 - t4, t6 - t5, t8 - t7)):
            times[k].append(v)
    med = {k: statistics.median(v) for k, v in times.items()}
    whole = sum(v for k, v in med.items() if k != "bare HiGHS")
    print(f"check friends-2x3 local-friendliness {args.inequality}: verdict {r.verdict}, maximum {r.maximum}, "
          f"model {model.shape[0]} x {model.shape[1]}")
    for k, v in med.items():
        print(f"  {k:<12} {v * 1e3:9.2f} ms")
    print(f"  {'whole':<12} {whole * 1e3:9.2f} ms")
    print(f"ratio whole / bare HiGHS solve: {whole / med['bare HiGHS']:.1f}")


if __name__ == "__main__":
    main()
