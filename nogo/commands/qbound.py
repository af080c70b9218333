"""``nogo qbound``: an upper bound on the quantum value of an inequality (NPA hierarchy)."""

from __future__ import annotations

import argparse

from ._common import add_match, add_output, emit_json


def register(sub) -> None:
    p = sub.add_parser("qbound", help="bound on the quantum value of an inequality (NPA levels)",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="The largest quantum value of the left side (for <=; the smallest for >=) "
                                   "is bounded by semidefinite relaxations of the quantum set (Navascués, Pironio, "
                                   "Acín, PRL 98, 010401 (2007)), with a rigorous bound from the dual; with "
                                   "--experiment also the gap to that experiment's value.\n\n"
                                   "exit status: 0 bounds computed, 2 bad input or error\n"
                                   "example:     nogo qbound theories/bell-2x2.yaml CHSH --level 1")
    p.add_argument("theory", help="theory file (for the scenario)")
    p.add_argument("inequality", help="catalog name, expression or file")
    p.add_argument("--level", action="append", default=[], help="1, 1+AB, 2, ... (repeatable; default 1, 1+AB, 2)")
    p.add_argument("--solver", default="CLARABEL", choices=["CLARABEL", "SCS"])
    p.add_argument("--experiment", help="an experiment whose value is compared with the bounds")
    add_match(p)
    add_output(p)
    p.set_defaults(run=run)


def run(args) -> int:
    from ..catalog import resolve_inequality
    from ..quantum.npa import npa_bound
    from ..theory import load_theory

    th = load_theory(args.theory)
    ineq = resolve_inequality(th.scenario, args.inequality, match=args.match)
    best = None
    if args.experiment:
        from ..quantum import load_experiment
        from ..quantum.certify import evaluate

        best = evaluate(load_experiment(args.experiment, args.theory), [ineq], want_exact=False)[0]
    out = []
    for level in args.level or ["1", "1+AB", "2"]:
        b = npa_bound(ineq, level, args.solver)
        out.append(b)
    w = ineq.written_value
    word = "at least" if ineq.sense == ">=" else "at most"
    if args.json:
        emit_json({"inequality": ineq.display(), "sense": ineq.sense, "bound": str(ineq.written_bound),
                   "extreme": ineq.extreme,
                   "levels": [{"level": b.level, "size": b.size, "sdp_value": w(float(b.value)),
                               "certified": float(w(b.certified)) if b.certified is not None else None,
                               "certified_means": f"the {ineq.extreme} quantum value of the left side is {word} this",
                               "solver": b.solver, "seconds": b.seconds, "notes": b.notes} for b in out],
                   "experiment_value": w(float(best.float_value)) if best else None})
        return 0
    print(f"inequality  {ineq.name + ': ' if ineq.name else ''}{ineq.display()}   "
          f"(bound {ineq.sense} {ineq.written_bound})")
    if ineq.origin:
        print(f"            ({ineq.origin})")
    print(f"the {ineq.extreme} quantum value of the left side, as written, is {word}:")
    for b in out:
        if b.certified is not None:
            c = float(w(b.certified))
            cert = f"certified {'>=' if ineq.sense == '>=' else '<='} {c - 1e-12 if ineq.sense == '>=' else c + 1e-12:.9f}"
        else:
            cert = "not certified"
        gap = f"   gap to the experiment {b.value - best.float_value:.6g}" if best else ""
        print(f"level {b.level:<6} moment matrix {b.size:>3}  SDP {w(float(b.value)):.9f}  {cert}  ({b.solver}, "
              f"{b.seconds:.2f} s){gap}")
    for note in dict.fromkeys(n for b in out for n in b.notes):
        print(f"note        {note}")
    if best:
        from ..report import quantum_value

        d = quantum_value(best)
        print(f"experiment  value {d['value']:.9f} ({best.verdict}: {d['evidence']})")
    return 0
