"""Time to decide and minimise the GHZ contradiction for 3, 4 and 5 parties.

    python benchmarks/bench_possibilistic.py [--max-parties 5] [--time-limit 60]

For n parties sharing the GHZ state (|0…0> + |1…1>)/sqrt(2), setting 1 = X
and setting 2 = Y (Greenberger, Horne, Shimony, Zeilinger, Am. J. Phys. 58,
1131 (1990); Mermin, PRL 65, 1838 (1990)), against

* Bell locality (counterfactual outcomes + setting independence), and
* local friendliness with one inner observer per lab measuring X and read
  out at setting 1 (absoluteness + local agency in its published, joint
  form: every event outside a lab's future light cone, jointly).

The n-party theories are generated here.  The support is taken from
nogo.quantum (exact zero test where sympy is fast enough, else a stated
float tolerance).  Printed per case: size of the model, time to the verdict,
time of the smallest-core search, the size of the first minimal core and of
the smallest core found, whether it is proven smallest, and proof steps.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from nogo.possibilistic import decide_pattern  # noqa: E402
from nogo.possibilistic.support import support_from_experiment  # noqa: E402
from nogo.quantum import load_experiment_text  # noqa: E402
from nogo.theory import load_theory_text  # noqa: E402

NAMES = "ABCDEFGH"


def theory_text(n: int, inner: bool) -> str:
    ps = NAMES[:n]
    lines = ["title: generated GHZ family", "scenario:", "  parties:"]
    lines += [f"    {p}: {{settings: [1, 2], outcomes: [+1, -1]}}" for p in ps]
    if inner:
        lines.append("  inner_observers:")
        lines += [f"    {p}_in: {{lab: {p}, outcomes: [+1, -1], read_out_at: 1}}" for p in ps]
    lines.append("assumptions:")
    lines.append(f"  counterfactual: {{counterfactual: [{', '.join(ps)}]}}")
    cf = ", ".join(f'"{p}@*"' for p in ps)
    lines.append(f"  setting-independence: {{independent: {{events: [{cf}], of: [{', '.join(p + '.setting' for p in ps)}]}}}}")
    if inner:
        recs = ", ".join(f"{p}_in" for p in ps)
        lines.append(f"  absoluteness: {{absolute: [{recs}]}}")
        for p in ps:
            others = ", ".join(q for q in ps if q != p)
            lines.append(f"  agency-{p}: {{independent: {{events: [{others}, {recs}], of: [{p}.setting]}}}}")
    lines.append("bundles:")
    lines.append("  Bell-local: [counterfactual, setting-independence]")
    if inner:
        lines.append(f"  local-friendliness: [absoluteness, {', '.join('agency-' + p for p in ps)}]")
    return "\n".join(lines) + "\n"


def experiment_text(n: int, inner: bool) -> str:
    ps = NAMES[:n]
    out = ["title: GHZ, X at setting 1, Y at setting 2", "state: ghz", "measurements:"]
    if inner:
        out += [f"  {p}: {{2: Y}}" for p in ps]
        out.append("inner_observers:")
        out += [f"  {p}_in: X" for p in ps]
    else:
        out += [f"  {p}: {{1: X, 2: Y}}" for p in ps]
    return "\n".join(out) + "\n"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--max-parties", type=int, default=5)
    ap.add_argument("--time-limit", type=float, default=60.0, help="seconds for each smallest-core search")
    args = ap.parse_args()
    print(f"{'case':<32} {'booleans':>9} {'groups':>7} {'support s':>9} {'verdict s':>9} {'search s':>9} "
          f"{'first':>6} {'smallest':>9} {'proven':>7} {'steps':>6}")
    for n in range(3, args.max_parties + 1):
        for inner, bundle in ((False, "Bell-local"), (True, "local-friendliness")):
            th = load_theory_text(theory_text(n, inner), f"<ghz-{n}>")
            t0 = time.monotonic()
            exp = load_experiment_text(experiment_text(n, inner), th)
            if n <= 4:
                pat = support_from_experiment(exp)
            else:  # exact sympy traces of 32x32 matrices take long; the tolerance is stated
                pat = support_from_experiment(_numeric(exp), tolerance=1e-9)
            t_support = time.monotonic() - t0
            t1 = time.monotonic()
            quick = decide_pattern(th, bundle, pat, minimise="minimal")
            t_verdict = time.monotonic() - t1
            t2 = time.monotonic()
            r = decide_pattern(th, bundle, pat, minimise="smallest", time_limit=args.time_limit)
            t_search = time.monotonic() - t2
            case = f"GHZ n={n} {bundle}{' (inner X)' if inner else ''} [{pat.zero_test}]"
            print(f"{case:<32} {r.stats['joint_booleans']:>9} {r.stats['groups']:>7} {t_support:>9.2f} "
                  f"{t_verdict:>9.2f} {t_search:>9.2f} {len(quick.core):>6} {len(r.core):>9} "
                  f"{str(r.smallest_proven):>7} {len(r.proof.steps) if r.proof else 0:>6}", flush=True)


def _numeric(exp):
    """The same experiment with its exact parts dropped, so the float Born rule is used."""
    from nogo.quantum.experiment import Experiment
    from nogo.quantum.measurements import Measurement
    from nogo.quantum.states import State

    st = State(exp.state.dims, exp.state.rho, None, exp.state.label)
    strip = {k: Measurement(m.projectors, None, m.label) for k, m in exp.measurements.items()}
    inner = {k: Measurement(m.projectors, None, m.label) for k, m in exp.inner.items()}
    return Experiment(exp.scenario, st, strip, inner, exp.title, exp.theory_file, exp.file)


if __name__ == "__main__":
    main()
