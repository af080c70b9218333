"""``nogo optimise``: settings (and optionally a state) that violate an inequality most."""

from __future__ import annotations

from ._common import add_output, emit_json


def register(sub) -> None:
    p = sub.add_parser("optimise", help="search measurement settings for the largest value of an inequality",
                       description="Local search from several seeded random starts; the best settings are "
                                   "printed as experiment YAML and the violation is certified by interval "
                                   "arithmetic. Exit status 0 when a violation is certified, 1 otherwise.")
    p.add_argument("experiment", help="experiment file (YAML): scenario, dimensions and starting state")
    p.add_argument("inequality", help="catalog name, expression or file")
    p.add_argument("--theory", help="theory file instead of the experiment's own")
    p.add_argument("--starts", type=int, default=8, help="random starts (default 8)")
    p.add_argument("--seed", type=int, default=0, help="seed of the starts (default 0)")
    p.add_argument("--state", action="store_true", help="also optimise a pure state")
    p.add_argument("--zero", action="append", default=[],
                   help="an event that must have probability zero, written 'p(+1 -1|1 2)' (repeatable)")
    p.add_argument("--write", help="write the best experiment to this YAML file")
    add_output(p)
    p.set_defaults(run=run)


def _yaml_of(exp, values) -> str:
    lines = [f"title: {exp.title or 'optimised experiment'}"]
    if exp.theory_file:
        lines.append(f"theory: {exp.theory_file}")
    if exp.state.vector is not None:
        amps = ", ".join(f"'{float(z.real)!r} + {float(z.imag)!r}*i'" for z in exp.state.vector)
        lines.append(f"state: {{vector: [{amps}], dims: {list(exp.state.dims)}}}")
    lines.append("measurements:")
    for p in exp.scenario.parties:
        items = []
        for x in p.settings:
            if (p.name, x) in exp.measurements:
                m = exp.measurements[(p.name, x)]
                items.append(f"{x}: {_meas(m)}")
        lines.append(f"  {p.name}: {{{', '.join(items)}}}")
    if exp.inner:
        lines.append("inner_observers:")
        for name, m in exp.inner.items():
            lines.append(f"  {name}: {_meas(m)}")
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
    ineq = resolve_inequality(exp.scenario, args.inequality)
    zeros = []
    for z in args.zero:
        q = parse_inequality(exp.scenario, f"{z} <= 0")
        if len(q.coeffs) != 1:
            raise InputError(f"--zero takes one joint probability of all parties, got '{z}'")
        zeros.append(next(iter(q.coeffs)))
    opt = optimise(exp, ineq, starts=args.starts, seed=args.seed, over_state=args.state, zeros=zeros)
    v, = evaluate(opt.experiment, [ineq], want_exact=False)
    text = _yaml_of(opt.experiment, opt.values)
    if args.write:
        from ..atomic import write_text  # noqa: PLC0415 - atomic: the old file survives a failed write
        write_text(args.write, text)
    if args.json:
        emit_json({"inequality": ineq.display(), "bound": str(ineq.bound), "best": opt.value,
                   "starts": opt.values, "verdict": v.verdict, "evidence": v.evidence,
                   "zero_violation": opt.zero_violation, "notes": opt.notes, "experiment_yaml": text})
    else:
        print(f"inequality  {ineq.name or ''} {ineq.display()}")
        print(f"best value  {opt.value:.10f} over {len(opt.values)} start(s) (seed {args.seed}); "
              f"bound {ineq.bound}")
        print(f"verdict     {v.verdict}: {v.evidence}")
        if zeros:
            print(f"zeros       largest remaining probability {opt.zero_violation:.3g}")
        for n in opt.notes:
            print(f"note        {n}")
        print("\nbest settings (exact binary-rational values of the floats):\n" + text)
    return 0 if v.violated else 1
