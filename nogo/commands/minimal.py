"""``nogo minimal``: which assumptions does an inequality really need?

Lists every minimal implicating set and every maximal non-implying set of a
pool of assumptions (:mod:`nogo.minimal`, MARCO), for one inequality, a
list of them, or every relabelled version of one; or referees a claim
"this set implies the inequality and is minimal".  Output: tables and the
subset lattice in the terminal, ``--picture FILE`` (SVG/PNG/PDF, drawn with
matplotlib's Agg backend), ``--json``.

Exit status: 0 search complete / claim confirmed, 1 search cut short by the
time limit / claim refuted, 2 bad input.
"""

from __future__ import annotations

import sys
from fractions import Fraction
from typing import Any

from ..catalog import resolve_inequality
from ..errors import InputError
from ..minimal import Answer, ClaimResult, SearchResult, check_claim, explored_fraction, find_for_many, summarise
from ..report import DISCLAIMER, check_to_dict, q
from ..symmetry import orbit
from ._common import add_output, emit_json, theory_of

STYLE = {"implied": "green", "contradictory": "green", "not implied": "red", "refused": "yellow",
         "unknown": "bright_black"}
COLOUR = {"implied": "#4caf50", "contradictory": "#4caf50", "not implied": "#e57373", "refused": "#ffd54f",
          "unknown": "#d0d0d0"}


def register(sub) -> None:
    p = sub.add_parser(
        "minimal", help="which sets of assumptions imply an inequality? (minimal and maximal sets, exact evidence)",
        description="List every minimal set of assumptions from the pool that implies the inequality (with its "
                    "Farkas certificate) and every maximal set that does not (with its counterexample), by "
                    "MARCO enumeration over the exact oracle; or check a claim with --claim. Hidden-variable "
                    "declarations are background, part of every set. An inequality written with marginals is "
                    "'refused' by sets that do not imply no-signalling for them; those sets count as not "
                    "implying. Exit status 0 complete / confirmed, 1 partial / refuted, 2 error.")
    p.add_argument("theory", help="theory file (YAML)")
    p.add_argument("inequality", nargs="+",
                   help="one or more: catalog name (e.g. CHSH), file, or expression '... <= ...'")
    p.add_argument("--pool", help="assumptions (or bundles) to choose from, comma-separated (default: all)")
    p.add_argument("--fixed", default="", help="assumptions held in every set, not searched, comma-separated")
    p.add_argument("--all-versions", action="store_true",
                   help="search every relabelled version of each inequality (outcomes, settings, parties)")
    p.add_argument("--claim", metavar="SET",
                   help="referee the claim 'SET implies the inequality and is minimal' (comma-separated names)")
    p.add_argument("--time-limit", type=float, default=None, metavar="SECONDS",
                   help="stop after this many seconds with clearly marked partial results")
    p.add_argument("--picture", metavar="FILE", help="draw the subset lattice to FILE (.svg, .png or .pdf)")
    p.add_argument("--workers", type=int, default=None, help="search several inequalities in parallel processes")
    p.add_argument("--max-columns", type=int, default=200_000,
                   help="refuse hidden-variable models larger than this (default 200000)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    add_output(p)
    p.set_defaults(run=run)


def _names(text: str | None) -> list[str] | None:
    if text is None:
        return None
    return [n.strip() for n in text.replace("+", ",").split(",") if n.strip()]


def _ineq_name(r: SearchResult | Any) -> str:
    ineq = r.inequality if hasattr(r, "inequality") else r
    return ineq.name or ineq.display()


def run(args) -> int:
    theory = theory_of(args)
    options = {"max_columns": args.max_columns}
    ineqs = []
    for spec in args.inequality:
        ineq = resolve_inequality(theory.scenario, spec)
        ineqs += orbit(ineq) if args.all_versions else [ineq]
    if args.claim is not None:
        return _run_claim(args, theory, ineqs, options)
    progress, finish = _progress(args, theory, ineqs)
    try:
        results = find_for_many(theory, ineqs, _names(args.pool), fixed=_names(args.fixed) or [],
                                time_limit=args.time_limit, options=options, workers=args.workers,
                                progress=progress)
    finally:
        finish()
    for r in results:
        bad = r.failed_rechecks()
        if bad:  # never print evidence that does not hold up
            raise RuntimeError(f"evidence for {sorted(bad[0].subset)} failed its exact re-check: {bad[0].recheck}")
    if args.picture:
        draw_lattices(results, args.picture, args.theory)
    if args.json:
        emit_json(search_to_dict(results, args.theory))
    else:
        print_search(results, args.theory, args.picture)
    return 0 if all(r.complete for r in results) else 1


# -- progress -------------------------------------------------------------------
def _progress(args, theory, ineqs):
    if args.quiet or args.json or (args.workers and args.workers > 1) or not sys.stderr.isatty():
        return None, lambda: None
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    bar = Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.percentage:>3.0f}% explored"),
                   TextColumn("{task.fields[info]}"), TimeElapsedColumn(), console=Console(stderr=True),
                   transient=True)
    state = {"task": None, "calls": 0, "min": [], "max": [], "pool": None}
    bar.start()

    def progress(kind, payload):
        if kind == "inequality":
            k, ineq = payload
            if state["task"] is not None:
                bar.remove_task(state["task"])
            state.update(calls=0, min=[], max=[])
            state["task"] = bar.add_task(f"{k + 1}/{len(ineqs)} {_ineq_name(ineq)[:30]}", total=1.0, info="")
            return
        if kind == "start":
            state["pool"] = payload
            return
        if kind == "oracle":
            state["calls"] += 1
        elif kind == "minimal":
            state["min"].append(payload)
        elif kind == "maximal":
            state["max"].append(payload)
        info = f"oracle calls {state['calls']}, minimal {len(state['min'])}, maximal {len(state['max'])}"
        frac = explored_fraction(state["pool"], state["min"], state["max"]) \
            if kind != "oracle" and state["pool"] else None
        if frac is not None:
            bar.update(state["task"], completed=frac, info=info)
        else:
            bar.update(state["task"], info=info)
    return progress, bar.stop


# -- text ---------------------------------------------------------------------------
def _tags(pool: tuple[str, ...]) -> dict[str, str]:
    """Short letters for the lattice: a, b, c, ..."""
    letters = "abcdefghijklmnopqrstuvwxyz"
    return {p: (letters[i] if i < 26 else f"x{i}") for i, p in enumerate(pool)}


def _set(s) -> str:
    return "{" + ", ".join(s) + "}" if s else "{} (no assumption)"


def _ordered(r: SearchResult, s) -> list[str]:
    return [p for p in r.pool if p in s]


def _behaviour_short(ineq, behaviour) -> str:
    by_s: dict = {}
    for (s, a), v in behaviour.items():
        if v:
            by_s.setdefault(s, []).append(f"{''.join(x[0] if len(x) == 2 and x[0] in '+-' else x for x in a)}:{q(v)}")
    return "; ".join(f"{','.join(s)} -> {' '.join(v)}" for s, v in by_s.items())


def _evidence(a: Answer) -> str:
    if a.status == "implied":
        c = a.result.certificate
        used = ", ".join(f"{k} x{n}" for k, n in c.by_assumption().items())
        return f"max {q(a.maximum)}; certificate: {used or 'normalisation only'}; re-checked"
    if a.status == "contradictory":
        return "the set admits no behaviour (implies everything vacuously)"
    if a.status == "refused":
        return "refused: " + a.message
    return f"reaches {q(a.maximum)}; counterexample re-checked"


def print_search(results: list[SearchResult], theory_file: str, picture: str | None = None) -> None:
    from rich.console import Console
    from rich.table import Table

    con = Console(highlight=False)
    groups = _patterns(results)
    first = results[0]
    con.print(f"theory      {theory_file}")
    con.print(f"pool        {', '.join(first.pool)}  ({len(first.pool)} assumptions, {first.brute_force} subsets)")
    if first.background:
        con.print(f"background  {', '.join(first.background)} (in every set)")
    for n in dict.fromkeys(x for r in results for x in r.notes):
        con.print(f"note        {n}")
    for members in groups.values():
        r = results[members[0]]
        con.print()
        names = ", ".join(_ineq_name(results[i]) for i in members)
        con.rule(f"{names}" if len(members) < 4 else f"{len(members)} versions: {names[:70]}...")
        if len(members) == 1:
            con.print(f"inequality  {r.inequality.display()}" + (f"   [{r.inequality.source}]" if r.inequality.source else ""))
        if not r.complete:
            con.print("[bold yellow]PARTIAL[/]: the time limit was reached; the sets below are confirmed, "
                      "others may exist", )
        t = Table(title="minimal implicating sets (each implies; no proper subset does)", title_justify="left")
        t.add_column("set")
        t.add_column("evidence")
        for a in r.minimal:
            t.add_row(_set(_ordered(r, a.subset)), _evidence(a), style=STYLE[a.status])
        if not r.minimal:
            t.add_row("none", "not even the whole pool implies the inequality" if r.complete
                      else "none found before the time limit")
        con.print(t)
        t = Table(title="maximal non-implying sets (each does not imply; adding any member does)",
                  title_justify="left")
        t.add_column("set")
        t.add_column("evidence")
        t.add_column("counterexample behaviour p(outcomes | settings)", overflow="fold")
        for a in r.maximal:
            ce = a.result.counterexample if a.result is not None else None
            t.add_row(_set(_ordered(r, a.subset)), _evidence(a),
                      _behaviour_short(r.inequality, ce.behaviour) if ce else "", style=STYLE[a.status])
        if not r.maximal:
            t.add_row("none", "every subset implies (the background alone does)" if r.complete
                      else "none found before the time limit", "")
        con.print(t)
        if r.complete:
            con.print(f"essential (in every minimal set): {', '.join(r.essential()) or 'none'}")
            con.print(f"idle (in no minimal set):         {', '.join(r.idle()) or 'none'}")
        else:
            con.print("essential / idle: not known, the search is partial")
        calls = sum(results[i].oracle_calls for i in members)
        con.print(f"oracle calls: {calls} for {len(members)} inequalit{'y' if len(members) == 1 else 'ies'} "
                  f"(brute force: {len(members)} x 2^{len(r.pool)} = {len(members) * r.brute_force}); "
                  f"{len(r.minimal)} minimal + {len(r.maximal)} maximal sets")
        print_lattice(con, r)
    if len(results) > 1:
        s = summarise(results)
        con.print()
        t = Table(title="summary: in how many minimal sets each assumption appears, per inequality",
                  title_justify="left")
        t.add_column("assumption")
        for members in groups.values():
            t.add_column(_ineq_name(results[members[0]])[:24] + (f" (+{len(members) - 1})" if len(members) > 1 else ""))
        t.add_column("verdict")
        for p in s.pool:
            row = [p]
            for members in groups.values():
                r = results[members[0]]
                k = sum(p in a.subset for a in r.minimal)
                row.append(f"{k}/{len(r.minimal)}")
            row.append("essential" if p in s.essential else "idle" if p in s.idle else "sometimes")
            t.add_row(*row)
        con.print(t)
        con.print(f"{len(results)} inequalities, {len(groups)} distinct pattern(s); oracle calls {s.oracle_calls} "
                  f"(brute force {len(results) * first.brute_force})" + ("" if s.complete else "; PARTIAL"))
    if picture:
        con.print(f"lattice drawn to {picture}")
    con.print(DISCLAIMER)


def _patterns(results: list[SearchResult]) -> dict[tuple, list[int]]:
    """Group inequalities whose minimal and maximal sets coincide (versions often do)."""
    out: dict[tuple, list[int]] = {}
    for i, r in enumerate(results):
        key = (tuple(sorted(tuple(sorted(a.subset)) for a in r.minimal)),
               tuple(sorted((tuple(sorted(a.subset)), a.status) for a in r.maximal)), r.complete)
        out.setdefault(key, []).append(i)
    return out


def lattice_levels(r: SearchResult) -> list[list[tuple[frozenset, str]]]:
    """All subsets by size with their status (by monotonicity from the minimal/maximal sets)."""
    import itertools

    return [[(frozenset(c), r.status_of(c)) for c in itertools.combinations(r.pool, k)]
            for k in range(len(r.pool) + 1)]


def print_lattice(con, r: SearchResult) -> None:
    from rich.text import Text

    tags = _tags(r.pool)
    mins = {a.subset for a in r.minimal}
    maxs = {a.subset for a in r.maximal}
    con.print("subset lattice (\\[x] minimal implicating, (x) maximal non-implying; "
              "[green]implied[/] [red]not implied[/] [yellow]refused[/] [bright_black]unknown[/]):")
    con.print("  " + "  ".join(f"{t} = {p}" for p, t in tags.items()))
    n = len(r.pool)
    if n > 6:
        for k, level in reversed(list(enumerate(lattice_levels(r)))):
            counts: dict[str, int] = {}
            for _, st in level:
                counts[st] = counts.get(st, 0) + 1
            line = Text(f"  size {k:>2}: ")
            for st, c in counts.items():
                line.append(f"{c} {st}  ", style=STYLE[st])
            marks = [s for s, _ in level if s in mins or s in maxs]
            for s in marks:
                code = "".join(tags[p] for p in r.pool if p in s) or "0"
                line.append(f"[{code}] " if s in mins else f"({code}) ", style="bold " + STYLE[r.status_of(s)])
            con.print(line)
        return
    for k, level in reversed(list(enumerate(lattice_levels(r)))):
        line = Text(f"  {k}: ")
        for s, st in level:
            code = "".join(tags[p] for p in r.pool if p in s) or "0"
            if s in mins:
                code, style = f"[{code}]", "bold underline " + STYLE[st]
            elif s in maxs:
                code, style = f"({code})", "bold " + STYLE[st]
            else:
                code, style = f" {code} ", STYLE[st]
            line.append(code + " ", style=style)
        con.print(line)


# -- picture --------------------------------------------------------------------------
def draw_lattices(results: list[SearchResult], path: str, theory_file: str = "") -> None:
    """Hasse diagram of the subset lattice, one panel per distinct pattern (matplotlib, Agg)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.patches import Patch

    groups = list(_patterns(results).values())[:12]
    cols = min(len(groups), 3)
    rows = (len(groups) + cols - 1) // cols
    n = len(results[0].pool)
    width = max(6.0, min(2 ** n / 3.0, 18.0))
    fig, axes = plt.subplots(rows, cols, figsize=(width * cols, (1.2 + 0.9 * n) * rows + 1.0), squeeze=False)
    for ax in axes.flat:
        ax.axis("off")
    for ax, members in zip(axes.flat, groups):
        _draw_one(ax, results[members[0]], [_ineq_name(results[i]) for i in members])
    r = results[0]
    tags = _tags(r.pool)
    legend = [Patch(color=COLOUR[s], label=s) for s in ("implied", "not implied", "refused", "unknown")]
    legend.append(Patch(facecolor="white", edgecolor="black", linewidth=2.5, label="minimal / maximal set"))
    fig.legend(handles=legend, loc="lower center", ncol=5, frameon=False)
    key = "   ".join(f"{t} = {p}" for p, t in tags.items())
    bg = f"   background: {', '.join(r.background)}" if r.background else ""
    fig.suptitle(f"{theory_file}\n{key}{bg}", fontsize=9)
    fig.tight_layout(rect=(0, 0.05, 1, 0.93))
    from ..atomic import save_figure  # noqa: PLC0415 - atomic: the old file survives a failed write
    save_figure(fig, path)
    plt.close(fig)


def _draw_one(ax, r: SearchResult, names: list[str]) -> None:
    import itertools

    tags = _tags(r.pool)
    n = len(r.pool)
    mins = {a.subset for a in r.minimal}
    maxs = {a.subset for a in r.maximal}
    pos: dict[frozenset, tuple[float, float]] = {}
    status: dict[frozenset, str] = {}
    for k, level in enumerate(lattice_levels(r)):
        for i, (s, st) in enumerate(level):
            pos[s] = ((i + 0.5) / len(level), float(k))
            status[s] = st
    if n <= 8:
        for s, (x, y) in pos.items():
            for p in r.pool:
                if p not in s:
                    x2, y2 = pos[s | {p}]
                    ax.plot([x, x2], [y, y2], color="#bbbbbb", linewidth=0.4, zorder=1)
    size = max(30.0, 600.0 / max(1, 2 ** n / 16))
    for s, (x, y) in pos.items():
        special = s in mins or s in maxs
        ax.scatter([x], [y], s=size * (1.6 if special else 1.0), color=COLOUR[status[s]],
                   edgecolors="black" if special else "none", linewidths=2.5 if special else 0, zorder=2)
        if n <= 6 or special:
            code = "".join(tags[p] for p in r.pool if p in s) or "∅"
            ax.annotate(code, (x, y), textcoords="offset points", xytext=(0, 9), ha="center", fontsize=7,
                        fontweight="bold" if special else "normal", zorder=3)
    title = ", ".join(names) if len(names) <= 3 else f"{len(names)} versions of {names[0]}"
    if not r.complete:
        title += "  (PARTIAL)"
    ax.set_title(title, fontsize=9)
    ax.set_xlim(-0.02, 1.02)
    ax.set_ylim(-0.6, n + 0.6)


# -- JSON -------------------------------------------------------------------------------
def answer_to_dict(a: Answer, pool: tuple[str, ...]) -> dict[str, Any]:
    d: dict[str, Any] = {"set": [p for p in pool if p in a.subset], "status": a.status,
                         "maximum": q(a.maximum) if a.maximum is not None else None,
                         "recheck": "ok" if a.recheck is None else a.recheck}
    if a.message:
        d["message"] = a.message
    if a.result is not None:
        full = check_to_dict(a.result)
        for k in ("certificate", "counterexample", "method", "model"):
            if k in full:
                d[k] = full[k]
    return d


def search_to_dict(results: list[SearchResult], theory_file: str) -> dict[str, Any]:
    out = []
    for r in results:
        ineq = r.inequality
        out.append({
            "inequality": {"name": ineq.name, "text": ineq.display(), "bound": q(ineq.bound), "source": ineq.source},
            "pool": list(r.pool), "background": list(r.background), "complete": r.complete,
            "oracle_calls": r.oracle_calls, "brute_force": r.brute_force, "seconds": round(r.seconds, 3),
            "minimal": [answer_to_dict(a, r.pool) for a in r.minimal],
            "maximal": [answer_to_dict(a, r.pool) for a in r.maximal],
            "essential": r.essential(), "idle": r.idle(), "notes": r.notes})
    s = summarise(results)
    return {"theory": theory_file, "complete": s.complete, "results": out,
            "summary": {"essential": s.essential, "idle": s.idle, "oracle_calls": s.oracle_calls,
                        "brute_force": len(results) * results[0].brute_force}}


def claim_to_dict(c: ClaimResult, pool: tuple[str, ...], theory_file: str, ineq) -> dict[str, Any]:
    return {"theory": theory_file, "inequality": {"name": ineq.name, "text": ineq.display(), "bound": q(ineq.bound)},
            "claim": sorted(c.claimed), "background": list(c.background), "verdict": c.verdict, "reason": c.reason,
            "whole": answer_to_dict(c.whole, pool),
            "without_one": {p: answer_to_dict(a, pool) for p, a in c.drops.items()},
            "smaller": answer_to_dict(c.smaller, pool) if c.smaller else None, "oracle_calls": c.oracle_calls}


# -- claims ---------------------------------------------------------------------------
def _run_claim(args, theory, ineqs, options) -> int:
    claimed = _names(args.claim)
    if not claimed:
        raise InputError("--claim needs at least one assumption name", hint="e.g. --claim absoluteness,agency-A")
    out = []
    for ineq in ineqs:
        c = check_claim(theory, ineq, claimed, fixed=_names(args.fixed) or [], options=options)
        for a in [c.whole, *c.drops.values(), *([c.smaller] if c.smaller else [])]:
            if a.recheck:
                raise RuntimeError(f"evidence for {sorted(a.subset)} failed its exact re-check: {a.recheck}")
        out.append((ineq, c))
    pool = tuple(n for n in theory.assumptions)
    if args.json:
        d = [claim_to_dict(c, pool, args.theory, i) for i, c in out]
        emit_json(d[0] if len(d) == 1 else {"verdict": "confirmed" if all(c.verdict == "confirmed" for _, c in out)
                                            else "refuted", "claims": d})
    else:
        for ineq, c in out:
            _print_claim(ineq, c, pool, args.theory)
    return 0 if all(c.verdict == "confirmed" for _, c in out) else 1


def _print_claim(ineq, c: ClaimResult, pool, theory_file) -> None:
    order = [p for p in pool if p in c.claimed]
    print(f"theory      {theory_file}")
    print(f"inequality  {ineq.name + ': ' if ineq.name else ''}{ineq.display()}")
    print(f"claim       {_set(order)} implies it and is minimal"
          + (f" (background: {', '.join(c.background)})" if c.background else ""))
    print()
    print(f"verdict     {c.verdict.upper()}: {c.reason}")
    print(f"  the whole set:  {_evidence(c.whole)}")
    for p, a in c.drops.items():
        print(f"  without {p}:  {_evidence(a)}")
        if a.result is not None and a.result.counterexample is not None:
            for row in _table(ineq, a.result.counterexample.behaviour):
                print("      " + row)
    if c.smaller is not None:
        print(f"  smaller set {_set([p for p in pool if p in c.smaller.subset])}: {_evidence(c.smaller)}")
    if c.whole.result is not None and c.whole.result.counterexample is not None:
        for row in _table(ineq, c.whole.result.counterexample.behaviour):
            print("      " + row)
    print(f"oracle calls {c.oracle_calls}")
    print(DISCLAIMER)


def _table(ineq, behaviour: dict) -> list[str]:
    sc = ineq.scenario
    outs = sc.outcome_tuples()
    lines = ["settings".ljust(10) + "".join(("p(" + " ".join(a) + ")").rjust(12) for a in outs)]
    for s in sc.setting_tuples():
        lines.append(" ".join(s).ljust(10) + "".join(q(behaviour.get((s, a), Fraction(0))).rjust(12) for a in outs))
    return lines
