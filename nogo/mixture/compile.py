"""Compiling a hidden-variable bundle, stage by stage: read, group, guard, list responses, build.

1. :mod:`.bundle` reads the clauses about λ and splits the present events
   into groups;
2. the group specs (per-λ clauses restricted to each group, predetermined
   events) and the weight classes (values of the settings λ may depend on)
   follow from the declaration;
3. :mod:`.guard` sizes every group from the declaration, and the convex case
   goes straight to the equivalent linear model (:mod:`.equivalent`) when its
   responses would not be listed;
4. :mod:`.responses` lists each group's extreme responses exactly;
5. the total column count is guarded, and :mod:`.columns` builds the model.
"""

from __future__ import annotations

from ..events import present_events
from ..linear import compile_linear
from ..model import LinearModel
from ..scenario import Scenario
from ..supports import refuse_support_only
from ..theory import Theory
from .guard import not_listed, refuse_cells, refuse_group, refuse_total
from .bundle import GroupConstraint, GroupSpec, Settings, _Bundle, _groups, _read_bundle
from .columns import Plan, build_model
from .equivalent import _convex_linear, _vacuous
from .responses import GroupVertices, _dependence, _is_deterministic_group, _restrict, group_vertices


def compile_mixture(theory: Theory, spec: str | list[str], max_columns: int = 200_000,
                    max_response_cells: int = 40, progress=None, **_) -> LinearModel:
    """Compile a bundle with a hidden variable into a mixture :class:`LinearModel`.

    Parameters: ``theory`` and ``spec`` (bundle name or assumption names) as
    for :func:`nogo.compile.compile_bundle`; ``max_columns`` the largest model
    built (columns = mixture weights); ``max_response_cells`` the largest
    group response polytope (number of cells r_g(e_g|s)) sent to exact vertex
    enumeration; ``progress`` an optional callback ``(stage, done, total)``
    called while columns are built.  Returns a model of kind ``"mixture"`` whose columns are
    weights of extreme responses (see :mod:`nogo.mixture`); ``extra`` holds
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
    plan = Plan(label, assumptions, events, names, b, groups, grouped_by, _group_specs(sc, b, groups, events),
                *_weight_classes(sc, b), notes=list(b.notes))
    for a, ci, evs, of in b.per_lam:
        if not any(e in names for e in evs):
            plan.notes.append(f"{a}: none of {list(evs)} is present; by projection it adds nothing")
    convex = len(groups) == 1 and not b.predet and all(plan.free)
    if convex:  # decided from the declaration, before any response or cell is listed
        why = not_listed(sc, plan.specs[0], max_columns, max_response_cells)
        if why:
            return _convex_linear(theory, label, assumptions, b, why, max_columns)
    for g, gs in zip(groups, plan.specs):
        refuse_cells(theory, label, g, gs, b, grouped_by, max_columns)
    why = _list_responses(sc, plan, max_columns, max_response_cells)
    if why is not None:
        g, gs, text = why
        if convex:
            return _convex_linear(theory, label, assumptions, b, text, max_columns)
        refuse_group(theory, label, g, gs, b, grouped_by, text)
    refuse_total(theory, label, groups, plan.specs, plan.counts, plan.total, plan.classes, plan.free, b,
                       grouped_by, max_columns)
    return build_model(sc, plan, progress)


def _group_specs(sc: Scenario, b: _Bundle, groups, events) -> list[GroupSpec]:
    """Each group's events, its per-λ clauses restricted to them and its predetermined events."""
    ev_of = {e.name: e for e in events}
    specs = []
    for g in groups:
        cons = []
        for a, ci, evs, of in b.per_lam:
            kept = tuple(e for e in evs if e in g)
            if kept:
                cons.append(GroupConstraint(a, ci, kept, tuple(of)))
        pre = tuple((e, tuple(p for p in sc.party_names if p in b.predet[e][0]), "+".join(b.predet[e][1]))
                    for e in g if e in b.predet)
        specs.append(GroupSpec(tuple(ev_of[e] for e in g), tuple(cons), pre))
    return specs


def _weight_classes(sc: Scenario, b: _Bundle) -> tuple[list[tuple], list[list[Settings]], list[bool]]:
    """(weight classes, the settings tuples of each, per party whether λ is free of its setting)."""
    free = [p in b.free_of for p in sc.party_names]
    settings = sc.setting_tuples()
    classes: list[tuple] = list(dict.fromkeys(tuple(x for x, f in zip(s, free) if not f) for s in settings))
    index = {c: i for i, c in enumerate(classes)}
    in_class: list[list[Settings]] = [[] for _ in classes]
    for s in settings:
        in_class[index[tuple(x for x, f in zip(s, free) if not f)]].append(s)
    return classes, in_class, free


def _list_responses(sc: Scenario, plan: Plan, max_columns: int, max_cells: int):
    """Fill ``plan.pc`` and ``plan.counts``; (group, spec, why) for the first group not listed, else None."""
    full_parties = tuple(range(len(sc.parties)))
    n_classes = len(plan.classes)
    plan.pc = [[] for _ in range(n_classes)]
    for g, gs in zip(plan.groups, plan.specs):
        per_class = _is_deterministic_group(gs) and all(d == full_parties for d in _dependence(sc, gs).values())
        todo = [tuple(plan.in_class[c]) for c in range(n_classes)] if per_class else [None]
        got_all: list[GroupVertices] = []
        for only in todo:
            got = group_vertices(sc, gs, max_columns, max_cells, only)
            if isinstance(got, str):
                return g, gs, got
            got_all.append(got)
        for c in range(n_classes):
            plan.pc[c].append(got_all[c] if per_class else _restrict(got_all[0], set(plan.in_class[c])))
        plan.counts.append(sum(len(gv.vertices) for gv in got_all))
    return None
