"""``nogo optimise``: settings (and optionally a state) that violate an inequality most."""

from __future__ import annotations

import argparse
import os

from ._common import add_match, add_output, emit_json, shown_path


def register(sub) -> None:
    p = sub.add_parser("optimise", help="search measurement settings for the largest violation of an inequality",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="Local search from several seeded random starts for the largest value of the "
                                   "left side (for <=) or the smallest (for >=); the best settings are printed as "
                                   "experiment YAML and the violation is certified by interval arithmetic on "
                                   "exactly those numbers.\n\n"
                                   "exit status: 0 a violation is certified, 1 none is, 2 bad input or error\n"
                                   "example:     nogo optimise examples/experiments/larch-birch-chsh.yaml CHSH "
                                   "--write best.yaml")
    p.add_argument("experiment", help="experiment file (YAML): scenario, dimensions and starting state")
    p.add_argument("inequality", help="catalog name, expression or file")
    p.add_argument("--theory", help="theory file instead of the experiment's own")
    p.add_argument("--starts", type=int, default=8, help="random starts (default 8)")
    p.add_argument("--seed", type=int, default=0, help="seed of the starts (default 0)")
    p.add_argument("--state", action="store_true", help="also optimise a pure state")
    p.add_argument("--zero", action="append", default=[],
                   help="an event that must have probability zero, written 'p(+1 -1|1 2)' (repeatable)")
    p.add_argument("--write", help="write the best experiment to this YAML file")
    add_match(p)
    add_output(p)
    p.set_defaults(run=run)


def _theory_path(theory_file: str, target: str | None) -> str:
    """The theory path as the saved file should name it: relative to that file's folder when the
    theory lies inside it, else absolute (never a '..' detour)."""
    full = os.path.normpath(os.path.abspath(theory_file))
    base = os.path.dirname(os.path.abspath(target)) if target else os.getcwd()
    try:
        rel = os.path.relpath(full, base)
    except ValueError:  # another drive
        return full
    return full if rel == ".." or rel.startswith(".." + os.sep) else rel


def _yaml_of(exp, values, target: str | None = None) -> str:
    import json

    lines = [f"title: {json.dumps(exp.title or 'optimised experiment', ensure_ascii=False)}"]
    if exp.theory_file:
        lines.append(f"theory: {json.dumps(_theory_path(exp.theory_file, target))}")
    if exp.state.vector is not None:
        amps = ", ".join(f"'{float(z.real)!r} + {float(z.imag)!r}*i'" for z in exp.state.vector)
        lines.append(f"state: {{vector: [{amps}], dims: {list(exp.state.dims)}}}")
    lines.append("measurements:")
    for p in exp.scenario.labs:
        items = []
        for x in p.settings:
            if (p.name, x) in exp.measurements:
                m = exp.measurements[(p.name, x)]
                items.append(f"{x}: {_meas(m)}")
        lines.append(f"  {p.name}: {{{', '.join(items)}}}")
    if exp.inner or exp.inner_at:
        lines.append("inner_observers:")
        for name, m in exp.inner.items():
            lines.append(f"  {name}: {_meas(m)}")
        chooser = {}
        for (name, x), m in exp.inner_at.items():  # an observer's own settings, like a party's
            chooser.setdefault(name, []).append(f"{x}: {_meas(m)}")
        for name, items in chooser.items():
            lines.append(f"  {name}: {{{', '.join(items)}}}")
    return "\n".join(lines) + "\n"


def _meas(m) -> str:
    import re

    g = re.match(r"bloch\(([^,]+), ([^)]+)\)", m.label)
    if g:
        return f"{{bloch: [{g.group(1)}, {g.group(2)}]}}"
    mats = []
    for P in m.projectors:
        rows = ["[" + ", ".join(f"'{float(z.real)!r} + {float(z.imag)!r}*i'" for z in row) + "]" for row in P]
        mats.append("[" + ", ".join(rows) + "]")
    return "{projectors: [" + ", ".join(mats) + "]}"


def run(args) -> int:
    from ..catalog import resolve_inequality
    from ..errors import InputError
    from ..inequality import parse_inequality
    from ..quantum import load_experiment
    from ..quantum.certify import evaluate
    from ..quantum.optimise import optimise

    exp = load_experiment(args.experiment, args.theory)
    ineq = resolve_inequality(exp.scenario, args.inequality, match=args.match)
    zeros = []
    for z in args.zero:
        q = parse_inequality(exp.scenario, f"{z} <= 0")
        if len(q.coeffs) != 1:
            raise InputError(f"--zero takes one joint probability of all parties, got '{z}'")
        zeros.append(next(iter(q.coeffs)))
    opt = optimise(exp, ineq, starts=args.starts, seed=args.seed, over_state=args.state, zeros=zeros)
    from ..atomic import write_text
    from ..report import quantum_value

    v, = evaluate(opt.experiment, [ineq], want_exact=False)
    d = quantum_value(v)
    text = _yaml_of(opt.experiment, opt.values, args.write)
    if args.write:
        try:
            write_text(args.write, text)
        except OSError as exc:
            raise InputError(f"cannot write '{args.write}': {exc.strerror or exc}",
                             hint="choose a folder that exists and is writable") from None
    best = ineq.written_value(float(opt.value))
    starts = [ineq.written_value(float(x)) for x in opt.values]
    if args.json:
        emit_json({"inequality": ineq.display(), "sense": ineq.sense, "bound": d["bound"],
                   "extreme": ineq.extreme, "best": best, "starts": starts, "verdict": v.verdict,
                   "value": d["value"], "interval": d["interval"], "violation": d["violation"],
                   "evidence": d["evidence"], "zero_violation": opt.zero_violation, "notes": opt.notes,
                   "written": shown_path(args.write), "experiment_yaml": text})
    else:
        print(f"inequality  {ineq.name + ': ' if ineq.name else ''}{ineq.display()}")
        if ineq.origin:
            print(f"            ({ineq.origin})")
        print(f"best value  {best:.10f} ({ineq.extreme} left side found over {len(opt.values)} start(s), "
              f"seed {args.seed}); bound {ineq.sense} {d['bound']}")
        print(f"verdict     {v.verdict}: {d['evidence']}")
        if zeros:
            print(f"zeros       largest remaining probability {opt.zero_violation:.3g}")
        for n in opt.notes:
            print(f"note        {n}")
        if args.write:
            print(f"written     {shown_path(args.write)}")
        print("\nbest settings as experiment YAML (floats as found; the verdict above is certified for exactly "
              "these numbers):\n" + text)
    return 0 if v.violated else 1
