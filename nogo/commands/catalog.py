"""``nogo catalog``: the published inequalities the tool knows, and their versions."""

from __future__ import annotations

from ..catalog import load_catalog, resolve_inequality
from ..symmetry import orbit
from ..theory import load_theory
from ._common import emit_json


def register(sub) -> None:
    p = sub.add_parser("catalog", help="list catalog inequalities, or the relabelled versions of one")
    p.add_argument("name", nargs="?", help="an entry to expand into its versions (needs --theory)")
    p.add_argument("--theory", help="theory whose scenario the versions live in")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run)


def run(args) -> int:
    cat = load_catalog()
    if not args.name:
        if args.json:
            emit_json({n: {"expression": e.expression, "source": e.source, "parties": list(e.parties)}
                       for n, e in cat.items()})
        else:
            for n, e in cat.items():
                print(f"{n:<14} {e.expression}\n{'':<14} {e.source}")
        return 0
    if not args.theory:
        from ..errors import InputError
        raise InputError("listing versions needs --theory THEORY (the scenario they live in)")
    th = load_theory(args.theory)
    vs = orbit(resolve_inequality(th.scenario, args.name, cat))
    if args.json:
        emit_json([{"name": v.name, "text": v.display(), "canonical": list(v.canonical()[0]),
                    "bound": v.canonical()[1]} for v in vs])
    else:
        for v in vs:
            print(f"{v.name:<12} {v.display()}")
        print(f"{len(vs)} versions")
    return 0
