"""``nogo referee CLAIMS.yaml``: decide every claim of a manuscript, with exact evidence."""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ._common import emit_json


def register(sub) -> None:
    p = sub.add_parser("referee", help="decide every claim of a claims file (report + evidence bundle)",
                       description="Decide each claim of a claims file: CONFIRMED, REFUTED (with the "
                                   "counterexample or the true value), NOT DECIDED (what stopped it) or "
                                   "ILL-POSED. Exit status 0 when all are confirmed, 1 when any is not, 2 for "
                                   "bad input.")
    p.add_argument("claims", help="claims file (YAML; see DEVELOPERS.md, 'Claims files')")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.add_argument("--out", action="append", default=[], metavar="FILE",
                   help="write the report: .md, .tex (a section to paste) or .html (self-contained); repeatable")
    p.add_argument("--evidence", metavar="DIR", help="write the evidence bundle (re-check it with nogo recheck DIR)")
    p.add_argument("--workers", type=int, default=1,
                   help="processes for the certificates of long facet lists (default 1)")
    p.set_defaults(run=run)


def run(args) -> int:
    from ..atomic import write_text
    from ..referee.evidence import write_bundle
    from ..referee.render import render, table, to_dict
    from ..referee.run import claims_meta, referee

    outs = []
    for o in args.out:
        ext = Path(o).suffix.lower().lstrip(".")
        if ext not in ("md", "tex", "html"):
            raise InputError(f"--out {o}: the report is written as .md, .tex or .html", hint="name the file report.md")
        outs.append((o, ext))
    if args.workers < 1:
        raise InputError("--workers must be at least 1")
    import sys

    def progress(i, n, cid):  # a line per claim on a terminal; nothing when piped
        if sys.stderr.isatty():
            print(f"\r  deciding {cid} ({i + 1}/{n}) …" + " " * 20, end="", file=sys.stderr, flush=True)

    cf, verdicts, seconds = referee(args.claims, progress=progress, workers=args.workers)
    if sys.stderr.isatty():
        print("\r" + " " * 60 + "\r", end="", file=sys.stderr, flush=True)
    for o, ext in outs:
        write_text(o, render(ext, cf, verdicts))
    manifest = None
    if args.evidence:
        manifest = write_bundle(args.evidence, args.claims, verdicts, claims_meta(cf))
    if args.json:
        d = to_dict(cf, verdicts, seconds)
        if manifest:
            d["evidence"] = {"folder": args.evidence, "bundle_sha256": manifest["bundle_sha256"]}
        emit_json(d)
    else:
        print(table(cf, verdicts), end="")
        print(f"decided in {seconds:.1f} s" + (f"; evidence in {args.evidence} (bundle {manifest['bundle_sha256'][:16]}…)"
                                               if manifest else ""))
    return 0 if all(v.status == "CONFIRMED" for v in verdicts) else 1
