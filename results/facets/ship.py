"""Derive a facet list from its declarations and write it as a shipped result.

    python results/facets/ship.py NAME THEORY BUNDLE [--route symmetric] [--time-limit S]
                                  [--cache-dir DIR] [--full-list-limit N]

runs :func:`nogo.facets.facets` (class by class under the verified symmetry
group; resumable through the store in ``--cache-dir``: a run stopped by the
time limit leaves its closed classes there and the next call resumes from
them) and, when the list is complete, writes under ``results/facets/NAME/``:

* ``classes.json``   the exporter's JSON (:func:`nogo.facetexport.to_dict`): theory,
  bundle, counts, coordinates, symmetry group, every class with its size and
  representative; the per-facet list only when it has at most
  ``--full-list-limit`` facets (else ``nogo facets THEORY BUNDLE --all``
  expands it; every member is the image of its representative under the
  verified group);
* ``evidence.json``  the exact evidence (:func:`nogo.polytope.certify.to_payload`):
  certified vertices, the equations of the affine hull, each class
  representative with its Farkas multipliers over the compiled model's rows,
  the relabellings used and the group order; ``tests/test_results_facets.py``
  re-checks it;
* ``run.json``       how this run went: seconds, machine, the command.

and ``README.md`` (what was derived, the commands, counts, the class table,
times, machine, the exact evidence; ``--about`` and ``--times`` add the
words and the times of earlier attempts of a resumed run).  Exit status 0
complete (files written), 1 partial (nothing written; run again to resume).
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent.parent
sys.path.insert(0, str(ROOT))

from nogo.atomic import write_text  # noqa: E402


def machine() -> str:
    cpu = ""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    load = ", ".join(f"{x:.2f}" for x in os.getloadavg()) if hasattr(os, "getloadavg") else "?"
    return (f"{platform.system()} {platform.machine()}, {os.cpu_count()} cores ({cpu or platform.processor()}), "
            f"Python {platform.python_version()}; load average at the end {load}")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("name")
    ap.add_argument("theory")
    ap.add_argument("bundle")
    ap.add_argument("--route", default="auto", choices=("auto", "symmetric", "plain"))
    ap.add_argument("--coordinates", default="auto")
    ap.add_argument("--time-limit", type=float, default=None)
    ap.add_argument("--cache-dir", default=str(ROOT / ".nogo-cache"))
    ap.add_argument("--full-list-limit", type=int, default=5000)
    ap.add_argument("--about", default="", help="a paragraph for the README (what the list is)")
    ap.add_argument("--times", default="", help="the times of the attempts (a resumed run), for the README")
    a = ap.parse_args(argv)

    from nogo.facetexport import to_dict
    from nogo.facets import facets
    from nogo.polytope.certify import to_payload
    from nogo.theory import load_theory

    th = load_theory(a.theory)
    t0 = time.perf_counter()
    c0 = time.process_time()
    r = facets(th, a.bundle, frame=a.coordinates, cache=a.cache_dir, time_limit=a.time_limit, route=a.route,
               progress=_progress)
    wall, cpu = time.perf_counter() - t0, time.process_time() - c0
    P = r.polytope
    print(f"{a.name}: {P.status}, {len(r.facets)} facets in {len(r.classes)} classes, {len(P.vertices)} vertices, "
          f"dimension {P.dim}; {wall:.1f} s wall, {cpu:.1f} s CPU (this process); from store: {r.from_cache}",
          file=sys.stderr)
    if P.status != "complete":
        return 1
    out = ROOT / "results" / "facets" / a.name
    out.mkdir(parents=True, exist_ok=True)
    d = to_dict(r, with_vertices=False)
    d["theory"] = os.path.relpath(Path(a.theory).resolve(), ROOT)
    if len(r.facets) > a.full_list_limit:
        d["facets"] = None
        d["facets left out"] = (f"{len(r.facets)} facets: expand with 'nogo facets {d['theory']} {a.bundle} --all' "
                                "(each member is the image of its class representative under the verified group)")
    write_text(out / "classes.json", json.dumps(d, indent=1, ensure_ascii=False) + "\n")
    write_text(out / "evidence.json", to_payload(P) + "\n")
    stats = {k: v for k, v in P.stats.items() if k != "times"}
    words = ["python", "results/facets/ship.py", a.name, d["theory"], a.bundle]
    for flag, value, default in (("--route", a.route, "auto"), ("--coordinates", a.coordinates, "auto"),
                                 ("--time-limit", a.time_limit, None)):
        if value != default:
            words += [flag, f"{value:g}" if isinstance(value, float) else str(value)]
    run = {"command": " ".join(words),
           "seconds wall (this call)": round(wall, 1), "seconds CPU (this process)": round(cpu, 1),
           "from the store (re-verified)": r.from_cache, "stage seconds": P.stats.get("times", {}),
           "stats": stats, "machine": machine()}
    write_text(out / "run.json", json.dumps(run, indent=1, ensure_ascii=False, default=str) + "\n")
    write_text(out / "README.md", readme(a, d, r, run))
    return 0


def readme(a, d: dict, r, run: dict) -> str:
    """The folder's README: the commands, counts, classes, times, machine and the exact evidence."""
    P = r.polytope
    cmd_user = f"python -m nogo facets {d['theory']} {a.bundle}" + (f" --route {a.route}" if a.route != "auto" else "")
    lines = [f"# {a.bundle} of `{d['theory']}`: {len(r.facets):,} facets in {len(r.classes)} classes", ""]
    if a.about:
        lines += [a.about, ""]
    lines += [f"Bundle `{a.bundle}` = {' + '.join(d['assumptions'])}.", "",
              "## Regenerate", "", "From the repository root:", "", "```",
              run["command"], "```", "",
              "writes the files of this folder (resumable: a run stopped by `--time-limit` keeps its closed "
              "classes in the store under `--cache-dir` and the next call resumes from them).  The same list "
              "on the command line:", "", "```", cmd_user + "            # classes, one representative each",
              cmd_user + " --all      # every facet", cmd_user + " --format json --out FILE", "```", "",
              "## Counts", "",
              f"* {len(r.facets):,} facets in {len(r.classes)} classes under a symmetry group of order "
              f"{r.group_order} ({len(r.symmetries)} generating relabellings, each verified exactly on the "
              "compiled model)",
              f"* {len(P.vertices):,} vertices, dimension {P.dim}, {d['coordinates']['kind']} coordinates", "",
              "Class sizes (size: number of classes): "
              + ", ".join(f"{s}: {n}" for s, n in sorted(_hist([c.size for c in r.classes]).items())) + ".", "",
              "## Times", ""]
    if a.times:
        lines += [a.times, ""]
    lines += [f"This call: {run['seconds wall (this call)']} s wall, {run['seconds CPU (this process)']} s CPU"
              + (" (read from the store and re-verified exactly)" if run["from the store (re-verified)"] else ""),
              f"on {run['machine']}.", "", "## Evidence", "",
              "`evidence.json`: every vertex with an exact preimage in the compiled model; the equations of the "
              "affine hull, each proved both ways by a Farkas certificate; every class representative with "
              "rational Farkas multipliers of the model's rows (checked in integer arithmetic) and tight on "
              f"vertices of affine rank {P.dim - 1}; every other member is the image of its representative "
              "under a relabelling verified to be a symmetry of the model, and each class's size is its orbit "
              "size.  `tests/test_results_facets.py` repeats every one of these checks from the declarations "
              "(default run) and derives the list again (`--runslow`).", "",
              "## Classes", "", "| class | size | representative |", "|---|---|---|"]
    for c in r.classes:
        rep = r.facets[c.representative].text.replace("|", "\\|")
        lines.append(f"| {c.name} | {c.size} | {rep} |")
    return "\n".join(lines) + "\n"


def _hist(xs):
    out: dict[int, int] = {}
    for x in xs:
        out[x] = out.get(x, 0) + 1
    return out


_last = [0.0]


def _progress(stage, done, total):
    now = time.perf_counter()
    if now - _last[0] > 20:
        _last[0] = now
        print(f"  {time.strftime('%H:%M:%S')} {stage} {done}{'/' + str(total) if total else ''}", file=sys.stderr,
              flush=True)


if __name__ == "__main__":
    sys.exit(main())
