"""Hidden-variable bundles compiled to a mixture model (DESIGN.md §3, backend 2).

Outcome independence, predetermination and per-λ constraints are not linear
in the observed joint distribution; a finite hidden variable λ of *unfixed*
size is handled by convexity instead: the set of behaviours is the convex
hull of the behaviours of the *extreme responses*, and an LP over mixture
weights decides any linear question about it exactly.

Semantics
---------
*Present events* are those of the linear model (:func:`nogo.compile.present_events`):
every party's outcome, inner observers declared absolute, latent
counterfactual outcomes ``A@x`` under joint existence.  A *response* (the
behaviour for one value of λ) is a conditional distribution r(e | s) over the
present events e for every settings tuple s.  Read-out rules (an absolute
inner observer is shown by its lab's outcome at the read-out setting; ``A@x``
is A's outcome at setting x) hold in **every** response, so they hold in the
mixture.

Clauses, by kind:

* ``hidden: lam`` declares λ.  A clause that mentions λ (``given: [lam]`` or
  setting independence of λ) declares it too: a hidden variable alone
  constrains nothing.  One hidden variable per bundle.
* ``independent: {events: E, of: S, given: [lam]}`` — in each response the
  marginal of E does not depend on the settings S (parameter independence,
  local agency given λ, ...).  Absent events drop out (rule of projection).
* ``factorise: {groups: [G1, G2, ...], given: [lam]}`` — each response is a
  product r = Π_g r_g(e_g | s) over the groups (outcome independence).  After
  projection every present event must lie in exactly one group; several
  factorise clauses combine to the common refinement of their partitions
  (if r factorises over two partitions it factorises over their meet).  An
  event tied by a read-out rule to a party outcome must share its group.
* ``predetermined: {events: E, given: [lam], depends_on: D}`` — in each
  response every event of E is deterministic, and depends only on the
  settings of D (all settings when D is omitted).
* ``independent: {events: [lam], of: S}`` — setting independence of λ: the
  weights of λ do not depend on the settings S.  With ``events: [lam, E...]``
  the pair (λ, E) is independent of S, i.e. λ is and E is given λ.
* every clause without λ (absoluteness, counterfactual, independence on the
  observed or absolute events) holds on the *mixture*: an independence
  clause equates marginals of the mixture's full joint of present events,
  a linear row in the weights.

Per-λ clauses split per group: for a product of distributions the joint
marginal of a union of events is setting-independent exactly when each
factor's marginal is.  So each group has a *response polytope* P_g (its
cells r_g(e_g | s) >= 0, normalised per s, read-out rules, the independence
clauses restricted to its events); predetermination keeps the vertices of
P_g at which the predetermined events are deterministic (they are the
vertices of the union of faces where those events are deterministic).  The
extreme responses are products of group vertices (the product is
multilinear), and the model's columns are weights of

    (one vertex per group, weight class)

where a weight class is a value of the settings that λ may depend on (one
class when λ is setting-independent: weights shared by all settings tuples).
A column's observed behaviour is its response at the settings of its class;
rows are the normalisation of weights per class plus the rows of the
mixture-level clauses.  With parameter and outcome independence every group
vertex is deterministic: Fine's theorem (A. Fine, PRL 48, 291 (1982)).

Group vertices are enumerated exactly: deterministic responses directly (a
group whose events are all predetermined, or a group of one event, whose
polytope is a product of simplices), any other polytope by double
description in rational arithmetic (pycddlib, ``number_type='fraction'``;
K. Fukuda and A. Prodon, "Double description method revisited", LNCS 1120
(1996)).  The size of the model is computed before any column is built and
refused above ``max_columns`` with the assumption that makes it big.

Two shortcuts give the same set with less work, and say so in the notes:
a bundle with no clause given λ compiles to the plain linear model (λ adds
nothing: the joint itself is a one-valued mixture); and one group without
predetermination, with λ setting-independent, is a convex set of responses,
so when its vertices are too many to list the per-λ clauses are put on the
joint instead (same set, linear model).  When λ may depend on some settings
the columns are the responses that differ at the settings of each weight
class (identical ones are merged; for groups whose events may depend on
every setting the responses are listed per class directly).

What this route cannot do: a factorisation that leaves present events in no
group (the product form then holds only for a marginal, which is neither a
product nor convex); two hidden variables; setting independence given λ of
λ itself.  Those raise :class:`~nogo.errors.InputError` naming the
assumption.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, replace
from fractions import Fraction
from functools import lru_cache

from .events import (hub_settings, present_events, project_independence, read_out_notes, read_out_ok,
                     read_out_rules)
from .linear import compile_linear
from .errors import InputError, ModelTooLarge, Where
from .model import Column, LinearModel, RowSource
from .scenario import EventVar, Scenario
from .theory import Absolute, Assumption, Counterfactual, Factorise, Hidden, Independent, Predetermined, Theory
from .supports import refuse_support_only

Settings = tuple[str, ...]


@dataclass(frozen=True)
class GroupConstraint:
    """A per-λ independence clause restricted to one group's events."""

    assumption: str
    clause: int
    events: tuple[str, ...]  # present events of the group it speaks of
    of: tuple[str, ...]  # party names


@dataclass(frozen=True)
class GroupSpec:
    events: tuple[EventVar, ...]
    constraints: tuple[GroupConstraint, ...]
    predetermined: tuple[tuple[str, tuple[str, ...], str], ...]  # (event, allowed parties, assumption)


@dataclass(frozen=True)
class GroupVertices:
    """The extreme responses of one group: vertex[k][j] = r_g(cells[j])."""

    cells: tuple[tuple[Settings, tuple[str, ...]], ...]
    vertices: tuple[tuple[Fraction, ...], ...]
    method: str


# -- reading the bundle -------------------------------------------------------
def _where(theory: Theory, a: Assumption) -> Where:
    return Where(theory.file, a.line, f"assumptions.{a.name}")


def _mentions_hidden(c) -> bool:
    return isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given)


@dataclass
class _Bundle:
    hidden: str | None
    free_of: set[str]  # parties whose settings λ is independent of
    free_by: list[str]  # assumptions saying so
    per_lam: list[tuple[str, int, tuple[str, ...], tuple[str, ...]]]  # (assumption, clause, events, of)
    partitions: list[tuple[str, tuple[tuple[str, ...], ...]]]  # (assumption, groups)
    predet: dict[str, tuple[set[str], list[str]]]  # event -> (allowed parties, assumptions)
    linear: list[tuple[str, int, Independent]]
    notes: list[str]


def _read_bundle(theory: Theory, assumptions: tuple[Assumption, ...], names: list[str]) -> _Bundle:
    sc = theory.scenario
    hidden_names = {str(c.name) for a in theory.assumptions.values() for c in a.clauses if isinstance(c, Hidden)}
    b = _Bundle(None, set(), [], [], [], {}, [], [])
    used: dict[str, str] = {}  # hidden name -> first assumption using it

    def use(h: str, a: Assumption):
        used.setdefault(h, a.name)
        if len(used) > 1:
            raise InputError(f"this bundle uses two hidden variables ({', '.join(sorted(used))}); "
                             "the mixture model holds one", _where(theory, a),
                             "give all clauses the same 'given' hidden variable")

    for a in assumptions:
        for ci, c in enumerate(a.clauses):
            if isinstance(c, Hidden):
                use(c.name, a)
            elif isinstance(c, (Absolute, Counterfactual)):
                pass  # they decide the present events
            elif isinstance(c, Independent) and not c.given:
                lam = [e for e in c.events if e in hidden_names]
                if not lam:
                    b.linear.append((a.name, ci, c))
                    continue
                for h in lam:
                    use(h, a)
                b.free_of.update(c.of)
                b.free_by.append(a.name)
                rest = tuple(e for e in c.events if e not in hidden_names)
                if rest:  # (λ, E) independent of S  <=>  λ is, and E is given λ
                    b.per_lam.append((a.name, ci, rest, c.of))
            elif isinstance(c, Independent):
                for h in c.given:
                    use(h, a)
                if any(e in hidden_names for e in c.events):
                    raise InputError(f"assumption '{a.name}' makes the hidden variable independent of settings "
                                     "given itself; that says nothing", _where(theory, a),
                                     "write setting independence of λ without 'given'")
                b.per_lam.append((a.name, ci, c.events, c.of))
            elif isinstance(c, Factorise):
                for h in c.given:
                    use(h, a)
                groups = tuple(tuple(e for e in g if e in names) for g in c.groups)
                dropped = sorted({e for g in c.groups for e in g if e not in names})
                if dropped:
                    b.notes.append(f"{a.name}: {dropped} absent; by projection the groups are "
                                   f"{[list(g) for g in groups if g]}")
                groups = tuple(g for g in groups if g)
                flat = [e for g in groups for e in g]
                if len(set(flat)) != len(flat):
                    raise InputError(f"assumption '{a.name}' puts an event in two groups", _where(theory, a),
                                     "each event belongs to one group")
                missing = [n for n in names if n not in flat]
                if missing:
                    raise InputError(
                        f"assumption '{a.name}' factorises given {c.given[0]} but leaves the present event(s) "
                        f"{missing} in no group; the product form would then hold only for a marginal, which "
                        "is not a mixture of product responses and cannot be compiled by the mixture route",
                        _where(theory, a),
                        "put every present event in a group, e.g. a lab's outcome with its inner observer "
                        "([[A, A_in], [B, B_in]])")
                b.partitions.append((a.name, groups))
            elif isinstance(c, Predetermined):
                for h in c.given:
                    use(h, a)
                allowed = set(c.depends_on) if c.depends_on is not None else set(sc.party_names)
                absent = [e for e in c.events if e not in names]
                if absent:
                    b.notes.append(f"{a.name}: {absent} absent; by projection only {[e for e in c.events if e in names]}"
                                   " are predetermined")
                for e in c.events:
                    if e in names:
                        old, by = b.predet.get(e, (set(sc.party_names), []))
                        b.predet[e] = (old & allowed, by + [a.name])
    if used:
        b.hidden = next(iter(used))
        declared = any(isinstance(c, Hidden) and c.name == b.hidden for a in assumptions for c in a.clauses)
        if not declared:
            b.notes.append(f"{b.hidden}: no assumption of the bundle declares it; the clauses that mention it do "
                           "(a hidden variable on its own constrains nothing)")
    return b


def _groups(theory: Theory, b: _Bundle, events: list[EventVar],
            assumptions: tuple[Assumption, ...]) -> tuple[list[tuple[str, ...]], str]:
    """The partition of the present events into groups, and who declared it."""
    names = [e.name for e in events]
    if not b.partitions:
        return [tuple(names)], ""
    # meet of all partitions: two events share a group iff they share one in every partition
    key = {n: tuple(next(i for i, g in enumerate(groups) if n in g) for _, groups in b.partitions) for n in names}
    blocks: dict[tuple, list[str]] = {}
    for n in names:
        blocks.setdefault(key[n], []).append(n)
    groups = [tuple(v) for v in blocks.values()]
    by = ", ".join(dict.fromkeys(a for a, _ in b.partitions))
    where_of = {a.name: a for a in assumptions}
    gi = {n: i for i, g in enumerate(groups) for n in g}
    sc = theory.scenario
    for r in read_out_rules(sc, events):  # chains of read-outs resolved in nogo.events
        if gi[r.source] != gi[r.target]:
            a = where_of[b.partitions[0][0]]
            raise InputError(f"{r.source} is read out as {r.target}'s outcome, but '{by}' puts them in different "
                             "groups; a read-out rule across groups forces both to be deterministic and is not a "
                             "product of response polytopes", _where(theory, a),
                             f"put {r.source} in {r.target}'s group")
    return groups, by


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
    # read-out couplings: (later var, earlier var, allowed pairs (later value, earlier value))
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
            # store on the later variable; pairs oriented (later, earlier)
            if u < w:
                u, w = w, u
                allowed = {(y, x) for x, y in allowed}
            cur = checks.setdefault(u, {}).get(w)
            checks[u][w] = allowed if cur is None else cur & allowed
    n = len(var_dom)
    if not checks:  # no read-out coupling: every assignment counts
        total = math.prod(len(d) for d in var_dom)
        if total > cap:
            return total
    found: list[tuple[str, ...]] = []
    assign: list[str | None] = [None] * n

    def rec(i):
        if len(found) > cap:
            return
        if i == n:
            found.append(tuple(assign))  # type: ignore[arg-type]
            return
        for v in var_dom[i]:
            ok = True
            for w, allowed in checks.get(i, {}).items():
                if (v, assign[w]) not in allowed:
                    ok = False
                    break
            if ok:
                assign[i] = v
                rec(i + 1)
        assign[i] = None

    rec(0)
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


# -- the model ------------------------------------------------------------------------
def compile_mixture(theory: Theory, spec: str | list[str], max_columns: int = 200_000,
                    max_response_cells: int = 40, progress=None, **_) -> LinearModel:
    """Compile a bundle with a hidden variable into a mixture :class:`LinearModel`.

    Parameters: ``theory`` and ``spec`` (bundle name or assumption names) as
    for :func:`nogo.compile.compile_bundle`; ``max_columns`` the largest model
    built (columns = mixture weights); ``max_response_cells`` the largest
    group response polytope (number of cells r_g(e_g|s)) sent to exact vertex
    enumeration; ``progress`` an optional callback ``(stage, done, total)``
    called while columns are built.  Returns a model of kind ``"mixture"`` whose columns are
    weights of extreme responses (see the module docstring); ``extra`` holds
    the group vertices so :func:`mixture_joint` can rebuild the full joint.

    Example: ``compile_mixture(load_theory("theories/hidden-2x2.yaml"),
    "local-causality")`` has 16 columns (deterministic local responses,
    weights shared) and one normalisation row.

    References: A. Fine, PRL 48, 291 (1982); J. P. Jarrett, Noûs 18, 569
    (1984) for the split of local causality into parameter and outcome
    independence.
    """
    label, assumptions = theory.resolve(spec)
    sc = theory.scenario
    events = present_events(sc, assumptions)
    names = [e.name for e in events]
    b = _read_bundle(theory, assumptions, names)
    b.notes += refuse_support_only(theory, assumptions, names)  # possibilistic clauses: implied or refused
    if b.hidden is None:
        return compile_linear(theory, spec)
    if not b.per_lam and not b.partitions and not b.predet:
        return _vacuous(theory, label, assumptions, b)

    groups, grouped_by = _groups(theory, b, events, assumptions)
    ev_of = {e.name: e for e in events}
    notes = list(b.notes)
    specs: list[GroupSpec] = []
    for g in groups:
        cons = []
        for a, ci, evs, of in b.per_lam:
            kept = tuple(e for e in evs if e in g)
            if kept:
                cons.append(GroupConstraint(a, ci, kept, tuple(of)))
        pre = tuple((e, tuple(p for p in sc.party_names if p in b.predet[e][0]), "+".join(b.predet[e][1]))
                    for e in g if e in b.predet)
        specs.append(GroupSpec(tuple(ev_of[e] for e in g), tuple(cons), pre))
    for a, ci, evs, of in b.per_lam:
        if not any(e in names for e in evs):
            notes.append(f"{a}: none of {list(evs)} is present; by projection it adds nothing")

    # weight classes: the settings λ may depend on
    free = [p in b.free_of for p in sc.party_names]
    settings = sc.setting_tuples()
    classes: list[tuple] = list(dict.fromkeys(tuple(x for x, f in zip(s, free) if not f) for s in settings))
    class_of = {s: classes.index(tuple(x for x, f in zip(s, free) if not f)) for s in settings}
    in_class: list[list[Settings]] = [[s for s in settings if class_of[s] == c] for c in range(len(classes))]

    convex = len(groups) == 1 and not b.predet and all(free)
    full_parties = tuple(range(len(sc.parties)))
    # pc[c][g]: the distinct responses of group g at the settings of weight class c
    pc: list[list[GroupVertices]] = [[] for _ in classes]
    counts: list[int] = []
    for g, gs in zip(groups, specs):
        per_class = _is_deterministic_group(gs) and all(d == full_parties for d in _dependence(sc, gs).values())
        todo = [tuple(in_class[c]) for c in range(len(classes))] if per_class else [None]
        got_all = []
        for only in todo:
            got = group_vertices(sc, gs, max_columns, max_response_cells, only)
            if isinstance(got, str) and convex:
                return _convex_linear(theory, label, assumptions, b, got)
            if isinstance(got, str):
                hint = ("the cell limit is the max_response_cells option of compile_mixture; exact vertex "
                        "enumeration of a larger polytope may not finish" if "max_response_cells" in got
                        else "raise the limit with --max-columns (max_columns=...) if you mean it")
                raise ModelTooLarge(
                    f"the mixture model for '{label}' is too large: group [{', '.join(g)}] has {got}. "
                    + _blame(sc, gs, b, grouped_by), _bundle_where(theory, assumptions), hint)
            got_all.append(got)
        for c in range(len(classes)):
            pc[c].append(got_all[c] if per_class else _restrict(got_all[0], set(in_class[c])))
        counts.append(sum(len(gv.vertices) for gv in got_all))

    total = sum(math.prod(len(gv.vertices) for gv in pc[c]) for c in range(len(classes)))
    if total > max_columns:
        sizes = ", ".join(f"[{', '.join(g)}]: {n}" for g, n in zip(groups, counts))
        cls = "" if len(classes) == 1 else (
            f" over {len(classes)} weight classes, because λ may depend on the settings of "
            f"{', '.join(p for p, f in zip(sc.party_names, free) if not f)} (no setting independence of λ for them)")
        worst = max(range(len(groups)), key=lambda i: counts[i])
        raise ModelTooLarge(
            f"the mixture model for '{label}' would have {total} columns (limit {max_columns}): extreme responses "
            f"per group {sizes}{cls}. {_blame(sc, specs[worst], b, grouped_by)}",
            _bundle_where(theory, assumptions), "raise the limit with --max-columns (max_columns=...) if you mean it")

    # columns and the observation map
    coords = {c: i for i, c in enumerate(sc.coordinates())}
    n_party = len(sc.parties)
    pos = [[names.index(e) for e in g] for g in groups]
    by_s: dict[tuple[int, int, int], dict[Settings, list]] = {}

    def entries(c: int, gi: int, k: int, s: Settings):
        d = by_s.get((c, gi, k))
        if d is None:
            gv = pc[c][gi]
            d = by_s[(c, gi, k)] = {}
            for (s2, e), x in zip(gv.cells, gv.vertices[k]):
                if x:
                    d.setdefault(s2, []).append((e, x))
        return d.get(s, [])

    def joint_at(c: int, combo: tuple[int, ...], s: Settings):
        out = []
        for parts in itertools.product(*(entries(c, gi, k, s) for gi, k in enumerate(combo))):
            e = [None] * len(names)
            w = Fraction(1)
            for gi, (eg, x) in enumerate(parts):
                for p, v in zip(pos[gi], eg):
                    e[p] = v
                w *= x
            out.append((tuple(e), w))
        return out

    def st(s):
        return ", ".join(f"{p}={x}" for p, x in zip(sc.party_names, s))

    lam = b.hidden
    columns: list[Column] = []
    observe: list[dict[int, Fraction]] = []
    parts_of: list[tuple[int, tuple[int, ...]]] = []
    rows: list[dict[int, Fraction]] = []
    rhs: list[Fraction] = []
    sources: list[RowSource] = []
    lin = _linear_rows_setup(sc, b, names, events, notes)
    lin_rows: dict[tuple, dict[int, Fraction]] = {}
    for c in range(len(classes)):
        norm: dict[int, Fraction] = {}
        cls_set = set(in_class[c])
        for combo in itertools.product(*(range(len(gv.vertices)) for gv in pc[c])):
            j = len(columns)
            obs: dict[int, Fraction] = {}
            marg: dict[int, dict[Settings, dict[tuple, Fraction]]] = {li: {} for li in range(len(lin))}
            for s in in_class[c]:
                for e, w in joint_at(c, combo, s):
                    i = coords[(s, e[:n_party])]
                    obs[i] = obs.get(i, Fraction(0)) + w
                    for li, (_, _, idx, _, _) in enumerate(lin):
                        v = tuple(e[i2] for i2 in idx)
                        m = marg[li].setdefault(s, {})
                        m[v] = m.get(v, Fraction(0)) + w
            for li, (a, ci, idx, kept, base_of) in enumerate(lin):
                for s in settings:
                    base = base_of[s]
                    if base == s or (s not in cls_set and base not in cls_set):
                        continue
                    ms, mb = marg[li].get(s, {}), marg[li].get(base, {})
                    for v in set(ms) | set(mb):
                        d = ms.get(v, Fraction(0)) - mb.get(v, Fraction(0))
                        if d:
                            lin_rows.setdefault((li, s, v), {})[j] = d
            label_c = "" if len(classes) == 1 else " [weight given " + ", ".join(
                f"{p}.setting={x}" for p, x in zip([p for p, f in zip(sc.party_names, free) if not f],
                                                    classes[c])) + "]"
            desc = "; ".join(describe_group_response(sc, gs.events, gv, gv.vertices[k], cls_set)
                             for gs, gv, k in zip(specs, pc[c], combo))
            columns.append(Column(None, (), (), f"{lam}-response{label_c}: {desc}"))
            observe.append(obs)
            parts_of.append((c, combo))
            norm[j] = Fraction(1)
            if progress and j % 5000 == 0:
                progress("mixture columns", j, total)
        rows.append(norm)
        rhs.append(Fraction(1))
        what = "" if len(classes) == 1 else " at " + ", ".join(
            f"{p}={x}" for p, x in zip([p for p, f in zip(sc.party_names, free) if not f], classes[c]))
        sources.append(RowSource("normalisation", "normalisation", 0, (lam,), f"weights of {lam}{what} sum to 1"))
    for (li, s, v), row in lin_rows.items():
        a, ci, idx, kept, base_of = lin[li]
        ev = ", ".join(f"{e}={x}" for e, x in zip(kept, v))
        rows.append(row)
        rhs.append(Fraction(0))
        sources.append(RowSource(a, "independent", ci, kept,
                                 f"on the mixture: q({ev} | {st(s)}) = q({ev} | {st(base_of[s])})"))

    notes.append(f"mixture over {lam}: groups " + " x ".join(
        f"[{', '.join(g)}] ({n} extreme responses; {pc[0][gi].method})" for gi, (g, n) in enumerate(zip(groups, counts)))
        + (f", factorised by {grouped_by}" if grouped_by else ", one group (no factorisation declared)"))
    if len(classes) == 1:
        notes.append(f"{lam} is independent of every setting ({', '.join(dict.fromkeys(b.free_by))}): "
                     "weights shared by all settings tuples")
    else:
        dep = [p for p, f in zip(sc.party_names, free) if not f]
        notes.append(f"{lam} may depend on the settings of {', '.join(dep)}: one set of weights per value of them "
                     f"({len(classes)}), over the responses that differ at those settings ({len(columns)} columns)")
    for o in sc.inner:
        if o.name in names and o.read_out_at is not None and not sc.nested:
            notes.append(f"read-out (in every response): {o.lab}'s outcome equals {o.name}'s when {o.lab}'s "
                         f"setting is {o.read_out_at}")
    notes += read_out_notes(sc, list(events), "read-out (in every response)")  # nested: chains resolved
    extra = {"hidden": lam, "events": tuple(names), "groups": tuple(groups), "group_vertices": tuple(tuple(x) for x in pc),
             "classes": tuple(classes), "free_of": tuple(p for p, f in zip(sc.party_names, free) if f),
             "column_parts": parts_of}
    return LinearModel(sc, label, tuple(a.name for a in assumptions), columns, rows, rhs, sources, observe,
                       notes, kind="mixture", extra=extra)


def _restrict(gv: GroupVertices, keep: set[Settings]) -> GroupVertices:
    """The distinct responses of a group at the settings tuples *keep* only."""
    sel = [j for j, (s, _) in enumerate(gv.cells) if s in keep]
    seen = dict.fromkeys(tuple(v[j] for j in sel) for v in gv.vertices)
    return GroupVertices(tuple(gv.cells[j] for j in sel), tuple(seen), gv.method)


def _linear_rows_setup(sc: Scenario, b: _Bundle, names, events, notes):
    """Mixture-level independence clauses: (assumption, clause, event idx, kept, base map)."""
    out = []
    for a, ci, c in b.linear:
        pr = project_independence(sc, c.events, c.of, list(names), a, notes)
        if pr is not None:
            out.append((a, ci, pr.idx, pr.kept, pr.base))
    return out


def _bundle_where(theory: Theory, assumptions) -> Where:
    return Where(theory.file, None, None)


def _blame(sc: Scenario, spec: GroupSpec, b: _Bundle, grouped_by: str) -> str:
    """Which assumption makes a group's response set big, in words."""
    if _is_deterministic_group(spec):
        dep = _dependence(sc, spec)
        parts = []
        foreign = False
        for ev in spec.events:
            who = [sc.party_names[i] for i in dep[ev.name]]
            foreign |= any(p != ev.party for p in who)
            pre = next((a for e, _, a in spec.predetermined if e == ev.name), None)
            why = f" (predetermined by '{pre}')" if pre else ""
            n = len(ev.outcomes) ** math.prod(len(sc.party(p).settings) for p in who)
            parts.append(f"{ev.name} is one of {n} functions of the settings of {', '.join(who) or 'no party'}{why}")
        tail = ("; parameter independence given λ (each outcome free of the other parties' settings) would cut "
                "this down") if foreign else "; the size is that of the scenario itself"
        return "Its responses are deterministic: " + "; ".join(parts) + tail
    if not grouped_by:
        return ("No factorisation is declared, so all present events form one group; outcome independence "
                "(factorise given λ) or predetermination splits it")
    return f"The group comes from '{grouped_by}'"


def _strip(theory: Theory, assumptions, hidden: str, given_to_joint: bool) -> Theory:
    """The theory with λ's clauses removed (and, if asked, per-λ clauses made joint ones)."""
    stripped = {}
    for a in assumptions:
        cl = []
        for c in a.clauses:
            if isinstance(c, Hidden):
                continue
            if isinstance(c, Independent) and not c.given and hidden in c.events:
                rest = tuple(e for e in c.events if e != hidden)
                if rest and given_to_joint:
                    cl.append(Independent(rest, c.of))
                continue
            if isinstance(c, Independent) and c.given and given_to_joint:
                cl.append(Independent(c.events, c.of))
                continue
            cl.append(c)
        stripped[a.name] = replace(a, clauses=tuple(cl))
    return Theory(theory.scenario, {**theory.assumptions, **stripped}, theory.bundles, theory.file,
                  theory.title, theory.text)


def _convex_linear(theory: Theory, label: str, assumptions, b: _Bundle, why: str) -> LinearModel:
    """One group, no predetermination, λ setting-independent: the mixture set is the response polytope.

    The responses form a convex set (a polytope cut out by the per-λ clauses),
    so a mixture with shared weights is again a response and every response is
    a one-valued mixture: the per-λ clauses hold exactly on the joint.  Used
    when listing the polytope's vertices is too big.
    """
    model = compile_linear(_strip(theory, assumptions, b.hidden, True), [a.name for a in assumptions])
    model.label = label
    model.notes = list(b.notes) + [
        f"the responses given {b.hidden} form one convex polytope and {b.hidden} is setting-independent, so the "
        f"mixture set is that polytope itself; its vertices were not listed ({why}); compiled as the equivalent "
        f"linear model with the clauses given {b.hidden} holding on the joint"] + model.notes
    return model


def _vacuous(theory: Theory, label: str, assumptions, b: _Bundle) -> LinearModel:
    """No per-λ constraint: λ adds nothing (take λ = the joint itself); compile linearly."""
    hidden = b.hidden
    model = compile_linear(_strip(theory, assumptions, hidden, False), [a.name for a in assumptions])
    model.label = label
    model.notes.insert(0, f"{hidden} carries no constraint given its value, so it adds nothing: any joint "
                          "distribution is a one-valued mixture; compiled as the plain linear model")
    return model


def mixture_joint(model: LinearModel, point: list[Fraction]) -> dict[tuple[Settings, tuple[str, ...]], Fraction]:
    """The full joint q(e | s) of the present events (``model.extra['events']``) at a mixture point."""
    ex = model.extra
    sc = model.scenario
    names = ex["events"]
    pos = [[names.index(e) for e in g] for g in ex["groups"]]
    free = [p in ex["free_of"] for p in sc.party_names]
    out: dict[tuple, Fraction] = {}
    for j, x in enumerate(point):
        if not x:
            continue
        c, combo = ex["column_parts"][j]
        for s in sc.setting_tuples():
            if tuple(y for y, f in zip(s, free) if not f) != ex["classes"][c]:
                continue
            per_g = []
            for gi, k in enumerate(combo):
                gv = ex["group_vertices"][c][gi]
                per_g.append([(e, w) for (s2, e), w in zip(gv.cells, gv.vertices[k]) if s2 == s and w])
            for parts in itertools.product(*per_g):
                e = [None] * len(names)
                w = x
                for gi, (eg, v) in enumerate(parts):
                    for p, val in zip(pos[gi], eg):
                        e[p] = val
                    w *= v
                key = (s, tuple(e))
                out[key] = out.get(key, Fraction(0)) + w
    return out
