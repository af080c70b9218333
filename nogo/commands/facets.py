"""``nogo facets``: every facet of the set of behaviours a bundle allows, in symmetry classes."""

from __future__ import annotations

import sys
from pathlib import Path

from ..facets import export, facets, to_dict
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
    p.add_argument("--no-cache", action="store_true", help="derive afresh and do not store the result")
    p.add_argument("--cache-dir", default=None,
                   help="folder of stored results (default $NOGO_CACHE, else ./.nogo-cache)")
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
    """Progress bars on standard error (rich), silent when it is not a terminal."""

    def __init__(self, quiet: bool):
        self.quiet = quiet or not sys.stderr.isatty()
        self.progress = None
        self.tasks: dict[str, int] = {}

    def __enter__(self):
        if not self.quiet:
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
        if self.progress is None:
            return
        if stage == "hull":
            from ..polytope import hull_estimate

            self.progress.console.print(f"exact hull of {done} points in dimension {total}: "
                                        f"expected {hull_estimate(done, total or 0)}")
            return
        if stage not in self.tasks:
            self.tasks[stage] = self.progress.add_task(stage, total=total)
        self.progress.update(self.tasks[stage], completed=done, total=total)


def _options(args) -> dict:
    cache = False if args.no_cache else (Path(args.cache_dir) if args.cache_dir else True)
    return dict(frame=args.coordinates, cache=cache, time_limit=args.time_limit, workers=args.workers,
                max_columns=args.max_columns)


def run(args) -> int:
    theory = theory_of(args)
    with _Bars(args.json or args.format != "text") as bars:
        r = facets(theory, args.bundle, progress=bars, **_options(args))
    code = 0 if r.status == "complete" else 1
    if args.json:
        emit_json(to_dict(r, with_vertices=args.vertices))
        return code
    if args.format != "text":
        text = export(r, args.format, "vertices" if args.vertices else "facets")
        if args.out:
            from ..atomic import write_text  # noqa: PLC0415 - atomic: the old file survives a failed write
            write_text(args.out, text)
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
    where = f"read from {r.cache_file}" if r.from_cache else f"{r.seconds:.2f} s, {st.get('oracle_calls', 0)} LP calls"
    print(f"symmetries used: {len(r.symmetries)} moves" +
          (f"; not symmetries of this set: {', '.join(r.dropped_symmetries)}" if r.dropped_symmetries else ""))
    for n in r.polytope.notes:
        print(f"note: {n}")
    if r.status == "complete":
        print(f"evidence: every vertex has an exact preimage in the compiled model; every facet has exact "
              f"Farkas multipliers; each is tight on vertices of affine rank {r.dim - 1} ({where})")
    else:
        print(f"PARTIAL RESULT (time limit): the list above is the hull of the vertices found so far; "
              f"facets not yet checked against the bundle may not be valid ({where})")
    return code
