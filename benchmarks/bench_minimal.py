"""Minimal-set search: oracle calls against 2**n and time, measured in one run.

    python benchmarks/bench_minimal.py [--large]

For each pool: the number of minimal + maximal sets (a lower bound on the
calls of any method that shows each one with its own evidence), MARCO's
oracle calls with and without the certificate hint, brute force's 2**n, and
wall-clock times.  ``--large`` adds the ten-member pool of
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


def main() -> None:
    cases = CASES + (LARGE if "--large" in sys.argv else [])
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
    a, b = seconds.get(("friends-2x3", "I3322", ())), seconds.get(("friends-2x3", "CHSH", ()))
    if a and b:
        print(f"\nfriends-2x3, whole pool: I3322 (Collins–Gisin form, marginal guard on every set) / CHSH: "
              f"{a / b:.2f}")
    print("\n* brute s: 2^n times the mean time of this run's oracle calls (an estimate; subsets that "
          "MARCO never visits may be larger or smaller models).")


if __name__ == "__main__":
    main()
