"""``nogo check``: does a bundle imply an inequality?"""

from __future__ import annotations

import argparse

from ._common import add_match, add_output, add_theory, emit_json, shown_path, theory_of


def register(sub) -> None:
    p = sub.add_parser("check", help="does a bundle of assumptions imply an inequality? (exact evidence)",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="Decide whether the bundle implies the inequality; print the exact largest "
                                   "(for <=) or smallest (for >=) value of its left side with a Farkas certificate "
                                   "or an exact counterexample.\n\n"
                                   "exit status: 0 implied, 1 not implied, 2 bad input or error\n"
                                   "example:     nogo check theories/bell-2x2.yaml Bell-local CHSH")
    add_theory(p)
    p.add_argument("inequality", help="catalog name (e.g. CHSH), a file, or an expression such as "
                                      "'<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2'")
    p.add_argument("--all-versions", action="store_true",
                   help="check every relabelled version of the inequality (outcomes, settings, parties)")
    p.add_argument("--full", action="store_true", help="list every certificate row and joint entry")
    p.add_argument("--max-columns", type=int, default=200_000,
                   help="refuse hidden-variable models larger than this (default 200000)")
    add_match(p)
    add_output(p)
    p.set_defaults(run=run)


def run(args) -> int:
    from ..catalog import resolve_inequality, versions
    from ..check import decide, recheck
    from ..compile import compile_bundle
    from ..report import check_to_dict, check_to_text, q
    from ..sizes import guard_bundle

    theory = theory_of(args)
    guard_bundle(theory, args.bundle, max_columns=args.max_columns)  # sizes first, from the declaration
    ineq = resolve_inequality(theory.scenario, args.inequality, match=args.match)  # every argument before any compile
    model = compile_bundle(theory, args.bundle, max_columns=args.max_columns)
    targets = versions(ineq) if args.all_versions else [ineq]
    results = []
    for t in targets:
        r = decide(model, t)
        bad = recheck(model, r)
        if bad:  # never print evidence that does not hold up
            raise RuntimeError(f"the evidence failed its exact re-check: {bad}")
        results.append(r)
    theory_file = shown_path(args.theory)
    if args.json:
        if len(results) == 1:
            emit_json(check_to_dict(results[0], theory_file))
        else:
            emit_json({"verdict": "implied" if all(r.implied for r in results) else "not implied",
                       "versions": [check_to_dict(r, theory_file) for r in results]})
    elif len(results) == 1:
        print(check_to_text(results[0], theory_file, args.full))
    else:
        print(f"{len(results)} versions of {ineq.name or ineq.text} under bundle {model.label}:")
        if ineq.origin:
            print(f"  ({ineq.origin})")
        word = "min" if ineq.sense == ">=" else "max"
        for r in results:
            t = r.inequality
            mark = "implied    " if r.implied else "NOT implied"
            print(f"  {mark}  {word} {q(t.written_value(r.maximum)):>6}  {t.display()}")
        n = sum(r.implied for r in results)
        print(f"{n} of {len(results)} implied (each verdict carries exact evidence; use --json to see it)")
    return 0 if all(r.implied for r in results) else 1
