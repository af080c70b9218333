"""Speed-up from 1 to 2 Dask workers (nogo.fanout), measured in one run.

Workloads a user would fan out:

* ``symmetric``: the facets of the three-party Bell-local set class by class
  (53,856 facets in 46 classes; A. Śliwa, Phys. Lett. A 317, 165 (2003)); its
  ridge hulls are the work items (``nogo.polytope.adjacency``);
* ``family``: ``nogo family`` over six two-lab members (3/3, 4/2 and 2/4
  settings, inner observers in every lab or in the first), the facets of each
  member's local-friendliness set; the members are the work items.

Each is timed serially (no engine), on a 1-worker and on a 2-worker Dask
``LocalCluster``; the clusters' start-up (including the import of nogo on the
workers) is timed apart, since a user pays it once per session.  Printed: the
ratios serial / 2 workers and 1 worker / 2 workers, whether the results equal
the serial ones, the serial fraction (for ``symmetric``: the time outside the
ridge hulls in the serial run) with the bound it sets on 2 workers (Amdahl),
and how many cores *other* programs kept busy during each timing (from
/proc/stat, minus this process and its children), so that a loaded machine
shows up as load and not as a slow engine.  Where the kernel shares the cores
between sessions (``/proc/sys/kernel/sched_autogroup_enabled`` = 1), one busy
program in another session holds one of two cores however many workers run
here: then 2 workers can gain nothing, and the "cores" columns show it.

    python benchmarks/bench_fanout.py                 # both workloads, once
    python benchmarks/bench_fanout.py --repeat 3      # three rounds: the range of each ratio
    python benchmarks/bench_fanout.py --only family
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import psutil  # noqa: E402

from nogo import fanout  # noqa: E402


# -- what the machine did meanwhile ----------------------------------------------------------------------
def _busy_seconds() -> float:
    """CPU seconds every core of the machine spent busy since boot (/proc/stat)."""
    with open("/proc/stat") as f:
        parts = [int(x) for x in f.readline().split()[1:]]
    idle = parts[3] + parts[4]  # idle + iowait
    return (sum(parts[:8]) - idle) / os.sysconf("SC_CLK_TCK")


def _ours() -> float:
    """CPU seconds of this process and all its children (the Dask workers, nannies, pool processes)."""
    me = psutil.Process()
    total = sum(me.cpu_times()[:4])  # with the children already waited for (forked hulls)
    for ch in me.children(recursive=True):
        try:
            total += sum(ch.cpu_times()[:2])
        except psutil.Error:
            pass
    return total


def measured(fn):
    """``(result, wall seconds, (cores other programs used on average, CPU seconds of ours))``."""
    b0, o0, w0 = _busy_seconds(), _ours(), time.perf_counter()
    out = fn()
    w = time.perf_counter() - w0
    ours = _ours() - o0
    others = max(0.0, (_busy_seconds() - b0) - ours)
    return out, w, (others / w if w > 0 else 0.0, ours)


# -- the workloads ---------------------------------------------------------------------------------------
def symmetric():
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_symmetric
    from nogo.symmetry import bundle_generators
    from nogo.theory import load_theory

    th = load_theory(ROOT / "theories" / "bell-3x2.yaml")
    P = derive_symmetric(compile_bundle(th, "Bell-local"), generators=bundle_generators(th, "Bell-local"))
    return P


def symmetric_key(P):
    return len(P.facets), sorted((f.a, f.b) for f in P.facets), sorted(P.class_sizes or [])


def family():
    from nogo.family import run_family
    from nogo.family_template import Template

    t = Template(labs=(2,), settings=("3", "4/2", "2/4"), outcomes=(2,), friends=("all", "first"))
    return run_family(t, "facets", bundle="local-friendliness")


def family_key(R):
    return [(r.member.key, r.answer, sorted(r.facets.items()), sorted(r.classes.items())) for r in R.results]


def _seconds_inside(module, name: str, fn):
    """:func:`measured`, and the seconds spent inside ``module.name`` meanwhile (patched for the run)."""
    spent = [0.0]
    plain = getattr(module, name)

    def timed(*args, **kw):
        t = time.perf_counter()
        try:
            return plain(*args, **kw)
        finally:
            spent[0] += time.perf_counter() - t

    setattr(module, name, timed)
    try:
        out, w, others = measured(fn)
    finally:
        setattr(module, name, plain)
    return out, w, others, spent[0]


def hull_seconds(fn):
    """Run *fn* serially and count the seconds spent inside the ridge hulls (the part that fans out)."""
    from nogo.polytope import adjacency

    return _seconds_inside(adjacency, "_hull_ints", fn)


def engine_seconds(fn):
    """:func:`measured`, and the seconds this process spent waiting on Dask fan-outs (the rest ran here)."""
    return _seconds_inside(fanout, "_on_dask", fn)


# -- one round -------------------------------------------------------------------------------------------
def one_round(names: list[str], rows: dict) -> None:
    work = {"symmetric": (symmetric, symmetric_key), "family": (family, family_key)}
    res: dict = {}
    for name in names:
        fn, key = work[name]
        if name == "symmetric":
            out, w, others, hulls = hull_seconds(fn)
            rows.setdefault(name + " fraction", []).append(1 - hulls / w)
        else:
            out, w, others = measured(fn)
            rows.setdefault(name + " members", []).append([r.seconds for r in out.results])
        res[name] = {"serial": (key(out), w, others)}
    for n in (1, 2):
        t0 = time.perf_counter()
        with fanout.engine(local_workers=n):
            rows.setdefault(f"start-up {n}", []).append(time.perf_counter() - t0)
            assert fanout.width() == n
            for name in names:
                fn, key = work[name]
                out, w, others, on_dask = engine_seconds(fn)
                res[name][n] = (key(out), w, others)
                if n == 2:
                    rows.setdefault(name + " outside", []).append(1 - on_dask / w)
    for name in names:
        r = res[name]
        same = r[1][0] == r["serial"][0] and r[2][0] == r["serial"][0]
        rows.setdefault(name, []).append({k: (v[1], v[2]) for k, v in r.items()} | {"same": same})


def report(names: list[str], rows: dict) -> None:
    n = len(rows[names[0]])
    for k in (1, 2):
        s = rows[f"start-up {k}"]
        print(f"{k}-worker LocalCluster start-up (with nogo imported on the workers): "
              + ", ".join(f"{x:.2f}" for x in s) + " s")
    for name in names:
        print(f"\n{name}: {n} round(s)")
        for r in rows[name]:
            (ws, (os_, cs)), (w1, (o1, c1)), (w2, (o2, c2)) = r["serial"], r[1], r[2]
            print(f"  serial {ws:7.2f} s   1 worker {w1:7.2f} s   2 workers {w2:7.2f} s   "
                  f"serial/2w {ws / w2:5.2f}   1w/2w {w1 / w2:5.2f}   same results: {r['same']}")
            print(f"      cores other programs kept busy meanwhile: {os_:.2f}, {o1:.2f}, {o2:.2f};  "
                  f"CPU seconds of this run (client + workers): {cs:.1f}, {c1:.1f}, {c2:.1f}, "
                  f"i.e. {cs / ws:.2f}, {c1 / w1:.2f}, {c2 / w2:.2f} cores")
        a = [r["serial"][0] / r[2][0] for r in rows[name]]
        b = [r[1][0] / r[2][0] for r in rows[name]]
        print(f"  serial/2w from {min(a):.2f} to {max(a):.2f};  1w/2w from {min(b):.2f} to {max(b):.2f}")
        if name + " members" in rows:
            for m in rows[name + " members"]:
                print(f"  member seconds (serial run): {', '.join(f'{x:.1f}' for x in m)};  no schedule on 2 workers "
                      f"is shorter than max(largest, total/2) = {max(max(m), sum(m) / 2):.1f} s "
                      f"(bound on serial/2w: {sum(m) / max(max(m), sum(m) / 2):.2f})")
        if name + " fraction" in rows:
            f = rows[name + " fraction"]
            print(f"  serial fraction (time outside the ridge hulls, serial run): "
                  + ", ".join(f"{x:.2f}" for x in f)
                  + f";  Amdahl bound for 2 workers: {max(1 / (x + (1 - x) / 2) for x in f):.2f}")
        print(f"  2-worker run: share of the wall time this process worked alone (outside Dask fan-outs: "
              f"the serial stages, and ridge hulls of faces that had no other face to go with): "
              + ", ".join(f"{x:.2f}" for x in rows[name + " outside"]))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=1, help="rounds (each: serial, 1 worker, 2 workers)")
    ap.add_argument("--only", choices=["symmetric", "family"], help="one workload")
    args = ap.parse_args()
    names = [args.only] if args.only else ["symmetric", "family"]
    try:
        auto = Path("/proc/sys/kernel/sched_autogroup_enabled").read_text().strip()
    except OSError:
        auto = "unknown"
    print(f"{os.cpu_count()} cores; load average before: {os.getloadavg()[0]:.2f}; autogroup scheduling: {auto}")
    rows: dict = {}
    for _ in range(args.repeat):
        one_round(names, rows)
    report(names, rows)


if __name__ == "__main__":
    main()
