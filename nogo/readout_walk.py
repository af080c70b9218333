"""A second reading of read-out chains, apart from :mod:`nogo.events`, for the independent checkers.

The compilers take the read-out rules among present events from
:func:`nogo.events.read_out_rules`.  The three checkers that must not share
that code — the z3 cross-check (:mod:`nogo.smt`), the possibilistic proof
checker (:mod:`nogo.possibilistic.checker`) and the referee's row rebuild
(:mod:`nogo.referee.rows`, which imports no compiler or solver) — walk the
chains here instead, from the parsed declarations only, with the semantics
of DEVELOPERS.md ("Nested observers and observers' choices", "Several
read-outs of one observer"): from an observer through the labs that hold it,
one branch per read-out setting of each link, to the first lab that is
present; the outcome shown there is the composition of the relabellings,
and the branch holds when every link's setting condition does (``always``,
only ever inside an observer, adds none).  This module imports nothing.
"""

from __future__ import annotations


def walk_read_outs(scenario, o, absolute) -> list[tuple[str, tuple[tuple[int, str], ...], dict[str, str]]]:
    """[(present lab, ((settings index, setting), ...), o's outcome -> the lab's outcome shown)].

    *absolute*: the names of the observers declared absolute (present).
    Branches whose conditions ask one setting for two values never hold and
    are dropped; a link without a read-out ends its branch with nothing.
    """
    names = [p.name for p in scenario.parties]
    inner = {x.name: x for x in scenario.inner}
    out = []
    todo = [(o, {v: v for v in o.outcomes}, ())]
    while todo:
        cur, shown, when = todo.pop()
        lab = inner.get(cur.lab)
        lab_outs = lab.outcomes if lab is not None else scenario.parties[names.index(cur.lab)].outcomes
        for at, relabel in cur.read_outs:
            now = {k: lab_outs[relabel[cur.outcomes.index(v)]] for k, v in shown.items()}
            cond = when
            if at != "always":
                k = names.index(cur.lab)
                if any(i == k and x != at for i, x in when):
                    continue
                cond = when + ((k, at),)
            if lab is None or cur.lab in absolute:
                out.append((cur.lab, cond, now))
            else:
                todo.append((lab, now, cond))
    return out
