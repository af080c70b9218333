"""``nogo visibility``: how much noise a quantum experiment tolerates against a bundle."""

from __future__ import annotations

import argparse

from ._common import add_match, add_output, emit_json, shown_path


def register(sub) -> None:
    p = sub.add_parser("visibility", help="critical visibility of an experiment's state against a bundle",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       epilog="example:     nogo visibility examples/experiments/larch-birch-chsh.yaml Bell-local "
                              "--plot sweep.png",
                       description="The largest weight v of the state, mixed with 1 - v of noise, at which the "
                                   "behaviour stays in the bundle's set (LP), the certified separating inequality "
                                   "from the LP dual, and optionally a sweep with a plot.\n\n"
                                   "exit status: 0 the behaviour leaves the set, 1 it stays inside, 2 bad input "
                                   "or error")
    p.add_argument("experiment", help="experiment file (YAML)")
    p.add_argument("bundle", help="bundle name, or assumption names joined by '+'")
    p.add_argument("--theory", help="theory file instead of the experiment's own")
    p.add_argument("--noise", default="white", help="'white' (default) or a state in YAML, e.g. \"{ghz: 2}\"")
    p.add_argument("--plot", help="write a sweep plot here (.png or .svg)")
    p.add_argument("--steps", type=int, default=41, help="sweep points (default 41)")
    p.add_argument("-i", "--inequality", action="append", default=[],
                   help="inequalities to draw in the sweep (default: the separating one)")
    add_match(p)
    add_output(p)
    p.set_defaults(run=run)


def run(args) -> int:
    from ..catalog import resolve_inequality
    from ..compile import compile_bundle
    from ..errors import Where
    from ..quantum import load_experiment
    from ..quantum.numbers import arb_text
    from ..quantum.states import state_from_yaml
    from ..quantum.visibility import plot_sweep, robustness, sweep
    from ..theory import load_theory
    from ..yamlread import read_yaml_text

    exp = load_experiment(args.experiment, args.theory)
    theory = load_theory(args.theory or exp.theory_file)
    model = compile_bundle(theory, args.bundle)
    noise = None
    if args.noise != "white":
        noise = state_from_yaml(read_yaml_text(args.noise, "--noise"), len(exp.scenario.parties),
                                Where(key="--noise"), exp.state.dims)
    r = robustness(model, exp, noise)
    sep = r.separation
    if args.plot:
        ineqs = [resolve_inequality(exp.scenario, s, match=args.match) for s in args.inequality]
        if not ineqs and sep is not None:
            ineqs = [sep.shown]
        data = sweep(model, exp, ineqs, noise, args.steps)
        plot_sweep(data, args.plot, f"{exp.title or shown_path(args.experiment)} against {model.label}",
                   r.visibility)
    if args.json:
        from .quantum import _bundle_evidence, separating_dict

        emit_json({"experiment": shown_path(args.experiment), "bundle": model.label, "noise": r.noise,
                   "status": r.status, "critical_visibility": r.visibility,
                   "inside": r.inside, "evidence": _bundle_evidence(r), "notes": r.notes,
                   "separating": None if sep is None else separating_dict(sep),
                   "plot": shown_path(args.plot)})
    else:
        print(f"bundle      {model.label}\nnoise       {r.noise}")
        if r.visibility is None:
            print(f"result      {r.status}")
        elif r.inside:
            print(f"result      INSIDE: the mixture stays in the set up to v = {r.visibility:.6f} (float LP)")
            print(f"evidence    {r.inside_evidence}")
        else:
            print(f"result      OUTSIDE above the critical visibility {r.visibility:.6f} (float LP)")
            if sep is not None:
                if sep.visibility_bound is not None:
                    print(f"certified   critical visibility <= {arb_text(sep.visibility_bound)}")
                print(f"inequality  {sep.text}   ({sep.form} form)")
                print(f"            valid for the bundle: exact Farkas certificate with "
                      f"{len(sep.check.certificate.rows)} weighted constraints")
                print(f"            its left side at v = 1: {arb_text(sep.shown_value)}, bound "
                      f"{sep.shown.sense} {sep.shown.written_bound} (interval arithmetic)")
        for n in r.notes:
            print(f"note        {n}")
        if args.plot:
            print(f"plot        {shown_path(args.plot)}")
    return 0 if r.inside is False and sep is not None else 1
