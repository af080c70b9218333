"""``nogo facets``: every facet of the set of behaviours a bundle allows, in symmetry classes."""

from __future__ import annotations

import sys
import time
from pathlib import Path

from ._common import add_output, add_theory, emit_json, theory_of

FRAMES = ("auto", "collins-gisin", "correlators", "probabilities")


def add_derive_options(p) -> None:
    p.add_argument("--coordinates", choices=FRAMES, default="auto",
                   help="coordinates of the facet list: Collins–Gisin (only when the bundle implies no-signalling; "
                        "checked), correlators (two outcomes, no-signalling) or plain probabilities p(a|s); "
                        "default: Collins–Gisin when no-signalling holds, else probabilities")
    p.add_argument("--time-limit", type=float, default=None, metavar="SECONDS",
                   help="stop after this many seconds with a clearly marked partial result")
    p.add_argument("--workers", type=int, default=None, help="processes for the LP oracle (default: one)")
    p.add_argument("--local-cluster", type=int, default=None, metavar="N",
                   help="run the independent work (class pieces, oracle batches) on a Dask cluster of N worker "
                        "processes started on this machine for the run")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="run the independent work on an existing Dask cluster, e.g. tcp://host:8786")
    p.add_argument("--route", choices=("auto", "symmetric", "plain"), default="auto",
                   help="auto (default): facets class by class under the verified symmetries of the model, "
                        "else one plain hull; plain: always one hull of all vertices (the cross-check)")
    p.add_argument("--explore", action="store_true",
                   help="symmetric route by faces: large faces are sampled by random rays instead of decomposed, "
                        "then the list is proven complete by closure where that proof goes through (else it is "
                        "marked partial: every class listed is still an exact facet)")
    p.add_argument("--start", action="append", default=[], metavar="INEQUALITY",
                   help="a catalog name or inequality text to begin the search from (repeatable); one that is "
                        "not a facet of the set is left out with a note")
    p.add_argument("--no-cache", action="store_true", help="derive afresh and do not store the result")
    p.add_argument("--cache-dir", default=None,
                   help="folder of the result store (default $NOGO_CACHE, else ./.nogo-cache); a stored "
                        "result is re-verified with exact checks before it is used, and an interrupted "
                        "run resumes from the classes it had closed")
    p.add_argument("--max-columns", type=int, default=200_000,
                   help="refuse hidden-variable models larger than this (default 200000)")


def register(sub) -> None:
    p = sub.add_parser("facets", help="derive every facet of a bundle's set of behaviours, in symmetry classes",
                       description="Derive the exact vertices and facets of the set of observed behaviours the "
                                   "bundle allows, from its declarations; group the facets into classes up to "
                                   "relabelling; name the classes the catalog knows. Every facet carries exact "
                                   "evidence. Exit status 0 complete, 1 partial (time limit), 2 error.")
    add_theory(p)
    add_derive_options(p)
    p.add_argument("--format", choices=("text", "json", "yaml", "csv", "latex"), default="text",
                   help="output format (default text: classes with a representative each)")
    p.add_argument("--vertices", action="store_true", help="export the vertex list instead of the facets")
    p.add_argument("--all", action="store_true", help="text output: list every facet, not one per class")
    p.add_argument("--out", default=None, help="write the export to this file instead of standard output")
    add_output(p)
    p.set_defaults(run=run)


class _Bars:
    """Progress on standard error: rich bars on a terminal, a plain line every few seconds otherwise."""

    def __init__(self, quiet: bool, every: float = 10.0):
        self.quiet = quiet
        self.tty = sys.stderr.isatty()
        self.progress = None
        self.tasks: dict[str, int] = {}
        self.every = every
        self.last = 0.0
        self.t0 = time.perf_counter()

    def __enter__(self):
        if not self.quiet and self.tty:
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

            self.progress = Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                                     TimeElapsedColumn(), console=Console(stderr=True), transient=True)
            self.progress.__enter__()
        return self

    def __exit__(self, *exc):
        if self.progress is not None:
            self.progress.__exit__(*exc)

    def __call__(self, stage: str, done: int, total: int | None) -> None:
        if self.quiet:
            return
        if self.progress is None:
            now = time.perf_counter()
            if now - self.last >= self.every:
                self.last = now
                of = f" of {total}" if total else ""
                print(f"nogo: {now - self.t0:6.0f} s  {stage}: {done}{of}", file=sys.stderr, flush=True)
            return
        if stage == "hull":
            from ..polytope import hull_estimate

            self.progress.console.print(f"exact hull of {done} points in dimension {total}: "
                                        f"expected {hull_estimate(done, total or 0)}")
            return
        if stage not in self.tasks:
            self.tasks[stage] = self.progress.add_task(stage, total=total)
        self.progress.update(self.tasks[stage], completed=done, total=total)


def engine_of(args):
    """The fan-out engine the options ask for (serial by default)."""
    from ..fanout import engine

    return engine(scheduler=getattr(args, "scheduler", None), local_workers=getattr(args, "local_cluster", None))


def _options(args) -> dict:
    cache = False if args.no_cache else (Path(args.cache_dir) if args.cache_dir else True)
    return dict(frame=args.coordinates, cache=cache, time_limit=args.time_limit, workers=args.workers,
                max_columns=args.max_columns, route=args.route, explore=getattr(args, "explore", False),
                start=list(getattr(args, "start", []) or []))


def run(args) -> int:
    from ..atomic import write_text
    from ..facetexport import export, to_dict
    from ..facets import facets

    theory = theory_of(args)
    with engine_of(args), _Bars(args.json or args.format != "text") as bars:
        r = facets(theory, args.bundle, progress=bars, **_options(args))
    for w in r.warnings:
        print(f"nogo: {w}", file=sys.stderr)
    code = 0 if r.status == "complete" else 1
    if args.json:
        emit_json(to_dict(r, with_vertices=args.vertices))
        return code
    if args.format != "text":
        text = export(r, args.format, "vertices" if args.vertices else "facets")
        if args.out:
            write_text(Path(args.out), text)
            print(f"wrote {args.out}")
        else:
            sys.stdout.write(text)
        return code
    print(r.summary())
    if args.all:
        for c in r.classes:
            print(f"\n{c.name} ({c.size}):")
            for i in c.members:
                print(f"  {r.facets[i].text}")
    if args.vertices:
        print(f"\nvertices ({len(r.vertices)}):")
        for i in range(len(r.vertices)):
            print(f"  {i + 1}: {r.vertex_text(i) or 'all coordinates 0'}")
    st = r.polytope.stats
    where = (f"read from {r.cache_file} and re-verified now with the exact checks, {r.seconds:.2f} s; "
             "that no facet is missing rests on the derivation that stored the list (guarded by its hash)"
             if r.from_cache else f"{r.seconds:.2f} s, {st.get('oracle_calls', 0)} LP calls")
    order = f"; group of order {r.group_order} acting on the set" if r.group_order else ""
    print(f"symmetries used: {len(r.symmetries)} moves{order}" +
          (f"; not symmetries of this set: {', '.join(r.dropped_symmetries)}" if r.dropped_symmetries else ""))
    if r.polytope.classes is not None:
        print("route: facets class by class (adjacency decomposition); each class representative has its own "
              "Farkas certificate, the other members follow by relabellings verified on the model")
    for n in r.polytope.notes:
        print(f"note: {n}")
    if r.status == "complete":
        print(f"evidence: every vertex has an exact preimage in the compiled model; every facet has exact "
              f"Farkas multipliers; each is tight on vertices of affine rank {r.dim - 1} ({where})")
    elif all(f.verified for f in r.polytope.facets):
        print(f"PARTIAL RESULT: every facet listed has exact Farkas multipliers and is tight on vertices of "
              f"affine rank {r.dim - 1}, but the list may miss facets (see the notes; {where})")
    else:
        print(f"PARTIAL RESULT (time limit): the list above is the hull of the vertices found so far; "
              f"facets not yet checked against the bundle may not be valid ({where})")
    return code
