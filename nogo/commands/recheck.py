"""``nogo recheck DIR``: re-verify an evidence bundle with exact arithmetic only (no solver)."""

from __future__ import annotations


def register(sub) -> None:
    p = sub.add_parser("recheck", help="re-verify an evidence bundle of nogo referee, trusting no solver",
                       description="Re-check every file hash, rebuild the rows from the copied theory files with "
                                   "an independent compiler, and redo every certificate, point, face and "
                                   "interval in exact arithmetic. Exit status 0 when everything holds, 1 when "
                                   "anything is broken, 2 for bad input.")
    p.add_argument("folder", help="the evidence folder written by nogo referee --evidence")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--verbose", action="store_true", help="list every check")
    p.set_defaults(run=run)


def run(args) -> int:
    import json
    import sys
    from dataclasses import asdict
    from pathlib import Path

    from ..errors import InputError
    from ..referee.verify import verify_bundle

    if not Path(args.folder).is_dir():
        raise InputError(f"no folder '{args.folder}'", hint="give the folder written by nogo referee --evidence DIR")
    rep = verify_bundle(args.folder)
    if args.json:
        json.dump({"ok": rep.ok, "failures": rep.failures, "claims": [asdict(c) for c in rep.claims]},
                  sys.stdout, indent=2, ensure_ascii=False)
        sys.stdout.write("\n")
        return 0 if rep.ok else 1
    for f in rep.failures:
        print(f"BROKEN  bundle: {f}")
    for c in rep.claims:
        state = "BROKEN " if c.failures else "checked"
        extra = []
        if c.trusted:
            extra.append(f"{len(c.trusted)} trusted")
        if c.uncovered:
            extra.append(f"{len(c.uncovered)} not covered")
        print(f"{state} {c.claim_id:<12} {c.verdict:<12} {len(c.checked)} checks redone"
              + (f" ({', '.join(extra)})" if extra else ""))
        for f in c.failures:
            print(f"        {c.claim_id}: {f}")
        if args.verbose:
            for x in c.checked:
                print(f"        ok       {x}")
            for x in c.trusted:
                print(f"        trusted  {x}")
        reasons: dict[str, int] = {}
        for x in c.uncovered:
            why = x.split(": ", 1)[-1]
            reasons[why] = reasons.get(why, 0) + 1
        for why, k in reasons.items():
            print(f"        not covered ({k} checks): {why}")
    n_bad = len(rep.failures) + sum(bool(c.failures) for c in rep.claims)
    print("all evidence holds" if rep.ok else f"{n_bad} problem(s) found")
    return 0 if rep.ok else 1
