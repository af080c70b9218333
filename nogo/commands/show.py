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
                               for p in th.scenario.labs},
                   "inner_observers": {o.name: {"lab": o.lab,
                                                "read_out_at": [x for x, _ in o.read_outs] if o.several else o.read_out_at,
                                                **({"settings": list(o.settings)} if o.settings else {}),
                                                **({"party": o.party} if o.party != o.lab else {})}
                                       for o in th.scenario.inner},
                   **({"read_out_rules": {b: _chains(th, b) for b in th.bundles}} if th.scenario.nested else {}),
                   "assumptions": {a.name: {"says": a.says, "source": a.source} for a in th.assumptions.values()},
                   "bundles": {b: {"assumptions": list(m), **sizes[b]} for b, m in th.bundles.items()},
                   **_light_cone_json(th)})
        return 0
    print(th.title or shown_path(args.theory))
    print(th.scenario.describe())
    print("\nassumptions:")
    for a in th.assumptions.values():
        print(f"  {a.name}: {a.says}" + (f"  [{a.source}]" if a.source else ""))
    if th.light_cone is not None:  # generated local agency, in the trade's notation (nogo/lightcone.py)
        from ..lightcone import describe
        print("\nlocal agency generated from the light-cone declaration:")
        print("\n".join("  " + line for line in describe(th.scenario, th.light_cone, th.generated)))
    print("\nbundles:")
    for b, members in th.bundles.items():
        s = sizes[b]
        size = f"{s['kind']} model {s['rows']} x {s['columns']}" if "rows" in s else s["error"]
        print(f"  {b} = {' + '.join(members)}   ({size})")
        if th.scenario.nested:  # chains of nested observers, as the compilers read them
            print("\n".join(f"      read-out: {line}" for line in _chains(th, b)))
    return 0


def _chains(th, bundle) -> list[str]:
    """The read-out rules among the events a bundle brings in, chains resolved (nogo.events)."""
    from ..events import present_events, read_out_rules, read_out_text

    _, assumptions = th.resolve(bundle)
    sc = th.scenario
    return [read_out_text(sc, r) for r in read_out_rules(sc, present_events(sc, assumptions))]


def _light_cone_json(th) -> dict:
    """The generated local-agency constraints (nogo/lightcone.py), when the theory declares a light cone."""
    if th.light_cone is None:
        return {}
    from ..lightcone import clause_text
    return {"light_cone": {"future": {p: list(v) for p, v in th.light_cone.future.items()},
                           "generated": {g.name: clause_text(th.scenario, g.events, g.of, g.supports)
                                         for g in th.generated}}}
