"""``nogo family``: one question over a family of scenarios generated from a small template."""

from __future__ import annotations

import sys
from pathlib import Path

from ..errors import InputError, Where
from ._common import add_output, emit_json

PRESETS = {
    # every canonical two- and three-lab scenario the command tries by default (results/families/)
    "canonical": dict(labs=(2, 3), settings=("2", "3/2", "4/2", "2/2/3"), outcomes=(2,), friends=("each",),
                      sequence=(1, 2), agency=("published", "one-lab")),
    "fixed-points": dict(labs=(2,), settings=("2", "3"), outcomes=(2,), friends=("all",)),
}


def register(sub) -> None:
    p = sub.add_parser("family", help="run one question over a family of scenarios (table, plot, JSON)",
                       description="Generate scenarios from a template (numbers of labs, settings per lab, outcomes, "
                                   "which labs hold an inner observer read out at setting 1), estimate what each "
                                   "costs, and answer one question for every member in reach, with exact evidence. "
                                   "Local agency is generated from the light-cone structure (labs space-like "
                                   "separated). Exit status 0 when every member was answered, 1 otherwise.")
    p.add_argument("template", nargs="?", default=None,
                   help="template file (YAML: labs, settings, outcomes, friends, sequence, nested, agency); "
                        "options below override it")
    p.add_argument("--preset", choices=sorted(PRESETS), default=None, help="a built-in template")
    p.add_argument("--labs", default=None, help="numbers of labs, e.g. 2,3")
    p.add_argument("--settings", default=None,
                   help="settings per lab: 3 (every lab) or 3/2 (one number per lab), comma-separated, e.g. 2,3,3/2")
    p.add_argument("--outcomes", default=None, help="numbers of outcomes, e.g. 2")
    p.add_argument("--friends", default=None,
                   help="which labs hold an inner observer: all, none, first, all-but-first, each (every pattern)")
    p.add_argument("--sequence", default=None,
                   help="friend measurements per friend lab, e.g. 1,2 (a sequential friend read out at settings 1..k)")
    p.add_argument("--nested", default=None,
                   help="friends of friends inside each friend, e.g. 0,1 (a chain read out always; not with --sequence > 1)")
    p.add_argument("--agency", default=None,
                   help="local-agency reading: published (all events jointly, default), one-lab (one lab at a time; "
                        "three or more labs), or both: published,one-lab")
    p.add_argument("--question", default="lf-equals-bell", choices=("lf-equals-bell", "lf-equals-pd", "facets", "implies"),
                   help="lf-equals-bell (default): does local friendliness equal the Bell-local set?; lf-equals-pd: "
                        "does it equal the partially deterministic set?; facets: how "
                        "many facets has --bundle?; implies: does --bundle imply --inequality?")
    p.add_argument("--bundle", default="local-friendliness", help="bundle for facets / implies (default local-friendliness)")
    p.add_argument("--inequality", default="", help="for implies: a catalog name or an inequality in the trade's notation")
    p.add_argument("--time-limit", type=float, default=60.0, metavar="SECONDS", help="per member (default 60)")
    p.add_argument("--workers", type=int, default=None, help="processes (through nogo.fanout; default one)")
    p.add_argument("--reach", choices=("estimate", "all"), default="estimate",
                   help="estimate (default): skip exact hulls the size estimate puts beyond reach; all: try them")
    p.add_argument("--route", choices=("oracle", "facets"), default="oracle",
                   help="lf-equals-bell without a witness: oracle (default) derives the Bell-local set only and "
                        "decides each of its facets on local friendliness by LP (one per symmetry orbit); "
                        "facets derives both sets and compares the facet lists")
    p.add_argument("--estimate-only", action="store_true", help="print the members and their size estimates only")
    p.add_argument("--out", default=None, metavar="FOLDER",
                   help="write table.md, table.csv, results.json and plot.png into this folder")
    p.add_argument("--plot", default=None, metavar="FILE", help="save the plot to this file (png, pdf, svg)")
    add_output(p)
    p.set_defaults(run=run)


def _template(args):
    from dataclasses import replace

    from ..family import Template, template_from_yaml

    base = template_from_yaml(args.template) if args.template else Template(**PRESETS.get(args.preset or "", {}))

    def ints(text, key):
        try:
            return tuple(int(x) for x in text.split(","))
        except ValueError:
            raise InputError(f"'{text}' is not a comma-separated list of numbers", Where("command line", key=key)) from None
    kw = {}
    for key in ("labs", "outcomes", "sequence", "nested"):
        if getattr(args, key):
            kw[key] = ints(getattr(args, key), f"--{key}")
    for key in ("settings", "friends", "agency"):
        if getattr(args, key):
            kw[key] = tuple(getattr(args, key).split(","))
    t = replace(base, **kw)
    t.check(lambda key: Where("command line", key=f"--{key}"))
    return t


def run(args) -> int:
    from ..atomic import write_text
    from ..family import estimate, run_family
    from ..family_output import csv_table, markdown_table, plot

    template = _template(args)
    if args.estimate_only:
        members = template.members()
        rows = [{"member": m.key, **estimate(m)} for m in members]
        if args.json:
            emit_json(rows)
        else:
            for r in rows:
                print(f"{r['member']}: dimension {r['dimension']}, {r['bell_vertices']} deterministic strategies, "
                      f"hull {r['hull']}; {'in reach' if r['hull_in_reach'] else 'beyond reach'}"
                      + ("" if r["hull_in_reach"] else "; Bell-local hull class by class (oracle route): "
                         + ("in reach" if r["bell_hull_by_classes_in_reach"] else "beyond reach")))
        return 0
    fr = run_family(template, args.question, bundle=args.bundle, inequality=args.inequality,
                    time_limit=args.time_limit, workers=args.workers, reach=args.reach,
                    route=args.route)
    if args.out:
        import json

        folder = Path(args.out)
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise InputError(f"cannot create {folder}: {exc.strerror}") from None
        write_text(folder / "table.md", markdown_table(fr))
        write_text(folder / "table.csv", csv_table(fr))
        write_text(folder / "results.json", json.dumps(fr.to_dict(), indent=2, ensure_ascii=False) + "\n")
        plot(fr, str(folder / "plot.png"))
    if args.plot:
        plot(fr, args.plot)
    if args.json:
        emit_json(fr.to_dict())
    else:
        sys.stdout.write(markdown_table(fr))
        print(f"{len(fr.results)} members in {fr.seconds:.1f} s; every 'equal' / 'not equal' rests on exact evidence "
              "(certified vertices and Farkas-certified facets, or a re-checked witness inequality)")
    unanswered = [r for r in fr.results if r.answer in ("out of reach", "out of time", "refused", "unverified",
                                                        "disagreement")]
    return 1 if unanswered else 0
