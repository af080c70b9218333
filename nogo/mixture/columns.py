"""The mixture model: the convex hull of the extreme responses' behaviours, as an LP over their weights.

The set of behaviours of a hidden-variable bundle is the convex hull of the
behaviours of its extreme responses (a finite λ of unfixed size; A. Fine, PRL
48, 291 (1982) for the local case).  Columns are the weights of

    (one extreme response per group, weight class)

(a weight class is a value of the settings λ may depend on; one class when λ
is free of every setting).  A column's observed behaviour is the product of
its group responses at the settings of its class, marginalised to the
parties' outcomes; rows are the normalisation of the weights of each class and
the rows of the clauses that hold on the mixture (an independence clause
equates marginals of the mixture's full joint of present events, a linear row
in the weights).  :func:`mixture_joint` rebuilds that full joint at a point.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from fractions import Fraction

from ..events import project_independence, read_out_notes
from ..model import Column, LinearModel, RowSource
from ..scenario import EventVar, Scenario
from ..theory import Assumption
from .bundle import GroupSpec, Settings, _Bundle
from .responses import GroupVertices, describe_group_response


@dataclass
class Plan:
    """Everything the columns are built from (the output of the guarded planning stage)."""

    label: str
    assumptions: tuple[Assumption, ...]
    events: list[EventVar]
    names: list[str]
    b: _Bundle
    groups: list[tuple[str, ...]]
    grouped_by: str
    specs: list[GroupSpec]
    classes: list[tuple]  # weight classes: values of the settings λ may depend on
    in_class: list[list[Settings]]
    free: list[bool]  # per party: λ is independent of its setting
    pc: list[list[GroupVertices]] = field(default_factory=list)  # pc[c][g]: group g's responses in class c
    counts: list[int] = field(default_factory=list)  # responses listed per group
    notes: list[str] = field(default_factory=list)

    @property
    def total(self) -> int:
        import math

        return sum(math.prod(len(gv.vertices) for gv in self.pc[c]) for c in range(len(self.classes)))


class _Responses:
    """The group responses of a plan, looked up per settings tuple (cached)."""

    def __init__(self, plan: Plan):
        self.plan = plan
        self.pos = [[plan.names.index(e) for e in g] for g in plan.groups]
        self.by_s: dict[tuple[int, int, int], dict[Settings, list]] = {}

    def entries(self, c: int, gi: int, k: int, s: Settings):
        d = self.by_s.get((c, gi, k))
        if d is None:
            gv = self.plan.pc[c][gi]
            d = self.by_s[(c, gi, k)] = {}
            for (s2, e), x in zip(gv.cells, gv.vertices[k]):
                if x:
                    d.setdefault(s2, []).append((e, x))
        return d.get(s, [])

    def joint_at(self, c: int, combo: tuple[int, ...], s: Settings):
        """The full joint of the present events of one column at settings s: [(events, weight)]."""
        out = []
        for parts in itertools.product(*(self.entries(c, gi, k, s) for gi, k in enumerate(combo))):
            e = [None] * len(self.plan.names)
            w = Fraction(1)
            for gi, (eg, x) in enumerate(parts):
                for p, v in zip(self.pos[gi], eg):
                    e[p] = v
                w *= x
            out.append((tuple(e), w))
        return out


def _linear_rows_setup(sc: Scenario, b: _Bundle, names, events, notes):
    """Mixture-level independence clauses: (assumption, clause, event idx, kept, base map)."""
    out = []
    for a, ci, c in b.linear:
        pr = project_independence(sc, c.events, c.of, list(names), a, notes)
        if pr is not None:
            out.append((a, ci, pr.idx, pr.kept, pr.base))
    return out


def build_model(sc: Scenario, plan: Plan, progress=None) -> LinearModel:
    """The mixture :class:`LinearModel` of a guarded plan (sizes were checked before)."""
    notes = plan.notes
    lin = _linear_rows_setup(sc, plan.b, plan.names, plan.events, notes)
    cols = _columns(sc, plan, lin, progress)
    columns, observe, parts_of, rows, rhs, sources, lin_rows = cols

    def st(s):
        return ", ".join(f"{p}={x}" for p, x in zip(sc.party_names, s))

    for (li, s, v), row in lin_rows.items():
        a, ci, idx, kept, base_of = lin[li]
        ev = ", ".join(f"{e}={x}" for e, x in zip(kept, v))
        rows.append(row)
        rhs.append(Fraction(0))
        sources.append(RowSource(a, "independent", ci, kept,
                                 f"on the mixture: q({ev} | {st(s)}) = q({ev} | {st(base_of[s])})"))
    notes += _notes(sc, plan, len(columns))
    free = plan.free
    extra = {"hidden": plan.b.hidden, "events": tuple(plan.names), "groups": tuple(plan.groups),
             "group_vertices": tuple(tuple(x) for x in plan.pc), "classes": tuple(plan.classes),
             "free_of": tuple(p for p, f in zip(sc.party_names, free) if f), "column_parts": parts_of}
    return LinearModel(sc, plan.label, tuple(a.name for a in plan.assumptions), columns, rows, rhs, sources,
                       observe, notes, kind="mixture", extra=extra)


def _columns(sc: Scenario, plan: Plan, lin, progress):
    """One column per (response of each group, weight class): its observed behaviour and mixture rows."""
    coords = {c: i for i, c in enumerate(sc.coordinates())}
    n_party = len(sc.parties)
    settings = sc.setting_tuples()
    resp = _Responses(plan)
    lam, free, total = plan.b.hidden, plan.free, plan.total
    dep = [p for p, f in zip(sc.party_names, free) if not f]
    columns: list[Column] = []
    observe: list[dict[int, Fraction]] = []
    parts_of: list[tuple[int, tuple[int, ...]]] = []
    rows: list[dict[int, Fraction]] = []
    rhs: list[Fraction] = []
    sources: list[RowSource] = []
    lin_rows: dict[tuple, dict[int, Fraction]] = {}
    for c in range(len(plan.classes)):
        norm: dict[int, Fraction] = {}
        cls_set = set(plan.in_class[c])
        label_c = "" if len(plan.classes) == 1 else " [weight given " + ", ".join(
            f"{p}.setting={x}" for p, x in zip(dep, plan.classes[c])) + "]"
        for combo in itertools.product(*(range(len(gv.vertices)) for gv in plan.pc[c])):
            j = len(columns)
            obs: dict[int, Fraction] = {}
            marg: dict[int, dict[Settings, dict[tuple, Fraction]]] = {li: {} for li in range(len(lin))}
            for s in plan.in_class[c]:
                for e, w in resp.joint_at(c, combo, s):
                    i = coords[(s, e[:n_party])]
                    obs[i] = obs.get(i, Fraction(0)) + w
                    for li, (_, _, idx, _, _) in enumerate(lin):
                        v = tuple(e[i2] for i2 in idx)
                        m = marg[li].setdefault(s, {})
                        m[v] = m.get(v, Fraction(0)) + w
            _mixture_rows(lin, marg, settings, cls_set, j, lin_rows)
            desc = "; ".join(describe_group_response(sc, gs.events, gv, gv.vertices[k], cls_set)
                             for gs, gv, k in zip(plan.specs, plan.pc[c], combo))
            columns.append(Column(None, (), (), f"{lam}-response{label_c}: {desc}"))
            observe.append(obs)
            parts_of.append((c, combo))
            norm[j] = Fraction(1)
            if progress and j % 5000 == 0:
                progress("mixture columns", j, total)
        rows.append(norm)
        rhs.append(Fraction(1))
        what = "" if len(plan.classes) == 1 else " at " + ", ".join(
            f"{p}={x}" for p, x in zip(dep, plan.classes[c]))
        sources.append(RowSource("normalisation", "normalisation", 0, (lam,), f"weights of {lam}{what} sum to 1"))
    return columns, observe, parts_of, rows, rhs, sources, lin_rows


def _mixture_rows(lin, marg, settings, cls_set, j: int, lin_rows) -> None:
    """Column j's entries in the rows of the clauses on the mixture (marginal at s minus at its hub)."""
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


def _notes(sc: Scenario, plan: Plan, n_columns: int) -> list[str]:
    lam, free = plan.b.hidden, plan.free
    out = [f"mixture over {lam}: groups " + " x ".join(
        f"[{', '.join(g)}] ({n} extreme responses; {plan.pc[0][gi].method})"
        for gi, (g, n) in enumerate(zip(plan.groups, plan.counts)))
        + (f", factorised by {plan.grouped_by}" if plan.grouped_by else ", one group (no factorisation declared)")]
    if len(plan.classes) == 1:
        out.append(f"{lam} is independent of every setting ({', '.join(dict.fromkeys(plan.b.free_by))}): "
                   "weights shared by all settings tuples")
    else:
        dep = [p for p, f in zip(sc.party_names, free) if not f]
        out.append(f"{lam} may depend on the settings of {', '.join(dep)}: one set of weights per value of them "
                   f"({len(plan.classes)}), over the responses that differ at those settings ({n_columns} columns)")
    for o in sc.inner:
        if o.name in plan.names and o.read_out_at is not None and not sc.nested:
            out.append(f"read-out (in every response): {o.lab}'s outcome equals {o.name}'s when {o.lab}'s "
                       f"setting is {o.read_out_at}")
    out += read_out_notes(sc, list(plan.events), "read-out (in every response)")  # nested: chains resolved
    return out


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
