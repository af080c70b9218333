"""``nogo check``: does a bundle imply an inequality?"""

from __future__ import annotations

from ..catalog import resolve_inequality
from ..check import decide, recheck
from ..compile import compile_bundle
from ..report import check_to_dict, check_to_text
from ..sizes import guard_bundle
from ..symmetry import orbit
from ._common import add_output, add_theory, emit_json, theory_of


def register(sub) -> None:
    p = sub.add_parser("check", help="does a bundle of assumptions imply an inequality? (exact evidence)",
                       description="Decide whether the bundle implies the inequality; print the exact maximum "
                                   "with a Farkas certificate or an exact counterexample. "
                                   "Exit status 0 implied, 1 not implied, 2 error.")
    add_theory(p)
    p.add_argument("inequality", help="catalog name (e.g. CHSH), a file, or an expression such as "
                                      "'<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2'")
    p.add_argument("--all-versions", action="store_true",
                   help="check every relabelled version of the inequality (outcomes, settings, parties)")
    p.add_argument("--full", action="store_true", help="list every certificate row and joint entry")
    p.add_argument("--max-columns", type=int, default=200_000,
                   help="refuse hidden-variable models larger than this (default 200000)")
    add_output(p)
    p.set_defaults(run=run)


def run(args) -> int:
    theory = theory_of(args)
    guard_bundle(theory, args.bundle, max_columns=args.max_columns)  # sizes first, from the declaration
    ineq = resolve_inequality(theory.scenario, args.inequality)  # every argument before any compile
    model = compile_bundle(theory, args.bundle, max_columns=args.max_columns)
    targets = orbit(ineq) if args.all_versions else [ineq]
    results = []
    for t in targets:
        r = decide(model, t)
        bad = recheck(model, r)
        if bad:  # never print evidence that does not hold up
            raise RuntimeError(f"the evidence failed its exact re-check: {bad}")
        results.append(r)
    if args.json:
        if len(results) == 1:
            emit_json(check_to_dict(results[0], args.theory))
        else:
            emit_json({"verdict": "implied" if all(r.implied for r in results) else "not implied",
                       "versions": [check_to_dict(r, args.theory) for r in results]})
    elif len(results) == 1:
        print(check_to_text(results[0], args.theory, args.full))
    else:
        print(f"{len(results)} versions of {ineq.name or ineq.text} under bundle {model.label}:")
        for r in results:
            mark = "implied    " if r.implied else "NOT implied"
            print(f"  {mark}  max {str(r.maximum):>6}  bound {str(r.inequality.bound):>4}  {r.inequality.display()}")
        n = sum(r.implied for r in results)
        print(f"{n} of {len(results)} implied (each verdict carries exact evidence; use --json to see it)")
    return 0 if all(r.implied for r in results) else 1
