"""Minimal-set search: oracle calls against 2**n and time, measured in one run.

    python benchmarks/bench_minimal.py [--large] [--repeat N]

For each pool: the number of minimal + maximal sets (a lower bound on the
calls of any method that shows each one with its own evidence), MARCO's
oracle calls with and without the certificate hint, brute force's 2**n, and
wall-clock times; then the I3322 / CHSH ratio on friends-2x3 as the ratio of
medians of N interleaved runs each (default 9).  ``--large`` adds the ten-member pool of
friends-2x2-hidden (hidden-variable models up to tens of thousands of
columns; minutes).
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from nogo.catalog import resolve_inequality  # noqa: E402
from nogo.minimal import find_minimal_sets  # noqa: E402
from nogo.theory import load_theory  # noqa: E402

LF = ["absoluteness", "agency-A", "agency-B", "agency-inner"]
LAM = LF + ["lam-free", "agency-A-given-lam", "agency-B-given-lam", "outcome-indep"]
CASES = [
    ("friends-2x2", "CHSH", LF),
    ("friends-2x2", "CHSH", None),
    ("hidden-2x2", "CHSH", ["param-indep", "outcome-indep", "lam-free", "predetermined"]),
    ("hidden-2x2", "CHSH", ["param-indep", "outcome-indep", "lam-free", "predetermined", "predetermined-local",
                            "no-signal-A", "no-signal-B"]),
    ("friends-2x2-hidden", "CHSH", LAM),
    ("friends-2x3", "CHSH", None),
    ("friends-2x3", "I3322", None),
]
LARGE = [("friends-2x2-hidden", "CHSH", None)]


def ratio_of_medians(repeat: int) -> None:
    """The I3322 / CHSH ratio on friends-2x3 (whole pool): the two searches interleaved, median of *repeat* each.

    One warm-up search each first (imports, catalog); the ratio of the medians
    and the spread (lowest and highest ratio of one pair) are printed, so a
    busy moment on a shared machine shows as spread, not as a changed ratio.
    """
    import statistics

    th = load_theory(ROOT / "theories" / "friends-2x3.yaml")
    ineqs = {name: resolve_inequality(th.scenario, name) for name in ("I3322", "CHSH")}
    for ineq in ineqs.values():
        find_minimal_sets(th, ineq, None)
    times: dict[str, list[float]] = {name: [] for name in ineqs}
    calls, guards = {}, {}
    for _ in range(repeat):
        for name, ineq in ineqs.items():
            t0 = time.perf_counter()
            r = find_minimal_sets(th, ineq, None)
            times[name].append(time.perf_counter() - t0)
            calls[name] = r.oracle_calls
    med = {k: statistics.median(v) for k, v in times.items()}
    pairs = sorted(a / b for a, b in zip(times["I3322"], times["CHSH"]))
    print(f"\nfriends-2x3, whole pool, interleaved, median of {repeat}: I3322 {med['I3322'] * 1e3:.0f} ms "
          f"({calls['I3322']} oracle calls; Collins–Gisin form, marginal guard on every set not inherited), "
          f"CHSH {med['CHSH'] * 1e3:.0f} ms ({calls['CHSH']} calls)")
    print(f"ratio I3322 / CHSH: {med['I3322'] / med['CHSH']:.2f} (pairs from {pairs[0]:.2f} to {pairs[-1]:.2f})")


def main() -> None:
    cases = CASES + (LARGE if "--large" in sys.argv else [])
    repeat = int(sys.argv[sys.argv.index("--repeat") + 1]) if "--repeat" in sys.argv else 9
    head = f"{'theory':<20} {'ineq':<6} {'n':>2} {'2^n':>5} {'min+max':>7} {'calls':>5} {'no hint':>7} " \
           f"{'calls/2^n':>9} {'seconds':>8} {'brute s*':>8}"
    print(head)
    print("-" * len(head))
    seconds = {}
    for name, ineq_name, pool in cases:
        th = load_theory(ROOT / "theories" / f"{name}.yaml")
        ineq = resolve_inequality(th.scenario, ineq_name)
        t0 = time.perf_counter()
        r = find_minimal_sets(th, ineq, pool)
        t = time.perf_counter() - t0
        r2 = find_minimal_sets(th, ineq, pool, use_hint=False)
        n = len(r.pool)
        per_call = sum(a.seconds for a in r.answers.values()) / max(1, r.oracle_calls)
        lower = len(r.minimal) + len(r.maximal)
        print(f"{name:<20} {ineq_name:<6} {n:>2} {2 ** n:>5} {lower:>7} {r.oracle_calls:>5} {r2.oracle_calls:>7} "
              f"{r.oracle_calls / 2 ** n:>9.3f} {t:>8.2f} {per_call * 2 ** n:>8.1f}")
        seconds[(name, ineq_name, tuple(pool or ()))] = t
    ratio_of_medians(repeat)
    print("\n* brute s: 2^n times the mean time of this run's oracle calls (an estimate; subsets that "
          "MARCO never visits may be larger or smaller models).")


if __name__ == "__main__":
    main()
