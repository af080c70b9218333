"""``nogo slice``: a two-dimensional picture of the sets — exact cross-sections of bundles'
sets on the plane through three behaviours, the quantum band, labelled points."""

from __future__ import annotations

import argparse
from fractions import Fraction

from ._common import emit_json, shown_path


def register(sub) -> None:
    p = sub.add_parser(
        "slice", help="draw the plane through three behaviours with each bundle's exact cross-section",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        description="The plane p(s, t) = P0 + s (P1 - P0) + t (P2 - P0) through three behaviours (PR, uniform, "
                    "deterministic[:A=+1,B=-1], a behaviour file or an experiment with a rational behaviour). "
                    "Each bundle's cross-section is an exact polygon found by the LP oracle along the plane "
                    "(rational vertices, each edge with checked dual multipliers; no facet list). With "
                    "--quantum the quantum set is bounded from outside by certified NPA half-planes and from "
                    "inside by quantum behaviours found on the plane.\n\n"
                    "exit status: 0 drawn / computed, 2 bad input or error\n"
                    "example:     nogo slice theories/bell-2x2.yaml uniform PR deterministic "
                    "-b Bell-local -b no-signalling --quantum --plot slice.svg")
    p.add_argument("theory", help="theory file (YAML): the scenario and its bundles")
    p.add_argument("points", nargs=3, metavar="BEHAVIOUR", help="P0 P1 P2: the plane's origin and two directions")
    p.add_argument("-b", "--bundle", action="append", default=[], help="bundle to cut (repeatable; default all)")
    p.add_argument("--quantum", nargs="?", const="", metavar="EXPERIMENT",
                   help="also bound the quantum set (NPA level 1 outside); an experiment file adds its "
                        "behaviour and a local search of its dimensions inside")
    p.add_argument("--directions", type=int, default=16, help="rays for the quantum band (default 16)")
    p.add_argument("--point", action="append", default=[], metavar="BEHAVIOUR",
                   help="a labelled point: a named behaviour, behaviour file or experiment (repeatable)")
    p.add_argument("-i", "--inequality", action="append", default=[],
                   help="draw the line where this inequality is tight (catalog name or expression)")
    p.add_argument("--plot", help="write the picture here (.png or .svg)")
    p.add_argument("--json", action="store_true", help="print one JSON object (exact vertices as fractions)")
    p.set_defaults(run=run)


def _q(x: Fraction) -> str:
    x = Fraction(x)
    return str(x.numerator) if x.denominator == 1 else f"{x.numerator}/{x.denominator}"


def run(args) -> int:
    from ..catalog import resolve_inequality
    from ..compile import compile_bundle
    from ..errors import InputError
    from ..slices import cross_section, named_point, quantum_band
    from ..theory import load_theory

    th = load_theory(args.theory)
    sc = th.scenario
    pts = [named_point(sc, s) for s in args.points]
    (n0, P0), (n1, P1), (n2, P2) = pts
    D1 = [a - b for a, b in zip(P1, P0)]
    D2 = [a - b for a, b in zip(P2, P0)]
    if _rank2(D1, D2) < 2:
        raise InputError(f"the three behaviours {n0}, {n1}, {n2} lie on one line: they span no plane",
                         hint="choose three behaviours that are not collinear")
    bundles = args.bundle or list(th.bundles)
    sections = [cross_section(compile_bundle(th, b), P0, D1, D2) for b in bundles]
    ineqs = [resolve_inequality(sc, s) for s in args.inequality]
    lines = [_line(q, P0, D1, D2, sc) for q in ineqs]
    labelled = [(n0, 0.0, 0.0), (n1, 1.0, 0.0), (n2, 0.0, 1.0)] + [_labelled(sc, s, P0, D1, D2) for s in args.point]
    band = None
    if args.quantum is not None:
        from ..quantum import load_experiment

        exps = [load_experiment(args.quantum)] if args.quantum else []
        # uniform and deterministic behaviours are quantum (product states); the quantum set is convex
        seed = [(Fraction(s_), Fraction(t_)) for (n, s_, t_) in labelled
                if n == "uniform" or n.startswith("deterministic")]
        band = quantum_band(sc, P0, D1, D2, exps, directions=args.directions, inner_seed=seed,
                            search=bool(exps))
    if args.plot:
        draw(args.plot, sections, band, labelled, lines, (n0, n1, n2), th.title or shown_path(args.theory))
    if args.json:
        emit_json(_to_dict(args, (n0, n1, n2), sections, band, labelled, lines))
        return 0
    print(f"theory      {shown_path(args.theory)}")
    print(f"plane       p(s, t) = {n0} + s ({n1} - {n0}) + t ({n2} - {n0})")
    for S in sections:
        if S.empty:
            print(f"  {S.bundle:<22} the plane misses its set")
            continue
        vs = ", ".join(f"({_q(a)}, {_q(b)})" for a, b in S.vertices)
        print(f"  {S.bundle:<22} exact polygon, {len(S.vertices)} vertices: {vs}")
        print(f"  {'':<22} every vertex a checked rational point of the model; every edge with exact dual "
              f"multipliers ({S.oracle_calls} LP calls)")
    if band is not None:
        print(f"  {'quantum':<22} outside: {len(band.outer_halfplanes)} certified NPA level-{band.level} half-planes; "
              f"inside: {len(band.inner_points)} quantum point(s) on the plane (float)")
        for n in band.notes:
            print(f"  {'':<22} note: {n}")
    for (q, _), text in zip(lines, args.inequality):
        print(f"  line        {q.name or q.display()}: tight where the left side equals {q.written_bound}")
    if args.plot:
        print(f"plot        {shown_path(args.plot)}")
    return 0


def _rank2(D1, D2) -> int:
    import itertools

    nz1 = any(D1)
    for i, j in itertools.combinations(range(len(D1)), 2):
        if D1[i] * D2[j] - D1[j] * D2[i]:
            return 2
    return 1 if nz1 or any(D2) else 0


def _line(q, P0, D1, D2, sc):
    """The inequality's tight line a s + b t = c on the plane (exact)."""
    coords = sc.coordinates()
    f = [q.coeffs.get(k, Fraction(0)) for k in coords]
    a = sum((x * d for x, d in zip(f, D1)), Fraction(0))
    b = sum((x * d for x, d in zip(f, D2)), Fraction(0))
    c = q.bound - sum((x * p for x, p in zip(f, P0)), Fraction(0))
    return q, (a, b, c)


def _labelled(sc, spec, P0, D1, D2):
    from pathlib import Path

    from ..errors import InputError
    from ..slices import named_point, on_plane

    if Path(spec).exists():
        from ..yamlread import read_yaml_file

        data = read_yaml_file(spec)
        if isinstance(data, dict) and "measurements" in data:
            from ..quantum import load_experiment

            exp = load_experiment(spec)
            got = on_plane(exp, P0, D1, D2)
            if got is None:
                raise InputError(f"the behaviour of '{spec}' is not on the plane (off by more than 1e-7)")
            return exp.title or Path(spec).stem, got[0], got[1]
    name, vec = named_point(sc, spec)
    import numpy as np

    A = np.array([[float(x) for x in D1], [float(x) for x in D2]]).T
    rhs = np.array([float(x - y) for x, y in zip(vec, P0)])
    st, *_ = np.linalg.lstsq(A, rhs, rcond=None)
    if np.max(np.abs(A @ st - rhs)) > 1e-9:
        raise InputError(f"the behaviour '{spec}' is not on the plane")
    return name, float(st[0]), float(st[1])


def _to_dict(args, names, sections, band, labelled, lines) -> dict:
    d = {"theory": shown_path(args.theory),
         "plane": {"origin": names[0], "s_towards": names[1], "t_towards": names[2],
                   "formula": f"p(s, t) = {names[0]} + s ({names[1]} - {names[0]}) + t ({names[2]} - {names[0]})"},
         "bundles": [{"bundle": S.bundle, "empty": S.empty,
                      "vertices": [[_q(a), _q(b)] for a, b in S.vertices],
                      "edges": [{"a": _q(e.normal[0]), "b": _q(e.normal[1]), "at_most": _q(e.offset),
                                 "reads": f"{_q(e.normal[0])} s + {_q(e.normal[1])} t <= {_q(e.offset)}",
                                 "evidence": e.certificate} for e in S.edges],
                      "evidence": "each vertex is a rational point of the compiled model (checked exactly); "
                                  "each edge's inequality has exact dual multipliers (checked)",
                      "oracle_calls": S.oracle_calls, "notes": S.notes} for S in sections],
         "points": [{"label": n, "s": s, "t": t} for n, s, t in labelled],
         "lines": [{"inequality": q.display(), "a": _q(a), "b": _q(b), "c": _q(c),
                    "reads": f"left side = bound where {_q(a)} s + {_q(b)} t = {_q(c)}"} for q, (a, b, c) in lines]}
    if band is not None:
        d["quantum"] = {
            "level": band.level,
            "outside": [{"a": _q(h["a"]), "b": _q(h["b"]), "at_most": _q(h["c"]),
                         "functional": h["functional"].display(), "certified_quantum_maximum": _q(h["certified"]),
                         "evidence": "NPA dual, certified (nogo.quantum.npa)"} for h in band.outer_halfplanes],
            "outer_polygon": [[x, y] for x, y in band.outer],
            "inside": band.inner_points, "inner_polygon": [[x, y] for x, y in band.inner], "notes": band.notes}
    return d


def draw(path, sections, band, labelled, lines, names, title) -> None:
    """PNG or SVG: hatched polygons per bundle (each with its own hatch and line style), the quantum band."""
    import textwrap

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.patches import Polygon

    from ..atomic import save_figure

    styles = [("-", "///"), ("--", "\\\\\\"), ("-.", "..."), (":", "xx"), ((0, (5, 1, 1, 1)), "++")]
    fig, ax = plt.subplots(figsize=(7.0, 6.4))
    xs, ys = [0.0, 1.0], [0.0, 1.0]
    for k, S in enumerate(sections):
        if S.empty:
            continue
        ls, hatch = styles[k % len(styles)]
        V = [(float(a), float(b)) for a, b in S.vertices]
        xs += [v[0] for v in V]
        ys += [v[1] for v in V]
        if len(V) >= 3:
            ax.add_patch(Polygon(V, closed=True, fill=False, hatch=hatch, ls=ls, lw=1.6, color=f"C{k}",
                                 label=f"{S.bundle} (exact, {len(V)} vertices)"))
        else:
            ax.plot(*zip(*V), ls=ls, lw=2, color=f"C{k}", label=f"{S.bundle} (exact)")
    if band is not None:
        lo, hi = max(min(xs) - 0.5, -1e3), min(max(xs) + 0.5, 1e3)
        if len(band.outer) >= 3:
            ax.add_patch(Polygon(band.outer, closed=True, fill=False, ls=(0, (1, 1)), lw=1.4, color="k",
                                 label=f"quantum: certified outer bound (NPA level {band.level})"))
        if len(band.inner) >= 3:
            ax.add_patch(Polygon(band.inner, closed=True, facecolor="0.85", edgecolor="0.4", lw=1, alpha=0.6,
                                 label="quantum: inner bound (behaviours found, float)"))
        del lo, hi
    for q, (a, b, c) in lines:
        a, b, c = float(a), float(b), float(c)
        x0, x1 = min(xs) - 0.2, max(xs) + 0.2
        if abs(b) > 1e-12:
            ax.plot([x0, x1], [(c - a * x0) / b, (c - a * x1) / b], color="0.3", lw=0.9, ls=(0, (3, 2)),
                    label=f"{q.name or q.display()} tight")
        elif abs(a) > 1e-12:
            ax.axvline(c / a, color="0.3", lw=0.9, ls=(0, (3, 2)), label=f"{q.name or q.display()} tight")
    markers = "o^sDvP*X"
    for k, (n, s, t) in enumerate(labelled):
        ax.plot([s], [t], marker=markers[k % len(markers)], color="k", ls="", ms=6)
        ax.annotate(n, (s, t), textcoords="offset points", xytext=(6, 6), fontsize=8)
    ax.set_xlim(min(xs) - 0.15, max(xs) + 0.15)
    ax.set_ylim(min(ys) - 0.15, max(ys) + 0.15)
    ax.set_xlabel(f"s: towards {names[1]} (from {names[0]})")
    ax.set_ylabel(f"t: towards {names[2]} (from {names[0]})")
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_title("\n".join(textwrap.wrap(f"{title}: the plane through {', '.join(names)}", 70,
                                         break_on_hyphens=False)), fontsize=10)
    ax.legend(fontsize=7, loc="best")
    fig.tight_layout()
    save_figure(fig, path)
    plt.close(fig)
