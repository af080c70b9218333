"""``nogo proof`` and ``nogo proof-search``: probability-free contradictions.

Exit status (both commands): 0 a contradiction was proven (the proof passed
the independent checker), 1 consistent (a possibilistic model exists and
passed its check) or, for ``--check``, the proof was rejected; 2 bad input.
"""

from __future__ import annotations

import json
from pathlib import Path

from ..compile import compile_bundle
from ..errors import InputError
from ..yamlread import read_yaml_file
from ._common import add_theory, emit_json, theory_of


def _pattern(theory, path: str, tolerance):
    from ..possibilistic import load_pattern  # noqa: PLC0415
    from ..possibilistic.support import support_from_experiment  # noqa: PLC0415

    data = read_yaml_file(Path(path))
    if isinstance(data, dict) and "state" in data:  # a quantum experiment: take its support
        from ..quantum import load_experiment  # noqa: PLC0415
        return support_from_experiment(load_experiment(path, theory), tolerance)
    return load_pattern(path, theory.scenario)


def register(sub) -> None:
    p = sub.add_parser("proof", help="is a support pattern possible under a bundle? (probability-free proof)",
                       description="Read the bundle over supports (which events are possible at all), decide the "
                                   "support pattern with a SAT solver, and print the smallest proof found as numbered "
                                   "steps, each re-checked by an independent checker. PATTERN is a support-pattern "
                                   "file or a quantum experiment file (its exact support is used). "
                                   "Exit status 0 contradiction proven, 1 consistent (or --check rejected), 2 error.")
    add_theory(p)
    p.add_argument("pattern", help="support pattern (YAML) or quantum experiment (YAML with 'state')")
    fmt = p.add_mutually_exclusive_group()
    fmt.add_argument("--markdown", action="store_true", help="print the proof as Markdown (the default text)")
    fmt.add_argument("--latex", action="store_true", help="print the proof as a LaTeX fragment")
    fmt.add_argument("--json", action="store_true", help="print one JSON object (verdict, core, proof or model)")
    p.add_argument("--time-limit", type=float, default=30.0,
                   help="seconds for the search for the smallest proof (default 30); a proof found when it "
                        "runs out is marked 'not proven smallest'")
    p.add_argument("--minimal-only", action="store_true",
                   help="skip the smallest-proof search; print a proof from one minimal core")
    p.add_argument("--tolerance", type=float, default=None,
                   help="for experiments with numeric inputs: |p| <= this counts as impossible (stated in the output)")
    p.add_argument("--check", metavar="PROOF_JSON",
                   help="do not solve: check a saved proof (the 'proof' object of --json output) step by step")
    p.set_defaults(run=run)

    s = sub.add_parser("proof-search", help="search measurement settings for a probability-free contradiction",
                       description="Replace the experiment's measurements by every assignment of candidate "
                                   "measurements to the settings, take each exact support pattern and decide it "
                                   "against the bundle; report the smallest proofs found. "
                                   "Exit status 0 some contradiction found, 1 none, 2 error.")
    add_theory(s)
    s.add_argument("experiment", help="quantum experiment (YAML); its state is kept")
    cand = s.add_mutually_exclusive_group(required=True)
    cand.add_argument("--bases", help="candidate measurements by name, e.g. X,Y or X,Y,Z")
    cand.add_argument("--equator", type=int, metavar="K",
                      help="K equally spaced directions in the X-Y plane of the Bloch sphere (exact angles)")
    s.add_argument("--same-for-all", action="store_true", help="every party gets the same measurements")
    s.add_argument("--time-limit", type=float, default=120.0, help="seconds for the sweep (default 120)")
    s.add_argument("--max-points", type=int, default=20000, help="stop after this many points (default 20000)")
    s.add_argument("--keep", type=int, default=3, help="how many of the best contradictions get a smallest proof")
    s.add_argument("--proof-time-limit", type=float, default=20.0, help="seconds per smallest-proof search")
    s.add_argument("--tolerance", type=float, default=None, help="zero test for numeric inputs")
    s.add_argument("--workers", type=int, default=None, help="local worker processes (default: none)")
    s.add_argument("--json", action="store_true", help="print one JSON object")
    s.set_defaults(run=run_search)


def run(args) -> int:
    from ..possibilistic import check_proof, decide_pattern, to_latex, to_markdown  # noqa: PLC0415
    from ..possibilistic.proof import Proof  # noqa: PLC0415

    theory = theory_of(args)
    pattern = _pattern(theory, args.pattern, args.tolerance)
    if args.check:
        try:
            data = json.loads(Path(args.check).read_text(encoding="utf-8"))
        except (OSError, json.JSONDecodeError) as exc:
            raise InputError(f"cannot read the proof {args.check}: {exc}") from None
        if isinstance(data, dict) and "proof" in data and "steps" not in data:
            data = data["proof"]
        problems = check_proof(theory, args.bundle, pattern, data)
        if args.json:
            emit_json({"accepted": not problems, "problems": problems})
        elif problems:
            print("proof REJECTED: " + problems[0])
        else:
            print(f"proof accepted: every one of its {len(Proof.from_dict(data).steps)} steps checks out")
        return 0 if not problems else 1
    hidden = any(type(c).__name__ == "Hidden" for a in theory.resolve(args.bundle)[1] for c in a.clauses)
    if hidden and compile_bundle(theory, args.bundle).kind == "mixture":  # (support-only clauses never compile)
        return _run_responses(args, theory, pattern)
    r = decide_pattern(theory, args.bundle, pattern, minimise="minimal" if args.minimal_only else "smallest",
                       time_limit=args.time_limit)
    says = {n: a.says for n, a in theory.assumptions.items()}
    if args.json:
        emit_json(r.to_dict())
    elif r.contradiction:
        if args.latex:
            print(to_latex(r.proof, says))
        else:
            print(to_markdown(r.proof, says))
            print()
            print(f"core: {len(r.core)} facts and assumption instances "
                  f"({'proven smallest' if r.smallest_proven else 'NOT proven smallest'}); "
                  f"assumptions needed: {', '.join(r.assumptions_needed())}")
    else:
        print(f"consistent: the pattern is possible under '{r.label}' (impossible events: {r.zero_test}).")
        print(f"A possibilistic model (the largest support), checked independently; joint of {', '.join(r.events)}:")
        for s, es in r.model.items():
            print(f"  settings ({', '.join(s)}): {len(es)} possible joint assignments"
                  + (": " + "; ".join(" ".join(e) for e in es) if len(es) <= 4 else ""))
    return 0 if r.contradiction else 1


def _run_responses(args, theory, pattern) -> int:
    """Hidden-variable bundles: the support reading over the mixture's responses."""
    from ..possibilistic.responses import decide_responses, response_proof_markdown  # noqa: PLC0415

    if args.check or args.latex:
        raise InputError("--check and --latex are available for joint-support proofs only; "
                         "this bundle has a hidden variable and is read over its responses")
    r = decide_responses(theory, args.bundle, pattern)
    if args.json:
        emit_json(r.to_dict())
    elif r.contradiction:
        print(response_proof_markdown(r, theory.file or ""))
        print()
        print(f"uses {len(r.facts) + 1} observed facts (a small cover, not proven smallest); checked independently")
    else:
        print(f"consistent: the pattern is possible under '{r.label}' (impossible events: {r.zero_test}).")
        print(f"A possibilistic model, checked independently: {len(r.model)} responses survive the impossible "
              "events and together produce every possible event:")
        for name in r.model[:12]:
            print(f"  {name}")
        if len(r.model) > 12:
            print(f"  ... {len(r.model) - 12} more (use --json)")
    return 0 if r.contradiction else 1


def run_search(args) -> int:
    from ..possibilistic import to_markdown  # noqa: PLC0415
    from ..possibilistic.search import describe_choice, equatorial, named_bases, search  # noqa: PLC0415
    from ..quantum import load_experiment  # noqa: PLC0415

    theory = theory_of(args)
    exp = load_experiment(args.experiment, theory)
    if args.bases:
        cands = named_bases([b.strip() for b in args.bases.split(",") if b.strip()])
    else:
        if args.equator < 2:
            raise InputError("--equator needs at least 2 directions")
        cands = equatorial(args.equator)
    from rich.progress import Progress  # noqa: PLC0415

    with Progress(transient=True, disable=args.json) as bar:
        task = bar.add_task("points", total=None)
        res = search(theory, args.bundle, exp, cands, args.same_for_all, args.time_limit, args.max_points,
                     args.keep, args.proof_time_limit, args.tolerance, args.workers,
                     progress=lambda done, total: bar.update(task, completed=done, total=total))
    if args.json:
        emit_json({"points": res.points, "tried": res.tried, "complete": res.complete,
                   "contradictions": [{"choice": describe_choice(theory, r.choice), "minimal_core": r.core_size}
                                      for r in res.contradictions],
                   "best": [{"choice": describe_choice(theory, p.choice), **r.to_dict()} for p, r in res.best]})
    else:
        print(f"{res.tried} of {res.points} settings choices tried"
              f"{'' if res.complete else ' (stopped early: time limit or point cap)'}; "
              f"{len(res.contradictions)} give a contradiction under '{args.bundle}'.")
        says = {n: a.says for n, a in theory.assumptions.items()}
        for p, r in res.best:
            print()
            print(f"#### {describe_choice(theory, p.choice)}")
            print(to_markdown(r.proof, says))
    return 0 if res.contradictions else 1
