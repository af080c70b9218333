"""`nogo check` stage by stage, and end to end against what a user would write by hand.

Run: python benchmarks/bench_check.py [--repeat N] [--settings M] [--tree DIR]

Part 1 (as before): one `check` on the three-setting two-lab scenario
(friends-2x3, local-friendliness, I3322 by default), median time of each
stage (load, compile, parse, marginal guard, decide, re-check) and the ratio
of the whole to the bare HiGHS solve of the same compiled matrix.

Part 2: CHSH on Bell-local with two parties and M settings each (default 6),
end to end in fresh processes (interpreter start and imports included), as
`python -m nogo check` and as the deterministic-strategy LP a researcher
writes by hand (numpy enumerates the 4^M strategies, HiGHS solves one row
"weights sum to 1"; see benchmarks/bench_bell_local.py).  ``--tree DIR``
also times `nogo check` from another checkout (e.g. an older commit
unpacked with `git archive`), so before/after ratios come from one run.
Part 2 runs twice: with PYTHONDONTWRITEBYTECODE=1 (every module compiled
from source, as in this project's sessions) and with bytecode cached under a
temporary PYTHONPYCACHEPREFIX (as for an installed package); the commands
are interleaved and each is warmed once untimed.  Peak memory is the
child's maximum resident set; CPU time (user + system, from the
children's rusage) is printed beside the wall time, since on a shared
machine wall time also counts the waiting.  Ratios, not absolute
times, are what to compare across machines; nothing here fails.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))


def stages(repeat: int, inequality: str) -> None:
    from nogo.catalog import load_catalog, resolve_inequality
    from nogo.check import decide, marginal_guard, recheck
    from nogo.compile import compile_bundle
    from nogo.lp import make_highs
    from nogo.theory import load_theory

    cat = load_catalog()
    times: dict[str, list[float]] = {k: [] for k in ("load", "compile", "parse", "guard", "decide", "recheck", "bare HiGHS")}
    for _ in range(repeat):
        t0 = time.perf_counter()
        th = load_theory(ROOT / "theories" / "friends-2x3.yaml")
        t1 = time.perf_counter()
        model = compile_bundle(th, "local-friendliness")
        t2 = time.perf_counter()
        ineq = resolve_inequality(th.scenario, inequality, cat)
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
    print(f"check friends-2x3 local-friendliness {inequality}: verdict {r.verdict}, maximum {r.maximum}, "
          f"model {model.shape[0]} x {model.shape[1]}")
    for k, v in med.items():
        print(f"  {k:<12} {v * 1e3:9.2f} ms")
    print(f"  {'whole':<12} {whole * 1e3:9.2f} ms")
    print(f"ratio whole / bare HiGHS solve: {whole / med['bare HiGHS']:.1f}")


def _cpu() -> float:
    import resource

    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def _child(cmd: list[str], cwd: Path, env: dict) -> tuple[float, float, str, float]:
    """Wall seconds, peak RSS in MiB (GNU time when present), stdout and CPU seconds of one fresh process."""
    timer = ["/usr/bin/time", "-f", "%M"] if os.path.exists("/usr/bin/time") else []
    t0, c0 = time.perf_counter(), _cpu()
    out = subprocess.run(timer + cmd, capture_output=True, text=True, cwd=cwd, env=env)
    t, cpu = time.perf_counter() - t0, _cpu() - c0
    rss = float("nan")
    if timer:
        try:
            rss = int(out.stderr.strip().splitlines()[-1]) / 1024
        except (ValueError, IndexError):
            pass
    if out.returncode not in (0, 1):
        raise SystemExit(out.stderr[-2000:])
    return t, rss, out.stdout, cpu


def _envs(tmp: str) -> list[tuple[str, dict]]:
    """Both ways of loading Python modules a user meets: from source each time, and from cached bytecode.

    The bytecode cache goes to a temporary prefix (PYTHONPYCACHEPREFIX), so
    the work tree stays clean; it is warmed by one untimed run per command.
    """
    base = dict(os.environ)
    src = dict(base, PYTHONDONTWRITEBYTECODE="1")
    src.pop("PYTHONPYCACHEPREFIX", None)
    pyc = dict(base, PYTHONPYCACHEPREFIX=os.path.join(tmp, "pycache"))
    pyc.pop("PYTHONDONTWRITEBYTECODE", None)
    return [("no .pyc (PYTHONDONTWRITEBYTECODE=1)", src), ("with .pyc (cached bytecode)", pyc)]


def end_to_end(m: int, tree: str | None, repeat: int) -> None:
    from bench_bell_local import HAND, theory_text

    print(f"\nPYTHONDONTWRITEBYTECODE in this environment: {os.environ.get('PYTHONDONTWRITEBYTECODE', '(not set)')}")
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, f"bell-2x{m}.yaml")
        Path(path).write_text(theory_text(m))
        hand = os.path.join(tmp, "hand.py")
        Path(hand).write_text(HAND)
        check = ["-m", "nogo", "check", path, "Bell-local", "CHSH"]
        rows = [("hand-written strategy LP", [sys.executable, hand, str(m)], ROOT),
                ("nogo check (this tree)", [sys.executable] + check, ROOT)]
        if tree:
            rows.append((f"nogo check ({tree})", [sys.executable] + check, Path(tree)))
        for label, env in _envs(tmp):
            for _, cmd, cwd in rows:  # warm the bytecode cache (and the disk cache) untimed
                _child(cmd, cwd, env)
            runs: dict[str, list] = {name: [] for name, _, _ in rows}
            for _ in range(repeat):  # interleaved, so a busy moment hits every command alike
                for name, cmd, cwd in rows:
                    runs[name].append(_child(cmd, cwd, env))
            res = {name: (statistics.median(r[0] for r in rr), max(r[1] for r in rr), rr[-1][2],
                          statistics.median(r[3] for r in rr)) for name, rr in runs.items()}
            assert "IMPLIED" in res["nogo check (this tree)"][2]
            base, base_cpu = res["hand-written strategy LP"][0], res["hand-written strategy LP"][3]
            print(f"Bell-local 2 x {m} settings, CHSH, end to end, {label} (fresh processes, median of {repeat}):")
            for name, (t, rss, _, cpu) in res.items():
                print(f"  {name:<40} {t:7.2f} s wall ({cpu:5.2f} s CPU)  peak {rss:6.0f} MiB  "
                      f"ratio to hand-written {t / base:5.2f} (CPU {cpu / base_cpu:5.2f})")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=20)
    ap.add_argument("--inequality", default="I3322")
    ap.add_argument("--settings", type=int, default=6)
    ap.add_argument("--tree", default=None, help="another checkout to time `nogo check` from (before/after)")
    ap.add_argument("--end-repeat", type=int, default=7)
    args = ap.parse_args()
    stages(args.repeat, args.inequality)
    end_to_end(args.settings, args.tree, args.end_repeat)


if __name__ == "__main__":
    main()
