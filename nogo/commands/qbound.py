"""``nogo qbound``: an upper bound on the quantum value of an inequality (NPA hierarchy)."""

from __future__ import annotations

from ._common import add_output, emit_json


def register(sub) -> None:
    p = sub.add_parser("qbound", help="upper bound on the quantum value of an inequality (NPA levels)",
                       description="Semidefinite relaxations of the quantum set (Navascués, Pironio, Acín, "
                                   "PRL 98, 010401 (2007)) with a rigorous bound from the dual; with "
                                   "--experiment also the gap to that experiment's value.")
    p.add_argument("theory", help="theory file (for the scenario)")
    p.add_argument("inequality", help="catalog name, expression or file")
    p.add_argument("--level", action="append", default=[], help="1, 1+AB, 2, ... (repeatable; default 1, 1+AB, 2)")
    p.add_argument("--solver", default="CLARABEL", choices=["CLARABEL", "SCS"])
    p.add_argument("--experiment", help="an experiment whose value is compared with the bounds")
    add_output(p)
    p.set_defaults(run=run)


def run(args) -> int:
    from ..catalog import resolve_inequality
    from ..quantum.npa import npa_bound
    from ..theory import load_theory

    th = load_theory(args.theory)
    ineq = resolve_inequality(th.scenario, args.inequality)
    best = None
    if args.experiment:
        from ..quantum import load_experiment
        from ..quantum.certify import evaluate

        best = evaluate(load_experiment(args.experiment, args.theory), [ineq], want_exact=False)[0]
    out = []
    for level in args.level or ["1", "1+AB", "2"]:
        b = npa_bound(ineq, level, args.solver)
        out.append(b)
    if args.json:
        emit_json({"inequality": ineq.display(), "bound": str(ineq.bound),
                   "levels": [{"level": b.level, "size": b.size, "sdp_value": b.value,
                               "certified_upper_bound": float(b.certified) if b.certified is not None else None,
                               "solver": b.solver, "seconds": b.seconds, "notes": b.notes} for b in out],
                   "experiment_value": best.float_value if best else None})
        return 0
    print(f"inequality  {ineq.name or ''} {ineq.display()}   (classical bound {ineq.bound})")
    for b in out:
        cert = f"certified <= {float(b.certified) + 1e-12:.9f}" if b.certified is not None else "not certified"
        gap = f"   gap to the experiment {b.value - best.float_value:.6g}" if best else ""
        print(f"level {b.level:<6} moment matrix {b.size:>3}  SDP {b.value:.9f}  {cert}  ({b.solver}, "
              f"{b.seconds:.2f} s){gap}")
    if best:
        print(f"experiment  value {best.float_value:.9f} ({best.verdict}: {best.evidence})")
    return 0
