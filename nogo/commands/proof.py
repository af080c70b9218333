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
    p.add_argument("--log", metavar="DIR",
                   help="also write the proof's core as DIMACS CNF (core.cnf), the SAT solver's DRAT-style "
                        "refutation log (core.drat, re-checked by reverse unit propagation first) and the human "
                        "proof (proof.md, proof.json) into DIR")
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
    s.add_argument("--rows", type=int, default=10, help="table rows beyond the minimised ones (default 10)")
    s.add_argument("--show-best", action="store_true", help="print the full proof of the best choice")
    s.add_argument("--json", action="store_true", help="print one JSON object")
    s.set_defaults(run=run_search)

    f = sub.add_parser("proof-family", help="search n-party state families for probability-free contradictions",
                       description="Generate n-party theories (two settings, two outcomes; Bell locality, or local "
                                   "friendliness with inner observers in chosen labs), take the exact supports of "
                                   "states from small families measured in Pauli bases, decide each, rank by "
                                   "fewest facts, fewest settings tuples, fewest labs with observers, and print a "
                                   "summary table. Exit status 0 some contradiction found, 1 none, 2 error.")
    f.add_argument("--parties", type=int, required=True, help="number of parties (2 to 16)")
    f.add_argument("--states", default="ghz", help="state families, e.g. ghz,w,ring,line,star (default ghz)")
    f.add_argument("--bases", default="X,Y", help="Pauli bases to assign to the two settings (default X,Y)")
    f.add_argument("--observers", default="none",
                   help="which labs hold inner observers: none, all@1, all@2, first@1, first@2, K@1, K@2 "
                        "(the first K labs; comma list)")
    f.add_argument("--each-party", action="store_true",
                   help="let every party choose its bases separately (default: the same pair for all)")
    f.add_argument("--max-candidates", type=int, default=2000, help="cap on candidates (default 2000)")
    f.add_argument("--rank-by", choices=("minimal", "smallest"), default=None,
                   help="rank by one minimal proof per candidate, or by each one's smallest proof (default: "
                        "smallest up to 5 parties, minimal beyond)")
    f.add_argument("--time-limit", type=float, default=120.0, help="seconds for the sweep (default 120)")
    f.add_argument("--proof-time-limit", type=float, default=20.0, help="seconds for the best one's smallest proof")
    f.add_argument("--workers", type=int, default=None, help="parallel workers through nogo.fanout (default: none)")
    f.add_argument("--rows", type=int, default=12, help="table rows (default 12)")
    f.add_argument("--show-best", action="store_true", help="print the full proof of the best candidate")
    f.add_argument("--json", action="store_true", help="print one JSON object")
    f.set_defaults(run=run_family)


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
    if args.log and r.contradiction:
        _write_log(args.log, theory, args.bundle, pattern, r, says)
    if args.json:
        emit_json(r.to_dict())
    elif r.contradiction:
        if args.latex:
            print(to_latex(r.proof, says))
        else:
            print(to_markdown(r.proof, says))
            print()
            print(_size_line(r))
            print(f"assumptions needed: {', '.join(r.assumptions_needed())}")
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
        rows = [(describe_choice(theory, p.choice), str(p.core_size), str(r.facts_size),
                 "yes" if r.smallest_proven else f">= {r.lower_bound}") for p, r in res.best]
        rows += [(describe_choice(theory, r.choice), str(r.core_size), "", "")
                 for r in res.contradictions[len(res.best):len(res.best) + args.rows]]
        _table(("settings choice", "facts (minimal)", "facts (smallest)", "proven smallest"), rows)
        if args.show_best and res.best:
            p, r = res.best[0]
            print()
            print(f"#### {describe_choice(theory, p.choice)}")
            print(to_markdown(r.proof, {n: a.says for n, a in theory.assumptions.items()}))
        elif res.best:
            print("(--show-best prints the full proof of the first row)")
    return 0 if res.contradictions else 1


def _size_line(r) -> str:
    sm = r.proof.smallest if r.proof else {}
    scope = f" ({sm['scope']})" if sm.get("scope") not in (None, "whole model") else ""
    if r.smallest_proven:
        return f"core: {r.facts_size} observed facts, proven smallest{scope}; {len(r.core)} with assumption instances"
    return (f"core: {r.facts_size} observed facts; NOT proven smallest: no proof with fewer than {r.lower_bound} "
            f"exists{scope}; {len(r.core)} with assumption instances")


def _table(header, rows) -> None:
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(header)]
    print("  ".join(h.ljust(w) for h, w in zip(header, widths)))
    print("  ".join("-" * w for w in widths))
    for r in rows:
        print("  ".join(c.ljust(w) for c, w in zip(r, widths)))


def _write_log(folder: str, theory, bundle, pattern, r, says) -> None:
    """core.cnf + core.drat (re-checked by reverse unit propagation) + proof.md + proof.json."""
    from ..atomic import write_text  # noqa: PLC0415
    from ..possibilistic import to_markdown  # noqa: PLC0415
    from ..possibilistic.encode import build_space  # noqa: PLC0415
    from ..possibilistic.prooflog import check_rup, joint_core_cnf, latent_core_cnf, refute  # noqa: PLC0415

    d = Path(folder)
    if d.exists() and not d.is_dir():
        raise InputError(f"--log {folder}: not a folder", hint="give a folder (it is created if missing)")
    d.mkdir(parents=True, exist_ok=True)
    if r.stats.get("reading", "").startswith("one assignment"):
        w = next(((g.settings, g.outcomes) for g in r.core if g.kind == "possible"), None)
        facts = [(g.settings, g.outcomes) for g in r.core if g.kind == "impossible"]
        cnf = latent_core_cnf(theory.scenario, w, facts)
    else:
        space = build_space(theory, bundle, pattern, None if "layer" not in r.stats else
                            sorted({g.settings for g in r.core} | {g.other for g in r.core if g.other}))
        key = {(g.kind, g.settings, g.outcomes, g.other, g.assumption, g.clause): g.index for g in space.groups}
        core = [key[(g.kind, g.settings, g.outcomes, g.other, g.assumption, g.clause)] for g in r.core]
        cnf = joint_core_cnf(space, core)
    log = refute(cnf)
    bad = check_rup(cnf, log)
    if bad:
        raise RuntimeError(f"the solver's refutation log failed its check: {bad}")
    write_text(d / "core.cnf", cnf.dimacs())
    write_text(d / "core.drat", "\n".join(log) + "\n")
    write_text(d / "proof.md", to_markdown(r.proof, says) + "\n")
    write_text(d / "proof.json", json.dumps(r.proof.to_dict(), indent=1) + "\n")


def run_family(args) -> int:
    from ..possibilistic import to_markdown  # noqa: PLC0415
    from ..possibilistic.hunt import candidates, hunt  # noqa: PLC0415

    def split(x):
        return tuple(t.strip() for t in x.split(",") if t.strip())

    cands = candidates(args.parties, split(args.states), split(args.bases), split(args.observers),
                       not args.each_party, args.max_candidates)
    rank_by = args.rank_by or ("smallest" if args.parties <= 5 else "minimal")
    res = hunt(cands, args.workers, args.time_limit, keep=1, proof_time_limit=args.proof_time_limit, rank_by=rank_by)
    hits = res.contradictions
    if args.json:
        emit_json({"tried": res.tried, "candidates": len(cands), "complete": res.complete,
                   "seconds": round(res.seconds, 3),
                   "ranked_by": rank_by,
                   "contradictions": [{"candidate": o.candidate.describe(), "bundle": o.candidate.bundle,
                                       "facts": o.facts, "proven_smallest": o.proven,
                                       "settings_tuples": o.settings_used,
                                       "labs_with_observers": len(o.candidate.inner_labs)} for o in hits],
                   "best": [{"candidate": o.candidate.describe(), **r.to_dict()} for o, _, _, r in res.best]})
        return 0 if hits else 1
    undecided = [o for o in res.outcomes if o.undecided]
    print(f"{res.tried} of {len(cands)} candidates tried in {res.seconds:.1f} s"
          f"{'' if res.complete else ' (stopped at the time limit)'}; {len(hits)} contradict their bundle"
          f"{f'; {len(undecided)} undecided (model too large to call consistent)' if undecided else ''}.")
    if not hits:
        return 1
    rows = [(o.candidate.describe(), o.candidate.bundle, str(o.facts) + ("" if o.proven or rank_by == "minimal"
                                                                          else " (not proven)"),
             str(o.settings_used), str(len(o.candidate.inner_labs))) for o in hits[:args.rows]]
    _table(("candidate", "bundle", f"facts ({rank_by})", "settings tuples", "labs with observers"), rows)
    for o, th, pat, r in res.best:
        print()
        print(f"best: {o.candidate.describe()} — {_size_line(r)}")
        if args.show_best:
            print(to_markdown(r.proof, {n: a.says for n, a in th.assumptions.items()}))
        else:
            print("(--show-best prints its full proof)")
    return 0
