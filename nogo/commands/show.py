"""``nogo show``: what a theory file declares, and what its bundles compile to."""

from __future__ import annotations

import argparse

from ._common import add_output, emit_json, shown_path, theory_of


def register(sub) -> None:
    p = sub.add_parser("show", help="describe a theory: scenario, assumptions, bundles and model sizes",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="Print what a theory file declares (parties, settings, outcomes, inner "
                                   "observers, assumptions with their words and sources, bundles) and the size "
                                   "and kind of the model each bundle compiles to.\n\n"
                                   "exit status: 0 shown, 2 bad input or error\n"
                                   "example:     nogo show theories/friends-2x2.yaml")
    p.add_argument("theory", help="theory file (YAML)")
    add_output(p)
    p.set_defaults(run=run)


def run(args) -> int:
    from ..compile import compile_bundle
    from ..errors import InputError
    from ..report import plain_note

    th = theory_of(args)
    sizes = {}
    for b in th.bundles:
        try:
            m = compile_bundle(th, b)
            sizes[b] = {"kind": m.kind, "rows": m.shape[0], "columns": m.shape[1],
                        "notes": [plain_note(n) for n in m.notes]}
        except InputError as exc:
            sizes[b] = {"error": exc.message}
    if args.json:
        emit_json({"theory": shown_path(args.theory), "title": th.title,
                   "parties": {p.name: {"settings": list(p.settings), "outcomes": list(p.outcomes)}
                               for p in th.scenario.parties},
                   "inner_observers": {o.name: {"lab": o.lab, "read_out_at": o.read_out_at}
                                       for o in th.scenario.inner},
                   "assumptions": {a.name: {"says": a.says, "source": a.source} for a in th.assumptions.values()},
                   "bundles": {b: {"assumptions": list(m), **sizes[b]} for b, m in th.bundles.items()}})
        return 0
    print(th.title or shown_path(args.theory))
    print(th.scenario.describe())
    print("\nassumptions:")
    for a in th.assumptions.values():
        print(f"  {a.name}: {a.says}" + (f"  [{a.source}]" if a.source else ""))
    print("\nbundles:")
    for b, members in th.bundles.items():
        s = sizes[b]
        size = f"{s['kind']} model {s['rows']} x {s['columns']}" if "rows" in s else s["error"]
        print(f"  {b} = {' + '.join(members)}   ({size})")
    return 0
