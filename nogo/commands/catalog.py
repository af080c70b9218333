"""``nogo catalog``: the published inequalities the tool knows, and their versions."""

from __future__ import annotations

import argparse

from ._common import add_match, emit_json


def register(sub) -> None:
    p = sub.add_parser("catalog", help="list catalog inequalities, or the relabelled versions of one",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="List the published inequalities nogo knows (name, text, source), or, with "
                                   "a name and --theory, every relabelled version of one entry in that theory's "
                                   "scenario, each in the entry's own notation.\n\n"
                                   "exit status: 0 listed, 2 bad input or error\n"
                                   "example:     nogo catalog CHSH --theory theories/bell-2x2.yaml")
    p.add_argument("name", nargs="?", help="an entry to expand into its versions (needs --theory)")
    p.add_argument("--theory", help="theory whose scenario the versions live in")
    add_match(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run)


def run(args) -> int:
    from ..catalog import load_catalog, resolve_inequality, versions
    from ..errors import InputError
    from ..theory import load_theory

    cat = load_catalog()
    if not args.name:
        if not cat:
            raise InputError("the catalog is empty: no entries were found",
                             hint="set NOGO_CATALOG to a folder of catalog YAML files")
        if args.json:
            emit_json({n: {"expression": e.expression, "source": e.source, "parties": list(e.parties)}
                       for n, e in cat.items()})
        else:
            for n, e in cat.items():
                print(f"{n:<14} {e.expression}\n{'':<14} {e.source}")
        return 0
    if not args.theory:
        raise InputError("listing versions needs --theory THEORY (the scenario they live in)")
    th = load_theory(args.theory)
    ineq = resolve_inequality(th.scenario, args.name, cat, match=args.match)
    vs = versions(ineq)
    if args.json:
        emit_json({"name": ineq.name, "source": ineq.source, "read_as": ineq.origin or None,
                   "versions": [{"name": v.name, "text": v.display(), "sense": v.sense,
                                 "bound": str(v.written_bound),
                                 "canonical": list(v.canonical()[0]), "canonical_bound": v.canonical()[1]}
                                for v in vs]})
    else:
        if ineq.origin:
            print(f"({ineq.origin})")
        width = max(len(v.name) for v in vs)
        for v in vs:
            print(f"{v.name:<{width}}  {v.display()}")
        print(f"{len(vs)} versions")
    return 0
