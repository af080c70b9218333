"""``nogo quantum``: a planned experiment's behaviour, the inequalities it violates,
and whether it lies inside each bundle's set (with exact or interval evidence)."""

from __future__ import annotations

import argparse

from ..errors import InputError, Where
from ._common import add_match, add_output, emit_json, shown_path


def separating_dict(s) -> dict:
    """A certified separating inequality for JSON, every number in the form of its text."""
    from ..quantum.numbers import arb_text

    return {"text": s.text, "form": s.form, "sense": s.shown.sense, "bound": str(s.shown.written_bound),
            "value": arb_text(s.shown_value), "full": s.inequality.display(),
            "full_value": arb_text(s.value), "full_bound": str(s.inequality.bound),
            "certificate_rows": len(s.check.certificate.rows),
            "visibility_at_most": arb_text(s.visibility_bound) if s.visibility_bound is not None else None}


def _bundle_evidence(r) -> str:
    if r.inside is True:
        return r.inside_evidence
    if r.inside is False and r.separation is not None:
        s = r.separation
        return (f"separating inequality valid for the bundle (exact Farkas certificate, "
                f"{len(s.check.certificate.rows)} weighted constraints) whose value here exceeds its bound "
                f"(interval arithmetic)")
    return "; ".join(r.notes) or r.status


def register(sub) -> None:
    p = sub.add_parser("quantum", help="a quantum experiment: behaviour, violated inequalities, bundle membership",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       epilog="example:     nogo quantum examples/experiments/larch-birch-chsh.yaml -i CHSH",
                       description="Compute the Born-rule behaviour of an experiment file, the value of each "
                                   "inequality (violations certified by exact or interval arithmetic, never by a "
                                   "bare float), and for each bundle whether the behaviour lies in its set, with "
                                   "the critical visibility and a certified separating inequality. Every value is that of the left "
                                   "side as written, beside its bound and sense.\n\n"
                                   "exit status: 0 some bundle's set is left (a quantum violation), 1 none is, "
                                   "2 bad input or error")
    p.add_argument("experiment", help="experiment file (YAML)")
    p.add_argument("--theory", help="theory file to use instead of the experiment's own 'theory:'")
    p.add_argument("-i", "--inequality", action="append", default=[],
                   help="catalog name, expression or file (repeatable); default: every catalog entry that fits")
    p.add_argument("--facets", help="file of inequalities (YAML/JSON list of expressions or {name, text})")
    p.add_argument("--facets-of", metavar="BUNDLE",
                   help="derive the facets of BUNDLE's set (nogo.polytope) and evaluate every one")
    p.add_argument("-b", "--bundle", action="append", default=[], help="bundle (repeatable); default: all")
    p.add_argument("--noise", default="white",
                   help="noise for the critical visibility: 'white' (default) or a state, e.g. "
                        "\"{product: [[1, 0], [1, 0]]}\"")
    p.add_argument("--exact", action="store_true", help="print the exact behaviour (sympy) when inputs allow")
    add_match(p)
    add_output(p)
    p.set_defaults(run=run)


def load_inequality_file(scenario, path: str) -> list:
    """Inequalities from a file: a list of expressions or of {name, text|expression}."""
    from ..inequality import parse_inequality
    from ..yamlread import read_yaml_file

    data = read_yaml_file(path)
    if isinstance(data, dict):
        data = data.get("facets") or data.get("inequalities")
    if not isinstance(data, list):
        raise InputError("an inequality file is a list (or has a 'facets' list) of expressions or {name, text}",
                         Where(path))
    out = []
    for i, item in enumerate(data):
        w = data.where(i, f"[{i}]") if hasattr(data, "where") else Where(path)
        if isinstance(item, str):
            out.append(parse_inequality(scenario, item, f"#{i + 1}", path, w))
        elif isinstance(item, dict) and ("text" in item or "expression" in item):
            out.append(parse_inequality(scenario, str(item.get("text") or item.get("expression")),
                                        str(item.get("name") or f"#{i + 1}"), path, w))
        else:
            raise InputError("each entry is an expression or {name, text}", w)
    return out


def _inequalities(args, scenario, theory) -> list:
    from ..catalog import load_catalog, resolve_inequality
    from ..compile import compile_bundle

    out = []
    if args.inequality:
        out += [resolve_inequality(scenario, s, match=args.match) for s in args.inequality]
    if args.facets:
        out += load_inequality_file(scenario, args.facets)
    if args.facets_of:
        from ..polytope import derive_polytope

        P = derive_polytope(compile_bundle(theory, args.facets_of))
        out += [P.inequality(f, f"{args.facets_of} facet {k + 1}") for k, f in enumerate(P.facets)]
    if not out:
        for name, entry in load_catalog().items():
            try:
                out.append(entry.inequality(scenario))
            except InputError:
                continue
    return out


def _behaviour_table(scenario, fb, eb) -> list[str]:
    outs = scenario.outcome_tuples()
    head = "  settings".ljust(12) + "".join(("p(" + " ".join(a) + ")").rjust(14) for a in outs)
    lines = [head]
    for s in scenario.setting_tuples():
        lines.append(("  " + " ".join(s)).ljust(12) + "".join(f"{fb[(s, a)]:.6f}".rjust(14) for a in outs))
    if eb is not None:
        lines.append("  exact:")
        for s in scenario.setting_tuples():
            lines.append("    " + " ".join(s) + ":  " + ",  ".join(f"p({' '.join(a)}) = {eb[(s, a)]}" for a in outs))
    return lines


def run(args) -> int:
    from ..compile import compile_bundle
    from ..theory import load_theory
    from ..quantum import behaviour, exact_behaviour, load_experiment
    from ..quantum.certify import evaluate
    from ..quantum.states import state_from_yaml
    from ..quantum.visibility import robustness
    from ..yamlread import read_yaml_text

    exp = load_experiment(args.experiment, args.theory)
    theory = load_theory(args.theory or exp.theory_file)
    sc = exp.scenario
    ineqs = _inequalities(args, sc, theory)
    values = evaluate(exp, ineqs)
    noise = None
    if args.noise != "white":
        noise = state_from_yaml(read_yaml_text(args.noise, "--noise"), len(sc.parties), Where(key="--noise"),
                                exp.state.dims)
    bundles = args.bundle or list(theory.bundles)
    robust = [robustness(compile_bundle(theory, b), exp, noise) for b in bundles]
    fb = behaviour(exp)
    eb = None
    if args.exact:
        try:
            eb = exact_behaviour(exp)
        except ValueError as exc:
            raise InputError(f"--exact: {exc}") from None
    outside = any(r.inside is False and r.separation is not None for r in robust)

    from ..report import quantum_value

    shown = [quantum_value(v) for v in values]
    exp_file, th_file = shown_path(args.experiment), shown_path(args.theory or exp.theory_file)
    if args.json:
        emit_json(_json_report(exp, exp_file, th_file, fb, eb, shown, robust))
        return 0 if outside else 1
    L = [f"experiment  {exp_file}" + (f"  ({exp.title})" if exp.title else ""),
         f"theory      {th_file}",
         f"state       {exp.state.label}; inputs {'exact' if exp.is_exact else 'numeric only (no certified verdicts)'}",
         ""]
    if sc.nested:
        from ..quantum.labs import describe_plan

        L += ["what each lab's outcome comes from (nested observers, own choices):"]
        L += ["  " + line for line in describe_plan(sc, exp.plan)] + [""]
    L += ["behaviour (Born rule):"]
    L += _behaviour_table(sc, fb, eb)
    L += ["", "inequalities (values of the left side as written):"]
    L += _inequality_lines(values, shown)
    L += ["", f"bundles (critical visibility against {robust[0].noise if robust else 'noise'}):"]
    L += _bundle_lines(robust)
    from ..report import DISCLAIMER

    L += ["", DISCLAIMER]
    print("\n".join(L))
    return 0 if outside else 1


def _json_report(exp, exp_file, th_file, fb, eb, shown, robust) -> dict:
    from ..quantum.labs import describe_plan

    sc = exp.scenario
    return {
        "experiment": exp_file, "title": exp.title, "theory": th_file,
        "state": exp.state.label, "exact_inputs": exp.is_exact,
        **({"readings": describe_plan(sc, exp.plan)} if sc.nested else {}),
        "behaviour": [{"settings": list(s), "outcomes": list(a), "p": fb[(s, a)],
                       **({"exact": str(eb[(s, a)])} if eb else {})} for s, a in sc.coordinates()],
        "inequalities": shown,
        "bundles": [{"bundle": r.bundle, "inside": r.inside, "critical_visibility": r.visibility,
                     "noise": r.noise, "status": r.status, "evidence": _bundle_evidence(r), "notes": r.notes,
                     **({"separating": separating_dict(r.separation)} if r.separation else {})}
                    for r in robust],
    }


def _inequality_lines(values, shown) -> list[str]:
    L = []
    for v, d in zip(values, shown):
        name = v.inequality.name or v.inequality.display()
        val = f"{d['exact']} = {d['value']:.6f}" if d["exact"] is not None else f"{d['value']:.6f}"
        mark = {"violated": "VIOLATED", "satisfied": "satisfied", "attained": "attains bound",
                "undecided": "undecided", "float only": "not certified"}[v.verdict]
        L.append(f"  {name:<22} value {val}, bound {v.inequality.sense} {d['bound']}: {mark}"
                 + (f" by {d['violation']:.6f}" if v.violated else ""))
        if v.inequality.name and v.inequality.text:
            L.append(f"  {'':<22} {v.inequality.display()}")
        if v.inequality.origin:
            L.append(f"  {'':<22} ({v.inequality.origin})")
        L.append(f"  {'':<22} {d['evidence']}")
    return L


def _bundle_lines(robust) -> list[str]:
    from ..quantum.numbers import arb_text

    L = []
    for r in robust:
        if r.inside is True:
            L.append(f"  {r.bundle:<22} INSIDE; the mixture stays inside up to v = {r.visibility:.6f}")
            L.append(f"  {'':<22} {r.inside_evidence}")
        elif r.inside is False and r.separation is not None:
            s = r.separation
            L.append(f"  {r.bundle:<22} OUTSIDE; critical visibility {r.visibility:.6f} (float LP)"
                     + (f", certified <= {arb_text(s.visibility_bound)}" if s.visibility_bound is not None else ""))
            L.append(f"  {'':<22} separating inequality, valid for the bundle (exact Farkas certificate, "
                     f"{len(s.check.certificate.rows)} constraints), in {s.form} form:")
            L.append(f"  {'':<24}{s.text}")
            if s.form != "full":
                L.append(f"  {'':<24}(equal to its full-coordinate form on this bundle's set)")
            L.append(f"  {'':<22} its left side here: {arb_text(s.shown_value)} > the bound "
                     f"{s.shown.written_bound} (interval arithmetic)")
        else:
            L.append(f"  {r.bundle:<22} {'outside by float LP only' if r.inside is False else r.status}"
                     + (f"; v* = {r.visibility:.6f}" if r.visibility is not None else ""))
        for n in r.notes:
            L.append(f"  {'':<22} note: {n}")
    return L
