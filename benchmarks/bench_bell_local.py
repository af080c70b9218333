"""Bell-local, two parties x m settings: `nogo check CHSH` against the LP a researcher writes by hand.

Run: python benchmarks/bench_bell_local.py [--settings 6] [--also 8]

The hand-written route (common practice for local polytopes; Fine, PRL 48,
291 (1982) for why deterministic strategies suffice): enumerate the 4^m
deterministic strategies with numpy, one column per strategy, one row
"weights sum to 1", the CHSH value of each strategy as the objective, and
HiGHS.  Both routes run as fresh processes (interpreter start and imports
included, as a user meets them) and in this process (stages only).  The
printed numbers are ratios from one run, and the peak memory of each
process; nothing here fails on a slow machine.
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

HAND = r'''
import itertools, sys, time
import numpy as np
import highspy
m = int(sys.argv[1])
# strategy = (a_1..a_m, b_1..b_m) in {+1,-1}; CHSH uses settings 1, 2
s = np.array(list(itertools.product([1, -1], repeat=2 * m)), dtype=float)
a1, a2, b1, b2 = s[:, 0], s[:, 1], s[:, m], s[:, m + 1]
c = a1 * b1 + a1 * b2 + a2 * b1 - a2 * b2
h = highspy.Highs()
h.setOptionValue("output_flag", False)
n = len(c)
lp = highspy.HighsLp()
lp.num_col_, lp.num_row_ = n, 1
lp.col_cost_ = c
lp.col_lower_ = np.zeros(n)
lp.col_upper_ = np.full(n, highspy.kHighsInf)
lp.row_lower_ = np.array([1.0]); lp.row_upper_ = np.array([1.0])
lp.a_matrix_.format_ = highspy.MatrixFormat.kRowwise
lp.a_matrix_.start_ = np.array([0, n], dtype=np.int32)
lp.a_matrix_.index_ = np.arange(n, dtype=np.int32)
lp.a_matrix_.value_ = np.ones(n)
lp.a_matrix_.num_col_, lp.a_matrix_.num_row_ = n, 1
lp.sense_ = highspy.ObjSense.kMaximize
h.passModel(lp)
h.run()
print(h.getInfo().objective_function_value)
'''


def theory_text(m: int) -> str:
    txt = (ROOT / "theories" / "bell-2x3.yaml").read_text()
    return txt.replace("settings: [1, 2, 3]", "settings: [" + ", ".join(str(i) for i in range(1, m + 1)) + "]")


def timed(cmd: list[str]) -> tuple[float, float, str]:
    """Wall seconds, peak RSS (MiB) and stdout of a child process."""
    t0 = time.perf_counter()
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    out = subprocess.run(cmd, capture_output=True, text=True, cwd=ROOT)
    t = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    if out.returncode not in (0, 1):
        raise SystemExit(out.stderr)
    return t, max(peak, before) / 1024, out.stdout


def stages(path: str) -> dict[str, float]:
    sys.path.insert(0, str(ROOT))
    from nogo.catalog import resolve_inequality
    from nogo.check import decide, recheck
    from nogo.compile import compile_bundle
    from nogo.theory import load_theory

    t = {}
    t0 = time.perf_counter()
    th = load_theory(path)
    model = compile_bundle(th, "Bell-local")
    t1 = time.perf_counter()
    ineq = resolve_inequality(th.scenario, "CHSH")
    r = decide(model, ineq)
    t2 = time.perf_counter()
    assert recheck(model, r) is None and r.maximum == 2
    t3 = time.perf_counter()
    t.update(compile=t1 - t0, decide=t2 - t1, recheck=t3 - t2)
    t["shape"] = model.shape
    t["solved"] = r.solved_shape
    return t


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--settings", type=int, default=6)
    ap.add_argument("--also", type=int, nargs="*", default=[], help="further setting counts, stages only")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        for m in [args.settings] + list(args.also):
            path = os.path.join(tmp, f"bell-2x{m}.yaml")
            Path(path).write_text(theory_text(m))
            if m == args.settings:
                hand_py = os.path.join(tmp, "hand.py")
                Path(hand_py).write_text(HAND)
                th, hm, hout = timed([sys.executable, hand_py, str(m)])
                nt, nm, nout = timed([sys.executable, "-m", "nogo", "check", path, "Bell-local", "CHSH"])
                assert float(hout.split()[-1]) == 2.0 and "IMPLIED" in nout
                print(f"Bell-local 2 x {m} settings, CHSH, end to end (fresh processes):")
                print(f"  hand-written deterministic-strategy LP  {th:7.2f} s  (peak RSS of the largest child so far "
                      f"{hm:.0f} MiB)")
                print(f"  nogo check                              {nt:7.2f} s  (peak RSS of the largest child so far "
                      f"{nm:.0f} MiB)")
                print(f"  ratio nogo / hand-written: {nt / th:.2f}")
            st = stages(path)
            print(f"stages in this process, 2 x {m}: compiled {st['shape'][0]} x {st['shape'][1]}, LP on "
                  f"{st['solved'][0]} x {st['solved'][1]}: compile {st['compile']:.2f} s, decide {st['decide']:.2f} s, "
                  f"recheck {st['recheck']:.2f} s")


if __name__ == "__main__":
    main()
