"""The extreme responses of one group, listed exactly, and their description in the user's names.

A response of a group is r_g(e_g | s) >= 0 over its cells (assignments of
the group's events that obey the read-out rules, per settings tuple),
normalised per settings tuple and constrained by the per-λ clauses restricted
to the group.  Its extreme points are listed exactly:

* deterministic responses directly, when they are the vertices (a group of
  one event, a group whose events are all predetermined, a group that no
  clause constrains: products of simplices); A. Fine, PRL 48, 291 (1982);
* any other response polytope by double description in rational arithmetic
  (pycddlib, ``number_type='fraction'``; K. Fukuda and A. Prodon, "Double
  description method revisited", LNCS 1120 (1996)), predetermined events
  fixed first (a face's vertices are vertices of the polytope).

Sizes are asked of :mod:`nogo.mixture.guard` before anything here runs;
the limits passed in (``cap``, ``max_cells``) are checked again while listing.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

from ..events import hub_settings, read_out_ok, read_out_rules
from ..scenario import EventVar, Scenario
from .bundle import GroupConstraint, GroupSpec, Settings


@dataclass(frozen=True)
class GroupVertices:
    """The extreme responses of one group: vertex[k][j] = r_g(cells[j])."""

    cells: tuple[tuple[Settings, tuple[str, ...]], ...]
    vertices: tuple[tuple[Fraction, ...], ...]
    method: str



# -- group vertices -------------------------------------------------------------
def _cells(scenario: Scenario, events: tuple[EventVar, ...],
           only: tuple[Settings, ...] | None = None) -> list[tuple[Settings, tuple[str, ...]]]:
    ev = list(events)
    out = []
    for s in (only if only is not None else scenario.setting_tuples()):
        for e in itertools.product(*(x.outcomes for x in ev)):
            if read_out_ok(scenario, ev, s, e):
                out.append((s, e))
    return out


def _dependence(scenario: Scenario, spec: GroupSpec) -> dict[str, tuple[int, ...]]:
    """Parties (indices) whose settings each event of a deterministic group may depend on."""
    pre = {e: set(allowed) for e, allowed, _ in spec.predetermined}
    out = {}
    for ev in spec.events:
        dep = set(pre.get(ev.name, scenario.party_names))
        for c in spec.constraints:
            if ev.name in c.events:
                dep -= set(c.of)
        out[ev.name] = tuple(i for i, p in enumerate(scenario.party_names) if p in dep)
    return out


def deterministic_count_bound(scenario: Scenario, spec: GroupSpec) -> int:
    """Upper bound (before read-out rules) on a deterministic group's responses."""
    dep = _dependence(scenario, spec)
    n = 1
    for ev in spec.events:
        keys = math.prod(len(scenario.parties[i].settings) for i in dep[ev.name])
        n *= len(ev.outcomes) ** keys
    return n


def _deterministic_vertices(scenario: Scenario, spec: GroupSpec, cap: int,
                            only: tuple[Settings, ...] | None = None) -> GroupVertices | int:
    """Every deterministic response of the group that obeys its constraints (or a count > cap).

    A deterministic response that satisfies the group's independence clauses
    has each event depend only on the settings left by those clauses (a joint
    marginal of deterministic events is setting-independent exactly when each
    event is); read-out rules are the only couplings, checked by backtracking.
    ``only`` restricts the response to some settings tuples; it is exact only
    when every event may depend on every setting (no cell is shared with a
    settings tuple left out), which the caller ensures.
    """
    dep = _dependence(scenario, spec)
    events = spec.events
    settings = list(only) if only is not None else scenario.setting_tuples()

    def key(name, s):
        return tuple(s[i] for i in dep[name])

    var_index: dict[tuple[str, tuple], int] = {}
    var_dom: list[tuple[str, ...]] = []
    for ev in events:
        for k in dict.fromkeys(key(ev.name, s) for s in settings):
            var_index[(ev.name, k)] = len(var_dom)
            var_dom.append(ev.outcomes)
    names = [ev.name for ev in events]
    checks = _read_out_checks(scenario, events, settings, var_index, key)
    if not checks:  # no read-out coupling: every assignment counts
        total = math.prod(len(d) for d in var_dom)
        if total > cap:
            return total
    found = _backtrack(var_dom, checks, cap)
    if len(found) > cap:
        return len(found)
    cells = _cells(scenario, events, only)
    cell_index = {c: j for j, c in enumerate(cells)}
    verts = []
    one, zero = Fraction(1), Fraction(0)
    for sol in found:
        vec = [zero] * len(cells)
        for s in settings:
            e = tuple(sol[var_index[(nm, key(nm, s))]] for nm in names)
            vec[cell_index[(s, e)]] = one
        verts.append(tuple(vec))
    return GroupVertices(tuple(cells), tuple(verts), "deterministic responses listed directly")


def _read_out_checks(scenario: Scenario, events, settings, var_index, key) -> dict[int, dict[int, set]]:
    """Read-out couplings: {later var: {earlier var: allowed pairs (later value, earlier value)}}."""
    checks: dict[int, dict[int, set]] = {}
    outs = {ev.name: ev.outcomes for ev in events}
    rules = read_out_rules(scenario, list(events))  # chains resolved in nogo.events
    for s in settings:
        for r in rules:
            if not r.active(s):
                continue
            allowed = {(outs[r.target][r.shown[k]], v) for k, v in enumerate(outs[r.source])}
            u, w = var_index[(r.target, key(r.target, s))], var_index[(r.source, key(r.source, s))]
            if u == w:
                continue
            if u < w:  # store on the later variable; pairs oriented (later, earlier)
                u, w = w, u
                allowed = {(y, x) for x, y in allowed}
            cur = checks.setdefault(u, {}).get(w)
            checks[u][w] = allowed if cur is None else cur & allowed
    return checks


def _backtrack(var_dom: list[tuple[str, ...]], checks: dict[int, dict[int, set]], cap: int) -> list[tuple[str, ...]]:
    """Every assignment of the variables that passes *checks* (stops once more than *cap* are found)."""
    n = len(var_dom)
    found: list[tuple[str, ...]] = []
    assign: list[str | None] = [None] * n

    def rec(i):
        if len(found) > cap:
            return
        if i == n:
            found.append(tuple(assign))  # type: ignore[arg-type]
            return
        for v in var_dom[i]:
            if all((v, assign[w]) in allowed for w, allowed in checks.get(i, {}).items()):
                assign[i] = v
                rec(i + 1)
        assign[i] = None

    rec(0)
    return found


def _polytope_vertices(scenario: Scenario, spec: GroupSpec, max_cells: int) -> GroupVertices | str:
    """Vertices of the group's response polytope by exact double description (pycddlib).

    Predetermined events are fixed first: a response in which they are
    deterministic lies on the face where every cell that disagrees with their
    values is zero, and the vertices of a face are vertices of the polytope.
    So each deterministic assignment of the predetermined events (as functions
    of the settings they may depend on) is enumerated directly, and cddlib
    only sees the much smaller face.  Returns a string when a face has more
    than ``max_cells`` cells (exact enumeration might not finish).
    """
    import cdd

    events = list(spec.events)
    names = [ev.name for ev in events]
    cells = _cells(scenario, spec.events)
    settings = scenario.setting_tuples()
    constraints = list(spec.constraints)
    for e, allowed, a in spec.predetermined:
        others = tuple(p for p in scenario.party_names if p not in allowed)
        if others:
            constraints.append(GroupConstraint(a, 0, (e,), others))
    dep = _dependence(scenario, spec)
    pre = [e for e, _, _ in spec.predetermined]
    slots = [(e, k) for e in pre for k in dict.fromkeys(tuple(s[i] for i in dep[e]) for s in settings)]
    domains = [events[names.index(e)].outcomes for e, _ in slots]
    if math.prod(len(d) for d in domains) > 4096:
        return f"{math.prod(len(d) for d in domains)} assignments of its predetermined events"
    verts: set[tuple[Fraction, ...]] = set()
    for values in itertools.product(*domains):
        fixed = dict(zip(slots, values))
        keep = [j for j, (s, e) in enumerate(cells)
                if all(e[names.index(pe)] == fixed[(pe, tuple(s[i] for i in dep[pe]))] for pe in pre)]
        if len(keep) > max_cells:
            return (f"a response polytope of {len(keep)} cells, above the vertex-enumeration limit of "
                    f"{max_cells} (max_response_cells)")
        sub = [cells[j] for j in keep]
        by_s: dict[Settings, list[int]] = {}
        for j, (s, _) in enumerate(sub):
            by_s.setdefault(s, []).append(j)
        if len(by_s) < len(settings):
            continue  # these values break a read-out rule at some settings: an empty face
        n = len(sub)
        eq: list[list[Fraction]] = []
        for s in settings:
            row = [Fraction(0)] * n
            for j in by_s[s]:
                row[j] = Fraction(1)
            eq.append([Fraction(1)] + [-v for v in row])
        for c in constraints:
            idx = [names.index(e) for e in c.events]
            hub = hub_settings(scenario, c.of)
            for s in settings:
                base = hub[s]
                if base == s:
                    continue
                for v in itertools.product(*(events[i].outcomes for i in idx)):
                    row = [Fraction(0)] * n
                    for j in by_s[s]:
                        if tuple(sub[j][1][i] for i in idx) == v:
                            row[j] += 1
                    for j in by_s[base]:
                        if tuple(sub[j][1][i] for i in idx) == v:
                            row[j] -= 1
                    if any(row):
                        eq.append([Fraction(0)] + [-x for x in row])
        ineq = [[Fraction(0)] + [Fraction(int(k == j)) for k in range(n)] for j in range(n)]
        mat = cdd.Matrix(eq + ineq, number_type="fraction")
        mat.rep_type = cdd.RepType.INEQUALITY
        mat.lin_set = frozenset(range(len(eq)))
        gens = cdd.Polyhedron(mat).get_generators()
        for i in range(gens.row_size):
            row = gens[i]
            if Fraction(row[0]) != 1:  # a polytope has no rays or lines; a 0 here is a solver surprise
                raise RuntimeError("response polytope is unbounded: this should not happen")
            full = [Fraction(0)] * len(cells)
            for j, x in zip(keep, row[1:]):
                full[j] = Fraction(x)
            verts.add(tuple(full))
    return GroupVertices(tuple(cells), tuple(sorted(verts)), "exact vertex enumeration (pycddlib, rational)")


def _is_deterministic_group(spec: GroupSpec) -> bool:
    """Are the group's extreme responses exactly its deterministic ones?

    Yes when every event is predetermined; when the group has one event (its
    polytope is a product of simplices, one per class of settings the
    independence clauses identify); and when no clause constrains the group
    (a product of simplices, one per settings tuple, read-out rules removing
    cells).
    """
    pre = {e for e, _, _ in spec.predetermined}
    return (len(spec.events) == 1 or all(ev.name in pre for ev in spec.events)
            or (not spec.constraints and not spec.predetermined))


@lru_cache(maxsize=256)
def group_vertices(scenario: Scenario, spec: GroupSpec, cap: int, max_cells: int,
                   only: tuple[Settings, ...] | None = None) -> GroupVertices | str:
    """Extreme responses of one group; a string explains a refusal (too many / too large).

    Parameters: the scenario, the group's events and per-λ clauses, ``cap`` the
    most vertices accepted, ``max_cells`` the largest polytope (cells) sent to vertex
    enumeration; ``only`` (deterministic groups whose events may depend on
    every setting) lists the settings tuples wanted.  Returns
    :class:`GroupVertices` (exact rationals).
    Example: group [A] with A independent of B's setting in the 2x2 Bell
    scenario has the 4 deterministic responses A = f(A's setting).
    Reference: Fine, PRL 48, 291 (1982) for why these are deterministic.
    """
    if _is_deterministic_group(spec):
        got = _deterministic_vertices(scenario, spec, cap, only)
        if isinstance(got, int):
            return (f"{got} deterministic responses" if got > cap + 1
                    else f"more than {cap} deterministic responses")
        return got
    got = _polytope_vertices(scenario, spec, max_cells)
    if isinstance(got, str):
        return got
    if len(got.vertices) > cap:
        return f"{len(got.vertices)} extreme responses, more than {cap}"
    return got


# -- describing a response ---------------------------------------------------------
def describe_group_response(scenario: Scenario, events: tuple[EventVar, ...], gv: GroupVertices,
                            vertex: tuple[Fraction, ...], only: set[Settings] | None = None) -> str:
    """A group's response in the user's names, e.g. ``A: +1 at 1, -1 at 2``."""
    names = [ev.name for ev in events]
    table: dict[Settings, list[tuple[tuple[str, ...], Fraction]]] = {}
    for (s, e), x in zip(gv.cells, vertex):
        if x and (only is None or s in only):
            table.setdefault(s, []).append((e, x))
    pn = scenario.party_names
    if all(len(v) == 1 for v in table.values()):
        parts = []
        for i, ev in enumerate(events):
            f = {s: v[0][0][i] for s, v in table.items()}
            dep = []
            for pi in range(len(pn)):
                if any(f.get(s[:pi] + (y,) + s[pi + 1:], f[s]) != f[s]
                       for s in f for y in scenario.parties[pi].settings):
                    dep.append(pi)
            vals: dict[tuple, str] = {}
            for s in sorted(f):
                vals.setdefault(tuple(s[i] for i in dep), f[s])
            if not dep:
                parts.append(f"{ev.name}: {next(iter(vals.values()))}")
            elif dep == [pn.index(ev.party)]:
                parts.append(f"{ev.name}: " + ", ".join(f"{v} at {k[0]}" for k, v in vals.items()))
            else:
                who = ",".join(pn[i] for i in dep)
                parts.append(f"{ev.name}: " + ", ".join(f"{v} at {who}={','.join(k)}" for k, v in vals.items()))
        return "; ".join(parts)
    pr = (len(events) == 2 and all(len(v) == 2 and all(x == Fraction(1, 2) for _, x in v)
                                   and all(a != b for a, b in zip(v[0][0], v[1][0])) for v in table.values()))
    rows = []
    for s in sorted(table):
        ent = ", ".join(f"({' '.join(e)}) {x}" for e, x in table[s])
        rows.append(f"at {','.join(s)}: {ent}")
    # a vertex with perfect (anti)correlation and uniform marginals at every
    # setting is a relabelled PR box (Popescu & Rohrlich 1994; Barrett et al.,
    # PRA 71, 022101 (2005) for the two-outcome extremal boxes)
    kind = "PR box (relabelled)" if pr else "not deterministic"
    return f"[{','.join(names)}] {kind}: " + "; ".join(rows)




def _restrict(gv: GroupVertices, keep: set[Settings]) -> GroupVertices:
    """The distinct responses of a group at the settings tuples *keep* only."""
    sel = [j for j, (s, _) in enumerate(gv.cells) if s in keep]
    seen = dict.fromkeys(tuple(v[j] for j in sel) for v in gv.vertices)
    return GroupVertices(tuple(gv.cells[j] for j in sel), tuple(seen), gv.method)

