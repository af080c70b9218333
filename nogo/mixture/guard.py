"""Sizes of the mixture route, decided from the declaration before any response or cell is listed.

Each group's size is counted, not listed: its cells by
:func:`nogo.sizes.group_cells` (the linear model's column count restricted
to the group's events, with the same read-out rules), its deterministic
responses by :func:`.responses.deterministic_count_bound` (functions of the
settings each event may depend on).  From these:

* a group whose responses would not be listed (more deterministic responses
  than the column limit, or more cells than the vertex-enumeration limit) is,
  for the convex case, compiled as the equivalent linear model at once
  (:func:`.equivalent._convex_linear`, itself guarded by
  :func:`nogo.sizes.guard_linear`), and otherwise refused with the size and
  the assumption responsible;
* a group with more cells than the column limit is refused before its cells
  are listed;
* the model's column count, the product of the groups' response counts per
  weight class, is refused above the limit before any column is built.

Every refusal is a :class:`~nogo.errors.ModelTooLarge` naming the size, the
assumption (or scenario size) responsible and the option that raises the limit.
"""

from __future__ import annotations

import math

from ..errors import ModelTooLarge, Where
from ..scenario import Scenario
from ..sizes import _RAISE, group_cells, scenario_size
from ..theory import Theory
from .bundle import GroupSpec, _Bundle
from .responses import _dependence, _is_deterministic_group, deterministic_count_bound

_CELLS_HINT = ("the cell limit is the max_response_cells option of compile_mixture; exact vertex "
               "enumeration of a larger polytope may not finish")


def not_listed(sc: Scenario, spec: GroupSpec, max_columns: int, max_cells: int) -> str:
    """Why a group's responses would not be listed, from the declaration alone ("" when they may be).

    Exact for a group without predetermined events (its polytope is not cut to
    faces first); an upper bound otherwise.
    """
    if _is_deterministic_group(spec):
        n = deterministic_count_bound(sc, spec)
        return f"up to {n:,} deterministic responses by the declaration" if n > max_columns else ""
    cells = group_cells(sc, spec.events)
    if not spec.predetermined and cells > max_cells:
        return (f"a response polytope of {cells:,} cells, above the vertex-enumeration limit of "
                f"{max_cells} (max_response_cells)")
    return ""


def refuse_cells(theory: Theory, label: str, group, spec: GroupSpec, b: _Bundle, grouped_by: str,
                 max_columns: int) -> None:
    """Refuse a group whose cells alone outnumber the column limit (listing them would cost as much)."""
    if _is_deterministic_group(spec):
        return  # its responses are counted, its cells only listed for the responses kept
    cells = group_cells(theory.scenario, spec.events)
    if cells > max_columns:
        raise ModelTooLarge(
            f"the mixture model for '{label}' is too large: group [{', '.join(group)}] has {cells:,} cells "
            f"r(e|s) (limit {max_columns:,}), with {scenario_size(theory.scenario)}. "
            + _blame(theory.scenario, spec, b, grouped_by), _bundle_where(theory, ()), _RAISE)


def refuse_group(theory: Theory, label: str, group, spec: GroupSpec, b: _Bundle, grouped_by: str,
                 why: str) -> None:
    """The refusal of a group whose responses were not listed (*why*)."""
    hint = _CELLS_HINT if "max_response_cells" in why else "raise the limit with --max-columns (max_columns=...) if you mean it"
    raise ModelTooLarge(
        f"the mixture model for '{label}' is too large: group [{', '.join(group)}] has {why}. "
        + _blame(theory.scenario, spec, b, grouped_by), _bundle_where(theory, ()), hint)


def refuse_total(theory: Theory, label: str, groups, specs, counts, total: int, classes, free, b: _Bundle,
                 grouped_by: str, max_columns: int) -> None:
    """Refuse a model with more columns than the limit, before any column is built."""
    if total <= max_columns:
        return
    sc = theory.scenario
    sizes = ", ".join(f"[{', '.join(g)}]: {n}" for g, n in zip(groups, counts))
    cls = "" if len(classes) == 1 else (
        f" over {len(classes)} weight classes, because λ may depend on the settings of "
        f"{', '.join(p for p, f in zip(sc.party_names, free) if not f)} (no setting independence of λ for them)")
    worst = max(range(len(groups)), key=lambda i: counts[i])
    raise ModelTooLarge(
        f"the mixture model for '{label}' would have {total} columns (limit {max_columns}): extreme responses "
        f"per group {sizes}{cls}. {_blame(sc, specs[worst], b, grouped_by)}",
        _bundle_where(theory, ()), "raise the limit with --max-columns (max_columns=...) if you mean it")


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

