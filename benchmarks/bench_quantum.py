"""Timing of the quantum side on the three-setting two-lab scenario (friends-2x3).

Prints the time of one behaviour evaluation (float, ball, explicit register
model), one critical-visibility LP against local friendliness, and one NPA
level-1 bound, each the best of several runs, and the ratios between them.
Run: python benchmarks/bench_quantum.py
"""

from __future__ import annotations

import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def best_of(fn, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main() -> None:
    from nogo.catalog import resolve_inequality
    from nogo.compile import compile_bundle
    from nogo.quantum import ball_behaviour, behaviour, explicit_behaviour, load_experiment
    from nogo.quantum.born import behaviour_array, numeric_povms
    from nogo.quantum.npa import npa_bound
    from nogo.quantum.visibility import robustness, visibility_lp
    from nogo.quantum.states import white
    from nogo.theory import load_theory

    th = load_theory(ROOT / "theories" / "friends-2x3.yaml")
    exp = load_experiment(ROOT / "examples" / "experiments" / "sealed-labs-friends.yaml", th)
    model = compile_bundle(th, "local-friendliness")
    povms = numeric_povms(exp)
    p_s = behaviour_array(exp.state.rho, exp.state.dims, povms)
    p_n = behaviour_array(white(exp.state.dims).rho, exp.state.dims, povms)
    ineq = resolve_inequality(th.scenario, "-p_A(+1|1) - p_B(+1|3) + p_AB(+1 +1|1 2) + p_AB(+1 +1|1 3) "
                                           "- p_AB(+1 +1|2 2) + p_AB(+1 +1|2 3) <= 0")

    rows = [
        ("behaviour, float (numpy einsum)", best_of(lambda: behaviour_array(exp.state.rho, exp.state.dims, povms), 20)),
        ("behaviour, float (from the experiment)", best_of(lambda: behaviour(exp), 20)),
        ("behaviour, explicit register model", best_of(lambda: explicit_behaviour(exp), 5)),
        ("behaviour, balls (Arb, 200 bits)", best_of(lambda: (exp.cache.clear(), ball_behaviour(exp)), 3)),
        ("critical-visibility LP (float)", best_of(lambda: visibility_lp(model, p_s, p_n), 5)),
        ("visibility + certified separating inequality", best_of(lambda: robustness(model, exp), 3)),
        ("NPA level 1 (Clarabel) + certified bound", best_of(lambda: npa_bound(ineq, "1"), 3)),
    ]
    base = rows[0][1]
    print(f"friends-2x3: model {model.shape[0]} rows x {model.shape[1]} columns; 36 behaviour coordinates")
    for name, t in rows:
        print(f"  {name:<48} {t * 1e3:10.3f} ms   {t / base:10.1f} x float behaviour")


if __name__ == "__main__":
    main()
